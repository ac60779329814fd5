"""The kernels' compiler, chosen once per process: numba (the default), or the interpreter.

Every kernel module imports this module in numba's place (``from siltandem.numerics import jit as
numba``) and decorates its kernels with ``@numba.njit(...)`` as usual. By default :func:`njit` is
numba's own, so nothing changes. A process that solves one design and exits (the command line's
``run``) calls :func:`interpret_kernels` before any kernel module is imported: the kernels then
stay the Python functions they are written as, and numba is never imported. Importing numba and
loading its cached machine code takes about 0.5-0.8 s on this project's 2-core machine, while one
design solves in well under 0.1 s interpreted (benchmarks/bench_startup.py).

Arithmetic differs in one respect: compiled with ``error_model="numpy"``, a division by zero or an
overflowing ``math.exp`` gives inf or NaN, while the interpreter raises. When an interpreted kernel
raises such an error (ArithmeticError, or ValueError such as a math domain error), every kernel
switches to its compiled form for the rest of the process and the call is repeated compiled, so
the answer is always the compiled one's. A process whose kernels have run interpreted for more
than INTERPRETED_BUDGET_S switches the same way after the call in progress (a big stack). The
kernels are loops over scalars written for numba; interpreted, they gave the same numbers to the
bit on every demo (tests/test_startup.py compares them).
"""
import functools
import time

#: "compiled" (numba) or "interpreted"; fixed when the first kernel is defined
_STATE = {"mode": "compiled", "fixed": False, "depth": 0, "seconds": 0.0}
#: interpreted kernel time [s of CPU] after which the process switches to numba for the rest of its
#: kernels: loading numba costs about 0.5-0.8 s, and a stack of tens of subcells interprets
#: for seconds (50 subcells: 10.9 s interpreted against 3.4 s compiled, whole command)
INTERPRETED_BUDGET_S = 0.3
#: every interpreted kernel defined in this process (switched to compiled together)
_KERNELS = []
#: the errors the interpreter raises where compiled code gives inf or NaN
FALLBACK_ERRORS = (ArithmeticError, ValueError)
#: functions run before the kernels switch to numba: a kernel module whose module-level data numba
#: freezes at compilation, and which builds that data only when compiled (laws/compiled_fermi.py's
#: tables), registers its builder here with :func:`before_compile`
_BEFORE_COMPILE = []


def before_compile(function):
    """Run ``function()`` (idempotent) before :func:`compile_all` switches the kernels; returns it."""
    _BEFORE_COMPILE.append(function)
    return function


def interpret_kernels():
    """Run the kernels interpreted in this process (call before any kernel module is imported).
    Returns True when that took effect, False when kernels were already defined compiled."""
    if _STATE["fixed"]:
        return _STATE["mode"] == "interpreted"
    _STATE["mode"] = "interpreted"
    return True


def mode():
    """How this process runs its kernels: "compiled" or "interpreted"."""
    return _STATE["mode"]


def njit(*args, **options):
    """numba.njit in compiled mode; in interpreted mode, a :class:`Kernel` around the function.
    Used as ``@njit(option=...)`` or ``@njit``."""
    _STATE["fixed"] = True
    if args and callable(args[0]):
        return njit(**options)(args[0])
    if _STATE["mode"] == "compiled":
        import numba

        return numba.njit(*args, **options)

    def decorate(function):
        kernel = Kernel(function, options)
        _KERNELS.append(kernel)
        return kernel

    return decorate


class Kernel:
    """An interpreted kernel: calls its Python function until an arithmetic error anywhere in a
    kernel call switches every kernel to compiled (:func:`compile_all`)."""

    def __init__(self, py_func, options):
        self.py_func = py_func
        self.options = options
        self.dispatcher = None
        functools.update_wrapper(self, py_func)

    def __call__(self, *args):
        if self.dispatcher is not None:
            return self.dispatcher(*args)
        if _STATE["depth"]:                         # called from another kernel
            return self.py_func(*args)
        _STATE["depth"] = 1
        start = time.process_time()
        try:
            out = self.py_func(*args)
        except FALLBACK_ERRORS:                     # the outermost kernel call repeats itself
            out = None
        finally:
            _STATE["depth"] = 0
            _STATE["seconds"] += time.process_time() - start
        if out is None:
            compile_all()
            return self.dispatcher(*args)
        if _STATE["seconds"] > INTERPRETED_BUDGET_S:  # a big stack: numba pays for itself
            compile_all()
        return out


def compile_all():
    """Switch every interpreted kernel to numba (from numba's cache where it holds them): each
    kernel's name in its module then refers to numba's dispatcher, so compiled kernels call
    compiled kernels."""
    import numba

    for prepare in _BEFORE_COMPILE:
        prepare()
    for kernel in _KERNELS:
        if kernel.dispatcher is None:
            kernel.dispatcher = numba.njit(**kernel.options)(kernel.py_func)
    for namespace in {id(k.py_func.__globals__): k.py_func.__globals__ for k in _KERNELS}.values():
        for name, value in list(namespace.items()):
            if isinstance(value, Kernel):
                namespace[name] = value.dispatcher
    _STATE["mode"] = "compiled"
