"""Follow a periodic orbit as a flow parameter changes, and locate where its type changes.

At each parameter value the orbit is corrected by Newton from a secant
prediction through the last two points. Between consecutive values where the
trace of DP^k crosses +2 (tangent / saddle-centre bifurcation) or -2 (period
doubling), the crossing parameter is refined by the secant method on
tr(mu) -/+ 2, with a Newton correction of the orbit at every trial value.
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.sections.periodic import newton, start_coords
from flowkit.sections.returnmap import ReturnMap
from flowkit.validation import count, finite

_KINDS = {2.0: "tangent (tr = +2)", -2.0: "period doubling (tr = -2)"}


def continue_orbit(flow, start, parameter: str, values, section=None, *, period: int = 1, tol: float = 1e-10,
                   max_iter: int = 25, max_step: float | None = None, rtol: float = 1e-12, atol: float = 1e-12,
                   refine: bool = True, progress: bool = False):
    """Follow the periodic orbit through ``start`` along ``values`` of ``parameter``.

    Parameters
    ----------
    flow : Flow
        The flow at the first parameter value (other parameters are kept).
    start : section coordinates or PeriodicOrbit
        A point near the orbit at ``values[0]`` (a converged orbit's point works).
    parameter : str
        Name of a flow parameter (e.g. "rotation").
    values : sequence of float
        Parameter values in the order to follow (monotone, small steps).
    section : Plane or Stroboscopic
        Default as in :func:`~flowkit.sections.periodic.find_periodic_orbit`.
    refine : bool
        Locate trace crossings of +-2 by the secant method.

    Returns
    -------
    ContinuationCurve
        Stops at the first value where Newton fails (``converged`` False there).
    """
    from flowkit.sections.orbit_results import ContinuationCurve
    from flowkit.sections.periodic import make_map

    if parameter not in flow.param_dict:
        raise FlowkitError(f"`parameter` {parameter!r} is not a parameter of '{flow.name}'; "
                           f"choose one of {', '.join(flow.param_dict) or '(none)'}")
    vals = np.array([finite(v, "values") for v in np.atleast_1d(values)], dtype=float)
    if vals.size < 2:
        raise FlowkitError("`values` must hold at least two parameter values")
    period = count(period, "period", what=" (returns to the section; must be positive)")
    base = make_map(flow.with_params(**{parameter: vals[0]}), section, rtol=rtol, atol=atol)
    sec = base.section
    if hasattr(start, "xi"):
        start = start.xi[0]
    xi0 = start_coords(base, start)[0]

    def solve(mu, guess):
        rm = ReturnMap(flow.with_params(**{parameter: float(mu)}), sec, rtol=rtol, atol=atol)
        run = newton(rm, guess[None], period, tol=tol, max_iter=max_iter, max_step=max_step)
        if not run.converged[0]:
            return None, None, run
        r = rm.apply(run.xi, period)
        return run.xi[0], r, run

    rows = []
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=len(vals), desc=f"follow {parameter}", unit="value")
    for i, mu in enumerate(vals):
        if len(rows) >= 2:
            (m1, x1), (m2, x2) = rows[-2][:2], rows[-1][:2]
            guess = x2 + (x2 - x1) * (mu - m2) / (m2 - m1)
        elif rows:
            guess = rows[-1][1]
        else:
            guess = xi0
        xi, r, run = solve(mu, guess)
        if bar is not None:
            bar.update(1)
        if xi is None:
            rows.append((mu, run.xi[0], np.nan, np.nan, np.nan, False, float(run.residual[0])))
            break
        jac = r.jacobian[0]
        rows.append((mu, xi, float(np.trace(jac)), float(np.linalg.det(jac)), float(r.time[0]), True,
                     float(run.residual[0])))
    if bar is not None:
        bar.close()
    good = [row for row in rows if row[5]]
    events = []
    for a, b in zip(good[:-1], good[1:]):
        for level in (2.0, -2.0):
            if (a[2] - level) * (b[2] - level) < 0:
                events.append(_locate(solve, a, b, level) if refine else
                              {"parameter": a[0] + (level - a[2]) * (b[0] - a[0]) / (b[2] - a[2]),
                               "kind": _KINDS[level], "point": list(a[1]), "refined": False})
    prov = flow.provenance()
    prov.update(return_map=base.describe(), parameter=parameter, values=vals.tolist(), period=period, tol=tol)
    return ContinuationCurve.from_rows(rows, events, parameter, period, prov)


def _locate(solve, a, b, level, iters: int = 8) -> dict:
    """Secant on tr(mu) - level between two converged rows."""
    (m0, x0, t0), (m1, x1, t1) = (a[0], a[1], a[2]), (b[0], b[1], b[2])
    best = {"parameter": m0 + (level - t0) * (m1 - m0) / (t1 - t0), "kind": _KINDS[level], "point": list(x0),
            "refined": False}
    for _ in range(iters):
        if t1 == t0:
            break
        m = m1 - (t1 - level) * (m1 - m0) / (t1 - t0)
        xi, r, _ = solve(m, x1 + (x1 - x0) * (m - m1) / (m1 - m0) if m1 != m0 else x1)
        if xi is None:
            break
        t = float(np.trace(r.jacobian[0]))
        best = {"parameter": float(m), "kind": _KINDS[level], "point": xi.tolist(), "refined": True,
                "trace": t}
        if abs(t - level) < 1e-10 or abs(m - m1) < 1e-13 * max(1.0, abs(m)):
            break
        (m0, x0, t0), (m1, x1, t1) = (m1, x1, t1), (m, xi, t)
    return best
