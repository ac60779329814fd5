"""The fingerprint of a chunked run (the ``<key>`` of its chunk files): the table, the study
function, the content of its input files and the code. :mod:`siltandem.studies.runner` says what
goes in and why; :func:`sweep_key` computes it, :func:`code_digest` the code's part.
"""
import functools
import hashlib
import inspect
import json
from pathlib import Path
import pickle
import types

import pandas as pd

from siltandem.errors import StackError
from siltandem.files import file_digest

_FORMAT = b"siltandem.parallel chunks v2"


def sweep_key(table, function, *, inputs=()):
    """16-hex fingerprint of a canonical table, a study function, the content of its input
    files and the code (see the notes of :mod:`siltandem.studies.runner`)."""
    digest = hashlib.sha256(_FORMAT + code_digest().encode())
    digest.update(json.dumps([[str(c) for c in table.columns],
                              [str(t) for t in table.dtypes], len(table)]).encode())
    digest.update(pd.util.hash_pandas_object(table, index=False).to_numpy().tobytes())
    _feed_callable(digest, function)
    for path in sorted({str(Path(p)) for p in inputs}):
        digest.update(b"\0input\0" + path.encode() + b"\0" + file_digest(path).encode())
    return digest.hexdigest()[:16]


#: the libraries whose numbers a result rests on: their versions are part of the code digest
_LIBRARIES = ("numpy", "scipy", "pandas", "pvlib", "numba")


#: package files that make up the code and its data
_CODE_SUFFIXES = (".py", ".toml", ".csv")


@functools.lru_cache(maxsize=1)
def code_digest():
    """Hex digest of the code that computes a result, once per process (a few milliseconds).

    It covers siltandem's version, the bytes of every ``.py``, ``.toml`` and ``.csv`` file of the
    installed package (solver, laws, materials library, named spectra), each with its path inside
    the package, and the versions of numpy, scipy, pandas, pvlib and numba. Any edit of the
    package's code or data changes it.
    """
    from importlib import metadata

    from siltandem.version import __version__

    digest = hashlib.sha256(b"siltandem " + __version__.encode())
    digest.update(_tree_digest(package_folder()).encode())
    for name in _LIBRARIES:
        try:
            version = metadata.version(name)
        except metadata.PackageNotFoundError:
            version = "absent"
        digest.update(f"\0{name} {version}".encode())
    return digest.hexdigest()


def package_folder():
    """The folder of the installed siltandem package (every stage's code and data under it)."""
    return Path(__file__).resolve().parents[1]


def _tree_digest(root):
    """Hex digest of the code and data files under ``root`` (paths relative to it, and bytes);
    compiled caches (``__pycache__``) are left out."""
    root = Path(root)
    digest = hashlib.sha256()
    files = sorted(p for p in root.rglob("*") if p.suffix in _CODE_SUFFIXES
                   and "__pycache__" not in p.relative_to(root).parts and p.is_file())
    for path in files:
        digest.update(b"\0file\0" + path.relative_to(root).as_posix().encode() + b"\0")
        digest.update(hashlib.sha256(path.read_bytes()).digest())
    return digest.hexdigest()


def _feed_callable(digest, obj):
    if isinstance(obj, functools.partial):
        _feed_callable(digest, obj.func)
        digest.update(_pickled(obj.args, "the arguments bound by functools.partial"))
        digest.update(_pickled(sorted(obj.keywords.items()), "the keywords bound by "
                               "functools.partial"))
    elif inspect.ismethod(obj):
        _feed_callable(digest, obj.__func__)
        digest.update(_pickled(obj.__self__, "the object the method is bound to"))
    elif inspect.isfunction(obj):
        digest.update(f"{obj.__module__}:{obj.__qualname__}".encode())
        _feed_code(digest, obj.__code__)
        digest.update(_pickled((obj.__defaults__, obj.__kwdefaults__), "its default values"))
        cells = tuple(cell.cell_contents for cell in obj.__closure__ or ())
        digest.update(_pickled(cells, "the variables it closes over"))
    else:  # a callable object or a builtin
        kind = type(obj)
        digest.update(f"{kind.__module__}:{kind.__qualname__}".encode())
        call = getattr(kind, "__call__", None)   # noqa: B004 (the class's own method, not callable())
        if inspect.isfunction(call):
            _feed_code(digest, call.__code__)
        digest.update(_pickled(obj, "the callable object"))


def _feed_code(digest, code):
    digest.update(code.co_code)
    digest.update(repr(code.co_names).encode())
    for const in code.co_consts:
        if isinstance(const, types.CodeType):
            _feed_code(digest, const)
        else:
            digest.update(_stable_repr(const).encode())


def _stable_repr(value):
    # frozenset constants iterate in a per-process order (string hashing is randomized)
    if isinstance(value, frozenset):
        return "frozenset(" + repr(sorted(_stable_repr(v) for v in value)) + ")"
    if isinstance(value, tuple):
        return "(" + ",".join(_stable_repr(v) for v in value) + ")"
    return repr(value)


def _pickled(value, what):
    try:
        return pickle.dumps(value, protocol=4)
    except Exception as error:
        raise StackError(f"cannot fingerprint the study function: {what} cannot be pickled "
                         f"({error})", where="argument function",
                         fix="use a module-level function, or functools.partial of one with "
                             "picklable arguments") from None
