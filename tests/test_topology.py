"""Topology of curves: writhe, twist, linking (each check names its outside reference)."""

import math

import numpy as np
import pytest
import scipy.integrate
import scipy.optimize
import scipy.special
import sympy as sp

import naive_topology as naive
from flowkit import topology as T
from flowkit.errors import FlowkitError
from flowkit.topology import _kernels as K


# -- curves used throughout ------------------------------------------------------------------
def circle(center=(0, 0, 0), r=1.0, e1=(1, 0, 0), e2=(0, 1, 0)):
    c, a, b = (np.asarray(v, dtype=float) for v in (center, e1, e2))
    return lambda t: c + r * (np.cos(2 * np.pi * t)[:, None] * a + np.sin(2 * np.pi * t)[:, None] * b)


def torus_knot(p, q, R=1.0, r=0.1):
    """Winds p times around the torus' symmetry axis (along the core) and q times around the tube."""
    def f(t):
        t = 2 * np.pi * np.asarray(t)
        rho = R + r * np.cos(q * t)
        return np.stack([rho * np.cos(p * t), rho * np.sin(p * t), r * np.sin(q * t)], axis=1)
    return f


def random_curve(rng, modes=4, scale=1.0):
    A = scale * rng.normal(size=(modes, 3, 2)) / np.arange(1, modes + 1)[:, None, None]

    def f(t):
        t = np.asarray(t)
        out = np.zeros((len(t), 3))
        for m in range(modes):
            a = 2 * np.pi * (m + 1) * t
            out += np.cos(a)[:, None] * A[m, :, 0] + np.sin(a)[:, None] * A[m, :, 1]
        return out
    return f


# -- kernels against the numpy reference and against each other -------------------------------
def test_kernels_match_the_numpy_reference_and_do_not_depend_on_threads():
    """Same formula (Biopolymers 54, 2000, 307) written with numpy over all pairs."""
    rng = np.random.default_rng(3)
    P = random_curve(rng)(np.arange(90) / 90) + 1e-3 * rng.normal(size=(90, 3))
    Q = random_curve(rng)(np.arange(70) / 70) + (3.0, 0, 0)
    wr1, *_ = T.writhe.__globals__["writhe_sum"](P, threads=1)
    wr2, *_ = T.writhe.__globals__["writhe_sum"](P, threads=2)
    assert wr1 == wr2
    assert wr1 == pytest.approx(naive.writhe_naive(P), abs=1e-12)
    from flowkit.topology.writhe import linking_sum
    lk1, lk2 = linking_sum(P, Q, threads=1)[0], linking_sum(P, Q, threads=2)[0]
    assert lk1 == lk2 and lk1 == pytest.approx(naive.linking_naive(P, Q), abs=1e-12)


def test_linking_matches_gauss_quadrature_of_smooth_curves():
    """Independent route: trapezoidal rule on the Gauss linking integral (no solid angles).

    The core circle of a torus links a (p, q) torus knot q times (it winds q times
    around the tube): Lk = +-q, an integer (common practice, no source).
    """
    knot, core = torus_knot(2, 3, r=0.4), circle()
    lk = T.linking_number(knot, core, n=800)
    assert abs(abs(lk.linking) - 3) < 1e-9 and lk.defect < 1e-9
    assert lk.linking == pytest.approx(naive.gauss_quadrature(knot, core, 600), abs=1e-6)


def test_segment_distance_against_a_brute_force_grid():
    rng = np.random.default_rng(5)
    for _ in range(10):
        p = rng.normal(size=(4, 3))
        exact = K.segment_distance(p[0], p[1], p[2], p[3])
        grid = naive.segment_distance_grid(*p)
        assert exact <= grid + 1e-12 and grid - exact < 1e-5


# -- writhe -------------------------------------------------------------------------------------
def test_planar_curves_have_zero_writhe():
    """A planar curve has Wr = 0: every pair of segments is coplanar (exact identity)."""
    rng = np.random.default_rng(0)
    th = 2 * np.pi * np.arange(200) / 200
    rad = 1 + 0.3 * np.cos(3 * th) + 0.2 * np.sin(5 * th + 1)  # star-shaped: no self-crossing
    P = np.stack([rad * np.cos(th), rad * np.sin(th), 0 * th], 1)
    assert T.writhe(P).writhe == 0.0
    Rm = np.linalg.qr(rng.normal(size=(3, 3)))[0]  # the same curve in a tilted plane: round-off only
    assert abs(T.writhe(P @ Rm.T).writhe) < 1e-12


@pytest.mark.parametrize("p, q", [(2, 3), (3, 2)])
def test_torus_knot_writhe_and_its_thin_torus_limit(p, q):
    """(p, q) torus knot x(t) = ((R + r cos qt) cos pt, (R + r cos qt) sin pt, r sin qt).

    Derivation (ours). Take as ribbon normal N the unit vector from the tube's core
    to the curve, cos(qt) e_rho + sin(qt) e_z; it is perpendicular to the tangent and
    its edge x + eps N is the same knot on the torus of tube radius r + eps, so the
    ribbon's linking number is the torus-surface framing, Lk = -pq for this
    orientation (two parallel (p, q) curves on nested tori link pq times; common
    practice, no source). With e_phi the core direction and M = -sin(qt) e_rho +
    cos(qt) e_z, x' = r q M + rho p e_phi, N' = q M + p cos(qt) e_phi and
    (T x N) . N' dt = -pqR / |x'| dt, so

        Tw = -(1/2 pi) int_0^2pi pqR / sqrt(r^2 q^2 + p^2 (R + r cos qt)^2) dt
           = -q [1 + (r/R)^2 (1 - q^2/p^2) / 2 + O((r/R)^4)].

    Călugăreanu–White gives Wr = Lk - Tw exactly, hence |Wr| -> q (p - 1) as r/R -> 0
    (q counts the turns around the tube, p those around the core), with the error
    q (r/R)^2 (q^2/p^2 - 1) / 2: it falls like (r/R)^2. Checked: the polygon writhe
    against -pq - Tw with Tw by scipy quadrature, and the (r/R)^2 coefficient.
    """
    def twist_exact(eps):
        g = lambda t: p * q / math.sqrt(eps ** 2 * q ** 2 + p ** 2 * (1 + eps * math.cos(q * t)) ** 2)  # noqa: E731
        return -scipy.integrate.quad(g, 0, 2 * math.pi, limit=200, epsabs=1e-13)[0] / (2 * math.pi)

    coef = []
    for eps in (0.1, 0.05):
        w = T.writhe(torus_knot(p, q, 1.0, eps), n=3000)
        assert w.writhe == pytest.approx(-p * q - twist_exact(eps), abs=max(5 * w.error, 1e-7))
        coef.append((abs(w.writhe) - q * (p - 1)) / eps ** 2)
    predicted = q * ((q / p) ** 2 - 1) / 2
    assert coef[1] == pytest.approx(predicted, rel=0.01)
    assert abs(coef[0] - predicted) > abs(coef[1] - predicted)  # the O((r/R)^4) remainder shrinks


def test_writhe_error_estimate_bounds_the_true_error():
    """Error from half the samples against the exact value -pq - Tw (as above)."""
    eps = 0.3
    g = lambda t: 6 / math.sqrt(eps ** 2 * 9 + 4 * (1 + eps * math.cos(3 * t)) ** 2)  # noqa: E731
    exact = -6 + scipy.integrate.quad(g, 0, 2 * math.pi, epsabs=1e-13)[0] / (2 * math.pi)
    w = T.writhe(torus_knot(2, 3, 1.0, eps), n=160)
    assert abs(w.writhe - exact) < 3 * w.error and w.error < 1e-2


# -- fast writhe (midpoint rule + exact near pairs) ----------------------------------------------------
def test_corrected_midpoint_rule_and_its_bound_per_segment_pair():
    """The per-pair rule and bound of flowkit.topology._fast (fourth-order Taylor remainder, derived
    there) against the exact solid angle (Biopolymers 54, 2000, 307), and the derivative bound
    max |d^4/dt^4 |x + t e|^-3| = 360 / |x|^7 against sympy."""
    from flowkit.topology._fast import _rule

    t, c = sp.symbols("t c", real=True)
    d4 = sp.diff(((1 + t * c) ** 2 + t ** 2 * (1 - c ** 2)) ** sp.Rational(-3, 2), t, 4).subs(t, 0)
    cs = np.linspace(-1, 1, 2001)
    assert np.abs(sp.lambdify(c, d4)(cs)).max() == pytest.approx(360)
    rng = np.random.default_rng(11)
    ratios = []
    for _ in range(300):
        p1, p3 = rng.normal(size=3), rng.normal(size=3) * rng.uniform(0.5, 3)
        li, lj = rng.uniform(0.05, 0.6, 2)
        ui, uj = (v / np.linalg.norm(v) for v in rng.normal(size=(2, 3)))
        p2, p4 = p1 + li * ui, p3 + lj * uj
        rho = K.segment_distance(p1, p2, p3, p4)
        if rho < 0.05:
            continue
        d = 0.5 * (p1 + p2) - 0.5 * (p3 + p4)
        v = np.dot(np.cross(li * ui, lj * uj), d)
        rule = _rule(*d, *(li * ui), *(lj * uj))[0]
        bound = 31 / 16 * max(li, lj) ** 4 * abs(v) / rho ** 7
        err = abs(K.pair_solid_angle(p1, p2, p3, p4) - rule)
        assert err <= bound * (1 + 1e-9) + 1e-15
        ratios.append(err / bound if bound > 0 else 0)
    assert len(ratios) > 200 and max(ratios) > 0.01  # the bound is not vacuous


def test_fast_writhe_within_its_bound_of_the_exact_kernel():
    """Fast against the exact polygon sum (the reference kernel): the difference stays within the stated
    bound, the bound falls with the sampling, and the value does not depend on the thread count."""
    from flowkit.topology.writhe import fast_writhe_sum, writhe_sum

    rng = np.random.default_rng(4)
    f = random_curve(rng)
    for n, noise in ((1500, 0.0), (1500, 2e-3), (4000, 0.0)):
        P = f(np.arange(n) / n) + noise * rng.normal(size=(n, 3))
        exact, dist, *_ = writhe_sum(P)
        fast1, bound, fdist, *_, pairs = fast_writhe_sum(P, threads=1)
        fast2 = fast_writhe_sum(P, threads=2)[0]
        assert fast1 == fast2 and fdist == dist and pairs > 0
        assert abs(fast1 - exact) <= bound and abs(fast1 - exact) > 0
        if noise == 0.0:
            assert bound < 3e-3
    w = T.writhe(f, n=4000, method="fast")
    assert w.method == "fast" and w.method_bound == pytest.approx(bound, rel=1e-6)
    assert T.writhe(f, n=4000, method="exact").writhe == pytest.approx(w.writhe, abs=w.method_bound)
    with pytest.raises(FlowkitError, match="method must be"):
        T.writhe(f, method="quick")


def test_fast_writhe_of_planar_curves_and_the_thin_torus_limit():
    """Planar curve: every numerator (u_i x u_j).(m_i - m_j) vanishes, Wr = 0 exactly. Torus knot:
    |Wr| = pq + Tw (see test_torus_knot_writhe_and_its_thin_torus_limit), within the sampling error
    plus the fast method's bound."""
    th = 2 * np.pi * np.arange(5000) / 5000
    rad = 1 + 0.3 * np.cos(3 * th) + 0.2 * np.sin(5 * th + 1)
    P = np.stack([rad * np.cos(th), rad * np.sin(th), 0 * th], 1)
    assert T.writhe(P, method="fast").writhe == 0.0
    Rm = np.linalg.qr(np.random.default_rng(0).normal(size=(3, 3)))[0]
    assert abs(T.writhe(P @ Rm.T, method="fast").writhe) < 1e-11
    p, q, eps = 2, 3, 0.05
    g = lambda t: p * q / math.sqrt(eps ** 2 * q ** 2 + p ** 2 * (1 + eps * math.cos(q * t)) ** 2)  # noqa: E731
    tw = -scipy.integrate.quad(g, 0, 2 * math.pi, limit=200, epsabs=1e-13)[0] / (2 * math.pi)
    w = T.writhe(torus_knot(p, q, 1.0, eps), n=20000, method="auto")
    assert w.method == "fast" and w.method_bound < 1e-4
    assert w.writhe == pytest.approx(-p * q - tw, abs=5 * w.error + w.method_bound)
    coef = (abs(w.writhe) - q * (p - 1)) / eps ** 2
    assert coef == pytest.approx(q * ((q / p) ** 2 - 1) / 2, rel=0.01)


# -- linking -------------------------------------------------------------------------------------
def test_hopf_link_and_unlinked_circles():
    """Two unit circles through each other's centres link once (Hopf link); apart they do not (exact)."""
    a = circle()
    b = circle((1, 0, 0), 1, (1, 0, 0), (0, 0, 1))
    assert abs(abs(T.linking_number(a, b, n=100).linking) - 1) < 1e-12
    assert T.linking_number(a, b, n=100).integer == -T.linking_number(b, circle(e1=(0, 1, 0), e2=(1, 0, 0)),
                                                                      n=100).integer
    assert abs(T.linking_number(a, circle((3, 0, 0), 1, (1, 0, 0), (0, 0, 1)), n=100).linking) < 1e-12


# -- ribbons -------------------------------------------------------------------------------------
@pytest.mark.parametrize("k", [1, 3])
def test_circle_ribbon_turning_k_times_has_twist_k(k):
    """N = cos(kt) e_rho - sin(kt) e_z turns k times positively about T = e_phi: Tw = k, Wr = 0 (exact)."""
    def normal(t):
        a = 2 * np.pi * np.asarray(t)
        er = np.stack([np.cos(a), np.sin(a), 0 * a], 1)
        return np.cos(k * a)[:, None] * er - np.sin(k * a)[:, None] * np.array([0, 0, 1.0])

    r = T.ribbon_topology(T.ribbon(circle(), normal, n=96))
    assert r.twist == pytest.approx(k, abs=1e-12) and r.writhe == 0.0
    assert r.twist_smooth == pytest.approx(k, abs=1e-12)
    assert r.linking_integer == k and abs(r.defect) < 1e-10


def test_calugareanu_white_on_random_smooth_ribbons():
    """Lk(x, x + eps N) = Tw + Wr (Rev. Math. Pures Appl. 4, 1959, 5; Amer. J. Math. 91, 1969, 693;
    cited from memory), to the round-off of the solid-angle sums; the polygon twist equals an
    independent loop implementation, and the smooth (FFT) twist agrees within the error estimate."""
    rng = np.random.default_rng(11)
    for _ in range(4):
        f, g = random_curve(rng), random_curve(rng)
        rb = T.ribbon(f, g, n=500)
        r = T.ribbon_topology(rb)
        assert abs(r.defect) < 1e-8 and abs(r.linking - r.linking_integer) < 1e-8
        assert r.twist == pytest.approx(naive.twist_turns(rb.points, rb.normals), abs=1e-12)
        assert abs(r.twist_smooth - r.twist) < 10 * r.twist_error + 1e-9


# -- smooth geometry -----------------------------------------------------------------------------
def test_geometry_of_an_ellipse_and_a_circle():
    """Ellipse perimeter 4a E(1 - b^2/a^2) (scipy.special.ellipe); circle curvature 1/R, torsion 0."""
    a, b = 2.0, 0.7
    g = T.curve_geometry(lambda t: np.stack([a * np.cos(2 * np.pi * t), b * np.sin(2 * np.pi * t), 0 * t], 1), 128)
    assert g.length == pytest.approx(4 * a * scipy.special.ellipe(1 - b ** 2 / a ** 2), rel=1e-12)
    assert g.total_curvature == pytest.approx(2 * np.pi, rel=1e-12)  # a convex plane curve turns once
    c = T.curve_geometry(circle(r=3.0), 64)
    assert np.allclose(c.curvature, 1 / 3.0, atol=1e-13) and np.allclose(c.torsion, 0, atol=1e-12)


def test_torsion_of_a_torus_knot_against_sympy():
    """Curvature and torsion from the symbolic derivatives (sympy) at the sample points."""
    t = sp.symbols("t")
    p, q, R, r = 2, 3, 1, sp.Rational(2, 5)
    X = sp.Matrix([(R + r * sp.cos(q * t)) * sp.cos(p * t), (R + r * sp.cos(q * t)) * sp.sin(p * t),
                   r * sp.sin(q * t)])
    d1, d2, d3 = X.diff(t), X.diff(t, 2), X.diff(t, 3)
    c = d1.cross(d2)
    kappa = sp.lambdify(t, sp.sqrt(c.dot(c)) / sp.sqrt(d1.dot(d1)) ** 3)
    tau = sp.lambdify(t, c.dot(d3) / c.dot(c))
    n = 256
    g = T.curve_geometry(torus_knot(2, 3, 1.0, 0.4), n)
    ts = 2 * np.pi * np.arange(n) / n
    assert np.allclose(g.curvature, kappa(ts), rtol=1e-9)
    assert np.allclose(g.torsion, tau(ts), rtol=1e-8, atol=1e-9)
    assert g.total_curvature > 4 * np.pi  # a knot: total curvature above 4 pi (Ann. of Math. 52, 1950, 248)


def test_total_torsion_of_a_curve_on_a_sphere_vanishes():
    """oint tau ds = 0 for every closed curve on a sphere (common practice, no source)."""
    rng = np.random.default_rng(2)
    f = random_curve(rng, modes=3)
    g = T.curve_geometry(lambda t: f(t) / np.linalg.norm(f(t), axis=1)[:, None], 1024)
    assert abs(g.total_torsion) < 1e-8 and g.spectral_tail < 1e-20


def test_inflection_points_of_a_planar_rose():
    """r(theta) = 1 + a cos 3 theta: inflections where r^2 + 2 r'^2 - r r'' = 0 (polar signed curvature),
    located with scipy's brentq, against the curvature minima found spectrally."""
    a = 0.3

    def f(t):
        th = 2 * np.pi * np.asarray(t)
        r = 1 + a * np.cos(3 * th)
        return np.stack([r * np.cos(th), r * np.sin(th), 0 * th], 1)

    num = lambda th: ((1 + a * np.cos(3 * th)) ** 2 + 2 * (3 * a * np.sin(3 * th)) ** 2  # noqa: E731
                      + (1 + a * np.cos(3 * th)) * 9 * a * np.cos(3 * th))
    grid = np.linspace(0, 2 * np.pi, 2001)
    roots = [scipy.optimize.brentq(num, x0, x1) / (2 * np.pi) for x0, x1 in zip(grid[:-1], grid[1:])
             if num(x0) * num(x1) < 0]
    assert len(roots) == 6
    g = T.curve_geometry(f, 2048, inflection_tol=1e-2)
    assert len(g.inflections) == 6
    assert np.allclose(np.sort(g.inflections), np.sort(roots), atol=2e-4)


# -- bad input --------------------------------------------------------------------------------------
def test_bad_curves_are_refused_with_clear_errors():
    arc = circle()(np.linspace(0, 0.5, 50))
    with pytest.raises(FlowkitError, match="does not look closed"):
        T.writhe(arc)
    with pytest.raises(FlowkitError, match="not closed"):
        T.writhe(lambda t: np.stack([t, t ** 2, 0 * t], 1))
    P = circle()(np.arange(20) / 20)
    with pytest.raises(FlowkitError, match="points 3 and 4 coincide"):
        T.writhe(np.insert(P, 4, P[3], axis=0))
    eight = lambda t: np.stack([np.sin(4 * np.pi * t), np.sin(2 * np.pi * t), 0 * t], 1)  # noqa: E731
    with pytest.raises(FlowkitError, match=r"crosses itself.*near \[-?0\.0, -?0\.0, 0\.0\]"):
        T.writhe(eight, n=64)
    with pytest.raises(FlowkitError, match=r"crosses itself.*near \[-?0\.0, -?0\.0, 0\.0\]"):
        T.writhe(eight, n=64, method="fast")  # the fast path finds it among its exact near pairs
    with pytest.raises(FlowkitError, match="near must be at least 2"):
        T.writhe(circle(), n=64, method="fast", near=1.0)
    with pytest.raises(FlowkitError, match="touch"):
        T.linking_number(circle(), circle((2, 0, 0)), n=64)
    with pytest.raises(FlowkitError, match="touch"):
        T.linking_number(circle(), circle(), n=64)
    tangent = lambda t: np.stack([-np.sin(2 * np.pi * t), np.cos(2 * np.pi * t), 0 * t], 1)  # noqa: E731
    with pytest.raises(FlowkitError, match="normal at point 0 .* parallel to the curve's tangent"):
        T.ribbon(circle(), tangent, n=32)
    with pytest.raises(FlowkitError, match="exactly one of"):
        T.ribbon(circle())


# -- helicity -------------------------------------------------------------------------------------
def test_abc_helicity_equals_its_energy():
    """ABC with A = B = C = 1 is a Beltrami field, curl u = u, so int u . curl u dV = int |u|^2 dV
    = 3 (2 pi)^3 (exact identity); the numerical rule agrees."""
    import flowkit
    from flowkit.topology.helicity import kinetic_helicity

    f = flowkit.flow("abc", A=1, B=1, C=1)
    exact = kinetic_helicity(f)
    assert exact.method == "exact (sympy)" and exact.value == pytest.approx(3 * (2 * np.pi) ** 3, rel=1e-14)
    num = kinetic_helicity(f, method="numerical", resolution=10)
    assert num.value == pytest.approx(3 * (2 * np.pi) ** 3, rel=1e-12) and num.energy == pytest.approx(num.value)


def test_ball_helicity_exact_against_scipy_quadrature():
    """Exact (sympy monomial moments) against scipy.integrate.tplquad in spherical coordinates."""
    import flowkit
    from flowkit.topology.helicity import _density, kinetic_helicity

    f = flowkit.flow("hill", strength=1.0, swirl=0.7)
    exact = kinetic_helicity(f)

    def integrand(ph, c, r):
        s = math.sqrt(1 - c * c)
        X = np.array([[r * s * math.cos(ph), r * s * math.sin(ph), r * c]])
        return _density(f, X, 0.0)[0][0] * r * r

    ref = scipy.integrate.tplquad(integrand, 0, 1, -1, 1, 0, 2 * np.pi, epsabs=1e-10)[0]
    assert exact.value == pytest.approx(ref, rel=1e-8)
    num = kinetic_helicity(flowkit.flow("stf", rotation=0.3), method="numerical", resolution=8)
    assert num.value == pytest.approx(kinetic_helicity(flowkit.flow("stf", rotation=0.3)).value, rel=1e-12)


def test_magnetic_helicity_of_beltrami_field_and_of_a_dynamo_mode():
    """B = ABC field: curl B = B, so A = B (Coulomb gauge) and int A . B dV = int |B|^2 dV (exact).
    A growing ABC mode obeys |H_M| <= int |B|^2 dV / k_min with k_min = 1 in the 2 pi box
    (Sel. Math. Sov. 5, 1986, 327; cited from memory), and the helicity density plane is finite."""
    import flowkit
    from flowkit.topology.helicity import kinetic_helicity, mode_helicity

    n = 16
    g = 2 * np.pi * np.arange(n) / n
    X, Y, Z = np.meshgrid(g, g, g, indexing="ij")
    B = np.stack([np.sin(Z) + np.cos(Y), np.sin(X) + np.cos(Z), np.sin(Y) + np.cos(X)])
    h = mode_helicity(B)
    assert h.value == pytest.approx(h.energy, rel=1e-13) and h.energy == pytest.approx(3 * (2 * np.pi) ** 3)
    assert mode_helicity(B, "current").value == pytest.approx(h.energy, rel=1e-13)
    res = flowkit.growth_rate(flowkit.flow("abc"), rm=12, resolution=12, check_resolution=None)
    hm = mode_helicity(res)
    assert 0 < abs(hm.value) <= hm.energy
    d = kinetic_helicity(flowkit.flow("abc"), plane=("z", 0.5), plane_points=16).density
    assert d.shape == (16, 16) and np.all(np.isfinite(d))


def test_helicity_refuses_unbounded_flows():
    import flowkit
    from flowkit.topology.helicity import kinetic_helicity

    with pytest.raises(FlowkitError, match="bounded domain"):
        kinetic_helicity(flowkit.flow("lorenz"))


# -- material ribbons ----------------------------------------------------------------------------------
def _loop(t):
    a = 2 * np.pi * np.asarray(t)[:, None]
    e1, e2 = np.array([1.0, 0.0, 0.3]) / math.sqrt(1.09), np.array([0.0, 1.0, 0.0])
    return np.array([0.1, 0.05, 0.0]) + 0.5 * (np.cos(a) * e1 + np.sin(a) * e2)


def _once_turning(t):
    """In-plane radial direction turned once about the tangent along the loop: Lk = Tw = 1 at t = 0."""
    a = 2 * np.pi * np.asarray(t)[:, None]
    e1, e2 = np.array([1.0, 0.0, 0.3]) / math.sqrt(1.09), np.array([0.0, 1.0, 0.0])
    nrm = np.cross(e1, e2)
    return np.cos(a) * (np.cos(a) * e1 + np.sin(a) * e2) - np.sin(a) * nrm


def test_material_ribbon_conserves_linking_while_writhe_changes():
    """A smooth flow is an isotopy: Lk(curve, edge) cannot change (exact topological fact), while
    Wr and Tw trade (Călugăreanu–White). stf, rotation 0.3, t = 3 (a few turnovers; the loop
    stretches about 25-fold): Wr changes by more than 1, Lk stays its integer within 1e-6."""
    import flowkit
    from flowkit.topology import material_ribbon

    r = material_ribbon(flowkit.flow("stf", rotation=0.3), time=3.0, curve=_loop, normals=_once_turning, passes=6,
                        max_spacing=0.05, max_angle=0.3, initial_points=64)
    assert r.stopped == "time"
    assert round(r.linking[0]) == 1 and r.linking_drift < 1e-6
    assert np.ptp(r.writhe) > 1.0 and r.lengths[-1] > 10 * r.lengths[0]
    assert np.max(np.abs(r.defect)) < 1e-8
    assert np.allclose(r.twist + r.writhe, 1.0, atol=1e-8)
    assert np.all(r.writhe_error[1:] < 0.01)


def test_material_ribbon_per_period_and_bad_input():
    import flowkit
    from flowkit.topology import material_ribbon

    f = flowkit.flow("circular", epsilon=0.1)
    r = material_ribbon(f, periods=2, passes=2, initial_points=32, curve=lambda s: _loop(s) + np.pi,
                        normals=_once_turning)
    assert r.per_period and np.allclose(r.times, [0, f.period, 2 * f.period])
    assert np.all(np.round(r.linking) == 1) and r.linking_drift < 1e-6
    with pytest.raises(FlowkitError, match="steady"):
        material_ribbon(flowkit.flow("stf"), periods=1)
    with pytest.raises(FlowkitError, match="exactly one of"):
        material_ribbon(flowkit.flow("stf"))
    with pytest.raises(FlowkitError, match="parallel to the curve's tangent"):
        tangent = lambda s: np.roll(_loop(s), -1, axis=0) - _loop(s)  # noqa: E731
        material_ribbon(flowkit.flow("stf"), time=1.0, curve=_loop, normals=lambda s: tangent(s) * 0)


def test_material_ribbon_of_a_map_per_iteration():
    """The cat map's lift (x, y, z) -> (2x + y, x + y, z) is linear with det 1, so it is isotopic to the
    identity (GL+(3) is connected; common practice, no source): Lk of a ribbon stays its integer. The
    (2, 3) torus knot with the torus framing has Lk = -6 (see the torus test); Wr and Tw trade, and the
    positions are the exact images A^k x of their labels."""
    import flowkit
    from flowkit.topology import material_ribbon

    knot = lambda s: 0.5 + 0.3 * torus_knot(2, 3, 1.0, 0.4)(s)  # noqa: E731

    def normal(t):
        t = 2 * np.pi * np.asarray(t)
        return np.stack([np.cos(3 * t) * np.cos(2 * t), np.cos(3 * t) * np.sin(2 * t), np.sin(3 * t)], 1)

    cat = flowkit.flow("cat-map")
    r = material_ribbon(cat, periods=2, curve=knot, normals=normal, initial_points=256, max_spacing=0.01)
    assert r.per_period and np.allclose(r.times, [0, 1, 2]) and r.stopped == "time"
    assert np.all(np.round(r.linking) == -6) and r.linking_drift < 1e-9
    assert np.ptp(r.writhe) > 0.3 and np.allclose(r.twist + r.writhe, -6, atol=1e-8)
    A2 = np.linalg.matrix_power(np.array([[2.0, 1, 0], [1, 1, 0], [0, 0, 1]]), 2)
    X = r.positions
    back = np.linalg.solve(A2, X.T).T  # the labels' start points lie on the knot (torus of radii 0.3, 0.12)
    c = back - 0.5
    rho = np.hypot(c[:, 0], c[:, 1])
    assert np.abs(np.hypot(rho - 0.3, c[:, 2]) - 0.12).max() < 1e-12
    with pytest.raises(FlowkitError, match="map: pass `periods`"):
        material_ribbon(cat, time=1.0)
    with pytest.raises(FlowkitError, match="lift is discontinuous"):
        material_ribbon(flowkit.flow("sfs-map"), periods=2, curve=knot, normals=normal, initial_points=128,
                        max_points=3000, max_spacing=0.02)


# -- command line -------------------------------------------------------------------------------------
def test_cli_loop_reads_curve_files_and_names_bad_lines(tmp_path, capsys):
    """`flowkit loop --file ... --link ...`: the (2, 3) torus knot links its core 3 times (as above)."""
    import json

    import flowkit
    from flowkit.cli import main

    t = np.arange(300) / 300
    np.savetxt(tmp_path / "knot.txt", torus_knot(2, 3, 1.0, 0.3)(t))
    np.savetxt(tmp_path / "core.txt", circle()(t))
    assert main(["loop", "--file", str(tmp_path / "knot.txt"), "--link", str(tmp_path / "core.txt"),
                 "--save", str(tmp_path / "lk.json"), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert abs(out["linking"]["integer"]) == 3 and out["linking"]["defect"] < 1e-9
    assert flowkit.load(tmp_path / "lk.json").integer == out["linking"]["integer"]
    (tmp_path / "bad.txt").write_text("0 0 0\n1 0 0\n1 nan 0\n0 1 0\n")
    assert main(["loop", "--file", str(tmp_path / "bad.txt"), "--json"]) == 2
    assert "bad.txt, line 3: coordinates must be finite" in json.loads(capsys.readouterr().out)["error"]
    (tmp_path / "latin.txt").write_bytes("0 0 0 # caf\xe9\n".encode("latin-1"))
    assert main(["loop", "--file", str(tmp_path / "latin.txt"), "--json"]) == 2
    assert "not UTF-8" in json.loads(capsys.readouterr().out)["error"]


# -- field lines of a dynamo mode ---------------------------------------------------------------------
def test_mode_field_flow_is_the_truncated_fourier_sum():
    """The flow's velocity on the grid is the mode's field up to the dropped energy: by Parseval,
    |B - B_kept| / |B| = sqrt(1 - kept fraction) (exact identity); the gradient is exact
    (central differences agree) and traceless (each kept term has k . B_k = 0)."""
    import flowkit
    from flowkit.topology.fieldlines import mode_field_flow
    from flowkit.topology.helicity import mode_field

    res = flowkit.growth_rate(flowkit.flow("abc"), rm=12, resolution=12, check_resolution=None)
    fl = mode_field_flow(res, energy_fraction=0.95)
    frac = fl.family.structure["fourier"]["energy_fraction"]
    assert 0.95 <= frac < 1
    B = mode_field(res)
    n = B.shape[1]
    g = 2 * np.pi * np.arange(n) / n
    X = np.stack(np.meshgrid(g, g, g, indexing="ij"), -1).reshape(-1, 3)
    Bg = B.reshape(3, -1).T
    rel = np.linalg.norm(fl.velocity(X) - Bg) / np.linalg.norm(Bg)
    assert rel == pytest.approx(math.sqrt(1 - frac), rel=1e-6)
    G = fl.gradient(X[:7])
    h = 1e-5
    Gn = np.stack([(fl.velocity(X[:7] + h * e) - fl.velocity(X[:7] - h * e)) / (2 * h) for e in np.eye(3)], -1)
    assert np.allclose(G, Gn, atol=1e-7 * np.abs(G).max())
    assert np.abs(np.trace(G, axis1=1, axis2=2)).max() < 1e-12 * np.abs(G).max()


def test_plots_draw_curves_ribbons_histories_and_density():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    import flowkit
    from flowkit.topology import curve_geometry, kinetic_helicity, ribbon, ribbon_topology
    from flowkit.topology.plot import plot_curve, plot_helicity_density, plot_ribbon

    fig = plt.figure()
    ax = fig.add_subplot(121, projection="3d")
    g = curve_geometry(torus_knot(2, 3, 1.0, 0.4), 128)
    lc = plot_curve(ax, g)[0]
    assert np.allclose(np.sort(lc.get_array()), np.sort(0.5 * (g.curvature + np.roll(g.curvature, -1))))
    r = ribbon_topology(ribbon(torus_knot(2, 3, 1.0, 0.4), circle(), n=64), error=False)
    pc, line = plot_ribbon(fig.add_subplot(122, projection="3d"), r)
    assert len(line.get_data_3d()[0]) == 65 and np.allclose(line.get_data_3d()[0][:64], r.points[:, 0])
    fig2, ax2 = plt.subplots()
    h = kinetic_helicity(flowkit.flow("abc"), plane=("z", 0.0), plane_points=12)
    assert plot_helicity_density(ax2, h)[0].get_array().size == 144
    plt.close("all")


def test_loop_explorer_time_slider_redraws_loop_and_histories():
    """The explorer is a thin layer: what it draws equals material_ribbon called with the same settings."""
    import matplotlib

    matplotlib.use("Agg")
    import flowkit
    from flowkit.lab import LoopExplorer
    from flowkit.topology import material_ribbon

    ex = LoopExplorer("stf", params={"rotation": 0.3}, time=0.5, passes=2, max_points=3000)
    ex.update()
    ref = material_ribbon(flowkit.flow("stf", rotation=0.3), time=0.5, passes=2, max_points=3000,
                          max_spacing=0.02, initial_points=128)
    x, y = ex.wr_line.get_data()
    np.testing.assert_allclose(x, ref.times)
    np.testing.assert_allclose(y, ref.writhe, atol=1e-12)
    assert len(ex.loop_line.get_data_3d()[0]) == ref.npoints[-1] + 1
    ex.time_slider.value = 1.0
    ex.flush()
    assert ex.wr_line.get_data()[0][-1] == pytest.approx(1.0, rel=1e-3)
    ex.close()
    circ = LoopExplorer("circular", params={"epsilon": 0.1}, time=2.0, passes=2, max_points=3000)
    assert not circ.per_period.disabled and ex.per_period.disabled  # steady stf: nothing to count per period
    circ.per_period.value = True
    circ.update()
    per = circ.flow.period
    n = max(1, int(round(float(circ.time_slider.value) / per)))  # T rounded to whole periods, at least one
    np.testing.assert_allclose(circ.wr_line.get_data()[0], per * np.arange(n + 1))
    circ.close()


def test_flux_tube_lines_link_the_axis_lk_plus_twist_times():
    """Lines on a thin tube around the (2, 3) torus knot with the torus framing (Lk = -6, see the torus
    test) and one extra turn link the axis and each other -6 + 1 = -5 times (exact: added twist adds
    to the linking number)."""
    from flowkit.topology.ribbons import flux_tube_lines

    def normal(t):
        t = 2 * np.pi * np.asarray(t)
        return np.stack([np.cos(3 * t) * np.cos(2 * t), np.cos(3 * t) * np.sin(2 * t), np.sin(3 * t)], 1)

    rb = T.ribbon(torus_knot(2, 3, 1.0, 0.3), normal, n=600)
    assert T.ribbon_topology(rb, error=False).linking_integer == -6
    a, b = flux_tube_lines(rb, 0.02, twist=1, lines=2)
    assert T.linking_number(rb.points, a).integer == -5 and T.linking_number(a, b).integer == -5
    with pytest.raises(FlowkitError, match="whole number"):
        flux_tube_lines(rb, 0.02, twist=0.5)


# -- field lines of a ball (sphere-dynamo) mode ---------------------------------------------------------
def _free_decay_result(L=3, N=16):
    """A ball 'result' built from closed forms: the poloidal dipole S_10 = j_1(pi r) and the toroidal
    T_11 = j_1(k r), k = 4.4934... the first zero of j_1 (free-decay modes of the insulating sphere,
    rates pi^2 and k^2; Proc. R. Soc. Lond. A 425, 1989, 407, cited from memory)."""
    from types import SimpleNamespace

    from flowkit.dynamo.sphere.basis import RadialBasis

    r = RadialBasis(N, L).r
    k1 = scipy.optimize.brentq(lambda x: scipy.special.spherical_jn(1, x), 4, 5)
    mode = np.zeros((2, 2, 2, L + 1, N))
    mode[0, 1, 0, 1] = scipy.special.spherical_jn(1, math.pi * r)  # S, m = 0, l = 1
    mode[0, 0, 1, 1] = scipy.special.spherical_jn(1, k1 * r)  # T, m = 1, l = 1
    return SimpleNamespace(mode=mode, orders=[0, 1], domain="ball", resolution=[L, N], rm=None), k1


def _closed_form_field(k1, toroidal=True):
    """B = curl curl(S x) + curl(T x) in Cartesian sympy: S = j_1(pi r) Y_10 inside, j_1(pi) r^-2 Y_10
    outside (the potential dipole); T = j_1(k1 r) Re Y_11 inside, 0 outside. Y_10 = sqrt(3/4pi) z/r,
    Re Y_11 = sqrt(3/8pi) x/r (orthonormal, no Condon-Shortley phase)."""
    x, y, z = sp.symbols("x y z", real=True)
    X = sp.Matrix([x, y, z])
    r = sp.sqrt(x * x + y * y + z * z)
    j1 = lambda a: sp.sin(a) / a ** 2 - sp.cos(a) / a  # noqa: E731
    curl = lambda F: sp.Matrix([sp.diff(F[2], y) - sp.diff(F[1], z), sp.diff(F[0], z) - sp.diff(F[2], x),  # noqa: E731
                                sp.diff(F[1], x) - sp.diff(F[0], y)])
    y10, y11 = sp.sqrt(sp.Rational(3, 4) / sp.pi) * z / r, sp.sqrt(sp.Rational(3, 8) / sp.pi) * x / r
    inside = curl(curl(j1(sp.pi * r) * y10 * X)) + (curl(j1(k1 * r) * y11 * X) if toroidal else sp.zeros(3, 1))
    outside = curl(curl(j1(sp.pi) * r ** -2 * y10 * X))
    return sp.lambdify((x, y, z), inside, "numpy"), sp.lambdify((x, y, z), outside, "numpy")


def test_ball_mode_field_against_closed_forms_and_its_potential_exterior():
    """evaluate_field against the free-decay closed forms (inside and the potential dipole outside),
    against the sphere solver's own mode_field inside, divergence-free and curl-free outside by central
    differences, and continuous across r = 1 (all components: the insulating condition)."""
    from flowkit.dynamo.sphere.fieldeval import evaluate_field
    from flowkit.dynamo.sphere.mode import mode_field

    res, k1 = _free_decay_result()
    fin, fout = _closed_form_field(k1)
    rng = np.random.default_rng(2)
    d = rng.normal(size=(40, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    Xin, Xout = d * rng.uniform(0.05, 0.98, (40, 1)), d * rng.uniform(1.02, 3.0, (40, 1))
    for X, f in ((Xin, fin), (Xout, fout)):
        ref = np.array([np.ravel(f(*p)) for p in X])
        assert np.abs(evaluate_field(res, X) - ref).max() < 1e-10 * np.abs(ref).max()
    assert np.allclose(evaluate_field(res, Xin), mode_field(res, Xin), atol=1e-14)
    h = 1e-5
    for X in (Xin, Xout):
        J = np.stack([(evaluate_field(res, X + h * e) - evaluate_field(res, X - h * e)) / (2 * h) for e in np.eye(3)], -1)
        scale = np.abs(J).max()
        assert np.abs(np.trace(J, axis1=1, axis2=2)).max() < 1e-7 * scale
    curl_out = np.stack([J[:, 2, 1] - J[:, 1, 2], J[:, 0, 2] - J[:, 2, 0], J[:, 1, 0] - J[:, 0, 1]], 1)
    assert np.abs(curl_out).max() < 1e-7 * scale
    a, b = evaluate_field(res, d * (1 - 1e-9)), evaluate_field(res, d * (1 + 1e-9))
    assert np.abs(a - b).max() < 1e-7 * np.abs(a).max()
    with pytest.raises(FlowkitError, match="ball dynamo result"):
        evaluate_field(flowkit_growth_box(), Xin)
    # the solver's own free-decay mode (no flow): rate -pi^2 and, up to a factor, the dipole closed form
    import flowkit

    free = flowkit.growth_rate(flowkit.flow("hill", strength=0.0, swirl=0.0), rm=1.0, resolution=(4, 16),
                               keep_mode=True, check_resolution=None)
    assert free.growth_rate == pytest.approx(-math.pi ** 2, abs=1e-8)
    c = free.mode[0] + 1j * free.mode[1]
    phase = float(np.angle(c.ravel()[np.argmax(np.abs(c))]))
    dip_in, dip_out = _closed_form_field(k1, toroidal=False)
    for X, f in ((Xin, dip_in), (Xout, dip_out)):
        ref = np.array([np.ravel(f(*p)) for p in X])
        got = evaluate_field(free, X, phase=phase)
        scale = np.sum(got * ref) / np.sum(ref * ref)
        assert np.abs(got - scale * ref).max() < 1e-8 * np.abs(got).max()


def flowkit_growth_box():
    from types import SimpleNamespace
    return SimpleNamespace(mode=np.zeros((2, 3, 4, 4, 4)), domain="box")


def test_ball_mode_as_a_flow_sections_and_exact_gradient():
    """The compiled flow is the evaluator's field everywhere (inside and outside); its complex-step
    gradient matches central differences and is traceless to round-off (div B = 0 of every harmonic);
    a Poincaré section of the field lines of a t2s2 mode runs on it."""
    import flowkit
    from flowkit.dynamo.sphere import benchmark_flow
    from flowkit.dynamo.sphere.fieldeval import evaluate_field
    from flowkit.sections.geometry import Plane
    from flowkit.topology.fieldlines import mode_field_flow

    res, _ = _free_decay_result()
    fl = mode_field_flow(res, energy_fraction=1.0)
    assert fl.domain == "unbounded" and len(fl.family.structure["harmonics"]["kept"]) == 2
    X = np.random.default_rng(3).uniform(-1.6, 1.6, (60, 3))
    assert np.allclose(fl.velocity(X), evaluate_field(res, X), atol=1e-14, rtol=0)
    G, h = fl.gradient(X), 1e-6
    Gn = np.stack([(evaluate_field(res, X + h * e) - evaluate_field(res, X - h * e)) / (2 * h) for e in np.eye(3)], -1)
    assert np.abs(G - Gn).max() < 1e-7 * np.abs(G).max()
    assert np.abs(np.trace(G, axis1=1, axis2=2)).max() < 1e-12 * np.abs(G).max()
    mode = flowkit.growth_rate(benchmark_flow("t2s2"), rm=60, resolution=(8, 8), keep_mode=True,
                               check_resolution=None)
    ml = mode_field_flow(mode)
    sec = flowkit.poincare_section(ml, [[0.3, 0.0, 0.2], [0.5, 0.0, -0.1]], Plane((0, 1, 0), 0.0), crossings=20)
    assert sec.points.shape[0] > 0 and np.all(np.isfinite(sec.points))
    # Liouville: the exponents of a solenoidal field sum to the mean of div B = 0 (exact identity)
    spec = flowkit.lyapunov_spectrum(ml, [0.3, 0.0, 0.2], time=30.0, intervals=60, blocks=6)
    assert abs(np.sum(spec.exponents)) < 1e-6 * max(1.0, np.abs(spec.exponents).max())


def test_relative_helicity_of_a_ball_field_against_cartesian_quadrature():
    """Closed-form ball field (insulating conditions hold: T(1) = 0, S'(1) + (l+1) S(1) = 0) with
    harmonics (l, m) = (1, 0) poloidal and toroidal, (2, 1) both with complex coefficients, (1, 1)
    toroidal only. Reference: A = T x + curl(S x) and B in Cartesian sympy (curl A = B checked at
    points), int A . B and int |B|^2 over the ball and over r > 1 by product Gauss rules. The relative
    helicity is gauge independent (J. Fluid Mech. 147, 1984, 133; cited from memory)."""
    from types import SimpleNamespace

    from flowkit.dynamo.sphere.basis import RadialBasis
    from flowkit.topology.helicity import mode_helicity

    L, N = 2, 12
    rn = RadialBasis(N, L).r
    prof = {("S", 0, 1): (1.0, lambda r: r * (5 - 3 * r ** 2)), ("T", 0, 1): (1.0, lambda r: r * (1 - r ** 2)),
            ("S", 1, 2): (1 + 0.5j, lambda r: r ** 2 * (7 - 5 * r ** 2)),
            ("T", 1, 2): (0.3 - 0.2j, lambda r: r ** 2 * (1 - r ** 2)), ("T", 1, 1): (0.7j, lambda r: r * (1 - r ** 4))}
    mode = np.zeros((2, 2, 2, L + 1, N))
    for (kind, i, l), (c, f) in prof.items():
        mode[0, int(kind == "S"), i, l] = (c * f(rn)).real
        mode[1, int(kind == "S"), i, l] = (c * f(rn)).imag
    res = SimpleNamespace(mode=mode, orders=[0, 1], domain="ball", resolution=[L, N], rm=None, provenance={})
    h = mode_helicity(res)
    assert h.quantity == "relative magnetic"

    x, y, z = sp.symbols("x y z", real=True)
    X = sp.Matrix([x, y, z])
    r = sp.sqrt(x * x + y * y + z * z)
    Y = {(0, 1): sp.sqrt(3 / (4 * sp.pi)) * z / r, (1, 1): sp.sqrt(3 / (8 * sp.pi)) * (x + sp.I * y) / r,
         (1, 2): sp.sqrt(15 / (8 * sp.pi)) * z * (x + sp.I * y) / r ** 2}
    R = sp.Symbol("R", positive=True)

    def scalar(kind, outside):
        tot = 0
        for (k, i, l), (c, f) in prof.items():
            if k == kind:
                radial = (f(1) * r ** -(l + 1) if kind == "S" else 0) if outside else f(R).subs(R, r)
                tot += sp.re(sp.expand(sp.nsimplify(c) * radial * Y[(i, l)]))
        return tot

    curl = lambda F: sp.Matrix([sp.diff(F[2], y) - sp.diff(F[1], z), sp.diff(F[0], z) - sp.diff(F[2], x),  # noqa: E731
                                sp.diff(F[1], x) - sp.diff(F[0], y)])
    totals = {}
    for outside in (False, True):
        T, S = scalar("T", outside), scalar("S", outside)
        A = T * X + curl(S * X)
        B = curl(T * X) + curl(curl(S * X))
        dens = sp.lambdify((x, y, z), [A.dot(B), B.dot(B)], "numpy", cse=True)
        fa, fb = (sp.lambdify((x, y, z), list(F), "numpy", cse=True) for F in (A, B))
        p0, hh = (np.array([0.3, -0.2, 0.5]) if not outside else np.array([0.9, -0.8, 0.7])), 1e-5
        J = np.array([(np.array(fa(*(p0 + hh * e))) - np.array(fa(*(p0 - hh * e)))) / (2 * hh) for e in np.eye(3)]).T
        assert np.allclose([J[2, 1] - J[1, 2], J[0, 2] - J[2, 0], J[1, 0] - J[0, 1]], fb(*p0), atol=1e-8)  # curl A = B
        u, wu = np.polynomial.legendre.leggauss(24)
        c, wc = np.polynomial.legendre.leggauss(16)
        ph = 2 * np.pi * np.arange(16) / 16
        s_ = 0.5 * (u + 1)  # outside r = 1 / s: int_1^inf f r^2 dr = int_0^1 f(1/s) s^-4 ds
        rr, ww = (s_, 0.5 * wu * s_ ** 2) if not outside else (1 / s_, 0.5 * wu * s_ ** -4)
        Rg, Cg, Pg = np.meshgrid(rr, c, ph, indexing="ij")
        Wg = ww[:, None, None] * wc[None, :, None] * (2 * np.pi / 16)
        Sg = np.sqrt(1 - Cg ** 2)
        vals = dens(Rg * Sg * np.cos(Pg), Rg * Sg * np.sin(Pg), Rg * Cg)
        totals[outside] = [float(np.sum(np.broadcast_to(v, Rg.shape) * Wg)) for v in vals]
    hel = totals[False][0] + totals[True][0]
    assert abs(totals[True][0]) < 1e-12 and abs(hel) > 0.1
    assert h.value == pytest.approx(hel, rel=1e-10)
    assert h.energy == pytest.approx(totals[False][1] + totals[True][1], rel=1e-8)
    with pytest.raises(FlowkitError, match="relative magnetic helicity only"):
        mode_helicity(res, "current")


def _axisymmetric_result():
    """The free-decay dipole S_10 with a toroidal T_10 = j_1(k r) / 2: an axisymmetric field whose
    magnetic axis (the circle r = r0, z = 0 where (r S)' = 0, so the poloidal part vanishes) is a
    closed field line."""
    from flowkit.dynamo.results import GrowthResult

    res, _ = _free_decay_result()
    mode = res.mode.copy()
    mode[0, 0, 0, 1], mode[0, 0, 1, 1] = 0.5 * mode[0, 0, 1, 1], 0.0
    r0 = scipy.optimize.brentq(lambda r: math.pi * r * scipy.special.spherical_jn(1, math.pi * r, derivative=True)
                               + scipy.special.spherical_jn(1, math.pi * r), 0.3, 0.99)
    return GrowthResult(growth_rate=-math.pi ** 2, frequency=0.0, rm=0.0, resolution=[3, 16], method="closed form",
                        mode=mode, domain="ball", orders=[0, 1]), r0


def test_field_line_linking_equals_the_winding_around_the_magnetic_axis(tmp_path, capsys):
    """A closed curve links the circle r = r0, z = 0 as often as its meridional projection (rho, z) winds
    around (r0, 0): both count signed crossings of the disk the circle bounds (common practice, no
    source). The axis itself is traced as a closed field line (gap ~ 0); the second line after three
    toroidal returns is closed by its chord, and its winding is counted independently by angles."""
    import json

    from flowkit.cli import main
    from flowkit.topology.fieldlines import mode_field_flow
    from flowkit.topology.fieldlinks import field_line_linking

    res, r0 = _axisymmetric_result()
    fl = mode_field_flow(res)
    lk = field_line_linking(fl, [r0, 0, 0], [r0 + 0.1, 0, 0], returns=(1, 3), samples=1500)
    axis, line = lk.first, lk.second
    assert lk.gaps[0] < 1e-9 and np.abs(np.hypot(axis[:, 0], axis[:, 1]) - r0).max() < 1e-8
    rho, z = np.hypot(line[:, 0], line[:, 1]) - r0, line[:, 2]
    ang = np.arctan2(z, rho)
    winding = np.sum(np.angle(np.exp(1j * np.diff(np.append(ang, ang[0]))))) / (2 * np.pi)
    assert abs(winding - round(winding)) < 1e-9 and round(winding) != 0
    assert abs(lk.integer) == abs(round(winding)) and lk.closed_defect < 1e-9
    assert lk.gaps[1] > 0.01 and 0 < lk.defect < 0.5  # the open line is not closed: Lk is not an integer
    import flowkit
    for suffix in (".json", ".npz", ".nc"):  # the field-line fields survive every format
        back = flowkit.load(lk.save(tmp_path / f"lk{suffix}"))
        assert back.gaps == pytest.approx(lk.gaps) and back.open_linking == pytest.approx(lk.open_linking)
    # the command line gives the same numbers from a saved mode
    res.save(tmp_path / "mode.npz")
    assert main(["loop", "--mode", str(tmp_path / "mode.npz"), "--seeds", f"{r0},0,0", f"{r0 + 0.1},0,0",
                 "--returns", "1,3", "--samples", "1500", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)["field_line_linking"]
    assert out["integer"] == lk.integer and out["linking"] == pytest.approx(lk.linking, abs=1e-9)
    assert main(["loop", "--mode", str(tmp_path / "mode.npz"), "--seeds", "0,0", "1,1,1", "--json"]) == 2
    assert "--seeds takes 3 comma-separated numbers" in json.loads(capsys.readouterr().out)["error"]


def test_fast_linking_within_its_bound_and_ribbons_on_the_fast_path():
    """Fast linking against the exact kernel (difference within the bound); the (2, 3) knot links its
    core circle 3 times (as above); a framed knot at 20,000 points (fast sums for Wr and Lk) still has
    Lk = -6 and Călugăreanu-White within the stated bound (the torus test's derivation)."""
    from flowkit.topology.writhe import fast_linking_sum, linking_sum

    n = 3000
    P, Q = torus_knot(2, 3, 1.0, 0.3)(np.arange(n) / n), circle()(np.arange(n + 37) / (n + 37))
    exact = linking_sum(P, Q)[0]
    fast, bound, *_ = fast_linking_sum(P, Q)
    assert abs(fast - exact) <= bound < 1e-4 and abs(abs(round(fast)) - 3) == 0
    assert fast_linking_sum(P, Q, threads=1)[0] == fast_linking_sum(P, Q, threads=2)[0]
    lk = T.linking_number(P, Q, method="fast")
    assert lk.integer == round(exact) and lk.provenance["method_bound"] == pytest.approx(bound)

    def normal(t):
        t = 2 * np.pi * np.asarray(t)
        return np.stack([np.cos(3 * t) * np.cos(2 * t), np.cos(3 * t) * np.sin(2 * t), np.sin(3 * t)], 1)

    r = T.ribbon_topology(T.ribbon(torus_knot(2, 3, 1.0, 0.3), normal, n=20000), error=False)
    assert 0 < r.method_bound < 1e-5 and r.linking_integer == -6
    assert abs(r.defect) < 1e-9 + r.method_bound
