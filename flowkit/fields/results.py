"""Results of the frozen-in field analyses: field vectors, material lines, flux through a surface."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.fields.rates import RateEstimate, _num
from flowkit.integrate.outcomes import outcome_counts
from flowkit.results import Result, plain

__all__ = ["StretchResult", "LineResult", "FluxResult"]


@dataclass
class StretchResult(Result):
    """Stretching statistics of an ensemble of field vectors (see :mod:`flowkit.fields.vectors`).

    Attributes
    ----------
    times : ndarray (K+1,)
        Checkpoints (time, or iteration count for maps), starting at 0.
    p : ndarray (P,)
        Moment orders.
    log_moments, log_moments_stderr : ndarray (K+1, P)
        ln <|B|^p> at each checkpoint and its jackknife error.
    mean_log, mean_log_stderr : ndarray (K+1,)
        <ln|B|> and its standard error over particles.
    lyapunov : RateEstimate
        Mean log-stretching rate of the line element (= largest Lyapunov exponent).
    moment_rates : dict float -> RateEstimate
        Fitted L(p) for each order.
    field_rate : RateEstimate
        Slope of <ln|B|> (equals ``lyapunov`` minus the mean divergence).
    effective_particles : dict float -> float
        (sum w)^2 / sum w^2, w = |B|^p at the final checkpoint.
    window : tuple
        Fit window actually used.
    partial : bool
        True if the run was interrupted; statistics then cover the finished particles.
    """

    times: np.ndarray
    p: np.ndarray
    log_moments: np.ndarray
    log_moments_stderr: np.ndarray
    mean_log: np.ndarray
    mean_log_stderr: np.ndarray
    lyapunov: RateEstimate
    moment_rates: dict
    field_rate: RateEstimate
    effective_particles: dict
    window: tuple
    units: str
    quantity: str
    n_requested: int
    n_run: int
    n_used: int
    outcomes: dict
    mean_divergence: float
    partial: bool
    notes: list
    seeds: np.ndarray
    initial_field: np.ndarray
    particle_rates: np.ndarray
    final_log_field: np.ndarray
    final_direction: np.ndarray
    final_positions: np.ndarray
    outcome: np.ndarray
    seconds: float
    series: np.ndarray | None = None
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("times", "p", "log_moments", "log_moments_stderr", "mean_log", "mean_log_stderr", "seeds",
               "initial_field", "particle_rates", "final_log_field", "final_direction", "final_positions",
               "outcome", "series")
    _DIMS = {"times": ("time",), "p": ("p",), "log_moments": ("time", "p"), "log_moments_stderr": ("time", "p"),
             "mean_log": ("time",), "mean_log_stderr": ("time",), "seeds": ("particle", "xyz"),
             "initial_field": ("particle", "xyz"), "particle_rates": ("particle",),
             "final_log_field": ("particle",), "final_direction": ("particle", "xyz"),
             "final_positions": ("particle", "xyz"), "outcome": ("particle",), "series": ("particle", "time")}

    @property
    def final_field(self) -> np.ndarray:
        """Final field vectors B (N, 3) relative to |B0| = 1 (overflows to inf beyond e^709)."""
        with np.errstate(over="ignore"):
            return self.final_direction * np.exp(self.final_log_field)[:, None]

    def rate(self, p: float) -> RateEstimate:
        """The fitted moment rate L(p)."""
        key = float(p)
        if key not in self.moment_rates:
            raise FlowkitError(f"no moment of order {p}; computed orders: {sorted(self.moment_rates)}")
        return self.moment_rates[key]

    def summary(self) -> dict:
        """Rates with error bars, counts, window (what ``--json`` prints; no per-particle arrays)."""
        return plain({
            "lyapunov": self.lyapunov.to_dict(),
            "moment_rates": {_pkey(k): v.to_dict() for k, v in self.moment_rates.items()},
            "field_rate": self.field_rate.to_dict(),
            "effective_particles": {_pkey(k): v for k, v in self.effective_particles.items()},
            "window": list(self.window), "units": self.units, "quantity": self.quantity,
            "particles": {"requested": self.n_requested, "run": self.n_run, "used": self.n_used},
            "outcomes": self.outcomes, "mean_divergence": _num(self.mean_divergence),
            "partial": self.partial, "notes": list(self.notes), "seconds": self.seconds,
        })

    def headline(self) -> list:
        rows = [("Lyapunov (mean log-stretching)", self.lyapunov.value, self.lyapunov.stderr)]
        rows += [(f"L({k:g})", v.value, v.stderr) for k, v in self.moment_rates.items()]
        return rows + [("particles used", self.n_used, None), ("units", self.units, None)]

    def __str__(self) -> str:
        lines = [f"mean log-stretching rate {self.lyapunov} {self.units}"]
        for k, v in self.moment_rates.items():
            lines.append(f"L({k:g}) = {v.value:.6g} ± {v.stderr:.2g}   (effective particles "
                         f"{self.effective_particles[k]:.3g})")
        if self.partial:
            lines.append(f"PARTIAL: interrupted after {self.n_run} of {self.n_requested} particles")
        lines += self.notes
        return "\n".join(lines)


def _pkey(p: float) -> str:
    """Moment order as a JSON key: '1', '2', '0.5'."""
    return f"{p:g}"


@dataclass
class LineResult(Result):
    """Length history of a material line (see :mod:`flowkit.fields.lines`).

    Attributes
    ----------
    times, lengths, npoints : ndarray
        Pass times (iterations for maps), chord length and number of points.
    length_error : ndarray
        Relative discretization error estimate of each length.
    rate : RateEstimate
        Line-stretching exponent (slope of ln L over the fit window, block error bar).
    snapshots : list of (time, (M, 3) array)
        The line at a few times, thinned to at most ``snapshot_points`` points for drawing.
    labels, positions, outcome : ndarray
        Final Lagrangian labels, positions and per-point outcome codes.
    cut_segments, cut_length : int, float
        Segments left out of the final length (see the module docstring) and their chord sum.
    stopped : str
        "time" (reached the end), "max_points" (point budget) or "interrupted".
    memory_bytes, peak_bytes, peak_rss_bytes : int
        Bytes held by the final line (labels 8 + positions 24 + outcome 1 per point),
        the most held by line arrays during a pass (old and new line together), and
        the process's peak resident memory (everything, including other objects).
    """

    times: np.ndarray
    lengths: np.ndarray
    npoints: np.ndarray
    length_error: np.ndarray
    rate: RateEstimate
    snapshots: list
    labels: np.ndarray
    positions: np.ndarray
    outcome: np.ndarray
    cut_segments: int
    cut_length: float
    closed: bool
    stopped: str
    units: str
    memory_bytes: int
    peak_bytes: int
    peak_rss_bytes: int
    seconds: float
    notes: list
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("times", "lengths", "npoints", "length_error", "labels", "positions", "outcome", "snapshots")
    _DIMS = {"times": ("pass",), "lengths": ("pass",), "npoints": ("pass",), "length_error": ("pass",),
             "labels": ("point",), "positions": ("point", "xyz"), "outcome": ("point",)}

    def _arrays(self):
        # snapshots are (time, points) pairs: stored as a dict of arrays keyed by the exact time
        as_dict = {repr(float(t)): np.asarray(pts) for t, pts in self.snapshots}
        return Result._arrays(dataclasses.replace(self, snapshots=as_dict))

    @classmethod
    def _from_parts(cls, fields: dict, arrays: dict):
        arrays = dict(arrays, snapshots=[(float(k), v) for k, v in (arrays.get("snapshots") or {}).items()])
        return super()._from_parts(fields, arrays)

    @property
    def partial(self) -> bool:
        return self.stopped in ("interrupted", "max_seconds")

    @property
    def outcomes(self) -> dict:
        return outcome_counts(self.outcome)

    def summary(self) -> dict:
        """Line-stretching rate, final length and points, memory (what ``--json`` prints)."""
        return plain({
            "line_stretching": self.rate.to_dict(), "units": self.units, "stopped": self.stopped,
            "partial": self.partial, "final_time": float(self.times[-1]), "final_length": float(self.lengths[-1]),
            "final_points": int(self.npoints[-1]), "length_error": _num(self.length_error[-1]),
            "cut_segments": self.cut_segments, "cut_length": self.cut_length, "outcomes": self.outcomes,
            "memory_bytes": self.memory_bytes, "peak_bytes": self.peak_bytes,
            "peak_rss_bytes": self.peak_rss_bytes, "seconds": self.seconds, "notes": list(self.notes),
        })

    def headline(self) -> list:
        return [("line stretching", self.rate.value, self.rate.stderr), ("final length", float(self.lengths[-1]), None),
                ("final points", int(self.npoints[-1]), None), ("stopped", self.stopped, None),
                ("units", self.units, None)]

    def __str__(self) -> str:
        return (f"line-stretching exponent {self.rate} {self.units}; length {self.lengths[0]:.4g} -> "
                f"{self.lengths[-1]:.4g} with {self.npoints[-1]} points ({self.stopped}); "
                f"memory {self.memory_bytes / 1e6:.1f} MB")


@dataclass
class FluxResult(Result):
    """Net and unsigned flux through a fixed surface (see :mod:`flowkit.fields.flux`).

    Attributes
    ----------
    times : ndarray
        Checkpoints (time, or iterations for maps).
    log_unsigned : ndarray
        ln of the unsigned flux int_S |B . n| dA.
    ratio, ratio_stderr : ndarray
        Net / unsigned flux (in [-1, 1]) and its Monte Carlo standard error.
    flux_rate : RateEstimate
        Growth rate of |net flux| (NaN if cancellation hides it below the sampling noise).
    unsigned_rate : RateEstimate
        Growth rate of the unsigned flux.
    """

    times: np.ndarray
    log_unsigned: np.ndarray
    ratio: np.ndarray
    ratio_stderr: np.ndarray
    flux_rate: RateEstimate
    unsigned_rate: RateEstimate
    area: float
    surface: dict
    field: object
    samples: int
    outcomes: dict
    units: str
    partial: bool
    notes: list
    seconds: float
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("times", "log_unsigned", "ratio", "ratio_stderr")
    _DIMS = {"times": ("time",), "log_unsigned": ("time",), "ratio": ("time",), "ratio_stderr": ("time",)}

    @property
    def unsigned(self) -> np.ndarray:
        """Unsigned flux (overflows to inf beyond e^709; use ``log_unsigned``)."""
        with np.errstate(over="ignore"):
            return np.exp(self.log_unsigned)

    @property
    def net(self) -> np.ndarray:
        """Net signed flux."""
        with np.errstate(over="ignore", invalid="ignore"):
            return self.ratio * np.exp(self.log_unsigned)

    @property
    def net_stderr(self) -> np.ndarray:
        with np.errstate(over="ignore"):
            return self.ratio_stderr * np.exp(self.log_unsigned)

    def summary(self) -> dict:
        """Net and unsigned flux rates, final net/unsigned ratio (what ``--json`` prints)."""
        return plain({
            "flux_rate": self.flux_rate.to_dict(), "unsigned_rate": self.unsigned_rate.to_dict(),
            "final_ratio": _num(self.ratio[-1]), "final_ratio_stderr": _num(self.ratio_stderr[-1]),
            "final_log_unsigned": _num(self.log_unsigned[-1]), "area": self.area, "surface": self.surface,
            "field": self.field, "samples": self.samples, "outcomes": self.outcomes, "units": self.units,
            "partial": self.partial, "notes": list(self.notes), "seconds": self.seconds,
        })

    def headline(self) -> list:
        return [("net flux rate", self.flux_rate.value, self.flux_rate.stderr),
                ("unsigned flux rate", self.unsigned_rate.value, self.unsigned_rate.stderr),
                ("final net/unsigned", float(self.ratio[-1]), float(self.ratio_stderr[-1])), ("units", self.units, None)]

    def __str__(self) -> str:
        return (f"net flux rate {self.flux_rate} {self.units}; unsigned flux rate {self.unsigned_rate}; "
                f"final net/unsigned = {self.ratio[-1]:.3g} ± {self.ratio_stderr[-1]:.2g}")
