"""Polynomial Stokes flows in the unit sphere by Lamb's general solution.

With viscosity 1 and solid harmonics p_n (pressure) and chi_n (toroidal), Lamb's
general solution (Hydrodynamics, 6th ed., Cambridge University Press, 1932,
sections 335-336) gives the interior Stokes flow

    u = sum_n [ curl(x chi_n) + grad Phi_n + (n+3)/(2(n+1)(2n+3)) r^2 grad p_n
                - n/((n+1)(2n+3)) x p_n ],

and x.u = sum_n n [Phi_n + r^2 p_n / (2(2n+3))], so choosing
Phi_n = -p_n / (2(2n+3)) makes u.n = 0 on r = 1. A flow is a set of harmonic
coefficients, labelled ``P<n>_<order>`` (pressure) and ``T<n>_<order>``
(toroidal), order labels as in :mod:`flowkit.flows.harmonics`. Velocity and
gradient code is generated from these exact polynomials.

The boundary values of the basis fields are vector spherical harmonics: the
toroidal field of chi_n = R_n^m is grad_s(Y) x n-hat on r = 1 and the pressure
field of p_n = R_n^m is grad_s(Y) / ((n+1)(2n+3)), so a tangential surface
velocity fixes the coefficients one degree at a time (:func:`surface_flow`).
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Callable, Mapping

import numpy as np
import sympy as sp

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow, FlowFamily
from flowkit.flows.codegen import X, Y, Z, velocity_gradient_source
from flowkit.flows.grammar import as_sympy
from flowkit.flows.harmonics import cross, grad, order_label, parse_order, solid_harmonic

#: Largest harmonic degree the builders accept.
MAX_DEGREE = 6

_LABEL = re.compile(r"^([PT])(\d+)_(0|[cs]\d+)$")


def parse_label(label: str) -> tuple[str, int, int]:
    """Split ``'P1_s1'`` into ('P', 1, -1); raise a clear error on bad labels."""
    m = _LABEL.match(label)
    if not m:
        raise FlowkitError(
            f"harmonic label {label!r} not understood; write P<n>_<order> (pressure) or "
            "T<n>_<order> (toroidal) with order 0, c<m> (cosine) or s<m> (sine), e.g. P1_s1, T2_c1"
        )
    kind, n, order = m.group(1), int(m.group(2)), parse_order(m.group(3))
    if n < 1 or n > MAX_DEGREE:
        raise FlowkitError(
            f"harmonic {label!r} has degree {n}; supported degrees are 1 to {MAX_DEGREE}"
        )
    if abs(order) > n:
        raise FlowkitError(f"harmonic {label!r}: the order {abs(order)} exceeds the degree {n}")
    return kind, n, order


def all_labels(max_degree: int) -> list[str]:
    """Every pressure and toroidal label up to ``max_degree``, degree by degree."""
    out = []
    for n in range(1, max_degree + 1):
        for kind in "PT":
            out += [f"{kind}{n}_{order_label(m)}" for m in range(-n, n + 1)]
    return out


@lru_cache(maxsize=None)
def basis_field(label: str) -> tuple:
    """Exact velocity field (3 sympy polynomials) of one unit harmonic coefficient."""
    kind, n, m = parse_label(label)
    h = solid_harmonic(n, m)
    pos = (X, Y, Z)
    if kind == "T":
        return tuple(sp.expand(c) for c in cross(grad(h), pos))
    phi = -h / (2 * (2 * n + 3))
    a = sp.Rational(n + 3, 2 * (n + 1) * (2 * n + 3))
    b = sp.Rational(n, (n + 1) * (2 * n + 3))
    r2 = X**2 + Y**2 + Z**2
    gphi, gp = grad(phi), grad(h)
    return tuple(sp.expand(gphi[i] + a * r2 * gp[i] - b * pos[i] * h) for i in range(3))


def lamb_expressions(coefficients: Mapping[str, object]) -> tuple:
    """Velocity (3 sympy expressions) for coefficients keyed by label.

    Values may be numbers or sympy symbols (used for parameters).
    """
    u = [sp.Integer(0)] * 3
    for label, c in coefficients.items():
        f = basis_field(label)
        u = [u[i] + as_sympy(c, f"coefficient {label}") * f[i] for i in range(3)]
    return tuple(sp.expand(e) for e in u)


def _formula(exprs) -> tuple:
    return tuple(str(sp.expand(e)) for e in exprs)


def lamb_family(labels, defaults, name: str = "lamb", description: str = "") -> FlowFamily:
    """Family whose parameters are the coefficients of the given harmonics."""
    labels = list(labels)
    for lab in labels:
        parse_label(lab)
    syms = [sp.Symbol(lab, real=True) for lab in labels]
    exprs = lamb_expressions(dict(zip(labels, syms)))
    code = velocity_gradient_source(exprs, syms)
    return FlowFamily(
        name=name,
        formula=_formula(exprs),
        param_names=tuple(labels),
        defaults=tuple(float(d) for d in defaults),
        domain="ball",
        code=code,
        structure={"representation": "Lamb harmonic coefficients", "harmonics": list(labels)},
        exprs=exprs,
        description=description
        or "Stokes flow in the unit sphere from Lamb's general solution; parameters are harmonic coefficients.",
    )


def lamb_flow(coefficients: Mapping[str, float], name: str = "lamb") -> Flow:
    """Stokes flow in the unit ball from solid-harmonic coefficients.

    Parameters
    ----------
    coefficients : mapping
        ``{label: value}`` with labels ``P<n>_<order>`` (pressure harmonic) or
        ``T<n>_<order>`` (toroidal harmonic), degrees 1 to :data:`MAX_DEGREE`.
        The potential harmonics are fixed by u.n = 0 on r = 1.

    Returns
    -------
    Flow
        Its parameters are the coefficients, so they can be changed without
        recompiling; ``flow.family.structure`` keeps the exact representation.
    """
    if not coefficients:
        raise FlowkitError("`coefficients` is empty; give at least one harmonic, e.g. {'P1_0': 1.0}")
    labels = sorted(coefficients, key=lambda s: (parse_label(s)[1], s))
    fam = lamb_family(labels, [coefficients[k] for k in labels], name=name)
    fam.structure["recipe"] = {"lamb": {k: float(coefficients[k]) for k in labels}, "name": name}
    return Flow(fam)


# ---------------------------------------------------------------------------
# Surface velocity -> interior Stokes flow
# ---------------------------------------------------------------------------
def _sphere_grid(nt: int, nphi: int):
    """Gauss-Legendre in cos(theta) x uniform phi: points (N,3) and weights (N,) summing to 4 pi."""
    mu, w = np.polynomial.legendre.leggauss(nt)
    phi = 2 * np.pi * np.arange(nphi) / nphi
    M, P = np.meshgrid(mu, phi, indexing="ij")
    W = np.repeat(w[:, None], nphi, axis=1) * (2 * np.pi / nphi)
    s = np.sqrt(1 - M**2)
    pts = np.stack([s * np.cos(P), s * np.sin(P), M], axis=-1).reshape(-1, 3)
    return pts, W.ravel()


@lru_cache(maxsize=None)
def _basis_numeric(label: str) -> Callable:
    return sp.lambdify((X, Y, Z), list(basis_field(label)), "numpy")


def _eval_basis(label: str, pts: np.ndarray) -> np.ndarray:
    vals = _basis_numeric(label)(pts[:, 0], pts[:, 1], pts[:, 2])
    return np.stack([np.broadcast_to(np.asarray(v, dtype=float), (len(pts),)) for v in vals], axis=1)


def surface_flow(
    surface_velocity: Callable | Mapping[str, float],
    max_degree: int = 4,
    name: str = "surface-driven",
) -> Flow:
    """Interior Stokes flow driven by a tangential velocity on the unit sphere.

    Parameters
    ----------
    surface_velocity : callable or mapping
        Either ``f(points) -> velocities`` for points (N, 3) on r = 1, or vector
        spherical harmonic coefficients ``{"S<n>_<order>": a, "R<n>_<order>": b}``
        for the surface field sum a grad_s Y + b grad_s Y x n-hat, where Y is the
        real solid harmonic of :mod:`flowkit.flows.harmonics` on r = 1 (``S``:
        surface gradient, ``R``: surface rotation).
    max_degree : int
        Highest harmonic degree kept when projecting a callable (1 to MAX_DEGREE).

    Returns
    -------
    Flow
        The Lamb flow whose boundary value is the projection. For a callable,
        ``flow.family.structure["projection"]`` holds ``relative_residual`` (RMS
        of the tangential misfit over RMS of the tangential data, on a finer grid
        than the fit) and ``normal_rms`` (the part of the data through the wall,
        which an impermeable sphere cannot carry and which is dropped).
    """
    if not isinstance(max_degree, (int, np.integer)) or not 1 <= max_degree <= MAX_DEGREE:
        raise FlowkitError(f"`max_degree` must be an integer from 1 to {MAX_DEGREE}; got {max_degree!r}")
    if isinstance(surface_velocity, Mapping):
        coeffs = {}
        for key, val in surface_velocity.items():
            m = re.match(r"^([SR])(\d+)_(0|[cs]\d+)$", key)
            if not m:
                raise FlowkitError(
                    f"surface coefficient {key!r} not understood; write S<n>_<order> (surface gradient) "
                    "or R<n>_<order> (surface rotation), e.g. S2_0, R1_s1"
                )
            n = int(m.group(2))
            lab = ("P" if m.group(1) == "S" else "T") + key[1:]
            parse_label(lab)
            scale = (n + 1) * (2 * n + 3) if m.group(1) == "S" else 1
            coeffs[lab] = coeffs.get(lab, 0.0) + float(val) * scale
        flow = lamb_flow(coeffs, name=name)
        flow.family.structure["projection"] = {"source": "vector spherical harmonic coefficients", "relative_residual": 0.0}
        return flow
    if not callable(surface_velocity):
        raise FlowkitError("`surface_velocity` must be a callable f(points)->(N,3) or a mapping of coefficients")
    labels = all_labels(max_degree)
    L = max_degree + 1
    pts, w = _sphere_grid(L + 2, 2 * L + 3)
    data = _surface_data(surface_velocity, pts)
    normal = np.einsum("ij,ij->i", data, pts)
    tang = data - normal[:, None] * pts
    sw = np.sqrt(w)[:, None]
    A = np.stack([(_eval_basis(lab, pts) * sw).ravel() for lab in labels], axis=1)
    coef, *_ = np.linalg.lstsq(A, (tang * sw).ravel(), rcond=None)
    coef[np.abs(coef) < 1e-13 * max(1.0, np.abs(coef).max())] = 0.0
    kept = {lab: c for lab, c in zip(labels, coef) if c != 0.0}
    if not kept:
        raise FlowkitError("`surface_velocity` has no tangential part up to `max_degree`; the driven flow is zero")
    # residual on an independent, finer grid
    fpts, fw = _sphere_grid(2 * L + 6, 4 * L + 9)
    fdata = _surface_data(surface_velocity, fpts)
    fnormal = np.einsum("ij,ij->i", fdata, fpts)
    ftang = fdata - fnormal[:, None] * fpts
    fit = sum(c * _eval_basis(lab, fpts) for lab, c in kept.items())
    mis = np.sqrt(np.sum(fw * np.sum((ftang - fit) ** 2, axis=1)) / (4 * np.pi))
    size = np.sqrt(np.sum(fw * np.sum(ftang**2, axis=1)) / (4 * np.pi))
    flow = lamb_flow(kept, name=name)
    flow.family.structure["projection"] = {
        "source": "callable",
        "max_degree": int(max_degree),
        "relative_residual": float(mis / size) if size > 0 else 0.0,
        "residual_rms": float(mis),
        "normal_rms": float(np.sqrt(np.sum(fw * fnormal**2) / (4 * np.pi))),
    }
    return flow


def _surface_data(f: Callable, pts: np.ndarray) -> np.ndarray:
    try:
        data = np.asarray(f(pts.copy()), dtype=np.float64)
    except Exception as exc:  # noqa: BLE001 - report the user's failure with context
        raise FlowkitError(f"`surface_velocity` failed on an (N, 3) array of sphere points: {exc}") from exc
    if data.shape != pts.shape:
        raise FlowkitError(
            f"`surface_velocity` must return an array of shape (N, 3) for N points; got {data.shape}"
        )
    if not np.all(np.isfinite(data)):
        raise FlowkitError("`surface_velocity` returned NaN or infinite values on the sphere")
    return data


# ---------------------------------------------------------------------------
# Presets built from Lamb's solution
# ---------------------------------------------------------------------------
#: Harmonic content of the stretch-twist-fold flow: 30 P1_s1 + (5/3) T2_c1 (+ rotation T1_s1).
STF_COEFFICIENTS = {"P1_s1": sp.Integer(30), "T2_c1": sp.Rational(5, 3)}


def stf_family() -> FlowFamily:
    """Stretch-twist-fold quadratic Stokes flow plus a rigid rotation about y.

    u = (-8xy + r z, 11x^2 + 3y^2 + z^2 - 3, 2yz - r x), built here from its
    harmonic content (one pressure harmonic of degree 1, toroidal harmonics of
    degrees 2 and 1); the flow is that of J. Fluid Mech. 212 (1990).
    """
    rot = sp.Symbol("rotation", real=True)
    coeffs = dict(STF_COEFFICIENTS)
    coeffs["T1_s1"] = rot
    exprs = lamb_expressions(coeffs)
    return FlowFamily(
        name="stf",
        formula=_formula(exprs),
        param_names=("rotation",),
        defaults=(0.0,),
        domain="ball",
        code=velocity_gradient_source(exprs, [rot]),
        structure={
            "representation": "Lamb harmonic coefficients",
            "harmonics": {"P1_s1": 30.0, "T2_c1": 5.0 / 3.0, "T1_s1": "rotation"},
        },
        exprs=exprs,
        description="Stretch-twist-fold quadratic Stokes flow in the unit sphere (J. Fluid Mech. 212, 1990) "
        "plus a rigid rotation of strength `rotation` about the y-axis; rotation = 0 is integrable.",
    )


def hill_family() -> FlowFamily:
    """Hill's spherical vortex (axis z, centre speed `strength`) with optional rigid swirl.

    The degree-1 pressure harmonic p_1 = z gives u(0) = -z-hat/10, so the
    coefficient is -10 * strength. Stream function psi = (strength/2) s^2 (1 - r^2).
    """
    U, W = sp.symbols("strength swirl", real=True)
    exprs = lamb_expressions({"P1_0": -10 * U, "T1_0": W})
    return FlowFamily(
        name="hill",
        formula=_formula(exprs),
        param_names=("strength", "swirl"),
        defaults=(1.0, 0.0),
        domain="ball",
        code=velocity_gradient_source(exprs, [U, W]),
        structure={"representation": "Lamb harmonic coefficients", "harmonics": {"P1_0": "-10*strength", "T1_0": "swirl"}},
        exprs=exprs,
        description="Hill's spherical vortex inside the unit sphere (axis z, speed `strength` at the centre) "
        "with a rigid swirl of angular velocity `swirl` about z.",
    )
