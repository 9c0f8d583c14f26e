"""Helicity: kinetic (int u . curl u dV), magnetic (int A . B dV) and current (int B . curl B dV).

Kinetic helicity of a flow over its domain (the unit ball or the 2 pi box):

- exactly, with sympy, when the family carries its expressions (polynomial ball
  flows, trigonometric box flows): box integrals by sympy; ball integrals of
  polynomials term by term with the exact monomial moments of the ball,
  int x^a y^b z^c dV = 2 G(al) G(be) G(ga) / (G(al + be + ga) (a + b + c + 3)),
  al = (a + 1)/2 etc., zero unless a, b, c are all even (Amer. Math. Monthly 108,
  2001, 446; cited from memory);
- otherwise numerically from the compiled velocity and exact gradient (Gauss–Legendre
  in r and cos(theta) and the periodic trapezoidal rule in phi for the ball; the
  periodic trapezoidal rule in the box), with the error estimated from a second,
  coarser rule.

Magnetic and current helicity of a periodic field on the grid (a box dynamo mode):
A in the Coulomb gauge from B in Fourier space, A_k = i k x B_k / |k|^2, and the
integrals by Parseval. The mean field (k = 0) has no periodic vector potential; it
is left out and reported.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.validation import one_of, resolution as check_resolution

_BOX = (2 * math.pi) ** 3


def _curl_rows(G: np.ndarray) -> np.ndarray:
    """Vorticity from gradients G[n, i, j] = du_i/dx_j."""
    return np.stack([G[:, 2, 1] - G[:, 1, 2], G[:, 0, 2] - G[:, 2, 0], G[:, 1, 0] - G[:, 0, 1]], axis=1)


def _density(flow, X: np.ndarray, t: float) -> tuple[np.ndarray, np.ndarray]:
    u = flow.velocity(X, t)
    w = _curl_rows(flow.gradient(X, t))
    return np.einsum("ij,ij->i", u, w), np.einsum("ij,ij->i", u, u)


# -- exact -----------------------------------------------------------------------------------
def _exact(flow, t: float):
    """(helicity, energy, formula) from the sympy expressions, or None when not possible."""
    import sympy as sp

    exprs = flow.family.exprs
    if exprs is None:
        return None
    from flowkit.flows.grammar import as_sympy  # family expressions are sympy objects; never text

    x, y, z, ts = sp.symbols("x y z t", real=True)
    by_name = {s.name: s for e in exprs for s in as_sympy(e).free_symbols}
    X, Y, Z = by_name.get("x", x), by_name.get("y", y), by_name.get("z", z)
    u = [as_sympy(e) for e in exprs]
    subs = {by_name[k]: sp.nsimplify(v) for k, v in flow.param_dict.items() if k in by_name}
    if "t" in by_name:
        subs[by_name["t"]] = sp.nsimplify(t)
    curl = [sp.diff(u[2], Y) - sp.diff(u[1], Z), sp.diff(u[0], Z) - sp.diff(u[2], X),
            sp.diff(u[1], X) - sp.diff(u[0], Y)]
    h = sp.expand(sum(a * b for a, b in zip(u, curl)))
    e = sp.expand(sum(a * a for a in u))
    if flow.domain == "periodic":
        integ = lambda f: sp.integrate(f, (X, 0, 2 * sp.pi), (Y, 0, 2 * sp.pi), (Z, 0, 2 * sp.pi))  # noqa: E731
    elif flow.domain == "ball":
        if not all(f.is_polynomial(X, Y, Z) for f in (h, e)):
            return None
        integ = lambda f: ball_integral(f, (X, Y, Z))  # noqa: E731
    else:
        return None
    H, E = sp.simplify(integ(h)), sp.simplify(integ(e))
    return float(H.subs(subs)), float(E.subs(subs)), str(H)


def ball_integral(f, xyz):
    """Exact integral of a polynomial over the unit ball (monomial moments, see the module docstring)."""
    import sympy as sp

    total = sp.Integer(0)
    for (a, b, c), coef in sp.Poly(f, *xyz).terms():
        if a % 2 or b % 2 or c % 2:
            continue
        al, be, ga = sp.Rational(a + 1, 2), sp.Rational(b + 1, 2), sp.Rational(c + 1, 2)
        total += coef * 2 * sp.gamma(al) * sp.gamma(be) * sp.gamma(ga) / (sp.gamma(al + be + ga) * (a + b + c + 3))
    return total


# -- numerical -------------------------------------------------------------------------------
def _numerical(flow, n: int, t: float) -> tuple[float, float]:
    if flow.domain == "periodic":
        g = 2 * math.pi * np.arange(n) / n
        X = np.stack(np.meshgrid(g, g, g, indexing="ij"), -1).reshape(-1, 3)
        h, e = _density(flow, X, t)
        return float(h.mean() * _BOX), float(e.mean() * _BOX)
    if flow.domain == "ball":
        r, wr = np.polynomial.legendre.leggauss(n)
        r, wr = 0.5 * (r + 1), 0.5 * wr
        c, wc = np.polynomial.legendre.leggauss(n)
        ph = 2 * math.pi * np.arange(2 * n) / (2 * n)
        R, C, P = np.meshgrid(r, c, ph, indexing="ij")
        W = (wr[:, None, None] * R[:, :1, :1] ** 2) * wc[None, :, None] * (math.pi / n)
        S = np.sqrt(1 - C ** 2)
        X = np.stack([R * S * np.cos(P), R * S * np.sin(P), R * C], -1).reshape(-1, 3)
        h, e = _density(flow, X, t)
        Wf = np.broadcast_to(W, R.shape).ravel()
        return float(np.sum(h * Wf)), float(np.sum(e * Wf))
    raise FlowkitError(f"helicity needs a bounded domain (the unit ball or the periodic box); flow "
                       f"'{flow.name}' lives in {flow.domain}")


def kinetic_helicity(flow, *, method: str = "auto", resolution: int = 24, t: float = 0.0, plane=None,
                     plane_points: int = 64):
    """Kinetic helicity int u . (curl u) dV of a flow over its domain.

    Parameters
    ----------
    flow : Flow
        A flow in the unit ball or the 2 pi-periodic box.
    method : {"auto", "exact", "numerical"}
        "auto": exact (sympy) when the flow's family carries expressions, else numerical.
    resolution : int
        Quadrature points per direction for the numerical rule (the error estimate
        uses 2/3 of it).
    t : float
        Time (time-dependent flows).
    plane : (axis, offset), optional
        Also sample the helicity density u . curl u on the plane ``axis = offset``
        (axis "x", "y" or "z") on a ``plane_points`` square grid.

    Returns
    -------
    Helicity
    """
    from flowkit.topology.results import Helicity

    one_of(method, "method", ("auto", "exact", "numerical"))
    if flow.domain not in ("ball", "periodic"):
        raise FlowkitError(f"helicity needs a bounded domain (the unit ball or the periodic box); flow "
                           f"'{flow.name}' lives in {flow.domain}")
    n = check_resolution(resolution, "resolution", minimum=6)
    vol = _BOX if flow.domain == "periodic" else 4 * math.pi / 3
    notes = []
    ex = _exact(flow, t) if method in ("auto", "exact") else None
    if method == "exact" and ex is None:
        raise FlowkitError(f"no exact helicity for '{flow.name}': it needs sympy expressions (polynomial in the "
                           "ball or trigonometric in the box); use method='numerical'")
    if ex is not None:
        H, E, formula = ex
        err, how = 0.0, "exact (sympy)"
    else:
        H, E = _numerical(flow, n, t)
        H2, _ = _numerical(flow, max(6, 2 * n // 3), t)
        err, how, formula = abs(H - H2), "quadrature", ""
    dens, pl = (None, None)
    if plane is not None:
        dens, pl = helicity_plane(flow, plane, plane_points, t)
    return Helicity(quantity="kinetic", value=H, error=err, energy=E, volume=vol, method=how, exact=formula,
                    density=dens, plane=pl, notes=notes,
                    provenance={"flow": flow.provenance(), "time": t, "resolution": n})


def helicity_plane(flow, plane, m: int = 64, t: float = 0.0) -> tuple[np.ndarray, dict]:
    """Helicity density u . curl u on a plane ``(axis, offset)``: (m, m) array and the grid axes.

    Points outside the unit ball are NaN for ball flows.
    """
    try:
        axis, offset = plane
        k = "xyz".index(axis)
        offset = float(offset)
    except (TypeError, ValueError):
        raise FlowkitError(f"`plane` must be (axis, offset) with axis 'x', 'y' or 'z'; got {plane!r}") from None
    m = check_resolution(m, "plane_points")
    lo, hi = (-1.0, 1.0) if flow.domain == "ball" else (0.0, 2 * math.pi)
    a = np.linspace(lo, hi, m)
    A, B = np.meshgrid(a, a, indexing="ij")
    others = [i for i in range(3) if i != k]
    X = np.zeros((m * m, 3))
    X[:, k] = offset
    X[:, others[0]] = A.ravel()
    X[:, others[1]] = B.ravel()
    inside = flow.contains(X)
    h = np.full(m * m, np.nan)
    if inside.any():
        h[inside] = _density(flow, X[inside], t)[0]
    return h.reshape(m, m), {"first": a, "second": a, "axes": np.array([others[0], others[1], k]),
                            "offset": np.array(offset)}


# -- fields on a periodic grid -----------------------------------------------------------------
def field_helicities(B: np.ndarray) -> dict:
    """Magnetic, current helicity and energy of a real periodic field B (3, N, N, N) on [0, 2 pi)^3.

    Axis order (component, x, y, z). Returns the integrals and the mean field left out.
    """
    B = np.asarray(B, dtype=np.float64)
    if B.ndim != 4 or B.shape[0] != 3 or not (B.shape[1] == B.shape[2] == B.shape[3]):
        raise FlowkitError(f"the field must have shape (3, N, N, N); got {B.shape}")
    n = B.shape[1]
    F = np.fft.fftn(B, axes=(1, 2, 3)) / n ** 3
    k1 = np.fft.fftfreq(n, 1.0 / n)
    K = np.stack(np.meshgrid(k1, k1, k1, indexing="ij"))
    k2 = np.sum(K ** 2, axis=0)
    curlF = 1j * np.cross(K, F, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        A = np.where(k2 > 0, curlF / k2, 0.0)
    hm = _BOX * float(np.sum(np.real(np.sum(A * np.conj(F), axis=0))))
    hc = _BOX * float(np.sum(np.real(np.sum(curlF * np.conj(F), axis=0))))
    energy = _BOX * float(np.sum(np.abs(F) ** 2))
    return {"magnetic": hm, "current": hc, "energy": energy, "mean_field": np.real(F[:, 0, 0, 0]).tolist()}


def mode_field(result, phase: float | None = None) -> np.ndarray:
    """The real field Re[(mode[0] + i mode[1]) e^{i phase}] of a box dynamo result (3, N, N, N).

    ``phase`` None: the phase whose real field carries the most energy (a non-oscillating
    mode is then real up to round-off).
    """
    mode = getattr(result, "mode", None)
    if mode is None:
        raise FlowkitError("this dynamo result kept no mode; run growth_rate(..., keep_mode=True)")
    if getattr(result, "domain", "box") == "ball":
        raise FlowkitError("ball (sphere dynamo) modes are not supported here yet: their helicity needs the "
                           "potential-field exterior (relative helicity); use a box dynamo result")
    mode = np.asarray(mode)
    if mode.ndim != 5 or mode.shape[:2] != (2, 3):
        raise FlowkitError(f"need a full-box mode of shape (2, 3, N, N, N); got {mode.shape} (single-kz modes "
                           "are not supported here)")
    re, im = mode[0], mode[1]
    if phase is None:
        a, b, c = np.sum(re * re), np.sum(im * im), np.sum(re * im)
        phase = 0.5 * math.atan2(-2 * c, a - b)  # maximises |Re[(re + i im) e^{i phase}]|^2
    return math.cos(phase) * re - math.sin(phase) * im


def mode_helicity(result, quantity: str = "magnetic", phase: float | None = None):
    """Magnetic (int A . B dV) or current (int B . curl B dV) helicity of a box dynamo mode.

    A ball mode gets its relative magnetic helicity with the potential-field exterior
    (:func:`flowkit.topology.ballhelicity.ball_helicity`; ``phase`` 0 is the real part).

    Parameters
    ----------
    result : GrowthResult or (3, N, N, N) array
        A box dynamo result with its mode kept, or a real periodic field on the grid.
    quantity : {"magnetic", "current"}
    phase : float, optional
        Phase of the complex mode taken as the real field (default: most energetic).

    Returns
    -------
    Helicity
        ``value`` in units of the mode's normalisation (max |B| = 1 for dynamo modes);
        ``relative`` = value / int |B|^2 dV, bounded by 1 / k_min = 1 for the magnetic
        helicity in the 2 pi box.
    """
    from flowkit.topology.results import Helicity

    one_of(quantity, "quantity", ("magnetic", "current"))
    if getattr(result, "domain", "box") == "ball":
        if quantity != "magnetic":
            raise FlowkitError("ball modes have the relative magnetic helicity only: use quantity='magnetic'")
        from flowkit.topology.ballhelicity import ball_helicity

        return ball_helicity(result, phase=phase or 0.0)
    B = result if isinstance(result, np.ndarray) else mode_field(result, phase)
    out = field_helicities(B)
    notes = []
    if max(abs(v) for v in out["mean_field"]) > 1e-12:
        notes.append(f"mean field {out['mean_field']} has no periodic vector potential; left out of A")
    prov = dict(getattr(result, "provenance", None) or {}) if not isinstance(result, np.ndarray) else {}
    prov.update({"resolution": int(B.shape[1]), "rm": getattr(result, "rm", None)})
    return Helicity(quantity=quantity, value=out[quantity], error=0.0, energy=out["energy"], volume=_BOX,
                    method="spectral (Coulomb gauge, Parseval)", exact="", notes=notes, provenance=prov)
