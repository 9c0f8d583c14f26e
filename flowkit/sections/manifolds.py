"""Stable and unstable manifolds of a hyperbolic periodic point of a section map.

A branch is grown from the eigenvector v of DP^k at the periodic point p with
eigenvalue lam (|lam| > 1 for the unstable manifold; the stable manifold is the
unstable manifold of the inverse map, integrated backward in time, with 1/lam).
The fundamental segment q(s) = p + sigma * delta * g^s v, s in [0, 1], g = |lam|
(lam < 0 flips the side every step, so P^2k and g = lam^2 are used), runs from
p + delta v to (about) its own image. Level j of the branch is P^(j m)(q(s)); the
levels join end to start. Every level is first the image of the previous level,
then refined where two neighbours are further apart than ``max_gap`` by
inserting the mid label and mapping its segment point forward j times (the
material-line idea, in the section plane), until the branch is ``length`` long
or ``max_points`` are used.

Homoclinic (or heteroclinic) points are the crossings of an unstable and a
stable polyline away from the periodic points themselves.
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.sections.returnmap import ReturnMap
from flowkit.validation import count, positive


def map_for(orbit, flow=None) -> ReturnMap:
    """Rebuild the return map an orbit was found with, from its provenance."""
    from flowkit.sections.geometry import Plane, Stroboscopic

    rec = (orbit.provenance or {}).get("return_map")
    if rec is None:
        raise FlowkitError("this orbit carries no return-map record; pass return_map=...")
    flow = flow if flow is not None else orbit.flow()
    sec = rec["section"]
    if sec["kind"] == "plane":
        section = Plane(sec["normal"], sec["offset"], sec["direction"], axis1=sec["e1"])
    else:
        view = Plane(sec["view_normal"], 0.0, "both", axis1=sec["e1"])
        section = Stroboscopic(sec["period"], sec["phase"], view)
    return ReturnMap(flow, section, t0=rec["t0"], rtol=rec["rtol"], atol=rec["atol"], max_time=rec["max_time"],
                     min_time=rec.get("min_time", 1e-3))


def invariant_manifolds(orbit, *, which: str = "both", length: float = 2.0, delta: float = 1e-5,
                        max_gap: float | None = None, max_points: int = 4000, max_levels: int = 40,
                        return_map: ReturnMap | None = None, flow=None):
    """Stable and/or unstable manifolds (both branches) of a hyperbolic periodic orbit.

    Parameters
    ----------
    orbit : PeriodicOrbit
        A converged hyperbolic orbit (its first point is used).
    which : {"both", "unstable", "stable"}
    length : float
        Arc length in the section wanted for each branch.
    delta : float
        Distance of the fundamental segment from the periodic point.
    max_gap : float, optional
        Largest distance between neighbouring points (default length / 200).
    max_points, max_levels : int
        Budgets per branch.

    Returns
    -------
    Manifold
    """
    from flowkit.sections.orbit_results import Manifold

    if not orbit.converged or orbit.type != "hyperbolic":
        raise FlowkitError(f"`orbit` must be a converged hyperbolic periodic orbit; got type {orbit.type!r} "
                           f"({orbit.message})")
    if which not in ("both", "unstable", "stable"):
        raise FlowkitError(f"`which` must be 'both', 'unstable' or 'stable'; got {which!r}")
    rm = return_map or map_for(orbit, flow)
    length = positive(length, "length")
    delta = positive(delta, "delta")
    max_gap = positive(max_gap, "max_gap") if max_gap is not None else length / 200.0
    max_points = count(max_points, "max_points", minimum=16)
    p = orbit.xi[0]
    lam_u, lam_s = orbit.eigenvalues[0].real, orbit.eigenvalues[-1].real
    parts = []
    kinds = ["unstable", "stable"] if which == "both" else [which]
    for kind in kinds:
        lam = lam_u if kind == "unstable" else 1.0 / lam_s
        vec = orbit.unstable_direction if kind == "unstable" else orbit.stable_direction
        m = orbit.period * (2 if lam < 0 else 1)
        g = abs(lam) ** (2 if lam < 0 else 1)
        for sign in (1.0, -1.0):
            pts, lev, lab = _grow(rm, p, sign * vec, g, m, kind == "stable", delta, length, max_gap,
                                  max_points, max_levels)
            parts.append((kind, sign, pts, lev, lab))
    prov = rm.flow.provenance()
    prov.update(return_map=rm.describe(), orbit_point=p.tolist(), period=orbit.period, length=length,
                delta=delta, max_gap=max_gap, max_points=max_points)
    return Manifold.from_branches(parts, p, orbit, prov)


def _grow(rm, p, v, g, m, backward, delta, length, max_gap, max_points, max_levels):
    """One branch: points (n, 2), their level and label, in order along the branch."""
    def seg(labels):
        return p[None] + delta * (g ** labels)[:, None] * v[None]

    labels = np.linspace(0.0, 1.0, 9)
    pts = seg(labels)
    out_p, out_lev, out_lab = [pts], [np.zeros(len(labels), int)], [labels]
    total = float(np.sum(np.linalg.norm(np.diff(pts, axis=0), axis=1)))
    used = len(labels)
    prev_lab, prev_pts = labels, pts
    for j in range(1, max_levels + 1):
        r = rm.apply(prev_pts, m, backward=backward, jacobian=False)
        lab, cur = prev_lab[r.ok], r.xi[r.ok]
        short = False
        for _ in range(30):  # refine the level where it is stretched
            if len(lab) < 2:
                break
            gap = np.linalg.norm(np.diff(cur, axis=0), axis=1)
            wide = np.flatnonzero(gap > max_gap)
            room = max_points - used
            if wide.size == 0:
                break
            if room < wide.size:
                short = True  # the budget cannot resolve this level: keep only the resolved ones
                break
            mid = 0.5 * (lab[wide] + lab[wide + 1])
            rn = rm.apply(seg(mid), m * j, backward=backward, jacobian=False)
            used += wide.size
            mid, new = mid[rn.ok], rn.xi[rn.ok]
            if mid.size == 0:
                break
            order = np.argsort(np.concatenate([lab, mid]), kind="stable")
            lab = np.concatenate([lab, mid])[order]
            cur = np.concatenate([cur, new])[order]
        if len(lab) == 0 or short:
            break
        # a gap that refinement cannot close is a tear of the map (the section's tangency curve): break there
        gap = np.linalg.norm(np.diff(cur, axis=0), axis=1)
        cuts = np.flatnonzero(gap > max_gap) + 1
        out_p.append(np.insert(cur, cuts, np.nan, axis=0))
        out_lev.append(np.insert(np.full(len(lab), j), cuts, -1))
        out_lab.append(np.insert(lab, cuts, np.nan))
        total += float(np.sum(gap[gap <= max_gap]))
        prev_lab, prev_pts = lab, cur
        if total >= length or used >= max_points:
            break
    # levels join end to start unless the map tore the curve between them
    for j in range(1, len(out_p)):
        if np.linalg.norm(out_p[j][0] - out_p[j - 1][-1]) > max_gap:
            out_p[j] = np.vstack([np.full((1, 2), np.nan), out_p[j]])
            out_lev[j] = np.concatenate([[-1], out_lev[j]])
            out_lab[j] = np.concatenate([[np.nan], out_lab[j]])
    return np.concatenate(out_p), np.concatenate(out_lev), np.concatenate(out_lab)


def polyline_distance(points: np.ndarray, line: np.ndarray, chunk: int = 512) -> np.ndarray:
    """Distance of each point (N, 2) to a polyline (M, 2) (NaN rows break the line)."""
    a, b = line[:-1], line[1:]
    keep = np.all(np.isfinite(a), axis=1) & np.all(np.isfinite(b), axis=1)
    a, b = a[keep], b[keep]
    ab = b - a
    L2 = np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300)
    out = np.empty(len(points))
    for s in range(0, len(points), chunk):
        q = points[s:s + chunk, None, :]
        t = np.clip(np.einsum("nij,ij->ni", q - a[None], ab) / L2[None], 0.0, 1.0)
        d = np.linalg.norm(q - (a[None] + t[..., None] * ab[None]), axis=2)
        out[s:s + chunk] = d.min(axis=1)
    return out


def crossings(A: np.ndarray, B: np.ndarray, chunk: int = 256) -> np.ndarray:
    """Intersection points (K, 2) of two polylines."""
    a0, a1 = A[:-1], A[1:]
    b0, b1 = B[:-1], B[1:]
    found = []
    db = b1 - b0
    for s in range(0, len(a0), chunk):
        p0 = a0[s:s + chunk, None, :]
        da = (a1[s:s + chunk] - a0[s:s + chunk])[:, None, :]
        den = da[..., 0] * db[None, :, 0] - da[..., 1] * db[None, :, 1]
        w = b0[None] - p0
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (w[..., 0] * db[None, :, 1] - w[..., 1] * db[None, :, 0]) / den
            u = (w[..., 0] * da[..., 1] - w[..., 1] * da[..., 0]) / den
        hit = (t >= 0) & (t < 1) & (u >= 0) & (u < 1) & np.isfinite(t) & np.isfinite(u)
        i, j = np.nonzero(hit)
        if i.size:
            found.append(p0[i, 0] + t[i, j][:, None] * da[i, 0])
    return np.concatenate(found) if found else np.zeros((0, 2))


def homoclinic_points(manifold, exclude: float | None = None) -> np.ndarray:
    """Crossings of the unstable and stable branches away from the periodic point."""
    U = [manifold.curve(i) for i in range(manifold.n_branches) if manifold.branch_kind[i] == "unstable"]
    S = [manifold.curve(i) for i in range(manifold.n_branches) if manifold.branch_kind[i] == "stable"]
    pts = [crossings(u, s) for u in U for s in S]
    pts = np.concatenate(pts) if pts else np.zeros((0, 2))
    ex = exclude if exclude is not None else 10.0 * manifold.delta * 10
    far = np.linalg.norm(pts - manifold.point[None], axis=1) > max(ex, 1e-12)
    pts = pts[far]
    # one point per cell of the refinement scale: grazing branches cross many times within a gap
    cell = float((manifold.provenance or {}).get("max_gap", 1e-3))
    _, first = np.unique(np.floor(pts / cell).astype(np.int64), axis=0, return_index=True)
    return pts[np.sort(first)]
