"""Linking number of two field lines of a field (a dynamo mode's B as a flow), closed or nearly closed.

Each line is traced from its seed (``dx/dtau = B``) up to its k-th return to a
plane through the seed (default: perpendicular to B there, crossed in B's
direction), then sampled at equal parameter steps. A closed field line (a
periodic orbit) returns to its seed; a nearly closed one misses it by the gap
``|x(tau_k) - x(0)|``. Two numbers are reported:

- ``integer``: the Gauss linking number of the two lines each closed by the
  straight chord from its end to its start (exact polygon sums, an integer up to
  round-off; refused if the closed curves touch);
- ``linking``: the Gauss double integral over the open lines themselves (the
  closing chords' pairs left out), whose distance from ``integer`` (``defect``)
  shrinks with the gaps: it measures how far the lines are from closed.

For exactly closed lines both agree up to the sampling and the integration
tolerance.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.topology import _kernels as K
from flowkit.topology.writhe import check_apart, linking_sum
from flowkit.validation import count, points_in_domain


def trace_returns(flow, seed, returns: int = 1, plane=None, *, samples: int = 2000,
                  rtol: float = 1e-11, atol: float = 1e-13, max_steps: int | None = None):
    """A field line from ``seed`` to its ``returns``-th crossing of ``plane``, as ``samples + 1`` points.

    Returns ``(points, tau, gap)``: the samples (first = seed, last = the return
    point), the parameter length and the distance of the return point from the seed.
    """
    from flowkit.sections import Plane, Stroboscopic, poincare_section

    seed = points_in_domain(flow, np.asarray(seed, dtype=float).reshape(1, 3), "seed")[0]
    returns = count(returns, "returns")
    samples = count(samples, "samples", minimum=16)
    if plane is None:
        b = flow.velocity(seed[None, :])[0]
        nb = float(np.linalg.norm(b))
        if not nb > 0 or not math.isfinite(nb):
            raise FlowkitError(f"the field vanishes at the seed {seed.tolist()}: a field line does not start "
                               "there; move the seed")
        plane = Plane(tuple(b / nb), float(seed @ b / nb), "+")
    sec = poincare_section(flow, seed[None, :], plane, crossings=returns + 1, rtol=rtol, atol=atol,
                           max_steps=max_steps)
    t = np.asarray(sec.time)
    t = t[t > 1e-9 * max(1.0, float(np.max(np.abs(t), initial=1.0)))]  # the seed itself lies on the plane
    if len(t) < returns:
        raise FlowkitError(f"the field line from {seed.tolist()} crossed its return plane {len(t)} times, not "
                           f"{returns} (outcome: {sec.outcome_names()[0]}); "
                           "pick another seed, a plane it returns to, or fewer returns")
    tau = float(np.sort(t)[returns - 1])
    # equal parameter steps in one kernel call: a stroboscopic section of period tau / samples
    strobe = poincare_section(flow, seed[None, :], Stroboscopic(period=tau / samples), crossings=samples,
                              rtol=rtol, atol=atol, max_steps=max_steps)
    if len(strobe.points) < samples:
        raise FlowkitError(f"the field line from {seed.tolist()} stopped after {len(strobe.points)} of {samples} "
                           f"samples (outcome: {strobe.outcome_names()[0]}); loosen the tolerances or move the seed")
    pts = np.vstack([seed[None, :], strobe.points[np.argsort(strobe.time)][:samples]])
    return pts, tau, float(np.linalg.norm(pts[-1] - seed))


def open_linking(P: np.ndarray, Q: np.ndarray) -> tuple[float, float, float, int, int]:
    """Gauss integral of the open polylines P, Q and of the chord-closed ones: ``(open, closed, dist, i, j)``.

    The closed sum (exact kernel) minus the pairs that involve a closing chord
    (chord of P against closed Q, closed P against chord of Q, plus the chord pair
    counted twice): Gauss's integrand is symmetric in the two curves.
    """
    closed, dist, i, j = linking_sum(P, Q)
    rows = np.zeros(2)
    d, jj = np.full(2, np.inf), np.zeros(2, dtype=np.int64)
    K.linking_rows(np.ascontiguousarray([P[-1], P[0]]), np.ascontiguousarray(Q), rows, d, jj)
    chord_p = rows[0]
    K.linking_rows(np.ascontiguousarray([Q[-1], Q[0]]), np.ascontiguousarray(P), rows, d, jj)
    chord_q = rows[0]
    both = K.pair_solid_angle(P[-1], P[0], Q[-1], Q[0])
    return closed - (chord_p + chord_q - both) / (4 * math.pi), closed, dist, i, j


def field_line_linking(flow, a, b, *, returns=(1, 1), planes=(None, None), samples: int = 2000,
                       rtol: float = 1e-11, atol: float = 1e-13):
    """Linking number of the field lines of ``flow`` through seeds ``a`` and ``b``.

    Parameters
    ----------
    flow : Flow
        A field as a flow, e.g. :func:`flowkit.topology.fieldlines.mode_field_flow` of a dynamo mode.
    a, b : 3 numbers
        Seeds of the two lines.
    returns : (int, int)
        Returns of each line to its plane before it is closed (e.g. toroidal turns).
    planes : (Plane or None, Plane or None)
        Return planes (default: through the seed, perpendicular to the field there).
    samples : int
        Points per line.

    Returns
    -------
    Linking
        ``linking`` (open lines), ``integer`` (chord-closed lines), ``defect``,
        ``gaps`` (return distances) and ``open_linking`` set.

    Raises
    ------
    FlowkitError
        If a line does not return, or the closed lines touch (names where).
    """
    from flowkit.topology.results import Linking

    if len(tuple(returns)) != 2 or len(tuple(planes)) != 2:
        raise FlowkitError("`returns` and `planes` take one entry per line: (for a, for b)")
    lines = [trace_returns(flow, s, k, pl, samples=samples, rtol=rtol, atol=atol)
             for s, k, pl in zip((a, b), returns, planes)]
    (P, ta, ga), (Q, tb, gb) = lines
    Pc, Qc = P[:-1] if ga < 1e-12 else P, Q[:-1] if gb < 1e-12 else Q  # a closed line's end is its start
    lk_open, lk_closed, dist, i, j = open_linking(Pc, Qc)
    scale = max(np.ptp(Pc, axis=0).max(), np.ptp(Qc, axis=0).max())
    check_apart(dist, i, j, Pc, Qc, scale, "the closed field lines touch")
    n = int(round(lk_closed))
    prov = {"flow": flow.provenance(), "seeds": [list(map(float, a)), list(map(float, b))],
            "returns": list(map(int, returns)), "parameter_lengths": [ta, tb], "rtol": rtol, "atol": atol,
            "method": "field lines closed by chords; exact polygon solid angles (Biopolymers 54, 2000, 307)"}
    return Linking(linking=lk_open, integer=n, defect=abs(lk_open - n), closest_distance=dist,
                   samples=(len(Pc), len(Qc)), first=Pc, second=Qc, open_linking=lk_open,
                   closed_defect=abs(lk_closed - n), gaps=[ga, gb], provenance=prov)
