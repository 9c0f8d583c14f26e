"""One kernel set for every flow: the flow's functions passed as pointers, compiled once.

A flow family's own kernel module (:func:`flowkit.kernels.build_module`) inlines its
velocity into every kernel, so the first section of a new formula waits for numba to
compile the whole section machinery (10-20 s). This module builds the same templates
once against a *generic* family whose ``velocity`` and ``gradient`` call, through a
function pointer, the C-callable wrappers (numba ``cfunc``) of a flow's functions. The
pointers travel at the end of the parameter vector ``p`` (bit patterns of two
addresses), so the compiled generic kernels do not depend on the flow and numba caches
them on disk once for every flow; a new formula then costs only its two small wrappers.

The arithmetic is the flow's own (no fast-math flags), so results are bitwise those of
the family's specialized kernels; only the calls are indirect (slower per step). The
section code (:mod:`flowkit.sections.compute`) runs the generic kernel while the
specialized one is neither compiled nor cached, and compiles that one in a background
thread (:func:`compile_in_background`); later calls use it.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import sys
import threading
from types import ModuleType

import numpy as np
from llvmlite import ir
from numba import types
from numba.core import cgutils
from numba.extending import intrinsic

#: "0": compile every flow's own section kernel before its first section (no generic path);
#: "only": whatever of a flow's own kernels is not ready (DOP853 sections, batches, tangent vectors, return
#: maps) runs on the generic set and nothing compiles in the background: for trying many formulas
#: (no 15-20 s compile per formula, about 1.5x slower per step) and the test suite; the same bits
ENV_SWITCH = "FLOWKIT_GENERIC_KERNELS"

_LOCK = threading.Lock()
_POINTERS: dict[str, tuple[ModuleType, np.ndarray]] = {}
_BACKGROUND: dict[str, threading.Thread] = {}
_GENERIC: list[ModuleType] = []
_CHOICE: dict[tuple[str, str], bool] = {}  # (kernel module, kernel name) -> own kernel chosen ("only" mode)


def _pointer_call(nout: int):
    """Intrinsic: call ``void f(x, y, z, t, double *p, double *out)`` at the address whose bits are ``addr``."""

    @intrinsic
    def call(typingctx, addr, x, y, z, t, p):
        sig = types.UniTuple(types.float64, nout)(addr, x, y, z, t, p)

        def codegen(context, builder, signature, args):
            dbl = ir.DoubleType()
            fnty = ir.FunctionType(ir.VoidType(), [dbl, dbl, dbl, dbl, dbl.as_pointer(), dbl.as_pointer()])
            fn = builder.inttoptr(builder.bitcast(args[0], ir.IntType(64)), fnty.as_pointer())
            data = context.make_array(signature.args[5])(context, builder, args[5]).data
            out = cgutils.alloca_once(builder, dbl, size=nout)
            builder.call(fn, [args[1], args[2], args[3], args[4], data, out])
            vals = [builder.load(builder.gep(out, [ir.Constant(ir.IntType(64), i)])) for i in range(nout)]
            return context.make_tuple(builder, signature.return_type, vals)

        return sig, codegen

    return call


call_pointer3 = _pointer_call(3)
call_pointer9 = _pointer_call(9)

#: the generic family: velocity and gradient read the two addresses from the end of p
GENERIC_FAMILY = '''
from flowkit.kernels.generic import call_pointer3, call_pointer9


@njit(cache=CACHE)
def velocity(x, y, z, t, p):
    return call_pointer3(p[p.shape[0] - 2], x, y, z, t, p)


@njit(cache=CACHE)
def gradient(x, y, z, t, p):
    return call_pointer9(p[p.shape[0] - 1], x, y, z, t, p)
'''

_WRAPPERS = '''
from numba import cfunc, types as _nbt
from numba.np.numpy_support import carray as _carray

_SIG = _nbt.void(_nbt.float64, _nbt.float64, _nbt.float64, _nbt.float64, _nbt.CPointer(_nbt.float64),
                 _nbt.CPointer(_nbt.float64))


@cfunc(_SIG, cache=True)
def velocity_pointer(x, y, z, t, pp, out):
    u = velocity(x, y, z, t, _carray(pp, ({n},)))
    for i in range(3):
        out[i] = u[i]


@cfunc(_SIG, cache=True)
def gradient_pointer(x, y, z, t, pp, out):
    g = gradient(x, y, z, t, _carray(pp, ({n},)))
    for i in range(9):
        out[i] = g[i]
'''


def enabled() -> bool:
    """Is the generic path on (environment switch :data:`ENV_SWITCH`, default on)?"""
    return os.environ.get(ENV_SWITCH, "1") != "0"


def only() -> bool:
    """Generic kernels without the background compile of the flow's own (:data:`ENV_SWITCH` = "only")?"""
    return os.environ.get(ENV_SWITCH, "1") == "only"


def generic_kernels() -> ModuleType:
    """The kernel module of the generic family (built and imported once per process)."""
    from flowkit.kernels import build_module

    with _LOCK:
        if not _GENERIC:
            _GENERIC.append(build_module("generic", GENERIC_FAMILY))
        return _GENERIC[0]


def pointer_params(flow) -> np.ndarray | None:
    """``flow.params`` followed by the bits of its velocity and gradient wrappers' addresses.

    None for families without source (user callables are injected objects: no disk cache).
    """
    fam = flow.family
    if fam.inject is not None:
        return None
    from flowkit.kernels import cache_dir

    text = ("import math\nimport numpy as np\nfrom numba import njit\nCACHE = True\n\n" + fam.code.strip()
            + "\n" + _WRAPPERS.format(n=len(fam.param_names)))
    digest = hashlib.sha256(text.encode()).hexdigest()[:16]
    with _LOCK:
        if digest not in _POINTERS:
            folder = cache_dir()
            folder.mkdir(parents=True, exist_ok=True)
            path = folder / f"ptr_{digest}.py"
            if not path.exists():
                tmp = path.with_suffix(f".tmp{os.getpid()}")
                tmp.write_text(text)
                os.replace(tmp, path)
            name = f"flowkit_generated.{path.stem}"
            spec = importlib.util.spec_from_file_location(name, path)
            module = importlib.util.module_from_spec(spec)
            sys.modules[name] = module
            spec.loader.exec_module(module)  # compiles (or loads) the two small wrappers
            addr = np.array([module.velocity_pointer.address, module.gradient_pointer.address], dtype=np.int64)
            _POINTERS[digest] = (module, addr.view(np.float64))
        module, bits = _POINTERS[digest]
    return np.concatenate([np.asarray(flow.params, dtype=np.float64), bits])


def kernel_for(flow, name: str) -> tuple:
    """``(kernel, params)`` to call the flow's kernel ``name`` with.

    The flow's own kernel and ``flow.params``; in "only" mode (:data:`ENV_SWITCH`), while
    that kernel is neither compiled nor cached, the generic set's and the pointer parameters.
    For kernels built on ``velocity`` and ``gradient`` alone (not the fused FTLE ones).
    """
    own = getattr(flow.kernels, name)
    if not only():
        return own, flow.params
    key = (flow.kernels.__name__, name)
    with _LOCK:
        # decided once per process: another process caching the own kernel meanwhile must not switch a
        # running analysis over to loading (or compiling) it between two of its chunks
        use_own = _CHOICE.setdefault(key, ready(own))
    params = None if use_own else pointer_params(flow)
    if params is None:
        return own, flow.params
    return getattr(generic_kernels(), name), params


def ready(kernel) -> bool:
    """Is a specialized kernel compiled in this process or saved in numba's disk cache?"""
    if getattr(kernel, "signatures", None):
        return True
    cache = getattr(kernel, "_cache", None)
    index = getattr(getattr(cache, "_cache_file", None), "_index_path", None)
    return bool(index) and os.path.exists(index)


def compile_in_background(key: str, warm) -> threading.Thread:
    """Run ``warm()`` (a tiny call that compiles a specialized kernel) once per key in a daemon thread."""
    with _LOCK:
        thread = _BACKGROUND.get(key)
        if thread is None:
            thread = threading.Thread(target=warm, name=f"flowkit-compile-{key}", daemon=True)
            _BACKGROUND[key] = thread
            thread.start()
        return thread
