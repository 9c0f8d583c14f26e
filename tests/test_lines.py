"""Material lines: exact lengths in linear flows and maps, point budgets, faults."""

import math

import numpy as np
import pytest
from scipy.special import ellipe

import flowkit
import flowkit.fields.lines as lines
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings
from flowkit.fields import LineResult, circle, curve, material_line, segment

G_NAMES = [f"g{i}{j}" for i in range(1, 4) for j in range(1, 4)]
LINEAR = [" + ".join(f"g{i}{j}*{c}" for j, c in zip(range(1, 4), "xyz")) for i in range(1, 4)]
LAMBDA_CAT = (3 + math.sqrt(5)) / 2


def linear_flow(domain="unbounded", **g):
    """u = G x (the same compiled family as in test_stretching)."""
    f = flowkit.custom_flow(LINEAR, params={n: 0.0 for n in G_NAMES}, domain=domain, name="linear")
    return f.with_params(**g)


def ellipse_perimeter(a, b):
    # 4 a E(m), m = 1 - (b/a)^2: the complete elliptic integral of the second kind (scipy.special.ellipe)
    a, b = max(a, b), min(a, b)
    return 4 * a * ellipe(1 - (b / a) ** 2)


def test_material_circle_in_uniform_strain_grows_as_the_exact_ellipse():
    # u = (s x, -s y, 0) maps the unit circle onto the ellipse with semi-axes e^{st}, e^{-st}
    s = 0.5
    res = material_line(linear_flow(g11=s, g22=-s), 3.0, circle((0, 0, 0), 1.0), max_spacing=0.01, interval=0.25,
                        settings=IntegratorSettings(rtol=1e-11, atol=1e-13))
    exact = np.array([ellipse_perimeter(math.exp(s * t), math.exp(-s * t)) for t in res.times])
    np.testing.assert_allclose(res.lengths, exact, rtol=2e-5)
    # the reported discretization error is honest: it bounds the actual error within a factor of 3
    err = np.abs(res.lengths / exact - 1)
    assert np.all(err[1:] <= 3 * np.abs(res.length_error[1:]) + 1e-9)
    assert res.closed and res.stopped == "time" and res.cut_segments == 0
    # the chord points are material points: each lies on the exact image of the circle
    pts = res.positions
    ax, ay = math.exp(s * 3.0), math.exp(-s * 3.0)
    np.testing.assert_allclose((pts[:, 0] / ax) ** 2 + (pts[:, 1] / ay) ** 2, 1.0, atol=1e-8)


def test_segment_in_simple_shear_stays_straight_with_exact_length():
    # u = (g y, 0, 0): the segment (0,0,0)-(0,1,0) becomes (0,0,0)-(g t, 1, 0), length sqrt(1 + (g t)^2)
    g = 2.0
    res = material_line(linear_flow(g12=g), 4.0, segment((0, 0, 0), (0, 1, 0)), max_spacing=0.05, interval=0.5)
    np.testing.assert_allclose(res.lengths, np.sqrt(1 + (g * res.times) ** 2), rtol=1e-9)
    assert res.npoints[-1] < 2 * math.sqrt(1 + 64) / 0.05 + 10  # a straight line needs no curvature points


def test_cat_map_line_has_exact_lengths_and_reaches_a_million_points():
    # A segment along x of length 0.5 maps to a segment of length 0.5 |A^n e_x|,
    # |A^n e_x|^2 = F(2n+1)^2 + F(2n)^2 (Fibonacci identity for [[2,1],[1,1]]^n, common practice).
    res = material_line(flowkit.flow("cat-map"), 14, segment((0.1, 0.3, 0.5), (0.6, 0.3, 0.5)),
                        max_points=2_500_000, snapshots=3, snapshot_points=1000)
    fib = [0, 1]
    while len(fib) < 40:
        fib.append(fib[-1] + fib[-2])
    n = res.times.astype(int)
    exact = 0.5 * np.sqrt(np.array([fib[2 * k + 1] ** 2 + fib[2 * k] ** 2 for k in n], dtype=float))
    np.testing.assert_allclose(res.lengths, exact, rtol=1e-9)
    assert abs(res.rate.value - math.log(LAMBDA_CAT)) < 1e-6
    assert res.npoints.max() >= 1_000_000
    # memory: labels (8 B) + positions (24 B) + outcome (1 B) per point
    assert res.memory_bytes == 33 * res.npoints[-1]
    assert res.peak_bytes >= res.memory_bytes and res.peak_rss_bytes > res.memory_bytes
    assert len(res.snapshots) >= 3 and all(len(p) <= 1000 for _, p in res.snapshots)


@pytest.mark.parametrize("fold", [0.0, 1.0])
def test_sfs_map_line_grows_at_ln2_with_cuts_reported(fold):
    # each iteration maps a horizontal line onto two horizontal lines of the same length (exact, no shear)
    res = material_line(flowkit.flow("sfs-map", fold=fold, shear=0.0), 10, max_points=300_000)
    assert abs(res.rate.value - math.log(2)) < 1e-3
    np.testing.assert_allclose(res.lengths, 2.0 ** res.times, rtol=1e-3)
    assert res.cut_segments > 0 and any("discontinuity" in n for n in res.notes)


def test_point_budget_stops_the_run_cleanly():
    res = material_line(flowkit.flow("cat-map"), 30, max_points=60_000)
    assert res.stopped == "max_points" and res.npoints[-1] <= 60_000 and 5 <= res.times[-1] < 30
    assert any("point budget" in n for n in res.notes)
    assert abs(res.rate.value - math.log(LAMBDA_CAT)) < 1e-3 and res.rate.stderr < 1e-2


def test_a_line_leaving_the_domain_loses_points_not_the_run():
    f = linear_flow("ball", g11=1.0, g22=1.0, g33=-2.0)  # radial outflow in x-y: the line hits r = 1
    res = material_line(f, 2.0, segment((-0.5, 0.0, 0.1), (0.5, 0.0, 0.1)), max_spacing=0.02)
    assert res.outcomes["left domain"] > 0 and res.stopped == "time"
    assert any("failed" in n for n in res.notes)
    ok = res.outcome == 0
    # survivors are material points of the exact solution x = x0 e^t, z = z0 e^{-2t}
    np.testing.assert_allclose(res.positions[ok, 2], 0.1 * math.exp(-4.0), rtol=1e-7)
    assert np.all(np.abs(res.positions[ok, 0]) <= 1.0)
    with pytest.raises(FlowkitError, match="inside the domain"):
        material_line(f, 1.0, segment((0.0, 0.0, 0.0), (2.0, 0.0, 0.0)))


def test_bad_arguments_are_refused():
    cat = flowkit.flow("cat-map")
    with pytest.raises(FlowkitError, match="`max_spacing` must be positive"):
        material_line(cat, 3, max_spacing=0.0)
    with pytest.raises(FlowkitError, match="closed curve must return"):
        material_line(cat, 3, curve(lambda s: np.column_stack([s, 0 * s + 0.2, 0 * s + 0.2]) * 0.5, closed=True))
    with pytest.raises(FlowkitError, match="number of iterations"):
        material_line(cat, 2.5)
    with pytest.raises(FlowkitError, match="coincide"):
        segment((0, 0, 0), (0, 0, 0))


def test_interrupted_line_keeps_finished_passes(monkeypatch, tmp_path):
    calls = {"n": 0}
    real = lines.advance_points

    def flaky(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 6:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(lines, "advance_points", flaky)
    res = material_line(flowkit.flow("cat-map"), 20)
    assert res.partial and res.stopped == "interrupted" and 1 <= res.times[-1] < 20
    back = LineResult.load(res.save(tmp_path / "line.npz"))
    np.testing.assert_array_equal(back.lengths, res.lengths)
    assert back.stopped == "interrupted" and len(back.snapshots) == len(res.snapshots)


def test_material_line_is_drawn_in_3d_at_several_times():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_growth, plot_material_line

    res = material_line(flowkit.flow("cat-map"), 6, snapshots=4, snapshot_points=3000)
    fig = plt.figure()
    ax = fig.add_subplot(projection="3d")
    artists = plot_material_line(ax, res)
    assert len(artists) == len(res.snapshots) >= 4
    # wrap-around jumps on the torus are broken with NaN, every stored point is drawn
    x = np.asarray(artists[-1].get_data_3d()[0])
    assert np.sum(np.isfinite(x)) == len(res.snapshots[-1][1])
    flat = fig.add_subplot(2, 2, 4)
    with pytest.raises(FlowkitError, match="3-D axes"):
        plot_material_line(flat, res)
    assert len(plot_growth(flat, res)) >= 3  # curve, fit window, fitted line
    plt.close(fig)
