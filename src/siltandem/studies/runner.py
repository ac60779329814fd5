"""Running a study function over a table of designs, chunk by chunk: in this process, on a local
process pool, or on a dask.distributed scheduler; with chunk files on disk so that an interrupted
run resumes.

Nothing here knows any physics. A study is a picklable pure function ``function(chunk) -> frame``
over a pandas table with one row per design; :func:`run_chunks` splits the table into a few large
chunks, runs them, and returns every design's row exactly once, sorted by design id.

Why chunks and not one task per design: every dask task costs milliseconds of overhead
(``benchmarks/bench_parallel.py`` measures it), while a batched (vectorized) solve of a chunk costs
little more than the solve of one design. Workers return DataFrames (arrays), never Python lists.

Output folder layout (``output=``)::

    results.parquet                              all rows, written atomically at the end
    _metadata                                    the dataset's summary file: results.parquet only
    _chunks/chunk-<key>-<rows>rows-<id>.parquet  one per finished chunk, written atomically

The folder is a Parquet dataset that reads back as exactly the table, N rows for N designs:
``pandas.read_parquet`` and ``pyarrow.dataset`` skip names that start with ``_`` or ``.``
(pyarrow's default ``ignore_prefixes``), and ``dask.dataframe.read_parquet``, which lists every
``*.parquet`` under the folder, reads the files the ``_metadata`` summary names (its default).
Chunk files of the older flat layout (beside ``results.parquet``) are moved into ``_chunks/``
when the folder is opened. ``results.parquet`` carries the run's key,
chunk size, row count and the study's provenance (``metadata=``: version, stack hash, light) in
its schema metadata under the key ``siltandem`` (JSON).

``<key>`` is a fingerprint of:

- the table (values, column names, dtypes);
- the function (module, qualified name, its own compiled code, default values, the arguments
  bound by ``functools.partial``, so the parsed stack a study binds);
- the content of every input file the study reads (``inputs=``: the stack file, a spectrum CSV,
  EQE CSVs), so an edited file is never answered from chunks of its old content;
- the code: siltandem's version and a digest of every source and data file of the installed
  package (:func:`code_digest`, computed once per process), with the versions of the numerical
  libraries it rests on, so changed physics never resumes from chunks the old code wrote.

(``fingerprint.py`` computes the key: :func:`sweep_key`, :func:`code_digest`.)

A different key never mixes with chunks on disk: those chunks are ignored (and left in place, so
going back to the old inputs resumes them). When the folder holds only results of other keys,
the run starts afresh and says so once to the progress reporter (with ``progress`` on; logged at
INFO on the ``siltandem.studies.runner`` logger otherwise); a ``results.parquet`` of another key is removed
before any work, so an interrupted fresh run cannot leave the old table beside the new chunks.
``<rows>`` is the chunk size, so chunk ids always mean the same rows. A temporary file
(``.<name>.<pid>.<random>.tmp``) is renamed into place only when complete; the temporary files
of a process that no longer exists are removed at the next start.

dask[distributed] is needed only for ``cluster=``: the optional extra ``parallel``
(``pip install -e ".[parallel]"``), imported when used. pyarrow (``output=``) is a core dependency.
"""
from collections import Counter, deque
import concurrent.futures
from concurrent.futures.process import BrokenProcessPool
import contextlib
import functools
import json
import logging
import math
import multiprocessing
import multiprocessing.connection
import os
from pathlib import Path
import re
import secrets
import signal
import sys
import threading
import warnings

import numpy as np
import pandas as pd

from siltandem.circuit.elements import TABLE_ROWS
from siltandem.errors import StackError
from siltandem.studies.fingerprint import sweep_key
from siltandem.studies.progress import reporter

#: Upper bound of the default chunk size. A batch of more designs than a subcell's junction
#: table holds (circuit.elements.TABLE_ROWS, 5,952) leaves the tables for the laws' own root
#: finds: 1.8-2.1x slower in our runs, and last-bit different from the same designs in smaller
#: chunks. Sizes from 1,000 rows to the limit measured within the noise of a shared machine of one
#: another (benchmarks/bench_chunks.py); 2,000 keeps a chunk's memory and the progress steps
#: small. Studies whose per-design arrays are wide (full I-V curves) pass a smaller ``chunk_rows``.
MAX_CHUNK_ROWS = min(2_000, TABLE_ROWS)
#: Default number of chunks per worker on a pool or a cluster: enough to balance uneven chunks,
#: few enough that per-task overhead stays negligible.
CHUNKS_PER_WORKER = 4
#: A chunk that was running when worker processes died this many times is given up.
MAX_ATTEMPTS = 3

RESULTS_NAME = "results.parquet"
#: the sub-folder of the chunk files (a leading "_": dataset readers skip it)
CHUNKS_FOLDER = "_chunks"
SUMMARY_NAME = "_metadata"
#: the starting-afresh note goes here when progress is off (the command line shows it)
LOG = logging.getLogger(__name__)
_CHUNK_NAME = re.compile(r"^chunk-(?P<key>[0-9a-f]{16})-(?P<rows>\d+)rows-(?P<id>\d{6})\.parquet$")
_TEMPORARY_NAME = re.compile(r"^\.(?P<target>.+)\.(?P<pid>\d+)\.[0-9a-f]+\.tmp$")
_EXTRA = 'pip install -e ".[parallel]"'
_INSTALL = {"pyarrow": 'pip install pyarrow (a dependency of siltandem: pip install -e .)',
            "pyarrow.parquet": 'pip install pyarrow (a dependency of siltandem: pip install -e .)'}
_THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                     "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")


class ChunkFailedError(RuntimeError):
    """Chunks that could not be computed: their worker processes kept dying."""


class WorkerLostWarning(RuntimeWarning):
    """A worker process of the local pool died; its chunks are being recomputed."""


# ----------------------------------------------------------------------------------------------
# the entry point

def run_chunks(function, table, *, chunk_rows=None, workers=None, cluster=None, output=None,
               progress=False, resume=True, inputs=(), metadata=None):
    """Evaluate ``function`` over ``table`` chunk by chunk; every design's row exactly once.

    Parameters
    ----------
    function : callable
        ``function(chunk: DataFrame) -> DataFrame``, pure and picklable (a module-level function
        or a ``functools.partial`` of one). It gets a slice of ``table`` with an integer
        ``design`` column and returns one row per input row, with the same ``design`` ids and its
        result columns (it may carry the parameter columns too; only what it returns is kept).
    table : pandas.DataFrame
        One row per design. Design ids are its integer ``design`` column, or else its integer
        index (which then becomes the ``design`` column). Ids must be unique. Row order does not
        matter: the table is sorted by design before it is cut into chunks.
    chunk_rows : int, optional
        Rows per chunk. Default: in this process, the whole table up to :data:`MAX_CHUNK_ROWS`;
        on a pool or a cluster, about :data:`CHUNKS_PER_WORKER` chunks per worker, at most
        :data:`MAX_CHUNK_ROWS`. With ``output`` and ``resume``, the chunk size already on disk for
        this table and function is reused, so a rerun with another worker count still resumes.
    workers : int, optional
        Run on a local pool of this many processes (``spawn`` start method, one numpy/BLAS thread
        each). None (default) runs in this process. A script that uses a pool must guard its
        entry point with ``if __name__ == "__main__":`` and define ``function`` in a module or
        in the script file.
    cluster : str or distributed.Client, optional
        Address of a running dask.distributed scheduler (``"tcp://host:port"``), or a connected
        client. Exclusive with ``workers``.
    output : str or path-like, optional
        Folder for the final ``results.parquet`` and, in its ``_chunks`` sub-folder, the chunk
        files (created if missing); the folder reads back as exactly the table (module notes).
    progress : bool, "tqdm" or callable
        False (default): silent. True: a progress line on stderr (rows done / total, rate, time
        left) once the run has lasted ``progress.PROGRESS_DELAY_S`` (the command line's). ``"tqdm"``:
        a ``tqdm.auto`` bar (a widget in a notebook; needs tqdm). A callable:
        ``progress(done_rows, total_rows)`` after every finished chunk.
    resume : bool
        With ``output``: load chunks already on disk instead of computing them. False recomputes
        (and rewrites) every chunk.
    inputs : iterable of str or path-like
        Files the study function reads (the stack file, spectrum and EQE CSVs): their content
        is part of the chunk key (a missing file counts as its own content), so editing one
        starts afresh instead of resuming (see the module notes).
    metadata : dict, optional
        JSON-able provenance (version, stack hash, light) stored in ``results.parquet``'s
        schema metadata beside the key.

    Returns
    -------
    pandas.DataFrame
        The concatenated results sorted by ``design``, with a fresh RangeIndex. Chunks loaded
        from disk carry the dtypes that Parquet keeps.

    Raises
    ------
    StackError
        A bad argument, or ``function`` returned rows that do not match its chunk.
    ChunkFailedError
        Worker processes kept dying while running the same chunks.

    Notes
    -----
    A worker process that dies (killed, out of memory) loses only its chunks: on the local pool
    the pool is restarted and the missing chunks resubmitted (:class:`WorkerLostWarning`); dask
    reschedules them itself. An interrupted run (Ctrl-C, ``kill -9``) started again with the same
    arguments computes only the chunks missing from ``output``.
    """
    table = _canonical_table(table)
    chunk_rows = _check_options(chunk_rows, workers, cluster)
    _check_progress(progress)
    folder, key, chunk_rows = _open_output(output, table, function, inputs, chunk_rows,
                                           resume=resume, progress=progress)
    designs = table["design"].to_numpy()
    client, own_client = (None, False) if cluster is None else _connect(cluster)
    try:
        if chunk_rows is None:
            chunk_rows = _run_chunk_rows(len(table), client, workers)
        bounds = [(start, min(start + chunk_rows, len(table)))
                  for start in range(0, len(table), chunk_rows)]
        results = {}
        if folder is not None and resume:
            results = _load_chunks(folder, key, chunk_rows, bounds, designs)
        _compute_missing(function, table, designs, bounds, results, client=client,
                         workers=workers, folder=folder, key=key, chunk_rows=chunk_rows,
                         progress=progress)
    finally:
        if own_client:
            client.close()
    return _combine(results, len(bounds), designs, folder=folder, key=key, chunk_rows=chunk_rows,
                    metadata=metadata)


def _check_progress(progress):
    if progress == "tqdm":
        _require("tqdm.auto", fix="pip install tqdm, or pass progress=True for a line on stderr")
    elif not (isinstance(progress, bool) or progress is None or callable(progress)):
        raise StackError(f"progress = {progress!r} is not one of False, True, 'tqdm' or a "
                         "callable", where="argument progress",
                         fix="pass progress=True (stderr), 'tqdm' (a bar) or a function "
                             "f(done_rows, total_rows)")


def _open_output(output, table, function, inputs, chunk_rows, *, resume, progress=False):
    """The output folder (None without ``output``), the run's key (None without a folder) and
    the chunk size: when resuming without one given, the size already on disk for this key.
    Results of other keys in the folder are set aside first."""
    if output is None:
        return None, None, chunk_rows
    folder = _prepare_folder(output)
    key = sweep_key(table, function, inputs=inputs)
    _set_aside_other_keys(folder, key, resume=resume, say=progress is True)
    if chunk_rows is None and resume:
        chunk_rows = _chunk_rows_on_disk(folder, key)
    return folder, key, chunk_rows


def _run_chunk_rows(n_rows, client, workers):
    """The default chunk size of a run in this process, on a local pool or on a cluster (one
    slot per worker thread)."""
    local = client is None and workers is None
    slots = workers if client is None else sum(client.nthreads().values())
    return default_chunk_rows(n_rows, slots=max(1, slots or 1), local=local)


def _compute_missing(function, table, designs, bounds, results, *, client, workers, folder, key,
                     chunk_rows, progress):
    """Compute the chunks missing from ``results`` (chunk id -> frame), filling it in: each
    frame is checked against its designs and written to ``folder`` as it arrives. On Ctrl-C, says
    how many chunks are on disk and re-raises."""
    pending = [i for i in range(len(bounds)) if i not in results]
    meter = reporter(progress, len(table), sum(len(frame) for frame in results.values()))

    def finish(chunk_id, frame):
        start, stop = bounds[chunk_id]
        frame = _check_result(frame, designs[start:stop], chunk_id)
        if folder is not None:
            _write_parquet_atomic(folder / CHUNKS_FOLDER / chunk_name(key, chunk_rows, chunk_id),
                                  frame)
        results[chunk_id] = frame
        meter.update(len(frame))

    chunks = {i: table.iloc[slice(*bounds[i])] for i in pending}
    try:
        _dispatch(function, chunks, finish, client=client, workers=workers, key=key)
    except KeyboardInterrupt:
        meter.close()
        if folder is not None and progress is True:
            print(f"interrupted: {len(results)} of {len(bounds)} chunks are in {folder}; run "
                  "again with the same arguments to compute only the rest", file=sys.stderr)
        raise
    meter.close()


def _dispatch(function, chunks, finish, *, client, workers, key):
    """Run ``chunks`` (chunk id -> table slice) where asked: on a dask cluster, on a local pool
    of ``workers`` processes, or in this process; ``finish(chunk_id, frame)`` takes each result."""
    if not chunks:
        return
    if client is not None:
        _run_on_dask(client, function, chunks, finish, key or _run_token())
    elif workers is not None:
        _run_on_pool(function, chunks, finish, workers)
    else:
        for chunk_id, chunk in chunks.items():
            finish(chunk_id, function(chunk.copy()))


def _combine(results, n_chunks, designs, *, folder, key, chunk_rows, metadata=None):
    """Every chunk's rows in design order, checked to hold each design once; written to
    ``results.parquet`` in ``folder`` (with the key, chunk size and ``metadata``) when there is
    one."""
    combined = pd.concat([results[i] for i in range(n_chunks)], ignore_index=True)
    if not np.array_equal(combined["design"].to_numpy(), designs):  # guards the bookkeeping
        raise ChunkFailedError("the combined table does not hold every design exactly once")
    if folder is not None:
        _write_parquet_atomic(folder / RESULTS_NAME, combined,
                              metadata={**(metadata or {}), "key": key,
                                        "chunk_rows": chunk_rows, "rows": len(designs)})
        _write_summary_file(folder)
    return combined


def _write_summary_file(folder):
    """The dataset's ``_metadata`` file (the Parquet summary-file convention readers such as
    dask follow): the schema and row groups of ``results.parquet`` alone, written atomically."""
    parquet = _require("pyarrow.parquet")
    footer = parquet.read_metadata(folder / RESULTS_NAME)
    footer.set_file_path(RESULTS_NAME)
    path = folder / SUMMARY_NAME
    temporary = path.with_name(f".{path.name}.{os.getpid()}.{secrets.token_hex(4)}.tmp")
    try:
        parquet.write_metadata(footer.schema.to_arrow_schema(), temporary,
                               metadata_collector=[footer])
        os.replace(temporary, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temporary)
        raise


def default_chunk_rows(n_rows, *, slots=1, local=True):
    """Default chunk size for ``n_rows`` designs on ``slots`` workers (see :func:`run_chunks`)."""
    if local:
        return max(1, min(MAX_CHUNK_ROWS, n_rows))
    return max(1, min(MAX_CHUNK_ROWS, math.ceil(n_rows / (CHUNKS_PER_WORKER * slots))))


def chunk_name(key, chunk_rows, chunk_id):
    """File name of chunk ``chunk_id`` of the sweep ``key`` cut into ``chunk_rows``-row chunks."""
    return f"chunk-{key}-{chunk_rows}rows-{chunk_id:06d}.parquet"


# ----------------------------------------------------------------------------------------------
# validation at the edge

def _canonical_table(table):
    if not isinstance(table, pd.DataFrame):
        raise StackError(f"the table is a {type(table).__name__}, not a pandas DataFrame",
                         where="argument table", fix="pass one row per design as a DataFrame")
    if len(table) == 0:
        raise StackError("the table has no rows", where="argument table",
                         fix="pass at least one design")
    if "design" in table.columns:
        ids = table["design"]
        origin = "column 'design'"
        table = table.reset_index(drop=True)
    else:
        ids = table.index
        origin = "index (there is no 'design' column)"
        table = table.reset_index(drop=True)
        table.insert(0, "design", np.asarray(ids))
    if not pd.api.types.is_integer_dtype(ids.dtype) or pd.isna(ids).any():
        raise StackError(f"design ids in the {origin} have dtype {ids.dtype}: they must be "
                         "integers, none missing",
                         where="argument table",
                         fix="give an integer 'design' column (or an integer index)")
    duplicated = pd.Index(ids).duplicated()
    if duplicated.any():
        shown = ", ".join(str(v) for v in np.unique(np.asarray(ids)[duplicated])[:5])
        raise StackError(f"design ids in the {origin} repeat: {shown}", where="argument table",
                         fix="give each design its own id")
    table["design"] = table["design"].astype(np.int64)
    return table.sort_values("design", kind="stable", ignore_index=True)


def _check_options(chunk_rows, workers, cluster):
    for name, value in (("chunk_rows", chunk_rows), ("workers", workers)):
        integer = isinstance(value, (int, np.integer)) and not isinstance(value, bool)
        if value is not None and (not integer or value < 1):
            raise StackError(f"{name} = {value!r} is not a positive integer",
                             where=f"argument {name}", fix=f"give {name} >= 1, or leave it None")
    if workers is not None and cluster is not None:
        raise StackError("both workers and cluster are given", where="arguments workers, cluster",
                         fix="give workers for a local pool or cluster for a dask scheduler")
    return None if chunk_rows is None else int(chunk_rows)


def _check_result(frame, designs, chunk_id):
    where = f"chunk {chunk_id} (designs {designs[0]}..{designs[-1]})"
    fix = "return a DataFrame with one row per input row, keeping its 'design' id"
    if not isinstance(frame, pd.DataFrame):
        raise StackError(f"the study function returned a {type(frame).__name__}, not a "
                         "DataFrame", where=where, fix=fix)
    if "design" not in frame.columns:
        raise StackError("the study function's result has no 'design' column", where=where,
                         fix=fix)
    if len(frame) > 1 and not frame["design"].is_monotonic_increasing:
        frame = frame.sort_values("design", kind="stable")
    got = frame["design"].to_numpy()
    if len(got) != len(designs) or not np.array_equal(got, designs):
        missing = np.setdiff1d(designs, got)[:5].tolist()
        extra = np.setdiff1d(got, designs)[:5].tolist()
        raise StackError(f"the study function returned {len(got)} rows for {len(designs)} "
                         f"designs (missing {missing}, unexpected {extra}, or repeated ids)",
                         where=where, fix=fix)
    return frame


def require_parquet(where):
    """Before any work: pyarrow (a dependency) is importable, or a StackError naming ``where``
    (an option or argument) and the install command."""
    try:
        _require("pyarrow.parquet")
    except StackError as error:
        raise StackError(error.problem, where=where, fix=error.fix) from None


def _require(module, fix=None):
    try:
        return __import__(module, fromlist=["_"])
    except ImportError as error:
        if module in _INSTALL:
            raise StackError(f"{module} is not installed ({error})", where="dependency pyarrow",
                             fix=fix or _INSTALL[module]) from None
        where = "optional extra parallel" if fix is None else "optional package"
        raise StackError(f"{module} is not installed ({error})", where=where,
                         fix=fix or _EXTRA) from None


# ----------------------------------------------------------------------------------------------
# the output folder

def _prepare_folder(output):
    _require("pyarrow.parquet")  # before any work, not at the first write
    folder = Path(output)
    if folder.exists() and not folder.is_dir():
        raise StackError("the output path exists and is not a folder", file=folder,
                         where="argument output", fix="give a folder (it is created if missing)")
    chunks = folder / CHUNKS_FOLDER
    chunks.mkdir(parents=True, exist_ok=True)
    for path in folder.iterdir():  # chunk files of the older flat layout join the others
        if _CHUNK_NAME.match(path.name) and path.is_file():
            os.replace(path, chunks / path.name)
    for path in [*folder.iterdir(), *chunks.iterdir()]:  # temporary files of killed writers
        match = _TEMPORARY_NAME.match(path.name)
        if match and not _process_alive(int(match["pid"])):
            with contextlib.suppress(FileNotFoundError):
                path.unlink()
    return folder


def _process_alive(pid):
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


#: said once (stderr with progress=True, else the log) when a folder holds only other keys
AFRESH_MESSAGE = ("the folder holds results of a different stack/spectrum/code; starting afresh "
                  "(its old chunk files are left in place and not used)")


def _set_aside_other_keys(folder, key, *, resume, stream=None, say=True):
    """Before any work: never mix results of another key with this run's.

    Chunks of other keys are never read (their names carry their key). A ``results.parquet``
    written under another key is removed, so that no interrupted run leaves an old table beside
    new chunks; when the folder holds results of other keys and none of this key, the run starts
    afresh and says so once: on stderr with ``say``, else in the log (INFO). Returns True when
    it starts afresh.
    """
    keys = {m["key"] for m in map(_CHUNK_NAME.match, os.listdir(folder / CHUNKS_FOLDER)) if m}
    results = folder / RESULTS_NAME
    if results.is_file():
        if _results_key(results) != key:
            keys.add(None)
            for stale in (folder / SUMMARY_NAME, results):
                with contextlib.suppress(FileNotFoundError):
                    stale.unlink()
        else:
            keys.add(key)
    foreign = keys - {key}
    if resume and foreign and key not in keys:
        if say:
            print(f"{folder}: {AFRESH_MESSAGE}", file=stream if stream is not None else sys.stderr)
        else:
            LOG.info("%s: %s", folder, AFRESH_MESSAGE)
        return True
    return False


def _results_key(path):
    """The key a ``results.parquet`` was written under (None if unreadable or foreign)."""
    try:
        metadata = _require("pyarrow.parquet").read_schema(path).metadata or {}
        return json.loads(metadata.get(b"siltandem", b"{}")).get("key")
    except Exception:  # unreadable or not ours: treat as another key's
        return None


def _chunk_rows_on_disk(folder, key):
    sizes = Counter(int(m["rows"]) for m in map(_CHUNK_NAME.match,
                                                os.listdir(folder / CHUNKS_FOLDER))
                    if m and m["key"] == key)
    return sizes.most_common(1)[0][0] if sizes else None


def _load_chunks(folder, key, chunk_rows, bounds, designs):
    parquet = _require("pyarrow.parquet")
    found = {}
    for chunk_id, (start, stop) in enumerate(bounds):
        path = folder / CHUNKS_FOLDER / chunk_name(key, chunk_rows, chunk_id)
        if not path.exists():
            continue
        try:
            frame = parquet.read_table(path).to_pandas()
            if not np.array_equal(frame["design"].to_numpy(), designs[start:stop]):
                raise ValueError("its design ids are not the chunk's")
        except Exception as error:  # unreadable or foreign: compute it again
            warnings.warn(f"{path}: cannot be used ({error}); computing chunk {chunk_id} again",
                          RuntimeWarning, stacklevel=3)
            continue
        found[chunk_id] = frame
    return found


def _write_parquet_atomic(path, frame, metadata=None):
    """Write ``frame`` to ``path`` as Parquet: a temporary file in its folder, then a rename."""
    arrow = _require("pyarrow")
    parquet = _require("pyarrow.parquet")
    data = arrow.Table.from_pandas(frame, preserve_index=False)
    if metadata is not None:
        data = data.replace_schema_metadata({**(data.schema.metadata or {}),
                                             b"siltandem": json.dumps(metadata).encode()})
    temporary = path.with_name(f".{path.name}.{os.getpid()}.{secrets.token_hex(4)}.tmp")
    try:
        with open(temporary, "wb") as handle:
            parquet.write_table(data, handle)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(temporary, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temporary)
        raise
    return path


# ----------------------------------------------------------------------------------------------
# the local process pool

@contextlib.contextmanager
def _one_thread_per_worker():
    """Worker processes start with one BLAS/OpenMP thread unless the user chose otherwise.

    A spawned child reads these variables when it loads numpy, so they are set in this process's
    environment while the pool is alive (processes are started lazily, and again after a restart).
    """
    added = [name for name in _THREAD_VARIABLES if name not in os.environ]
    os.environ.update({name: "1" for name in added})
    try:
        yield
    finally:
        for name in added:
            os.environ.pop(name, None)


def _check_importable(function):
    target = function
    while isinstance(target, functools.partial):
        target = target.func
    main = sys.modules.get("__main__")
    if getattr(target, "__module__", None) == "__main__" and not getattr(main, "__file__", None):
        raise StackError("the study function is defined in an interactive session or `python -c`,"
                         " where worker processes cannot import it", where="argument function",
                         fix="define it in a module or a script file, or run without workers")


def _prepare_worker():
    """Pool-worker initializer.

    - Ctrl-C is the parent's to handle (it terminates the pool), so workers ignore SIGINT;
    - a worker ends as soon as the process that started it dies. Without this, the workers of a
      parent killed with SIGKILL live on forever: each holds the write end of the pool's call
      queue, so the queue never reports end-of-file to them.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    parent = multiprocessing.parent_process()
    if parent is None:
        return

    def watch():
        multiprocessing.connection.wait([parent.sentinel])
        os._exit(1)

    threading.Thread(target=watch, name="siltandem-parent-watch", daemon=True).start()


def _run_on_pool(function, chunks, finish, workers):
    """Run on a spawn-context process pool; after a worker death, a fresh pool for what is left."""
    _check_importable(function)
    context = multiprocessing.get_context("spawn")
    todo = deque(chunks)
    attempts = Counter()
    with _one_thread_per_worker():
        while todo:
            pool = concurrent.futures.ProcessPoolExecutor(max_workers=min(workers, len(todo)),
                                                          mp_context=context,
                                                          initializer=_prepare_worker)
            try:
                lost = _drain_pool(pool, function, chunks, todo, finish, window=2 * workers)
            except BaseException:
                _terminate(pool)
                raise
            pool.shutdown(wait=True)
            if not lost:
                continue
            attempts.update(lost)
            given_up = sorted(c for c in lost if attempts[c] >= MAX_ATTEMPTS)
            if given_up:
                raise ChunkFailedError(
                    f"chunks {given_up} were running when worker processes died {MAX_ATTEMPTS} "
                    "times; the study function may crash its process or run out of memory: try "
                    "it in-process on one chunk, or a smaller chunk_rows")
            warnings.warn(f"a worker process died; restarting the pool and computing chunks "
                          f"{sorted(lost)} again", WorkerLostWarning, stacklevel=3)
            todo.extendleft(sorted(lost, reverse=True))


def _drain_pool(pool, function, chunks, todo, finish, *, window):
    """Feed ``pool`` from ``todo`` (at most ``window`` in flight) until done or broken.

    Returns the chunk ids lost when the pool broke (a worker died): empty if it did not. Chunks
    that finished before the break are kept.
    """
    in_flight, lost = {}, []
    while todo or in_flight:
        while todo and len(in_flight) < window:
            chunk_id = todo.popleft()
            try:
                in_flight[pool.submit(function, chunks[chunk_id])] = chunk_id
            except BrokenProcessPool:
                lost.append(chunk_id)
                break
        if lost:
            break
        done, _ = concurrent.futures.wait(in_flight,
                                          return_when=concurrent.futures.FIRST_COMPLETED)
        for future in done:
            chunk_id = in_flight.pop(future)
            try:
                frame = future.result()
            except BrokenProcessPool:
                lost.append(chunk_id)
            else:
                finish(chunk_id, frame)
        if lost:
            break
    concurrent.futures.wait(in_flight)  # a broken pool settles every pending future at once
    for future, chunk_id in in_flight.items():
        error = future.exception()
        if error is None:
            finish(chunk_id, future.result())
        elif isinstance(error, BrokenProcessPool):
            lost.append(chunk_id)
        else:
            raise error
    return lost


def _terminate(pool):
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(Exception):
            process.terminate()
    pool.shutdown(wait=False, cancel_futures=True)


# ----------------------------------------------------------------------------------------------
# dask.distributed

def _run_token():
    """A random label for a dask run without a key."""
    return secrets.token_hex(8)


def _connect(cluster):
    distributed = _require("distributed")
    if isinstance(cluster, distributed.Client):
        return cluster, False
    try:
        return distributed.Client(cluster, set_as_default=False), True
    except (OSError, TimeoutError) as error:
        raise StackError(f"cannot reach the dask scheduler at {cluster!r} ({error})",
                         where="argument cluster",
                         fix="start a scheduler and give its address, e.g. tcp://127.0.0.1:8786")\
            from None


def _run_on_dask(client, function, chunks, finish, label):
    """Submit chunks in batches (client.map), gather finished ones in batches: one round trip
    each way per batch, not per chunk; at most ``window`` chunks are on the cluster at once."""
    distributed = _require("distributed")
    token = _run_token()
    todo = deque(chunks)
    window = max(32, 8 * sum(client.nthreads().values()))
    outstanding = {}  # future key -> (chunk id, future)

    def submit(count):
        ids = [todo.popleft() for _ in range(min(count, len(todo)))]
        if not ids:
            return []
        futures = client.map(function, [chunks[i] for i in ids], pure=False,
                             key=[f"siltandem-chunk-{label}-{i:06d}-{token}" for i in ids])
        outstanding.update({f.key: (i, f) for i, f in zip(ids, futures)})
        return futures

    running = distributed.as_completed(submit(window), loop=client.loop)
    try:
        for batch in running.batches():
            frames = client.gather(batch)
            for future, frame in zip(batch, frames):
                chunk_id, _ = outstanding.pop(future.key)
                finish(chunk_id, frame)
            running.update(submit(len(batch)))
            del batch, frames
    except distributed.KilledWorker as error:
        raise ChunkFailedError(f"dask gave up on a chunk after its workers died repeatedly "
                               f"({error}); the study function may crash its process or run "
                               "out of memory: try it in-process on one chunk, or a smaller "
                               "chunk_rows") from None
    finally:
        if outstanding:  # an error or an interrupt: nothing left running on the cluster
            running.clear()
            client.cancel([future for _, future in outstanding.values()])
