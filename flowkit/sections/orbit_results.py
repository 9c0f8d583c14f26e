"""Results of the section skeleton: periodic orbits, orbit sets, continuation curves,
rotation-number profiles and invariant manifolds (the flowkit result protocol)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from flowkit.results import Result


def _prov(rm, **settings) -> dict:
    prov = rm.flow.provenance()
    prov.update(return_map=rm.describe(), **settings)
    return prov


@dataclass(eq=False)
class PeriodicOrbit(Result):
    """One periodic orbit of a section map (or the record of a Newton run that did not converge).

    Attributes
    ----------
    converged : bool
        Whether |P^k(xi) - xi| <= tol was reached; if not, ``message`` says why and
        the type fields are empty: an unconverged run is never reported as found.
    xi : (k, dim)
        The orbit's points in section coordinates (the first is the periodic point).
    points : (k, 3)
        The same points in space.
    times : (k,)
        Return time of each step; ``period_time`` is their sum.
    period : int
        Number of returns asked for; ``minimal_period`` the least one that closes the orbit.
    jacobian : (dim, dim)
        DP^k at the periodic point; ``eigenvalues``/``eigenvectors`` (columns) sorted by modulus.
    trace, det, residue : float
        tr DP^k, det DP^k and Greene's residue (2 - tr)/4.
    type : str
        "elliptic", "hyperbolic", "parabolic", "attracting", "repelling" ("" if not converged).
    """

    _ARRAYS = ("xi", "points", "times", "jacobian", "eigenvalues", "eigenvectors", "start", "shift")
    _DIMS = {"xi": ("point", "coord"), "points": ("point", "xyz"), "times": ("point",)}
    xi: np.ndarray
    points: np.ndarray
    times: np.ndarray
    jacobian: np.ndarray
    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    start: np.ndarray
    shift: np.ndarray
    period: int
    minimal_period: int
    period_time: float
    trace: float
    det: float
    residue: float
    type: str
    reflection: bool
    converged: bool
    residual: float
    iterations: int
    message: str
    provenance: dict = field(default_factory=dict)

    @classmethod
    def from_newton(cls, rm, start, run, k: int, parabolic_tol: float = 1e-6, index: int = 0,
                    prov: dict | None = None) -> "PeriodicOrbit":
        """Wrap row ``index`` of a Newton run: the orbit, DP^k and its type if it converged."""
        from flowkit.sections.periodic import CONVERGED, classify, minimal_period, orbit_of

        dim = rm.dim
        ok = run.status[index] == CONVERGED
        res = float(run.residual[index])
        prov = prov if prov is not None else _prov(rm, tol_residual=res)
        if not ok:
            why = {"no return": "the start (or every Newton trial) did not return to the section",
                   "stalled": "Newton stalled: no step lowers the residual",
                   "iteration budget": "the iteration budget ran out",
                   "equilibrium": "it reached an equilibrium of the flow on the section (u = 0), not a periodic orbit"}.get(run.status[index], run.status[index])
            if run.status[index] == "no return" and run.outcome is not None:
                from flowkit.integrate.outcomes import OUTCOME_NAMES

                code = int(run.outcome[index])
                why += {1: " (the orbit left the domain)", 0: " within max_time",
                        5: " (step budget)"}.get(code, f" ({OUTCOME_NAMES.get(code, code)})")
            msg = (f"not converged ({why}); residual |P^{k}(xi) - xi| = {res:.3g} after "
                   f"{int(run.iterations[index])} iterations; try another start, a smaller period or more iterations")
            nan = np.full((dim, dim), np.nan)
            return cls(xi=run.xi[index][None], points=rm.embed(run.xi[index][None]), times=np.full(1, np.nan),
                       jacobian=nan, eigenvalues=np.full(dim, np.nan + 0j), eigenvectors=nan.astype(complex),
                       start=np.asarray(start, float), shift=np.zeros(3), period=k, minimal_period=0,
                       period_time=math.nan, trace=math.nan, det=math.nan, residue=math.nan, type="",
                       reflection=False, converged=False, residual=res, iterations=int(run.iterations[index]),
                       message=msg, provenance=prov)
        xi = run.xi[index]
        if not rm.strobe and np.linalg.norm(rm.flow.velocity(rm.embed(xi[None]))[0]) < 1e-7:
            run.status[index] = "equilibrium"
            return cls.from_newton(rm, start, run, k, parabolic_tol, index, prov)
        xis, pts, times, shift = orbit_of(rm, xi, k)
        r = rm.apply(xi[None], k)
        kind = classify(r.jacobian[0], parabolic_tol)
        close = max(1e-7, 1e3 * res) * (1.0 + float(np.linalg.norm(xi)))
        mp = minimal_period(np.vstack([xis, r.xi]), k, close)
        msg = f"converged in {int(run.iterations[index])} iterations; {kind['type']} orbit of period {mp}"
        return cls(xi=xis, points=pts, times=times, jacobian=r.jacobian[0], eigenvalues=kind["eigenvalues"],
                   eigenvectors=kind["eigenvectors"], start=np.asarray(start, float), shift=r.shift[0], period=k,
                   minimal_period=mp, period_time=float(r.time[0]), trace=kind["trace"], det=kind["det"],
                   residue=kind["residue"], type=kind["type"], reflection=bool(kind["reflection"]),
                   converged=True, residual=res, iterations=int(run.iterations[index]), message=msg,
                   provenance=prov)

    def summary(self) -> dict:
        from flowkit.results import plain

        return plain({
            "converged": self.converged, "message": self.message, "type": self.type, "period": self.period,
            "minimal_period": self.minimal_period, "period_time": self.period_time, "point": self.xi[0].tolist(),
            "point_xyz": self.points[0].tolist(), "trace": self.trace, "det": self.det, "residue": self.residue,
            "eigenvalues": [[float(e.real), float(e.imag)] for e in self.eigenvalues], "residual": self.residual,
            "iterations": self.iterations, "winding": self.shift.tolist(),
        })

    def headline(self):
        if not self.converged:
            return [("converged", False, None), ("residual", self.residual, None), ("message", self.message, None)]
        return [("type", self.type, None), ("period", self.minimal_period, None),
                ("period_time", self.period_time, None), ("trace", self.trace, None),
                ("residue", self.residue, None), ("det", self.det, None), ("residual", self.residual, None)]

    @property
    def unstable_direction(self) -> np.ndarray:
        """Real unit eigenvector of the largest-modulus eigenvalue (hyperbolic orbits)."""
        v = np.real(self.eigenvectors[:, 0])
        return v / np.linalg.norm(v)

    @property
    def stable_direction(self) -> np.ndarray:
        v = np.real(self.eigenvectors[:, -1])
        return v / np.linalg.norm(v)


@dataclass(eq=False)
class OrbitSet(Result):
    """Periodic orbits found by a scan: one row per orbit, their points flattened.

    Attributes
    ----------
    xi, points : (M, dim), (M, 3)
        Every orbit point; ``orbit`` (M,) says which orbit it belongs to.
    period, period_time, trace, det, residue, type : per orbit (L,)
    eigenvalues : (L, dim) complex
    """

    _ARRAYS = ("xi", "points", "orbit", "period", "period_time", "trace", "det", "residue", "type",
               "eigenvalues", "eigenvectors")
    _DIMS = {"xi": ("point", "coord"), "points": ("point", "xyz"), "orbit": ("point",), "period": ("orbits",),
             "period_time": ("orbits",), "trace": ("orbits",), "det": ("orbits",), "residue": ("orbits",),
             "type": ("orbits",)}
    xi: np.ndarray
    points: np.ndarray
    orbit: np.ndarray
    period: np.ndarray
    period_time: np.ndarray
    trace: np.ndarray
    det: np.ndarray
    residue: np.ndarray
    type: np.ndarray
    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    provenance: dict = field(default_factory=dict)

    @classmethod
    def from_orbits(cls, orbits: list, prov: dict) -> "OrbitSet":
        dim = orbits[0].xi.shape[1] if orbits else 2
        cat = (lambda name, shape: np.concatenate([getattr(o, name) for o in orbits]) if orbits
               else np.zeros(shape))
        return cls(xi=cat("xi", (0, dim)), points=cat("points", (0, 3)),
                   orbit=np.repeat(np.arange(len(orbits)), [o.xi.shape[0] for o in orbits]).astype(np.int64),
                   period=np.array([o.minimal_period for o in orbits], dtype=np.int64),
                   period_time=np.array([o.period_time for o in orbits], dtype=float),
                   trace=np.array([o.trace for o in orbits], dtype=float),
                   det=np.array([o.det for o in orbits], dtype=float),
                   residue=np.array([o.residue for o in orbits], dtype=float),
                   type=np.array([o.type for o in orbits], dtype=str) if orbits else np.zeros(0, dtype="<U10"),
                   eigenvalues=np.array([o.eigenvalues for o in orbits]).reshape(-1, dim).astype(complex),
                   eigenvectors=np.array([o.eigenvectors for o in orbits]).reshape(-1, dim, dim).astype(complex),
                   provenance=prov)

    def __len__(self) -> int:
        return int(self.period.shape[0])

    def counts(self) -> dict:
        """Number of orbits by (type, period)."""
        out: dict = {}
        for t, k in zip(self.type, self.period):
            key = f"{t} period {int(k)}"
            out[key] = out.get(key, 0) + 1
        return out

    def select(self, kind: str | None = None, period: int | None = None) -> np.ndarray:
        """Indices of orbits of a type and/or period."""
        m = np.ones(len(self), dtype=bool)
        if kind is not None:
            m &= self.type == kind
        if period is not None:
            m &= self.period == period
        return np.flatnonzero(m)

    def orbit_points(self, i: int) -> np.ndarray:
        return self.xi[self.orbit == i]

    def summary(self) -> dict:
        from flowkit.results import plain

        return plain({"orbits": len(self), "by_type_and_period": self.counts(),
                      "orbits_list": [{"type": str(self.type[i]), "period": int(self.period[i]),
                                       "point": self.orbit_points(i)[0].tolist(),
                                       "period_time": float(self.period_time[i]), "trace": float(self.trace[i]),
                                       "residue": float(self.residue[i])} for i in range(len(self))]})

    def headline(self):
        rows = [("orbits", len(self), None)]
        rows += [(k, v, None) for k, v in sorted(self.counts().items())]
        return rows[:8]


@dataclass(eq=False)
class Manifold(Result):
    """Branches of the stable and unstable manifolds of one hyperbolic periodic point.

    Attributes
    ----------
    xi : (M, 2)
        Points of every branch in order along it; ``branch`` (M,) says which branch.
    level, label : (M,)
        Iteration level j and fundamental-segment label s of each point (point = P^(j m) q(s)).
    branch_kind : (B,) str
        "unstable" or "stable" per branch; ``branch_side`` +1/-1 the side of the eigenvector.
    intersections : (K, 2)
        Homoclinic points (crossings of unstable and stable branches away from the point).
    """

    _ARRAYS = ("xi", "branch", "level", "label", "branch_kind", "branch_side", "point", "intersections")
    _DIMS = {"xi": ("point_index", "coord"), "branch": ("point_index",), "level": ("point_index",),
             "label": ("point_index",)}
    xi: np.ndarray
    branch: np.ndarray
    level: np.ndarray
    label: np.ndarray
    branch_kind: np.ndarray
    branch_side: np.ndarray
    point: np.ndarray
    intersections: np.ndarray
    period: int
    eigenvalue_unstable: float
    eigenvalue_stable: float
    delta: float
    provenance: dict = field(default_factory=dict)

    @classmethod
    def from_branches(cls, parts, p, orbit, prov) -> "Manifold":
        from flowkit.sections.manifolds import homoclinic_points

        out = cls(xi=np.concatenate([q[2] for q in parts]),
                  branch=np.repeat(np.arange(len(parts)), [len(q[2]) for q in parts]).astype(np.int64),
                  level=np.concatenate([q[3] for q in parts]).astype(np.int64),
                  label=np.concatenate([q[4] for q in parts]),
                  branch_kind=np.array([q[0] for q in parts], dtype=str),
                  branch_side=np.array([q[1] for q in parts]), point=np.asarray(p, float),
                  intersections=np.zeros((0, 2)), period=int(orbit.period),
                  eigenvalue_unstable=float(orbit.eigenvalues[0].real),
                  eigenvalue_stable=float(orbit.eigenvalues[-1].real), delta=float(prov["delta"]), provenance=prov)
        out.intersections = homoclinic_points(out)
        return out

    @property
    def n_branches(self) -> int:
        return int(self.branch_kind.shape[0])

    def curve(self, i: int) -> np.ndarray:
        """Points (n, 2) of branch ``i`` in order from the periodic point outward."""
        return self.xi[self.branch == i]

    def summary(self) -> dict:
        from flowkit.results import plain

        lengths = [float(np.sum(np.linalg.norm(np.diff(self.curve(i), axis=0), axis=1)))
                   for i in range(self.n_branches)]
        return plain({"point": self.point.tolist(), "period": self.period,
                      "eigenvalues": [self.eigenvalue_unstable, self.eigenvalue_stable],
                      "branches": [{"kind": str(k), "side": float(s), "points": int(np.sum(self.branch == i)),
                                    "length": lengths[i]}
                                   for i, (k, s) in enumerate(zip(self.branch_kind, self.branch_side))],
                      "homoclinic_points": int(self.intersections.shape[0])})

    def headline(self):
        return [("period", self.period, None), ("lambda_u", self.eigenvalue_unstable, None),
                ("branches", self.n_branches, None), ("points", int(self.xi.shape[0]), None),
                ("homoclinic points", int(self.intersections.shape[0]), None)]


@dataclass(eq=False)
class ContinuationCurve(Result):
    """A periodic orbit followed in a parameter: its point, trace and type at each value.

    ``bifurcations`` lists where tr DP^k crossed +2 (tangent) or -2 (period doubling).
    """

    _ARRAYS = ("values", "xi", "trace", "det", "residue", "period_time", "converged", "residual", "type")
    _DIMS = {"values": ("step",), "xi": ("step", "coord"), "trace": ("step",), "det": ("step",),
             "residue": ("step",), "period_time": ("step",), "converged": ("step",), "residual": ("step",),
             "type": ("step",)}
    values: np.ndarray
    xi: np.ndarray
    trace: np.ndarray
    det: np.ndarray
    residue: np.ndarray
    period_time: np.ndarray
    converged: np.ndarray
    residual: np.ndarray
    type: np.ndarray
    parameter: str
    period: int
    bifurcations: list
    provenance: dict = field(default_factory=dict)

    @classmethod
    def from_rows(cls, rows, events, parameter, period, prov) -> "ContinuationCurve":
        types = [_type_from(r[2], r[3]) if r[5] else "" for r in rows]
        return cls(values=np.array([r[0] for r in rows], float), xi=np.array([r[1] for r in rows], float),
                   trace=np.array([r[2] for r in rows], float), det=np.array([r[3] for r in rows], float),
                   residue=(2.0 - np.array([r[2] for r in rows], float)) / 4.0,
                   period_time=np.array([r[4] for r in rows], float),
                   converged=np.array([r[5] for r in rows], bool), residual=np.array([r[6] for r in rows], float),
                   type=np.array(types, dtype=str), parameter=parameter, period=int(period),
                   bifurcations=[dict(e) for e in events], provenance=prov)

    def summary(self) -> dict:
        from flowkit.results import plain

        return plain({"parameter": self.parameter, "period": self.period, "steps": int(self.values.size),
                      "followed_to": float(self.values[self.converged][-1]) if self.converged.any() else None,
                      "lost": bool(not self.converged[-1]), "bifurcations": self.bifurcations,
                      "types": sorted(set(str(t) for t in self.type if t))})

    def headline(self):
        rows = [("parameter", self.parameter, None), ("steps", int(self.values.size), None),
                ("bifurcations", len(self.bifurcations), None)]
        rows += [(b["kind"], b["parameter"], None) for b in self.bifurcations[:4]]
        return rows


def _type_from(tr: float, det: float, tol: float = 1e-6) -> str:
    """Type of a 2 x 2 map from its trace and determinant (area-preserving when det = 1)."""
    if abs(det - 1.0) <= 1e-6:
        if abs(abs(tr) - 2.0) <= tol * max(1.0, abs(tr)):
            return "parabolic"
        return "elliptic" if abs(tr) < 2.0 else "hyperbolic"
    disc = tr * tr - 4 * det
    if disc < 0:
        return "attracting" if det < 1 else "repelling"
    l1, l2 = (tr + np.sqrt(disc)) / 2, (tr - np.sqrt(disc)) / 2
    big, small = max(abs(l1), abs(l2)), min(abs(l1), abs(l2))
    if big < 1:
        return "attracting"
    if small > 1:
        return "repelling"
    return "hyperbolic"
