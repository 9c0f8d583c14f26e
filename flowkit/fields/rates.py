"""Growth rates with error bars: least-squares slopes, fit windows, jackknife and block errors.

Shared by field vectors (:mod:`flowkit.fields.vectors`), material lines and flux.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.results.encoding import value_type

__all__ = ["RateEstimate", "ols_weights", "fit_slope", "window_mask", "jackknife_stderr", "block_rate",
           "mean_rate"]


@value_type
@dataclass
class RateEstimate:
    """A growth rate with its error bar and the window it was fitted over.

    ``value`` and ``stderr`` are per unit time (flows) or per iteration (maps);
    NaN when no estimate exists (``method`` then says why).
    """

    value: float
    stderr: float
    window: tuple
    method: str

    def to_dict(self) -> dict:
        return {"value": _num(self.value), "stderr": _num(self.stderr), "window": [float(w) for w in self.window],
                "method": self.method}

    def __str__(self) -> str:
        return f"{self.value:.6g} ± {self.stderr:.2g} (fit over t in [{self.window[0]:g}, {self.window[1]:g}])"


def _num(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def ols_weights(t: np.ndarray) -> np.ndarray:
    """Weights w with sum(w * y) = least-squares slope of y against ``t``."""
    t = np.asarray(t, dtype=float)
    dt = t - t.mean()
    den = float(np.sum(dt * dt))
    if den <= 0:
        raise FlowkitError("a rate fit needs at least two distinct times in the fit window; widen `window`")
    return dt / den


def fit_slope(t, y) -> float:
    """Least-squares slope of ``y`` against ``t`` (along the last axis of ``y``)."""
    return np.asarray(y, dtype=float) @ ols_weights(t)


def window_mask(times: np.ndarray, window: tuple) -> np.ndarray:
    """Checkpoints inside the fit window, with a clear error if fewer than three."""
    mask = (times >= window[0] - 1e-12 * max(1.0, abs(window[0]))) & (times <= window[1] + 1e-12 * abs(window[1]))
    if mask.sum() < 3:
        raise FlowkitError(f"the fit window [{window[0]:g}, {window[1]:g}] holds {int(mask.sum())} checkpoints; "
                           "at least 3 are needed: widen `window` or use more checkpoints (`samples`)")
    return mask


def jackknife_stderr(estimates: np.ndarray) -> np.ndarray:
    """Delete-one-group jackknife standard error from the G leave-one-out estimates (axis 0)."""
    est = np.asarray(estimates, dtype=float)
    G = est.shape[0]
    if G < 2:
        return np.full(est.shape[1:], np.nan)
    return np.sqrt((G - 1) / G * np.sum((est - est.mean(axis=0)) ** 2, axis=0))


def block_rate(t: np.ndarray, y: np.ndarray, window: tuple, blocks: int = 4, what: str = "") -> RateEstimate:
    """Slope of ``y(t)`` over ``window`` with a block error bar (for a single object, e.g. one line).

    The window is cut into ``blocks`` consecutive blocks; the error bar is the
    standard error of the block slopes (it catches a slope that drifts or
    fluctuates, which the residuals of one straight line would not).
    """
    try:
        mask = window_mask(t, window) & np.isfinite(y)
    except FlowkitError as exc:  # e.g. an interrupted run that stopped before the window
        return RateEstimate(math.nan, math.nan, window, f"{what}no estimate: {exc}")
    tw, yw = t[mask], y[mask]
    if len(tw) < 3:
        return RateEstimate(math.nan, math.nan, window, f"{what}: fewer than 3 finite points in the window")
    value = float(fit_slope(tw, yw))
    blocks = max(2, min(blocks, len(tw) // 3))
    parts = [(a, b) for a, b in zip(np.array_split(tw, blocks), np.array_split(yw, blocks)) if len(a) >= 2]
    slopes = [float(fit_slope(a, b)) for a, b in parts if np.ptp(a) > 0]
    err = float(np.std(slopes, ddof=1) / math.sqrt(len(slopes))) if len(slopes) >= 2 else math.nan
    return RateEstimate(value, err, (float(tw[0]), float(tw[-1])),
                        f"{what}least-squares slope; error = standard error of {len(slopes)} block slopes")



def mean_rate(slopes: np.ndarray, win: tuple, what: str) -> RateEstimate:
    """Mean of per-particle least-squares slopes with its standard error over particles."""
    good = slopes[np.isfinite(slopes)]
    err = float(np.std(good, ddof=1) / math.sqrt(len(good))) if len(good) > 1 else math.nan
    return RateEstimate(float(good.mean()), err, win,
                        f"mean over particles of the least-squares slope of {what}; standard error over particles")


def log_sum_exp(a: np.ndarray, axis: int = 0) -> np.ndarray:
    """``ln sum exp(a)`` along ``axis`` without overflow (all ``-inf`` gives ``-inf``, a NaN gives NaN).

    The same sum as ``scipy.special.logsumexp``, written in plain numpy: scipy's
    array-API dispatch costs ~0.3 ms a call, which made this serial step a quarter
    of a two-thread field-vector run.
    """
    a = np.asarray(a, dtype=float)
    m = np.max(a, axis=axis, keepdims=True)
    m = np.where(np.isfinite(m), m, 0.0)
    with np.errstate(divide="ignore"):
        return np.log(np.sum(np.exp(a - m), axis=axis)) + np.squeeze(m, axis=axis)


def group_log_sum_exp(a: np.ndarray, group: np.ndarray, n_groups: int) -> tuple[np.ndarray, np.ndarray]:
    """:func:`log_sum_exp` over the rows of ``a`` in each group, all groups in one pass.

    Returns ``(lse, count)``: ``lse[g]`` is the sum over rows with ``group == g``
    (``-inf`` for an empty group) and ``count[g]`` their number.
    """
    a = np.asarray(a, dtype=float)
    group = np.asarray(group, dtype=np.int64)
    lse = np.full((n_groups,) + a.shape[1:], -np.inf)
    count = np.bincount(group, minlength=n_groups).astype(np.int64)
    if a.shape[0] == 0:
        return lse, count
    order = np.argsort(group, kind="stable")
    a, group = a[order], group[order]
    live = np.flatnonzero(count)
    starts = np.concatenate([[0], np.cumsum(count[live])[:-1]])
    m = np.maximum.reduceat(a, starts, axis=0)
    m = np.where(np.isfinite(m), m, 0.0)
    rank = np.repeat(np.arange(live.size), count[live])
    with np.errstate(divide="ignore"):
        lse[live] = np.log(np.add.reduceat(np.exp(a - m[rank]), starts, axis=0)) + m
    return lse, count
