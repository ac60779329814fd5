"""The one schema for numbers given outside a stack file: command-line overrides, study options.

Every number a user gives besides the file -- ``--suns``, ``--temperature``, ``--points``,
``--workers``, ``--tilt``, the values of ``--vary``, or the API's ``suns=``, ``temperature_K=``,
``workers=``, ``chunk_rows=`` -- is checked by :func:`siltandem.stack.check_number` against a
:class:`siltandem.stack.Parameter`: the file's own entry where the option overrides a file key
(``stack.CONDITION_SCHEMA``, ``stack.ELEMENT_SCHEMA``, ``layers.LAYER_NUMBERS``), an entry of
:data:`OPTION_SCHEMA` otherwise. Same ranges, same messages as the file; only ``where`` differs:
the option as typed (``--suns``) on the command line, ``argument suns`` through the API.

The checks run before any work starts, together with :func:`check_study_memory` (the grid's
size against the memory this machine has free) and, on the command line,
:func:`connect_cluster` (the scheduler's address, with a short connect timeout).
"""
import math
import re

from siltandem.errors import StackError
from siltandem.stack.schema import CONDITION_SCHEMA, Parameter, check_number

#: options that are not file keys: their ranges (the file keys' ranges live in stack.py/layers.py)
OPTION_SCHEMA = {
    "points": Parameter("points", "", 20, 1_000_000, 401,
                        help="points on the traced curve"),
    "rows": Parameter("points", "", 3, 10_000, 21, help="rows of the printed J-V"),
    "suns_range_count": Parameter("N", "", 2, 2000, help="concentrations of --suns-range"),
    "vary_count": Parameter("N", "", 2, 1_000_000, help="values of a varied key"),
    "workers": Parameter("workers", "", 1, 256, help="local worker processes"),
    "chunk_rows": Parameter("chunk_rows", "", 1, 10_000_000, help="designs per chunk"),
    "tilt_deg": Parameter("tilt_deg", "deg", 0.0, 90.0, help="plane tilt from horizontal"),
    "azimuth_deg": Parameter("azimuth_deg", "deg", 0.0, 360.0,
                             help="plane azimuth, clockwise from north"),
    "albedo": Parameter("albedo", "", 0.0, 1.0, help="ground albedo"),
    "composition": Parameter("composition", "", 0.0, 1.0, help="alloy composition x"),
}

#: command-line options holding numbers: argparse destination -> (option, schema entry, integer).
#: ``points`` of ``siltandem interface`` is the number of printed rows (see read_arguments).
CLI_NUMBERS = {
    "suns": ("--suns", CONDITION_SCHEMA["suns"], False),
    "temperature": ("--temperature", CONDITION_SCHEMA["temperature_K"], False),
    "points": ("--points", OPTION_SCHEMA["points"], True),
    "workers": ("--workers", OPTION_SCHEMA["workers"], True),
    "tilt": ("--tilt", OPTION_SCHEMA["tilt_deg"], False),
    "azimuth": ("--azimuth", OPTION_SCHEMA["azimuth_deg"], False),
    "albedo": ("--albedo", OPTION_SCHEMA["albedo"], False),
    "composition": ("--composition", OPTION_SCHEMA["composition"], False),
}

# Memory estimates, measured on this project's machine with /usr/bin/time (maximum resident
# size) and rounded up about threefold: a 1000 x 1000 map of the demo dual reached 655 MB, a
# 300 x 300 map 588 MB and a 10 x 10 map 299 MB (10 000-design chunks); `run --points 1e6`
# 626 MB against 294 MB at 401 points.
#: bytes per design of a study's table (the result rows kept in memory)
TABLE_BYTES_PER_DESIGN = 1_000
#: bytes per design of the chunk being solved (the solver's working arrays)
CHUNK_BYTES_PER_DESIGN = 50_000
#: bytes of one local worker process (Python, numpy, numba, pandas and the cached kernels)
WORKER_BYTES = 400_000_000
#: bytes per point of a traced curve (``--points``)
CURVE_BYTES_PER_POINT = 2_000
#: a chunk's default size when none is given (parallel.MAX_CHUNK_ROWS)
DEFAULT_CHUNK_ROWS = 10_000
#: seconds to wait for a dask scheduler to answer before giving up
CONNECT_TIMEOUT_S = 5.0


def check_option(spec, value, *, where, integer=False):
    """``value`` against ``spec`` (same message as a file key); whole numbers when ``integer``."""
    if hasattr(value, "dtype") and getattr(value, "shape", None) == ():   # a numpy scalar
        value = value.item()
    if integer and (isinstance(value, bool) or not isinstance(value, int)):
        raise StackError(f"{spec.key} = {value!r} is not a whole number ({spec.help})",
                         where=where, fix=f"give {spec.key} within {spec.describe_range()}")
    checked = check_number(spec, value, where=where)
    return int(value) if integer else checked


def read_option(text, spec, option, *, integer=False):
    """A command-line value (text) read as a number and checked against ``spec``."""
    if text is None or not isinstance(text, str):
        return None if text is None else check_option(spec, text, where=option, integer=integer)
    try:
        value = float(text.strip())
        if integer:      # 400 or 4e2; not 400.5
            value = int(text.strip()) if text.strip().lstrip("+-").isdigit() else \
                int(value) if math.isfinite(value) and value.is_integer() else None
            if value is None:
                raise ValueError
    except ValueError:
        kind = "a whole number" if integer else "a number"
        raise StackError(f"{option} {text!r} is not {kind}", where=option,
                         fix=f"give {option} within {spec.describe_range()} "
                             f"({spec.help})") from None
    return check_option(spec, value, where=option, integer=integer)


def read_arguments(args):
    """Replace every numeric command-line option in ``args`` by its checked value, in place."""
    for dest, (option, spec, integer) in CLI_NUMBERS.items():
        if not hasattr(args, dest):
            continue
        if dest == "points" and getattr(args, "command", None) == "interface":
            spec = OPTION_SCHEMA["rows"]
        setattr(args, dest, read_option(getattr(args, dest), spec, option, integer=integer))
    return args


def check_conditions(*, suns=None, temperature_K=None, where="argument"):
    """Overrides of ``[conditions]`` (None: keep the file's) against the file's own ranges."""
    if suns is not None:
        suns = check_option(CONDITION_SCHEMA["suns"], suns, where=f"{where} suns")
    if temperature_K is not None:
        temperature_K = check_option(CONDITION_SCHEMA["temperature_K"], temperature_K,
                                     where=f"{where} temperature_K")
    return suns, temperature_K


def check_plane(*, tilt_deg=None, azimuth_deg=None, albedo=None, where=None):
    """A yield year's plane and ground (None: the default) against :data:`OPTION_SCHEMA`.

    ``where`` None names the command-line options (``--tilt``); otherwise ``argument tilt_deg``.
    """
    names = {"tilt_deg": "--tilt", "azimuth_deg": "--azimuth", "albedo": "--albedo"}
    for key, value in (("tilt_deg", tilt_deg), ("azimuth_deg", azimuth_deg),
                       ("albedo", albedo)):
        if value is not None:
            check_option(OPTION_SCHEMA[key], value,
                         where=names[key] if where is None else f"{where} {key}")


# ----------------------------------------------------------------------------------------------
# studies: workers, cluster, chunk rows and the grid's memory

_ADDRESS = re.compile(r"^(?:(?P<scheme>[A-Za-z][A-Za-z0-9+.-]*)://)?"
                      r"(?P<host>\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9._-]+):(?P<port>\d{1,5})/?$")
#: transports of dask.distributed that a scheduler address may name
SCHEMES = ("tcp", "tls", "ws", "wss", "ucx")
_ADDRESS_FIX = ("give the scheduler's address as tcp://HOST:PORT, e.g. tcp://127.0.0.1:8786 "
                "(`dask scheduler` prints it when it starts)")


def check_cluster_address(address, *, where="argument cluster", in_process=True):
    """A scheduler address ``[scheme://]host:port`` -> (scheme, host, port); StackError otherwise.

    ``inproc://...`` (a scheduler inside this process) is accepted when ``in_process``.
    """
    if not isinstance(address, str):
        raise StackError(f"cluster must be an address (text) or a distributed.Client, got "
                         f"{type(address).__name__}", where=where, fix=_ADDRESS_FIX)
    text = address.strip()
    if in_process and text.startswith("inproc://"):
        return "inproc", text, None
    match = _ADDRESS.match(text)
    shown = text if len(text) <= 80 else text[:77] + "..."
    if not match:
        raise StackError(f"{shown!r} is not a scheduler address [scheme://]HOST:PORT",
                         where=where, fix=_ADDRESS_FIX)
    scheme = (match["scheme"] or "tcp").lower()
    if scheme not in SCHEMES:
        raise StackError(f"{shown!r}: unknown transport {scheme!r}", where=where,
                         fix="use one of " + ", ".join(f"{s}://" for s in SCHEMES))
    port = int(match["port"])
    if not 1 <= port <= 65535:
        raise StackError(f"{shown!r}: port {port} is outside 1..65535", where=where,
                         fix=_ADDRESS_FIX)
    return scheme, match["host"].strip("[]"), port


def check_study_options(*, workers=None, cluster=None, chunk_rows=None, where="argument"):
    """Workers, cluster and chunk size of a study (the API's and the command line's)."""
    if workers is not None:
        workers = check_option(OPTION_SCHEMA["workers"], workers, where=f"{where} workers",
                               integer=True)
    if workers is not None and cluster is not None:
        raise StackError("both workers and cluster are given", where=f"{where} workers",
                         fix="give workers for a local pool or cluster for a dask scheduler")
    if isinstance(cluster, str):
        check_cluster_address(cluster, where=f"{where} cluster")
    if chunk_rows is not None:
        chunk_rows = check_option(OPTION_SCHEMA["chunk_rows"], chunk_rows,
                                  where=f"{where} chunk_rows", integer=True)
    return workers, chunk_rows


def available_memory_bytes():
    """Memory this machine can give a new allocation [bytes]: ``MemAvailable`` of /proc/meminfo,
    else the free physical pages (os.sysconf); None when neither can be read."""
    import os

    try:
        with open("/proc/meminfo", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):
        return None


def _size(n_bytes):
    for unit, scale in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if n_bytes >= scale:
            return f"{n_bytes / scale:.3g} {unit}"
    return f"{n_bytes / 1e3:.3g} kB"


def check_memory(need_bytes, *, what, where, fix, available=None):
    """Refuse (StackError naming ``where``) when ``need_bytes`` exceeds the free memory."""
    free = available_memory_bytes() if available is None else available
    if free is not None and need_bytes > free:
        raise StackError(f"{what} needs about {_size(need_bytes)} of memory; this machine has "
                         f"{_size(free)} free", where=where, fix=fix)


#: how check_study_memory names what to change: on the command line, and through the API
CLI_NAMES = {"grid": "--vary", "workers": "--workers", "chunk_rows": "chunk rows"}
API_NAMES = {"grid": "argument variations", "workers": "argument workers",
             "chunk_rows": "argument chunk_rows"}


def check_study_memory(designs, *, workers=None, cluster=None, chunk_rows=None, names=API_NAMES,
                       available=None):
    """A study of ``designs`` designs against the free memory, before its table is allocated.

    The estimate (module constants above): the result table in this process, plus the chunks
    being solved at once (one per worker, one in this process without workers, none here on a
    cluster), plus the worker processes themselves. The message names the largest share.
    """
    free = available_memory_bytes() if available is None else available
    table = designs * TABLE_BYTES_PER_DESIGN
    rows = min(designs, chunk_rows or DEFAULT_CHUNK_ROWS)
    parallel = 0 if cluster is not None else (workers or 1)
    chunks = parallel * rows * CHUNK_BYTES_PER_DESIGN
    processes = (workers or 0) * WORKER_BYTES
    need = table + chunks + processes
    if free is None or need <= free:
        return
    grid = f"a study of {designs:.4g} designs"
    if table >= max(chunks, processes):
        check_memory(need, what=grid, where=names["grid"], available=free,
                     fix="use fewer values per --vary (N), or split the ranges over several runs")
    elif processes >= chunks:
        check_memory(need, what=f"{grid} on {workers} worker processes", available=free,
                     where=names["workers"],
                     fix="give fewer workers (each process holds its own copy of the solver "
                         "and one chunk)")
    else:
        check_memory(need, what=f"{grid} in chunks of {rows} designs", available=free,
                     where=names["chunk_rows" if chunk_rows else "grid"],
                     fix="give a smaller chunk_rows (the default is at most 10000 designs)"
                     if chunk_rows else "use fewer values per --vary (N)")


def connect_cluster(address, *, where="--cluster", timeout_s=None):
    """A distributed.Client for a scheduler named on the command line, or one StackError.

    The address's form is checked first; then a plain TCP connection with a short timeout tells
    a wrong host or port at once, before the client's own (longer) handshake.
    """
    import socket

    timeout_s = CONNECT_TIMEOUT_S if timeout_s is None else timeout_s
    scheme, host, port = check_cluster_address(address, where=where, in_process=False)
    if scheme in ("tcp", "tls", "ws", "wss"):
        try:
            socket.create_connection((host, port), timeout=timeout_s).close()
        except OSError as exc:
            reason = exc.strerror or exc.__class__.__name__
            raise StackError(f"cannot reach the dask scheduler at {address.strip()!r} "
                             f"({reason})", where=where,
                             fix="start a scheduler (`dask scheduler`) and give the address it "
                                 "prints, e.g. tcp://127.0.0.1:8786") from None
    try:
        import distributed
        from distributed.core import rpc
    except ImportError:
        raise StackError("--cluster needs dask.distributed, which is not installed",
                         where=where, fix='pip install -e ".[parallel]"') from None
    import asyncio

    async def identity():
        # the scheduler's handshake, bounded: a port held by another service never answers it
        remote = rpc(address.strip())
        try:
            return await asyncio.wait_for(remote.identity(), timeout_s)
        finally:
            await remote.close_rpc()

    not_a_scheduler = StackError(
        f"no dask scheduler answered at {address.strip()!r} within {timeout_s:g} s", where=where,
        fix="check that the address is a dask scheduler's (not a worker's or another "
            "service's), e.g. tcp://127.0.0.1:8786")
    try:
        answer = asyncio.run(identity())
    except (OSError, TimeoutError, ValueError):
        raise not_a_scheduler from None
    if not isinstance(answer, dict) or answer.get("type") != "Scheduler":
        raise not_a_scheduler
    try:
        return distributed.Client(address.strip(), timeout=timeout_s, set_as_default=False)
    except (OSError, TimeoutError, ValueError):
        raise not_a_scheduler from None
