"""Tolerance self-check: the same section at two tolerances, and whether they tell the same story.

Regular orbits should agree crossing by crossing. Chaotic orbits cannot: two
runs at different tolerances separate at the Lyapunov rate, so after a few
dozen crossings the k-th crossings of the two runs are unrelated points of the
same chaotic region. For those the question is whether the two *clouds* of
crossings are the same set, which is what a Poincaré figure shows. The check
therefore compares

1. point by point: the largest distance between matching crossings (same orbit,
   same index), against ``agree`` (a fraction of the section's size);
2. as point sets, for orbits whose crossings separated: the mean nearest-neighbour
   distance between the two clouds (a symmetric "modified Hausdorff" distance,
   in the section's display coordinates, which wrap periodic domains), against the
   same distance between two interleaved halves of the tighter run, which is what
   sampling alone gives. The Hausdorff distance (largest nearest-neighbour
   distance) is reported too.

and says what it found: a verdict per orbit, an overall ``ok`` and a one-line ``reason``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.results.base import Result
from flowkit.sections.compute import poincare_section
from flowkit.sections.geometry import Plane, Stroboscopic

#: Per-orbit verdicts.
POINTWISE, SAME_SET, DIFFERENT, EMPTY = "agree point by point", "same set", "different sets", "no crossings"
#: Two clouds are "the same set" when their distance is at most this many times the sampling distance.
SET_FACTOR = 1.5


def cloud_distances(a: np.ndarray, b: np.ndarray) -> tuple[float, float]:
    """(mean nearest-neighbour distance, Hausdorff distance) between point clouds ``a`` and ``b``.

    Both are symmetric: the mean runs over the nearest-neighbour distances of every
    point of ``a`` to ``b`` and of ``b`` to ``a``; the Hausdorff distance is their maximum.
    """
    from scipy.spatial import cKDTree

    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    if len(a) == 0 or len(b) == 0:
        return float("nan"), float("nan")
    d_ab = cKDTree(b).query(a)[0]
    d_ba = cKDTree(a).query(b)[0]
    both = np.concatenate([d_ab, d_ba])
    return float(both.mean()), float(both.max())


def halves(directions) -> np.ndarray:
    """A mask splitting crossings into two interleaved halves with the same mix of directions.

    Crossings are alternately given to each half within each crossing direction, so
    a section that keeps both directions (up and down crossings alternate and lie in
    different parts of the plane) puts both kinds into both halves.
    """
    d = np.asarray(directions)
    mask = np.zeros(len(d), dtype=bool)
    for sign in np.unique(d):
        idx = np.flatnonzero(d == sign)
        mask[idx[::2]] = True
    return mask


def same_cloud(a: np.ndarray, b: np.ndarray, reference: np.ndarray, directions) -> tuple[bool, float, float, float]:
    """Whether clouds ``a`` and ``b`` are one set, judged against the sampling noise of ``reference``.

    The noise is the mean nearest-neighbour distance between the two interleaved
    halves (:func:`halves`) of ``reference``; ``a`` against ``b`` is measured the same
    way (one half of ``a`` against the other half of ``b``), so both compare clouds
    of the same sizes. ``a``, ``b`` and ``reference`` share the crossing ``directions``
    (the first ``len(a)`` entries are used for ``a``, and so on). Returns (same,
    distance, noise, Hausdorff distance of a and b).
    """
    d = np.asarray(directions)
    first_a, first_b, first_r = halves(d[:len(a)]), halves(d[:len(b)]), halves(d[:len(reference)])
    dist = cloud_distances(a[first_a], b[~first_b])[0]
    noise = cloud_distances(reference[first_r], reference[~first_r])[0]
    haus = cloud_distances(a, b)[1]
    same = bool(np.isfinite(dist) and dist <= SET_FACTOR * noise + 1e-12)
    return same, dist, noise, haus


@dataclass
class ToleranceCheck(Result):
    """Result of :func:`tolerance_check`.

    Attributes
    ----------
    rtols : (float, float)
        The two relative tolerances compared (loose, tight).
    ok : bool
        True when every orbit with crossings agrees point by point or as a set.
    reason : str
        What was found, in one line (numbers included).
    max_displacement : float
        Largest distance between matching crossings (same orbit, same index).
    orbit_max : (N,) array
        Largest displacement per orbit (NaN for an orbit without crossings).
    verdicts : list of str
        Per orbit: "agree point by point", "same set", "different sets" or "no crossings".
    set_distance, set_noise, hausdorff : (N,) arrays
        For orbits compared as sets: the distance between the two clouds, the sampling
        distance it is judged against, and the Hausdorff distance (NaN elsewhere).
    agree : float
        Point-by-point threshold used (absolute, in the section's units).
    compared : int
        Number of matched crossings.
    mismatched_counts : int
        Orbits whose crossing counts differ between the runs.
    provenance : dict
        The tighter run's provenance plus the check's settings.

    ``loose`` and ``tight`` (the two :class:`~flowkit.sections.Section` objects) are kept
    in memory only; a reloaded check has them as None.
    """

    rtols: tuple
    ok: bool
    reason: str
    max_displacement: float
    orbit_max: np.ndarray
    verdicts: list
    set_distance: np.ndarray
    set_noise: np.ndarray
    hausdorff: np.ndarray
    agree: float
    compared: int
    mismatched_counts: int
    provenance: dict = field(default_factory=dict)

    _ARRAYS: ClassVar[tuple[str, ...]] = ("orbit_max", "set_distance", "set_noise", "hausdorff")
    _DIMS: ClassVar[dict] = {name: ("orbit",) for name in _ARRAYS}

    loose = None  #: the looser Section (in memory only)
    tight = None  #: the tighter Section (in memory only)

    def summary(self) -> dict:
        def num(v):
            return None if not np.isfinite(v) else float(v)

        counts = {v: self.verdicts.count(v) for v in (POINTWISE, SAME_SET, DIFFERENT, EMPTY)}
        return {"ok": bool(self.ok), "reason": self.reason, "rtol": [float(r) for r in self.rtols],
                "max_displacement": num(self.max_displacement), "agree": float(self.agree),
                "verdicts": counts, "compared": int(self.compared), "mismatched_counts": int(self.mismatched_counts),
                "orbit_max": [num(v) for v in self.orbit_max]}

    def headline(self) -> list:
        return [("ok", bool(self.ok), None), ("reason", self.reason, None),
                ("max_displacement", float(self.max_displacement), None)]


def _scale(coords: np.ndarray) -> float:
    """Size of the section picture: the larger side of the crossings' bounding box (1 if flat)."""
    if len(coords) == 0:
        return 1.0
    size = float(np.max(np.ptp(coords, axis=0)))
    return size if size > 0 else 1.0


def tolerance_check(
    flow: Flow,
    seeds,
    plane: Plane | Stroboscopic | None = None,
    *,
    crossings: int = 200,
    rtol: float = 1e-10,
    factor: float = 100.0,
    agree: float = 1e-6,
    **options,
) -> ToleranceCheck:
    """Compute one section at ``rtol`` and at ``rtol / factor`` and say whether they agree.

    Parameters
    ----------
    flow, seeds, plane, crossings
        As for :func:`poincare_section`.
    rtol : float
        Tolerance of the section being checked (``atol`` defaults to ``rtol / 100``).
    factor : float
        The reference run uses ``rtol / factor``.
    agree : float
        Point-by-point agreement threshold, as a fraction of the section's size
        (the larger side of the crossings' bounding box).
    **options
        Passed to :func:`poincare_section`.

    Returns
    -------
    ToleranceCheck
        ``ok``, ``reason`` and per-orbit ``verdicts``: orbits whose matching crossings
        stay within ``agree`` agree point by point; the others (chaotic orbits separate,
        as they must) are compared as point sets (see the module notes).
    """
    if not (isinstance(factor, (int, float)) and factor > 1):
        raise FlowkitError(f"`factor` must be a number greater than 1; got {factor!r}")
    if not (isinstance(agree, (int, float)) and 0 < agree < 1):
        raise FlowkitError(f"`agree` must be a fraction of the section's size between 0 and 1; got {agree!r}")
    atol = options.pop("atol", rtol * 1e-2)
    loose = poincare_section(flow, seeds, plane, crossings=crossings, rtol=rtol, atol=atol, **options)
    tight = poincare_section(flow, seeds, plane, crossings=crossings, rtol=rtol / factor, atol=atol / factor, **options)
    shown_l, shown_t = loose.display_coords(), tight.display_coords()
    scale = _scale(shown_t)
    tol = agree * scale
    n = loose.n_orbits
    orbit_max = np.full(n, np.nan)
    set_distance, set_noise, hausdorff = np.full(n, np.nan), np.full(n, np.nan), np.full(n, np.nan)
    verdicts = []
    compared = mismatched = 0
    for i in range(n):
        sl_l, sl_t = loose.orbit_slice(i), tight.orbit_slice(i)
        a, b = loose.points[sl_l], tight.points[sl_t]
        m = min(len(a), len(b))
        mismatched += int(len(a) != len(b))
        if m == 0:
            verdicts.append(EMPTY)
            continue
        orbit_max[i] = float(np.linalg.norm(a[:m] - b[:m], axis=1).max())
        compared += m
        if orbit_max[i] <= tol and len(a) == len(b):
            verdicts.append(POINTWISE)
            continue
        same, set_distance[i], set_noise[i], hausdorff[i] = same_cloud(
            shown_l[sl_l], shown_t[sl_t], shown_t[sl_t], tight.crossing_direction[sl_t])
        verdicts.append(SAME_SET if same else DIFFERENT)
    finite = orbit_max[np.isfinite(orbit_max)]
    ok = DIFFERENT not in verdicts and any(v != EMPTY for v in verdicts)
    reason = _reason(verdicts, orbit_max, set_distance, set_noise, hausdorff, tol, scale, rtol, factor)
    prov = dict(tight.provenance)
    prov["tolerance_check"] = {"rtol": float(rtol), "factor": float(factor), "agree": float(agree),
                               "set_factor": SET_FACTOR}
    out = ToleranceCheck(
        rtols=(float(rtol), float(rtol / factor)), ok=bool(ok), reason=reason,
        max_displacement=float(finite.max()) if finite.size else float("nan"), orbit_max=orbit_max,
        verdicts=verdicts, set_distance=set_distance, set_noise=set_noise, hausdorff=hausdorff, agree=float(tol),
        compared=compared, mismatched_counts=mismatched, provenance=prov,
    )
    out.loose, out.tight = loose, tight
    return out


def _reason(verdicts, orbit_max, set_distance, set_noise, hausdorff, tol, scale, rtol, factor) -> str:
    """One line: how many orbits agree how, with the numbers behind it."""
    parts = []
    pw = [i for i, v in enumerate(verdicts) if v == POINTWISE]
    if pw:
        parts.append(f"{len(pw)} orbit(s) agree point by point (largest displacement {np.max(orbit_max[pw]):.2g} "
                     f"<= {tol:.2g})")
    same = [i for i, v in enumerate(verdicts) if v == SAME_SET]
    # crossings that separate by a tenth of the picture have forgotten their partner: chaotic orbits
    chaotic = [i for i in same if orbit_max[i] > 0.1 * scale]
    drift = [i for i in same if i not in chaotic]
    for group, what in ((chaotic, "separate crossing by crossing, as chaotic orbits do, but trace the same set"),
                        (drift, "drift along their orbit (a phase error) but trace the same set")):
        if group:
            worst = max(group, key=lambda i: set_distance[i] / max(set_noise[i], 1e-300))
            parts.append(f"{len(group)} orbit(s) {what} (displacement up to {np.max(orbit_max[group]):.2g}; "
                         f"worst orbit {worst}: cloud distance {set_distance[worst]:.2g} vs {set_noise[worst]:.2g} "
                         f"from sampling alone, Hausdorff {hausdorff[worst]:.2g})")
    diff = [i for i, v in enumerate(verdicts) if v == DIFFERENT]
    if diff:
        worst = max(diff, key=lambda i: set_distance[i] / max(set_noise[i], 1e-300))
        parts.append(f"orbit(s) {diff} trace different sets at rtol {rtol:g} and {rtol / factor:g} (orbit {worst}: "
                     f"cloud distance {set_distance[worst]:.2g} vs {set_noise[worst]:.2g} from sampling alone): "
                     f"tighten rtol, or add crossings if the orbit is sticky")
    empty = verdicts.count(EMPTY)
    if empty:
        parts.append(f"{empty} orbit(s) without crossings")
    return "; ".join(parts) if parts else "no orbits"
