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
the answer is always the compiled one's. The kernels are loops over scalars written for numba;
interpreted, they give the same numbers to rounding (tests/test_jit.py compares every demo).
"""
import functools

#: "compiled" (numba) or "interpreted"; fixed when the first kernel is defined
_STATE = {"mode": "compiled", "fixed": False, "depth": 0}
#: every interpreted kernel defined in this process (switched to compiled together)
_KERNELS = []
#: the errors the interpreter raises where compiled code gives inf or NaN
FALLBACK_ERRORS = (ArithmeticError, ValueError)


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
        _STATE["depth"] += 1
        try:
            return self.py_func(*args)
        except FALLBACK_ERRORS:
            if _STATE["depth"] > 1:                 # the outermost kernel call repeats itself
                raise
        finally:
            _STATE["depth"] -= 1
        compile_all()
        return self.dispatcher(*args)


def compile_all():
    """Switch every interpreted kernel to numba (from numba's cache where it holds them): each
    kernel's name in its module then refers to numba's dispatcher, so compiled kernels call
    compiled kernels."""
    import numba

    for kernel in _KERNELS:
        if kernel.dispatcher is None:
            kernel.dispatcher = numba.njit(**kernel.options)(kernel.py_func)
    for namespace in {id(k.py_func.__globals__): k.py_func.__globals__ for k in _KERNELS}.values():
        for name, value in list(namespace.items()):
            if isinstance(value, Kernel):
                namespace[name] = value.dispatcher
    _STATE["mode"] = "compiled"
