"""Explorer widgets without a browser: sliders, clicks, previews, exports.

The explorers are thin layers, so the reference for what they draw is the
public API called directly with the same settings; geometric facts (a crossing
lies on its plane, a click maps to a point of the plane) are exact identities.
"""

import asyncio
import json
import types
import zipfile

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

import flowkit  # noqa: E402
from flowkit.errors import FlowkitError  # noqa: E402
from flowkit.lab import Debouncer, DynamoExplorer, FTLEExplorer, GrowthExplorer, SectionExplorer  # noqa: E402
from flowkit.lab.sections import append_orbits  # noqa: E402
from flowkit.sections import Plane, Section, poincare_section  # noqa: E402

SMALL = dict(n_seeds=4, crossings=40, preview_crossings=8)
#: The explorer's default section of the ball, built independently: the plane y = 0 seen in (x, z)
#: (normal -y, first axis x: e2 = n x e1 = z), every crossing kept.
XZ = Plane((0, -1, 0), 0.0, "both", axis1=(1, 0, 0))


def click(explorer, u, v, button=1):
    """A synthetic matplotlib button_press_event at data coordinates (u, v)."""
    return types.SimpleNamespace(inaxes=explorer.ax, button=button, xdata=u, ydata=v)


@pytest.fixture(scope="module")
def explorer():
    ex = SectionExplorer("stf", params={"rotation": 0.3}, **SMALL)
    ex.update()
    yield ex
    ex.close()


def test_full_section_on_artists_equals_api_result(explorer):
    ref = poincare_section(flowkit.flow("stf", rotation=0.3), explorer.seeds, XZ,
                           crossings=40)
    np.testing.assert_array_equal(explorer.scatter.get_offsets(), ref.display_coords())
    np.testing.assert_array_equal(explorer.scatter.get_array(), ref.orbit % 32)
    assert explorer.showing == "full"
    # every crossing lies on the plane y = 0 (exact geometric identity, to the crossing tolerance)
    assert np.max(np.abs(explorer.result.points[:, 1])) < 1e-9


def test_slider_change_previews_then_full_section_on_release(explorer):
    before = np.array(explorer.scatter.get_offsets())
    explorer.sliders["rotation"].value = 0.55  # as the browser does while dragging
    shown = np.array(explorer.scatter.get_offsets())
    assert explorer.showing == "preview"
    assert shown.shape == (4 * 8, 2)  # preview budget: 8 crossings per orbit
    assert explorer._full.pending  # the full section waits for the slider to rest
    assert "(preview)" in explorer.ax.get_title()
    assert explorer.flush()  # the slider rests
    full = np.array(explorer.scatter.get_offsets())
    assert explorer.showing == "full" and full.shape == (4 * 40, 2)
    assert not np.allclose(full[:32], before[:32])  # the data on the artist changed with the parameter
    assert explorer.result.provenance["parameters"] == {"rotation": 0.55}
    ref = poincare_section(flowkit.flow("stf", rotation=0.55), explorer.seeds, XZ,
                           crossings=40)
    np.testing.assert_array_equal(full, ref.display_coords())


def test_click_adds_an_orbit_seeded_on_the_plane(explorer):
    explorer.update()
    n0, m0 = explorer.result.n_orbits, len(explorer.scatter.get_offsets())
    explorer._on_click(click(explorer, 0.3, -0.2))
    sec = explorer.result
    assert sec.n_orbits == n0 + 1
    assert len(explorer.scatter.get_offsets()) == m0 + sec.counts[-1] > m0
    seed = sec.seeds[-1]
    # in-plane coordinates (u, v) = (x, z) on y = 0: the click lands where it was made
    np.testing.assert_allclose(seed, [0.3, 0.0, -0.2], atol=1e-15)
    np.testing.assert_allclose(XZ.coords(seed[None])[0], [0.3, -0.2], atol=1e-15)
    ref = poincare_section(explorer.flow, seed[None], XZ, crossings=40)
    np.testing.assert_array_equal(sec.points[sec.orbit == n0], ref.points)


def test_click_outside_the_ball_reports_and_adds_nothing(explorer):
    n0 = explorer.result.n_orbits
    explorer._on_click(click(explorer, 0.95, 0.9))
    assert explorer.result.n_orbits == n0
    assert "outside" in explorer.message and "ball" in explorer.message


def test_clicks_ignored_outside_axes_and_for_other_buttons(explorer):
    n0 = explorer.result.n_orbits
    explorer._on_click(types.SimpleNamespace(inaxes=None, button=1, xdata=None, ydata=None))
    explorer._on_click(click(explorer, 0.1, 0.1, button=3))
    assert explorer.result.n_orbits == n0


def test_exports_pdf_rasterizes_points_and_npz_keeps_provenance(explorer, tmp_path):
    pdf = explorer.export("pdf", tmp_path / "sec.pdf")
    text = pdf.read_bytes()
    assert text.startswith(b"%PDF") and b"/Image" in text  # the scatter layer is an embedded raster
    png = explorer.export("png", tmp_path / "sec.png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    sec = Section.load(explorer.export("npz", tmp_path / "sec.npz"))
    np.testing.assert_array_equal(sec.coords, explorer.result.coords)
    assert sec.provenance["parameters"] == explorer.flow.param_dict
    assert sec.provenance["flow"] == "stf" and "integrator" in sec.provenance
    with zipfile.ZipFile(tmp_path / "sec.npz") as zf:  # plain arrays, JSON provenance: no pickle inside
        assert "__flowkit__.npy" in zf.namelist()
    json.loads(str(np.load(tmp_path / "sec.npz", allow_pickle=False)["__flowkit__"]))["fields"]["provenance"]


def test_default_export_name_says_what_and_which_parameters(explorer, tmp_path):
    explorer.export_dir = tmp_path
    path = explorer.export("png")
    assert path.parent == tmp_path and path.name.startswith("section-stf-rotation")


def test_compiling_notice_shows_before_first_compile():
    ex = SectionExplorer("stf", **SMALL)
    seen = []
    real = ex._warm
    ex._warm = lambda flow: (seen.append(ex.message), real(flow))
    ex.update()
    assert seen and seen[0].startswith("compiling")
    assert "compile" in ex.timings and ex.result is not None
    ex.update()
    assert len(seen) == 1  # warm once per flow family
    ex.close()


def test_colour_by_chaos_uses_the_indicator_per_orbit():
    from flowkit.chaos import orbit_indicator

    ex = SectionExplorer("stf", params={"rotation": 0.3}, color_by="chaos", indicator_time=5.0, **SMALL)
    ex.update()
    sec = ex.result
    ref = orbit_indicator(ex.flow, sec.seeds, 5.0)
    np.testing.assert_allclose(sec.orbit_values["ftle"], ref, rtol=1e-12)
    np.testing.assert_allclose(ex.scatter.get_array(), ref[sec.orbit], rtol=1e-12)
    assert ex.colorbar.ax.get_visible()
    ex.color_picker.value = "orbit"
    assert not ex.colorbar.ax.get_visible()
    np.testing.assert_array_equal(ex.scatter.get_array(), ex.result.orbit % 32)
    ex.close()


def test_plane_change_keeps_seeds_and_cuts_the_same_orbits(explorer):
    seeds = explorer.seeds.copy()
    explorer.plane_controls.normal.value = "z"
    explorer.flush()
    np.testing.assert_array_equal(explorer.seeds, seeds)
    assert np.max(np.abs(explorer.result.points[:, 2])) < 1e-9
    assert explorer.ax.get_xlabel() == "x" and explorer.ax.get_ylabel() == "y"
    explorer.plane_controls.normal.value = "y"
    explorer.flush()


def test_reset_restores_parameters_and_seeds():
    ex = SectionExplorer("stf", params={"rotation": 0.3}, **SMALL)
    ex.update()
    ex.sliders["rotation"].value = 1.2
    ex._on_click(click(ex, 0.2, 0.2))
    ex.reset()
    assert ex.sliders["rotation"].value == 0.3 and len(ex.seeds) == 4
    assert ex.result.provenance["parameters"] == {"rotation": 0.3}
    ex.close()


def test_picking_another_flow_rebuilds_sliders_and_frame():
    ex = SectionExplorer("stf", **SMALL)
    ex.flow_picker.value = "abc"
    assert set(ex.sliders) == {"A", "B", "C"}
    assert ex.plane_controls.normal.value == "z" and ex.ax.get_xlim()[1] > 6
    assert ex.result.provenance["flow"] == "abc"
    assert np.all((ex.scatter.get_offsets() >= 0) & (ex.scatter.get_offsets() < 2 * np.pi))
    ex.close()


def test_append_orbits_matches_one_batch(explorer):
    f, plane = flowkit.flow("stf", rotation=0.3), XZ
    seeds = explorer.seeds[:3]
    whole = poincare_section(f, seeds, plane, crossings=20)
    parts = append_orbits(poincare_section(f, seeds[:2], plane, crossings=20),
                          poincare_section(f, seeds[2:], plane, crossings=20))
    for name in ("points", "coords", "time", "orbit", "seeds", "outcome", "counts"):
        np.testing.assert_array_equal(getattr(parts, name), getattr(whole, name))


def test_bad_arguments_name_the_argument():
    with pytest.raises(FlowkitError, match="color_by"):
        SectionExplorer("stf", color_by="rainbow")
    with pytest.raises(FlowkitError, match="crossings"):
        SectionExplorer("stf", crossings=0)
    with pytest.raises(FlowkitError, match="unknown flow"):
        SectionExplorer("no-such-flow")


# -- debouncing -------------------------------------------------------------------------------
def test_debouncer_without_loop_throttle_runs_now_debounce_waits_for_flush():
    calls = []
    thr = Debouncer(0.05, calls.append, "throttle")
    deb = Debouncer(0.05, lambda x: calls.append(("full", x)), "debounce")
    for x in (1, 2, 3):
        thr.trigger(x)
        deb.trigger(x)
    assert calls == [1, 2, 3] and deb.pending
    assert deb.flush() and calls[-1] == ("full", 3) and not deb.pending
    assert not deb.flush()


def test_debouncer_on_a_loop_coalesces_bursts():
    calls = []

    async def burst():
        # intervals far apart from the 10 ms steps, so a loaded machine does not change the outcome
        thr = Debouncer(0.2, lambda x: calls.append(("preview", x)), "throttle")
        deb = Debouncer(0.6, lambda x: calls.append(("full", x)), "debounce")
        for x in range(10):  # a slider dragged: a value every 10 ms
            thr.trigger(x)
            deb.trigger(x)
            await asyncio.sleep(0.01)
        await asyncio.sleep(1.2)

    asyncio.run(burst())
    previews = [x for kind, x in calls if kind == "preview"]
    fulls = [x for kind, x in calls if kind == "full"]
    assert fulls == [9]  # one full result, with the last value, after the burst
    assert 1 <= len(previews) < 10 and previews[-1] == 9
    assert calls[-1] == ("full", 9)


# -- FTLE and growth explorers ------------------------------------------------------------------
def test_ftle_explorer_slider_changes_image_and_matches_api():
    from flowkit.chaos import GridPlane, ftle_field

    ex = FTLEExplorer("stf", params={"rotation": 0.3}, resolution=12, preview_resolution=6, time=1.0)
    ex.update()
    assert ex.image.get_array().shape == (12, 12)
    ex.sliders["rotation"].value = 0.8
    assert ex.showing == "preview" and ex.image.get_array().shape == (6, 6)
    ex.flush()
    ref = ftle_field(flowkit.flow("stf", rotation=0.8), GridPlane.coordinate("y", 0.0, (-1, 1, -1, 1)), (12, 12), 1.0)
    got = ex.image.get_array()
    np.testing.assert_array_equal(got.mask, ~np.isfinite(ref.values))
    np.testing.assert_allclose(got.filled(np.nan), ref.values, rtol=1e-12, equal_nan=True)
    ex.close()


def test_growth_explorer_time_slider_redraws_curves():
    from flowkit.fields import stretch

    ex = GrowthExplorer("stf", params={"rotation": 0.3}, time=2.0, particles=24, preview_particles=8, samples=8)
    ex.update()
    ref = stretch(flowkit.flow("stf", rotation=0.3), 24, 2.0, p=(1.0, 2.0), samples=8)
    x, y = ex.mean_line.get_data()
    np.testing.assert_allclose(x, ref.times)
    np.testing.assert_allclose(y, ref.mean_log, rtol=1e-12)
    ex.time_slider.value = 4.0
    ex.flush()
    assert ex.mean_line.get_data()[0][-1] == pytest.approx(4.0)
    ex.close()


def test_dynamo_explorer_rm_slider_previews_then_adds_the_api_point():
    from flowkit.dynamo import growth_rate

    ex = DynamoExplorer("abc", rm=6.0, resolution=8, preview_resolution=8)
    ex.update()
    ex.rm_slider.value = 12.0  # as the browser does while dragging
    assert ex.showing == "preview" and ex._full.pending
    assert ex.flush() and ex.showing == "full"
    api = growth_rate(flowkit.flow("abc"), 12.0, 8)  # same settings through the API
    assert ex.result.growth_rate == pytest.approx(api.growth_rate, rel=1e-10)
    rms, rates = ex.curve_line.get_data()
    np.testing.assert_array_equal(rms, [6.0, 12.0])
    assert rates[1] == pytest.approx(api.growth_rate, rel=1e-10)
    assert tuple(ex.current_point.get_data()[0]) == (12.0,)
    # the image is |B| of the mode on the plane z = 0, max 1
    ref = np.linalg.norm(ex.result.mode[0][:, :, :, 0], axis=0).T
    np.testing.assert_allclose(np.asarray(ex.image.get_array()), ref)
    assert ex.image.get_array().max() == pytest.approx(1.0, abs=0.05)
    ex.close()


def test_dynamo_explorer_one_vertical_wavenumber_and_exports(tmp_path):
    from flowkit.dynamo import GrowthResult, growth_rate

    ex = DynamoExplorer("roberts", rm=8.0, resolution=8, kz=0.6)
    ex.update()
    assert ex.result.kz == 0.6
    api = growth_rate(flowkit.flow("roberts"), 8.0, 8, kz=0.6)
    assert ex.result.growth_rate == pytest.approx(api.growth_rate, rel=1e-10)
    back = GrowthResult.load(ex.export("npz", tmp_path / "mode.npz"))
    assert back.kz == 0.6 and back.diagnostics["explored_curve"]["rm"] == [8.0]
    assert ex.export("pdf", tmp_path / "fig.pdf").stat().st_size > 0
    ex.flow_picker.value = "abc"  # depends on z: a single kz is not offered
    assert ex.kz_toggle.disabled and ex.kz is None
    ex.close()
    with pytest.raises(FlowkitError, match="`rm`"):
        DynamoExplorer("abc", rm=0.0)
    with pytest.raises(FlowkitError, match="`resolution`"):
        DynamoExplorer("abc", resolution=10)


# -- what a new user sees: crossing direction, axis names, colours, ticks, log sliders -------------
def test_direction_control_keeps_the_crossings_it_names():
    ex = SectionExplorer("stf", params={"rotation": 0.3}, **SMALL)
    ex.update()
    pc = ex.plane_controls
    assert pc.direction.value == "both" and "crossings: both directions" in ex.ax.get_title()
    both = ex.result
    vy = ex.flow.velocity(both.points)[:, 1]
    assert (vy > 0).any() and (vy < 0).any()  # both sides of y = 0 are crossed
    pc.direction.value = "+"
    ex.flush()
    assert "crossings: y increasing (+)" in ex.ax.get_title()
    # "+" means y increases through the plane: the velocity's y component is positive at every crossing
    assert np.all(ex.flow.velocity(ex.result.points)[:, 1] > 0)
    ref = poincare_section(ex.flow, ex.seeds, Plane((0, 1, 0), 0.0, "+"), crossings=40)
    np.testing.assert_allclose(ex.result.points, ref.points, atol=1e-12)
    pc.direction.value = "-"
    ex.flush()
    assert np.all(ex.flow.velocity(ex.result.points)[:, 1] < 0)
    ex.close()


@pytest.mark.parametrize("normal,labels", [("x", ("y", "z")), ("y", ("x", "z")), ("z", ("x", "y"))])
def test_coordinate_planes_are_drawn_in_their_own_coordinates(explorer, normal, labels):
    explorer.plane_controls.normal.value = normal
    explorer.flush()
    assert (explorer.ax.get_xlabel(), explorer.ax.get_ylabel()) == labels
    # right is +first coordinate, up is +second: a point at (u, v) = (0.2, 0.5) has those coordinates
    p = explorer.view.point(0.2, 0.5)
    assert p["xyz".index(labels[0])] == pytest.approx(0.2) and p["xyz".index(labels[1])] == pytest.approx(0.5)
    explorer.plane_controls.normal.value = "y"
    explorer.flush()


def test_orbit_palette_keeps_thirty_orbits_apart():
    from flowkit.lab.palette import orbit_palette, srgb_to_lab

    # CIE L*a*b* of sRGB red and white (handbook values, common practice, no source)
    np.testing.assert_allclose(srgb_to_lab([1.0, 0.0, 0.0]), [53.24, 80.09, 67.20], atol=0.05)
    np.testing.assert_allclose(srgb_to_lab([1.0, 1.0, 1.0]), [100.0, 0.0, 0.0], atol=0.02)
    lab = srgb_to_lab(orbit_palette(32))
    d = np.linalg.norm(lab[:, None] - lab[None], axis=-1)[np.triu_indices(32, 1)]
    # a colour difference above ~10 is plainly visible side by side; tab20's closest pair is about 17
    assert d.min() > 25


@pytest.mark.parametrize("flow", ["stf", "abc", "circular"])
def test_tick_labels_never_touch_at_the_default_size(flow):
    ex = SectionExplorer(flow, **SMALL)
    ex.update()
    ex.fig.canvas.draw()
    renderer = ex.fig.canvas.get_renderer()
    for axis, lo, hi in ((ex.ax.xaxis, *ex.ax.get_xlim()), (ex.ax.yaxis, *ex.ax.get_ylim())):
        shown = [t for t, loc in zip(axis.get_ticklabels(), axis.get_ticklocs()) if lo <= loc <= hi and t.get_text()]
        boxes = [t.get_window_extent(renderer) for t in shown]
        assert len(boxes) >= 3
        for a, b in zip(boxes, boxes[1:]):
            gap = b.x0 - a.x1 if axis is ex.ax.xaxis else b.y0 - a.y1
            assert gap >= 4, f"{flow}: tick labels {[t.get_text() for t in shown]} only {gap:.1f} px apart"
    ex.close()


def test_log_sliders_keep_the_starting_value_and_ignore_rounding_echoes():
    ex = FTLEExplorer("stf", time=5.0, resolution=6, preview_resolution=4)
    s = ex.time_slider
    # the browser snaps the exponent to min + k * step: 5.0 must be on that grid
    k = round((np.log10(5.0) - s.min) / s.step)
    assert 10 ** (s.min + k * s.step) == pytest.approx(5.0, rel=1e-12)
    calls = []
    ex.changed = lambda: calls.append(1)
    s.value = 5.0 * (1 + 1e-13)  # a round-trip echo, not a move
    assert calls == []
    s.value = 6.0
    assert calls == [1]
    ex.close()


@pytest.mark.parametrize("kind", ["section", "ftle", "growth", "dynamo"])
def test_every_label_and_title_lies_inside_the_figure(kind):
    ex = {"section": lambda: SectionExplorer("stf", **SMALL),
          "ftle": lambda: FTLEExplorer("stf", resolution=6, preview_resolution=4, time=0.5),
          "growth": lambda: GrowthExplorer("stf", time=1.0, particles=6, preview_particles=4, samples=6),
          "dynamo": lambda: DynamoExplorer("abc", rm=10.0, resolution=8, preview_resolution=8)}[kind]()
    ex.update()
    ex.fig.canvas.draw()
    renderer = ex.fig.canvas.get_renderer()
    frame = ex.fig.bbox
    for ax in ex.fig.axes:  # an axes' tight box holds what it draws: title, labels, tick labels
        if not ax.get_visible():
            continue
        box = ax.get_tightbbox(renderer)
        inside = box.x0 >= frame.x0 - 1 and box.x1 <= frame.x1 + 1 and box.y0 >= frame.y0 - 1 and box.y1 <= frame.y1 + 1
        assert inside, f"{kind}: '{ax.get_title()}' axes (labels {ax.get_xlabel()!r}, {ax.get_ylabel()!r}) run off the figure"
    ex.close()
