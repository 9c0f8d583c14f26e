"""Names a kernel template imports before it is bound to a flow family.

Kernel templates (the other modules in this package) are ordinary Python files
whose free names ``velocity`` and ``gradient`` are the compiled functions of one
flow family. :func:`flowkit.kernels.build_module` writes the family's generated
code and every template into one module file, dropping the lines marked
``# flowkit:stub``, so numba compiles (and caches on disk) one kernel set per
family. The stubs below only keep the template files importable and readable.
"""

from numba import njit, prange  # noqa: F401  (re-exported to templates)

CACHE = False


def velocity(x, y, z, t, p):  # pragma: no cover - replaced per family
    """Velocity (u, v, w) at (x, y, z, t) for parameters ``p``."""
    raise NotImplementedError("kernel template used without a flow family")


def gradient(x, y, z, t, p):  # pragma: no cover - replaced per family
    """Velocity gradient, 9-tuple row-major, entry (i, j) = du_i/dx_j."""
    raise NotImplementedError("kernel template used without a flow family")
