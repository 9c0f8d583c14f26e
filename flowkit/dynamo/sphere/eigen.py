"""Leading eigenvalues of the ball induction operator, three independent ways.

- ``shift_invert`` (one order ``m`` of an axisymmetric flow): the operator is built
  densely (all columns in one batched application); small blocks go to LAPACK
  ``eig``, larger ones are LU-factorised at shifts next to the leading eigenvalues
  of a coarse resolution, and ARPACK (``scipy.sparse.linalg.eigs``, shift-invert)
  converges the eigenvalues nearest them.
- ``propagator`` (any flow, all orders coupled, or time-periodic): ARPACK on the
  propagator ``exp(tau A)`` (largest modulus = largest real part), applied by the
  time stepper of :mod:`~flowkit.dynamo.sphere.march`; the eigenvalue is then the
  Rayleigh quotient of ``A`` at the eigenvector (no aliasing of the frequency).
  For a time-periodic flow ``tau`` is the period (Floquet multiplier).
- time stepping and a fit (``march``): in :mod:`~flowkit.dynamo.sphere.march`.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.linalg import lu_factor, lu_solve
from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigs

from flowkit.dynamo.sphere.march import Stepper, stable_step

SHIFT_DEFAULTS = {"nev": 4, "ncv": 20, "tol": 1e-10, "maxiter": 20000, "shift": 30.0}
PROPAGATOR_DEFAULTS = {"nev": 6, "ncv": 24, "tol": 1e-8, "maxiter": 3000, "tau": None, "cfl": 1.5, "seed": 0}


def _pack_out(op, lam, vec, converged, message, **extra):
    return {"eigenvalue": complex(lam), "vector": vec, "converged": converged, "message": message,
            "matvecs": op.matvecs, **extra}


#: Largest per-order block solved by dense LAPACK ``eig`` (all eigenvalues; ~0.1 s at this size).
DENSE_MAX = 800


def guesses_from_coarse(op, count: int = 2) -> list[complex]:
    """Leading eigenvalues of the same problem at a coarse resolution (dense ``eig``): shifts for ARPACK."""
    from flowkit.dynamo.sphere.operator import BallOperator

    lmin = max(2, op.facts.degree + 2)
    if op.m is None:
        lc, nc = max(lmin, min(op.lmax - 2, 6)), 6
    else:
        lc, nc = max(lmin, min(op.lmax, 14)), min(op.n, 14)
    coarse = BallOperator(op.flow, op.rm, lc, nc, m=op.m, facts=op.facts)
    if coarse.dof > 2 * DENSE_MAX:
        return []
    vals = np.linalg.eigvals(coarse.matrix())
    vals = vals[np.argsort(-vals.real)]
    out: list[complex] = []
    for v in vals:
        if all(abs(v - w) > 1e-6 * max(1.0, abs(v)) for w in out):
            out.append(complex(v))
        if len(out) == count:
            break
    return out


def arpack_near(A, solve_factory, shifts, nev, ncv, tol, maxiter):
    """Eigenpairs of ``A`` nearest each shift (shift-invert ARPACK); all found pairs, largest real part first."""
    n = A.shape[0]
    nev = int(min(nev, n - 2))
    ncv = int(min(max(ncv, 2 * nev + 1), n - 1))
    vals_all, vecs_all, ok, msg = [], [], True, ""
    for s in shifts:
        solve = solve_factory(s)
        opinv = LinearOperator((n, n), matvec=solve, dtype=complex)
        v0 = np.ones(n, complex) / math.sqrt(n)
        try:
            vals, vecs = eigs(A, k=nev, sigma=s, OPinv=opinv, ncv=ncv, tol=tol, maxiter=maxiter, v0=v0)
        except ArpackNoConvergence as exc:
            vals, vecs = exc.eigenvalues, exc.eigenvectors
            ok, msg = False, f"ARPACK found {len(vals)} of {nev} eigenvalues near {s:.4g}"
        vals_all.extend(vals)
        vecs_all.extend(vecs.T)
    if not vals_all:
        return np.array([complex("nan")]), None, False, msg or "no eigenvalue found"
    vals = np.array(vals_all)
    order = np.argsort(-vals.real)
    return vals[order], np.array(vecs_all)[order].T, ok, msg


def shift_invert(op, nev=4, ncv=20, tol=1e-10, maxiter=20000, shift=30.0) -> dict:
    """Leading eigenvalue of one order of an axisymmetric flow (see the module docstring).

    Blocks up to :data:`DENSE_MAX` unknowns: dense ``eig``. Larger ones: shift-invert
    ARPACK around the leading eigenvalues of a coarse resolution (offset by ``+0.5``
    in real part) and at the real shift ``shift``; the largest real part found wins.
    """
    from scipy.linalg import eig

    A = op.matrix()
    n = A.shape[0]
    if n <= DENSE_MAX:
        vals, vecs = eig(A)
        order = np.argsort(-vals.real)
        vals, vecs = vals[order], vecs[:, order]
        ok, msg, shifts = True, "", []
    else:
        shifts = [g + 0.5 for g in guesses_from_coarse(op)] + [float(shift)]
        eye = np.eye(n)

        def factory(s):
            lu = lu_factor(A - s * eye)
            return lambda x: lu_solve(lu, x)

        vals, vecs, ok, msg = arpack_near(A, factory, shifts, nev, ncv, tol, maxiter)
    if vecs is None:
        return _pack_out(op, complex("nan"), None, False, msg, eigenvalues=[])
    x = vecs[:, 0] / np.linalg.norm(vecs[:, 0])
    residual = float(np.linalg.norm(A @ x - vals[0] * x))
    return _pack_out(op, vals[0], x, ok, msg, shifts=[[float(np.real(s)), float(np.imag(s))] for s in shifts],
                     residual=residual, eigenvalues=[[float(z.real), float(z.imag)] for z in vals[:8]])


def propagator(op, nev=6, ncv=24, tol=1e-8, maxiter=3000, tau=None, cfl=1.5, seed=0) -> dict:
    """Leading eigenvalue by Arnoldi on ``exp(tau A)`` (see the module docstring)."""
    h = stable_step(op, cfl)
    if not op.steady:
        tau = op.period
    elif tau is None:
        tau = 0.1  # diffusion time units: the dipole decays by exp(-1) in 1/pi^2
    steps = max(1, math.ceil(tau / h - 1e-9))
    h = tau / steps
    stepper = Stepper(op, h)
    n = op.dof

    def mv(x):
        T, S = op.unpack(np.asarray(x, complex))
        T, S = stepper.advance(T, S, 0.0, steps)
        return op.pack(T, S)

    A = LinearOperator((n, n), matvec=mv, dtype=complex)
    rng = np.random.default_rng(seed)
    v0 = rng.standard_normal(n) + 1j * rng.standard_normal(n)
    nev = int(min(nev, n - 2))
    ncv = int(min(max(ncv, 2 * nev + 1), n - 1))
    try:
        vals, vecs = eigs(A, k=nev, which="LM", ncv=ncv, tol=tol, maxiter=maxiter, v0=v0)
        ok, msg = True, ""
    except ArpackNoConvergence as exc:
        vals, vecs = exc.eigenvalues, exc.eigenvectors
        ok, msg = False, f"ARPACK found {len(vals)} of {nev} eigenvalues"
        if len(vals) == 0:
            return _pack_out(op, complex("nan"), None, False, msg, tau=tau, steps=steps, eigenvalues=[])
    rates = np.log(np.abs(vals)) / tau
    order = np.argsort(-rates)
    vals, vecs, rates = vals[order], vecs[:, order], rates[order]
    x = vecs[:, 0] / np.linalg.norm(vecs[:, 0])
    if op.steady:
        ax = op.apply(x)
        lam = complex(np.vdot(x, ax))
        lam = complex(rates[0], lam.imag)  # modulus gives the rate; the quotient the unaliased frequency
        residual = float(np.linalg.norm(ax - lam * x))
    else:
        lam = complex(rates[0], float(np.angle(vals[0])) / tau)
        residual = float(np.linalg.norm(mv(x) - vals[0] * x))
    return _pack_out(op, lam, x, ok, msg, tau=tau, steps=steps, dt=h, residual=residual,
                     multipliers=[[float(z.real), float(z.imag)] for z in vals],
                     eigenvalues=[[float(r), float(np.angle(z) / tau)] for r, z in zip(rates, vals)])
