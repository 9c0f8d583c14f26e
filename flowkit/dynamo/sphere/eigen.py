"""Leading eigenvalues of the ball induction operator, three independent ways.

- ``shift_invert`` / ``solve_families`` (steady flows): the operator ``D + Rm K`` (parts kept
  across calls, :mod:`~flowkit.dynamo.sphere.parts`) in real form, split into its decoupled
  families (:mod:`~flowkit.dynamo.sphere.families`); blocks up to :data:`DENSE_MAX` unknowns
  go to LAPACK ``eig``, larger ones to shift-invert ARPACK (``scipy.sparse.linalg.eigs``) with
  an LU of the shifted block (LAPACK for dense blocks, SuperLU for sparse ones) at shifts next
  to ``guesses`` (default: the leading eigenvalues of a coarse resolution) and at ``shift``.
  In an Rm search pass the previous eigenvalue as ``guesses=[...]`` and ``shift=None``: one
  real factorisation per family, no coarse solve; ``critical_rm`` and the resolution ladder do
  that themselves through a :class:`~flowkit.dynamo.sphere.warm.WarmStart` (each family's
  last leading eigenpair: its eigenvalue as the shift, its eigenvector as ARPACK's ``v0``).
  All of it runs with BLAS on one thread (:mod:`~flowkit.dynamo.sphere.threads`).
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
import scipy.sparse as sps
from scipy.linalg import lu_factor, lu_solve
from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigs, splu

from flowkit.dynamo.sphere.march import Stepper, stable_step

SHIFT_DEFAULTS = {"nev": 4, "ncv": 20, "tol": 1e-10, "maxiter": 20000, "shift": 30.0, "guesses": None}
PROPAGATOR_DEFAULTS = {"nev": 6, "ncv": 24, "tol": 1e-8, "maxiter": 3000, "tau": None, "cfl": 1.5, "seed": 0}


def _pack_out(op, lam, vec, converged, message, **extra):
    return {"eigenvalue": complex(lam), "vector": vec, "converged": converged, "message": message,
            "matvecs": op.matvecs, **extra}


#: Largest family block solved by dense LAPACK ``eig`` (all eigenvalues; ~0.1 s at this size).
DENSE_MAX = 800


def guesses_from_coarse(op, count: int = 2) -> list[complex]:
    """Leading eigenvalues of the same problem at a coarse resolution (dense ``eig`` of its real family
    blocks, parts kept across calls): shifts for ARPACK."""
    from flowkit.dynamo.sphere.operator import BallOperator
    from flowkit.dynamo.sphere.parts import operator_parts, real_blocks

    lmin = max(2, op.facts.degree + 2)
    if op.m is None:
        lc, nc = max(lmin, min(op.lmax - 2, 6)), 6
    else:
        lc, nc = max(lmin, min(op.lmax, 14)), min(op.n, 14)
    coarse = BallOperator(op.flow, op.rm, lc, nc, m=op.m, facts=op.facts)
    blocks, _ = real_blocks(coarse, operator_parts(coarse))
    if max(b.shape[0] for _, b in blocks) > 2 * DENSE_MAX:
        return []
    vals = np.concatenate([np.linalg.eigvals(b.toarray() if sps.issparse(b) else b) for _, b in blocks])
    vals = vals[np.argsort(-vals.real)]
    out: list[complex] = []
    for v in vals:
        if all(abs(v - w) > 1e-6 * max(1.0, abs(v)) for w in out):
            out.append(complex(v))
        if len(out) == count:
            break
    return out


def arpack_near(A, solve_factory, shifts, nev, ncv, tol, maxiter, v0=None):
    """Eigenpairs of ``A`` nearest each shift (shift-invert ARPACK); all found pairs, largest real part first.

    ``v0``: ARPACK's start vector (a last eigenvector, :mod:`~.warm`); default the normalised ones vector.
    """
    n = A.shape[0]
    nev = int(min(nev, n - 2))
    ncv = int(min(max(ncv, 2 * nev + 1), n - 1))
    vals_all, vecs_all, ok, msg = [], [], True, ""
    for s in shifts:
        M = A if np.isrealobj(A) and np.imag(s) == 0 else A.astype(complex)
        s = float(np.real(s)) if np.isrealobj(M) else complex(s)
        solve = solve_factory(M, s)
        opinv = LinearOperator((n, n), matvec=solve, dtype=M.dtype)
        start = np.ones(n, M.dtype) / math.sqrt(n) if v0 is None else np.asarray(v0, M.dtype)
        try:
            vals, vecs = eigs(M, k=nev, sigma=s, OPinv=opinv, ncv=ncv, tol=tol, maxiter=maxiter, v0=start)
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


#: Sparse blocks with a complex shift are factorised densely up to this many unknowns (1 GB).
COMPLEX_DENSE_MAX = 8000


def lu_factory(M, s):
    """``x -> (M - s I)^-1 x``: LAPACK's LU for a dense block, SuperLU (COLAMD ordering) for a sparse one.

    Measured on one stf family (all orders coupled): SuperLU 0.59 / 1.9 / 8.1 s against a dense real
    LU 1.6 / 5.1 / 28 s at 2,912 / 4,320 / 8,360 unknowns (benchmarks/bench_dynamo_sphere.py).
    """
    n = M.shape[0]
    if sps.issparse(M) and np.iscomplexobj(M) and n <= COMPLEX_DENSE_MAX:
        M = M.toarray()  # a complex shift far off the real axis makes SuperLU's pivoting fill in (10x slower)
    if not sps.issparse(M):
        shifted = M.astype(np.result_type(M.dtype, type(s)), copy=True)
        shifted.flat[:: n + 1] -= s
        lu = lu_factor(shifted, overwrite_a=True, check_finite=False)
        return lambda x: lu_solve(lu, x, check_finite=False)
    return splu((M - s * sps.identity(n, dtype=M.dtype, format="csc")).tocsc()).solve


def merge_shifts(guesses, real: bool, extra=None) -> list:
    """Shifts ``g + 0.5`` next to the guesses; nearly steady ones on the real axis (real arithmetic),
    one of each conjugate pair for a real block, duplicates (within 0.5) dropped."""
    out: list = []
    for g in guesses:
        s = complex(g) + 0.5
        if abs(s.imag) < 1.0:
            s = complex(s.real, 0.0)
        if real and s.imag < 0:
            s = s.conjugate()
        if all(abs(s - t) > 0.5 for t in out):
            out.append(s)
    if extra is not None:
        out.append(complex(float(extra), 0.0))
    return out or [complex(0.0, 0.0)]


def warm_eigs(B, pair, nev, ncv, tol, maxiter):
    """Eigenpairs of one family block near its last leading eigenvalue, started from its last vector
    (:mod:`~.warm`): one factorisation. ``None`` when ARPACK fails (the caller falls back)."""
    from flowkit.dynamo.sphere.warm import start_vector

    lam, vec = pair
    shifts = merge_shifts([lam], np.isrealobj(B))
    try:
        vals, vecs, ok, msg = arpack_near(B, lu_factory, shifts, nev, ncv, tol, maxiter,
                                          v0=start_vector(vec, np.isrealobj(B)))
    except (RuntimeError, ValueError, np.linalg.LinAlgError):  # singular shift, ARPACK error
        return None
    if not ok or vecs is None or not np.isfinite(vals[0]):
        return None
    return vals, vecs, True, "", shifts


def block_eigs(B, guesses, nev, ncv, tol, maxiter, shift=None):
    """Leading eigenpairs of one family block: dense ``eig`` up to :data:`DENSE_MAX`, else shift-invert."""
    from scipy.linalg import eig

    n = B.shape[0]
    if callable(guesses):
        guesses = guesses() if n > DENSE_MAX and n >= 8 else []
    if n <= DENSE_MAX or n < 8:
        vals, vecs = eig(B.toarray() if sps.issparse(B) else B)
        order = np.argsort(-vals.real)
        return vals[order], vecs[:, order], True, "", []
    shifts = merge_shifts(guesses, np.isrealobj(B), shift)
    vals, vecs, ok, msg = arpack_near(B, lu_factory, shifts, nev, ncv, tol, maxiter)
    return vals, vecs, ok, msg, shifts


def solve_families(op, nev=4, ncv=20, tol=1e-10, maxiter=20000, shift=30.0, guesses=None, warm=None) -> dict:
    """Leading eigenvalue of ``op`` from its real, decoupled family blocks (:mod:`~.parts`).

    ``warm``: a :class:`~flowkit.dynamo.sphere.warm.WarmStart` carried along a run of solves.
    """
    from flowkit.dynamo.sphere.parts import operator_parts, real_blocks
    from flowkit.dynamo.sphere.threads import eigen_threads
    from flowkit.dynamo.sphere.warm import WARM_DENSE_MIN

    parts = operator_parts(op)
    blocks, to_complex = real_blocks(op, parts)
    if guesses is None and warm is not None:
        guesses = warm.guesses(op)  # another resolution at this Rm: its leading eigenvalues, no coarse solve
    lazy = {}

    def default_guesses():  # the coarse solve only if a block needs shifts and no warm start covered it
        if guesses is not None:
            return guesses
        if "g" not in lazy:
            lazy["g"] = guesses_from_coarse(op)
        return lazy["g"]

    found, ok, msgs, shifts = [], True, [], []
    with eigen_threads():
        for k, (ix, B) in enumerate(blocks):
            pair = None if warm is None or B.shape[0] < WARM_DENSE_MIN else warm.pair(op, k, B.shape[0])
            out = None if pair is None else warm_eigs(B, pair, nev, ncv, tol, maxiter)
            if pair is not None:
                warm.warm_solves += 1
                warm.fallbacks += out is None
            if out is None:
                out = block_eigs(B, default_guesses, nev, ncv, tol, maxiter, shift)
            vals, vecs, good, msg, used = out
            if warm is not None and vecs is not None:
                warm.remember(op, k, vals[0], vecs[:, 0])
            ok, shifts = ok and good, shifts + [s for s in used if s not in shifts]
            if msg:
                msgs.append(msg)
            if vecs is not None:
                found += [(v, ix, vecs[:, j]) for j, v in enumerate(vals[:8])]
    if not found:
        return _pack_out(op, complex("nan"), None, False, "; ".join(msgs) or "no eigenvalue found", eigenvalues=[])
    found.sort(key=lambda item: -item[0].real)
    if warm is not None:
        warm.remember_leads(op, [v for v, _, _ in found])
    lam, ix, y = found[0]
    x = to_complex(ix, y)
    x /= np.linalg.norm(x)
    A = parts["D"] + op.rm * parts["K"]
    residual = float(np.linalg.norm(A @ x - lam * x))
    return _pack_out(op, lam, x, ok, "; ".join(msgs), shifts=[[float(np.real(s)), float(np.imag(s))] for s in shifts],
                     residual=residual, families=[len(ix) for ix, _ in blocks],
                     real_form=parts["real"] is not None,
                     eigenvalues=[[float(z.real), float(z.imag)] for z, _, _ in found[:8]])


def shift_invert(op, nev=4, ncv=20, tol=1e-10, maxiter=20000, shift=30.0, guesses=None, warm=None) -> dict:
    """Leading eigenvalue of one order of an axisymmetric flow (see the module docstring).

    The order's matrix ``D + Rm K`` (parts kept across calls), in real form when it has
    one, split into its decoupled families; blocks up to :data:`DENSE_MAX` unknowns:
    dense ``eig``; larger ones: shift-invert ARPACK around the leading eigenvalues of a
    coarse resolution (offset by ``+0.5`` in real part), and at ``shift`` if given; from a
    ``warm`` start (:mod:`~.warm`) around each family's last leading eigenvalue.
    """
    return solve_families(op, nev, ncv, tol, maxiter, shift, guesses, warm)


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
