"""The execution layer of studies: the same rows in every mode, resume, and faults survived.

No physics here. The reference is an independent method: the study function applied directly to
the whole table, with no chunking. The function uses only correctly rounded IEEE operations
(+, *, /, sqrt), so chunked and whole-table evaluation agree bit for bit.

The worker processes are other processes, so every call of the study function leaves a marker
file; counting them tells which chunks were computed and how often.
"""
from collections import Counter
import functools
import io
import os
from pathlib import Path
import re
import signal
import subprocess
import sys
import time
import types
import uuid

import numpy as np
import pandas as pd
import pytest

from siltandem.studies import progress as progress_module
from siltandem.studies import runner as parallel
from siltandem import StackError
from siltandem.studies.fingerprint import sweep_key
from siltandem.studies.runner import ChunkFailedError, WorkerLostWarning, run_chunks

TESTS = Path(__file__).resolve().parent
N_ROWS, CHUNK_ROWS = 2400, 300          # 8 chunks
N_CHUNKS = N_ROWS // CHUNK_ROWS
TIME_LIMIT_S = 60
CHUNK_FILE = re.compile(r"^chunk-[0-9a-f]{16}-300rows-(\d{6})\.parquet$")
TEMPORARY_FILE = re.compile(r"^\.chunk-.+\.parquet\.\d+\.[0-9a-f]+\.tmp$")


# ----------------------------------------------------------------------------------------------
# study functions (module level: worker processes import them from here)

def design_table(n=N_ROWS, seed=7):
    """Shuffled, non-contiguous design ids and three parameter columns (seeded)."""
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"design": rng.permutation(np.arange(n) * 3 + 11),
                         "a": rng.uniform(0.5, 2.0, n), "b": rng.uniform(-1.0, 1.0, n),
                         "k": rng.integers(1, 9, n)})


def formula(table):
    """A closed form per row, vectorized; returns arrays in a DataFrame."""
    a, b, k = (table[c].to_numpy() for c in ("a", "b", "k"))
    return pd.DataFrame({"design": table["design"].to_numpy(),
                         "ratio": (a * b + 1.0) / (a * a + b * b + 1.0),
                         "length": np.sqrt(a * a + b * b), "twice_k": 2 * k})


def formula_other(table):
    """Same values as `formula`, but a different function: a different sweep."""
    return formula(table)


def counted(chunk, *, marker_dir, delay_s=0.0, kill_design=None, protected_pid=None,
            interrupt_design=None):
    """`formula` that leaves one marker file per call (named by the chunk's first design).

    kill_design: the first call on the chunk holding it SIGKILLs its own process (a marker makes
    it happen once). interrupt_design: the first such call raises KeyboardInterrupt.
    """
    designs = chunk["design"].to_numpy()
    Path(marker_dir, f"call-{designs[0]}-{uuid.uuid4().hex}").touch()
    for design, name in ((kill_design, "killed"), (interrupt_design, "interrupted")):
        if design is None or design not in designs:
            continue
        try:
            os.close(os.open(Path(marker_dir, name), os.O_CREAT | os.O_EXCL | os.O_WRONLY))
        except FileExistsError:
            continue
        if name == "interrupted":
            raise KeyboardInterrupt
        if os.getpid() == protected_pid:
            raise RuntimeError("refusing to kill the test process itself")
        os.kill(os.getpid(), signal.SIGKILL)
    if delay_s:
        time.sleep(delay_s)
    return formula(chunk)


def always_kill(chunk):
    os.kill(os.getpid(), signal.SIGKILL)


# ----------------------------------------------------------------------------------------------
# helpers and fixtures

def expected(table=None):
    table = design_table() if table is None else table
    return formula(table.sort_values("design", ignore_index=True))


def first_designs(table=None, chunk_rows=CHUNK_ROWS):
    table = design_table() if table is None else table
    return np.sort(table["design"].to_numpy())[::chunk_rows].tolist()


def calls(marker_dir):
    return Counter(int(p.name.split("-")[1]) for p in Path(marker_dir).glob("call-*"))


def chunk_files(folder):
    if not Path(folder, "_chunks").is_dir():          # a run that has not made it yet
        return []
    return sorted(p for p in Path(folder, "_chunks").iterdir() if CHUNK_FILE.match(p.name))


def assert_only_complete_files(folder, *, final=True):
    """Exactly the expected names: results.parquet beside the _chunks folder, every chunk once
    (complete) in it; nothing else."""
    assert sorted(p.name for p in Path(folder).iterdir()) == (
        ["_chunks", "_metadata", "results.parquet"] if final else ["_chunks"])
    names = sorted(p.name for p in Path(folder, "_chunks").iterdir())
    chunks = [n for n in names if CHUNK_FILE.match(n)]
    assert sorted(int(CHUNK_FILE.match(n)[1]) for n in chunks) == list(range(N_CHUNKS))
    assert names == chunks
    firsts = first_designs()
    for name in chunks:
        frame = pd.read_parquet(Path(folder, "_chunks", name))
        chunk_id = int(CHUNK_FILE.match(name)[1])
        assert len(frame) == CHUNK_ROWS and frame["design"].iloc[0] == firsts[chunk_id]
    pd.testing.assert_frame_equal(pd.read_parquet(Path(folder, "results.parquet")), expected())


@pytest.fixture(autouse=True)
def time_limit():
    """Each test is bounded: SIGALRM raises in the test after TIME_LIMIT_S."""
    def over(signum, frame):
        raise TimeoutError(f"test ran over {TIME_LIMIT_S} s")
    previous = signal.signal(signal.SIGALRM, over)
    signal.alarm(TIME_LIMIT_S)
    yield
    signal.alarm(0)
    signal.signal(signal.SIGALRM, previous)


@pytest.fixture(scope="module")
def dask_cluster():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        yield cluster


@pytest.fixture
def markers(tmp_path):
    folder = tmp_path / "calls"
    folder.mkdir()
    return folder


def wait_for(condition, timeout_s, what):
    deadline = time.monotonic() + timeout_s
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out waiting for {what}")
        time.sleep(0.01)


# ----------------------------------------------------------------------------------------------
# the same rows in every mode

@pytest.mark.parametrize("mode", ["in-process", "local pool", "dask address", "dask client"])
def test_every_mode_gives_the_direct_result(mode, request):
    options = {"in-process": {}, "local pool": {"workers": 2}}.get(mode)
    if options is None:
        cluster = request.getfixturevalue("dask_cluster")
        if mode == "dask address":
            assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
            options = {"cluster": cluster.scheduler_address}
        else:
            from distributed import Client
            client = Client(cluster.scheduler_address, set_as_default=False)
            request.addfinalizer(client.close)
            options = {"cluster": client}
    result = run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, progress=False,
                        **options)
    # sorted by design, every row exactly once, bit-identical to the unchunked evaluation
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)


def thread_settings(chunk):
    names = parallel._THREAD_VARIABLES
    return pd.DataFrame({"design": chunk["design"].to_numpy(),
                         **{n: np.full(len(chunk), os.environ.get(n, "unset")) for n in names}})


def test_pool_workers_start_with_one_blas_thread(monkeypatch):
    for name in parallel._THREAD_VARIABLES:
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("OMP_NUM_THREADS", "3")           # a user's own choice is kept
    result = run_chunks(thread_settings, design_table(n=20), workers=2, progress=False)
    assert set(result["OMP_NUM_THREADS"]) == {"3"}
    for name in set(parallel._THREAD_VARIABLES) - {"OMP_NUM_THREADS"}:
        assert set(result[name]) == {"1"}
        assert name not in os.environ                    # and our environment is restored


def test_default_chunking_and_index_as_design_id():
    table = design_table().set_index("design")          # ids in the index, no design column
    result = run_chunks(formula_from_index, table, progress=False, workers=None)
    assert list(result.columns) == ["design", "ratio", "length", "twice_k"]
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    # default chunk sizes: the whole table in-process (up to the cap); ~4 chunks per worker
    assert parallel.default_chunk_rows(1500) == 1500
    assert parallel.default_chunk_rows(2400) == parallel.MAX_CHUNK_ROWS == 2000
    assert parallel.default_chunk_rows(10**6) == parallel.MAX_CHUNK_ROWS
    assert parallel.default_chunk_rows(2400, slots=2, local=False) == 300
    assert parallel.default_chunk_rows(3, slots=8, local=False) == 1


def formula_from_index(chunk):
    return formula(chunk)


# ----------------------------------------------------------------------------------------------
# chunk files and resume

def test_resume_recomputes_only_the_missing_chunks(tmp_path, markers):
    out = tmp_path / "out"
    study = functools.partial(counted, marker_dir=str(markers))
    first = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, workers=2, output=out,
                       progress=False)
    pd.testing.assert_frame_equal(first, expected(), check_exact=True)
    firsts = first_designs()
    assert calls(markers) == Counter({d: 1 for d in firsts})
    assert_only_complete_files(out)

    files = chunk_files(out)
    for index in (1, 5):
        files[index].unlink()
    second = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out,
                        progress=False)                         # resuming does not need a pool
    pd.testing.assert_frame_equal(second, first, check_exact=True)
    assert calls(markers) == Counter({d: 2 if i in (1, 5) else 1 for i, d in enumerate(firsts)})

    # rerun in-process without chunk_rows: the chunk size on disk is adopted, nothing recomputed
    before = calls(markers)
    pd.testing.assert_frame_equal(run_chunks(study, design_table(), output=out, progress=False),
                                  first, check_exact=True)
    assert calls(markers) == before
    # the table's row order does not matter (it is sorted by design first)
    shuffled = design_table().sample(frac=1.0, random_state=3)
    run_chunks(study, shuffled, output=out, progress=False)
    assert calls(markers) == before
    # resume=False recomputes every chunk
    run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out, resume=False,
               progress=False)
    assert calls(markers) == before + Counter(firsts)
    assert_only_complete_files(out)


def test_a_different_sweep_never_reuses_chunks(tmp_path, markers):
    out = tmp_path / "out"
    study = functools.partial(counted, marker_dir=str(markers))
    table = design_table()
    key = sweep_key(parallel._canonical_table(table), study)
    run_chunks(study, table, chunk_rows=CHUNK_ROWS, output=out, progress=False)
    changed = table.copy()
    changed.loc[changed.index[17], "a"] += 1e-12            # one value, one ulp-sized change
    renamed = table.rename(columns={"k": "k2"})
    variants = {
        "changed value": (study, changed),
        "renamed column": (study, renamed),
        "other function": (functools.partial(formula_other), table),
        "other bound argument": (functools.partial(counted, marker_dir=str(markers),
                                                   delay_s=0.0), table),
    }
    keys = {name: sweep_key(parallel._canonical_table(t), f) for name, (f, t) in variants.items()}
    assert key not in keys.values() and len(set(keys.values())) == len(keys)
    # same table and function built again, rows shuffled: the same key
    again = functools.partial(counted, marker_dir=str(markers))
    assert sweep_key(parallel._canonical_table(table.sample(frac=1.0, random_state=1)),
                     again) == key

    before = calls(markers)
    result = run_chunks(study, changed, chunk_rows=CHUNK_ROWS, output=out, progress=False)
    assert calls(markers) == before + Counter(first_designs(changed))   # all computed again
    pd.testing.assert_frame_equal(result, expected(changed), check_exact=True)
    assert len(chunk_files(out)) == 2 * N_CHUNKS


def test_interrupted_by_keyboard_resumes(tmp_path, markers):
    out = tmp_path / "out"
    firsts = first_designs()
    study = functools.partial(counted, marker_dir=str(markers), interrupt_design=firsts[3])
    with pytest.raises(KeyboardInterrupt):
        run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out, progress=False)
    assert [int(CHUNK_FILE.match(p.name)[1]) for p in chunk_files(out)] == [0, 1, 2]
    result = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out,
                        progress=False)
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    # chunks 0-2 computed once; chunk 3 twice (the interrupted call and the rerun)
    assert calls(markers) == Counter({d: 2 if i == 3 else 1 for i, d in enumerate(firsts)})
    assert_only_complete_files(out)


RUN_IN_CHILD = """
import sys
sys.path.insert(0, {tests!r})
import functools
from test_parallel import counted, design_table
from siltandem.studies.runner import run_chunks
if __name__ == "__main__":
    study = functools.partial(counted, marker_dir={markers!r}, delay_s=0.1)
    run_chunks(study, design_table(), chunk_rows={chunk_rows}, output={out!r}, progress=False,
               workers={workers})
"""


@pytest.mark.parametrize("workers", [None, 2])
def test_parent_killed_by_sigkill_resumes_exactly_once(tmp_path, markers, workers):
    psutil = pytest.importorskip("psutil")
    out = tmp_path / "out"
    script = RUN_IN_CHILD.format(tests=str(TESTS), markers=str(markers), out=str(out),
                                 chunk_rows=CHUNK_ROWS, workers=workers)
    # another hash seed than ours: the chunk names must not depend on it
    env = {**os.environ, "PYTHONHASHSEED": "12345"}
    child = subprocess.Popen([sys.executable, "-c", script], env=env)
    try:
        wait_for(lambda: out.is_dir() and chunk_files(out), 40, "the first chunk file")
        helpers = psutil.Process(child.pid).children(recursive=True)
        os.kill(child.pid, signal.SIGKILL)
        assert child.wait(timeout=10) == -signal.SIGKILL
    finally:
        if child.poll() is None:
            child.kill()
            child.wait()
    # the orphaned pool workers (and resource tracker) exit by themselves
    _, alive = psutil.wait_procs(helpers, timeout=15)
    assert alive == []

    # after the kill: complete chunk files, maybe a temporary file, nothing else
    done = [int(CHUNK_FILE.match(p.name)[1]) for p in chunk_files(out)]
    assert 1 <= len(done) < N_CHUNKS
    assert [p.name for p in out.iterdir()] == ["_chunks"]
    others = [p.name for p in (out / "_chunks").iterdir() if not CHUNK_FILE.match(p.name)]
    assert all(TEMPORARY_FILE.match(name) for name in others), others
    for path in chunk_files(out):
        assert len(pd.read_parquet(path)) == CHUNK_ROWS

    before = calls(markers)
    study = functools.partial(counted, marker_dir=str(markers), delay_s=0.1)
    result = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out,
                        progress=False)
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    new = calls(markers) - before
    firsts = first_designs()
    # chunks on disk were not recomputed; each missing chunk was computed once in the rerun
    assert new == Counter({d: 1 for i, d in enumerate(firsts) if i not in done})
    assert all(calls(markers)[firsts[i]] == 1 for i in done)
    assert_only_complete_files(out)


STALL_BEFORE_RENAME = """
import os, time
os.replace = lambda *args, **kwargs: time.sleep(600)   # the kill comes before any rename
from siltandem.studies.runner import run_chunks
import sys
sys.path.insert(0, {tests!r})
from test_parallel import formula, design_table
run_chunks(formula, design_table(), chunk_rows={chunk_rows}, output={out!r}, progress=False)
"""


def test_write_killed_before_its_rename_leaves_no_partial_file(tmp_path):
    out = tmp_path / "out"
    script = STALL_BEFORE_RENAME.format(tests=str(TESTS), out=str(out), chunk_rows=CHUNK_ROWS)
    child = subprocess.Popen([sys.executable, "-c", script])
    try:
        wait_for(lambda: (out / "_chunks").is_dir() and any(
            TEMPORARY_FILE.match(p.name) for p in (out / "_chunks").iterdir()), 40,
            "a temporary file")
        time.sleep(0.1)
        os.kill(child.pid, signal.SIGKILL)
        child.wait(timeout=10)
    finally:
        if child.poll() is None:
            child.kill()
            child.wait()
    assert [p.name for p in out.iterdir()] == ["_chunks"]
    names = [p.name for p in (out / "_chunks").iterdir()]
    assert names and all(TEMPORARY_FILE.match(name) for name in names)   # no final name exists
    result = run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out,
                        progress=False)
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    assert_only_complete_files(out)      # the dead writer's temporary file is gone


def test_failed_write_keeps_the_old_file_and_leaves_no_temporary(tmp_path, monkeypatch):
    import pyarrow.parquet

    out = tmp_path / "out"
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out, progress=False)
    old = {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()}

    def breaks_halfway(table, where, **kwargs):
        where.write(b"PAR1 half a file")
        raise OSError("disk full (simulated)")
    monkeypatch.setattr(pyarrow.parquet, "write_table", breaks_halfway)
    with pytest.raises(OSError, match="simulated"):
        run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out, resume=False,
                   progress=False)
    assert {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()} == old


# ----------------------------------------------------------------------------------------------
# a worker process killed mid-run

def test_worker_killed_in_the_local_pool(markers):
    firsts = first_designs()
    victim = firsts[3]
    study = functools.partial(counted, marker_dir=str(markers), kill_design=victim,
                              protected_pid=os.getpid())
    with pytest.warns(WorkerLostWarning, match="worker process died"):
        result = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, workers=2,
                            progress=False)
    assert (markers / "killed").exists()              # the kill did happen
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    assert calls(markers)[victim] == 2                 # killed once, then computed
    assert set(calls(markers)) == set(firsts)


def test_worker_killed_on_the_dask_cluster(markers, dask_cluster):
    firsts = first_designs()
    victim = firsts[2]
    study = functools.partial(counted, marker_dir=str(markers), kill_design=victim,
                              protected_pid=os.getpid(), delay_s=0.05)
    result = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS,
                        cluster=dask_cluster.scheduler_address, progress=False)
    assert (markers / "killed").exists()
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    assert calls(markers)[victim] >= 2
    assert set(calls(markers)) == set(firsts)


def test_a_chunk_that_always_kills_its_worker_is_given_up(monkeypatch):
    monkeypatch.setattr(parallel, "MAX_ATTEMPTS", 2)     # two pool starts instead of three
    with pytest.warns(WorkerLostWarning):
        with pytest.raises(ChunkFailedError, match=r"chunks \[0\] were running when worker "
                                                   r"processes died 2 times"):
            run_chunks(always_kill, design_table(n=10), chunk_rows=10, workers=1,
                       progress=False)


# ----------------------------------------------------------------------------------------------
# progress line

def test_progress_line_appears_only_after_the_delay():
    now = [0.0]
    stream = io.StringIO()
    meter = progress_module.Progress(2400, clock=lambda: now[0], stream=stream, already=300)
    now[0] = 1.0
    meter.update(300)
    assert stream.getvalue() == ""                     # under PROGRESS_DELAY_S: silent
    now[0] = 3.0
    meter.update(600)                                  # 1200 done, 900 computed in 3 s
    line = stream.getvalue()
    assert "rows 1,200 / 2,400 (50 %)" in line and "300 from disk" in line
    assert "300 rows/s" in line and "left 0:00:04" in line
    meter.close()
    assert stream.getvalue().rstrip().endswith("done in 3.0 s")


@pytest.mark.parametrize("progress", [True, False])
def test_progress_goes_to_stderr_unless_disabled(capsys, monkeypatch, progress):
    monkeypatch.setattr(progress_module, "PROGRESS_DELAY_S", 0.0)
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, progress=progress)
    captured = capsys.readouterr()
    assert captured.out == ""
    assert ("rows 2,400 / 2,400 (100 %)" in captured.err) is progress
    assert (captured.err == "") is not progress


def test_a_short_run_prints_nothing(capsys):
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS)
    assert capsys.readouterr().err == ""


# ----------------------------------------------------------------------------------------------
# errors a user can meet

def returns_one_row_short(chunk):
    return formula(chunk).iloc[1:]


def returns_a_list(chunk):
    return formula(chunk)["ratio"].tolist()


def returns_no_design(chunk):
    return formula(chunk).drop(columns="design")


@pytest.mark.parametrize("table, options, message", [
    (design_table().assign(design=5), {}, r"design ids in the column 'design' repeat: 5"),
    (design_table().assign(design=0.5), {}, r"dtype float64: they must be integers"),
    (design_table().iloc[:0], {}, r"the table has no rows"),
    ([1, 2, 3], {}, r"the table is a list, not a pandas DataFrame"),
    (design_table(), {"workers": 0}, r"workers = 0 is not a positive integer"),
    (design_table(), {"chunk_rows": -1}, r"chunk_rows = -1 is not a positive integer"),
    (design_table(), {"workers": 2, "cluster": "tcp://127.0.0.1:1"},
     r"both workers and cluster are given"),
])
def test_bad_arguments(table, options, message):
    with pytest.raises(StackError, match=message):
        run_chunks(formula, table, progress=False, **options)


@pytest.mark.parametrize("function, message", [
    (returns_one_row_short, r"chunk 0 \(designs 11\.\.908\): the study function returned 299 "
                            r"rows for 300 designs \(missing \[11\]"),
    (returns_a_list, r"returned a list, not a DataFrame"),
    (returns_no_design, r"result has no 'design' column"),
])
def test_bad_study_results(function, message):
    with pytest.raises(StackError, match=message) as error:
        run_chunks(function, design_table(), chunk_rows=CHUNK_ROWS, progress=False)
    assert "keeping its 'design' id" in error.value.fix


def test_output_that_is_a_file(tmp_path):
    (tmp_path / "taken").write_text("x")
    with pytest.raises(StackError, match=r"taken: argument output: the output path exists and "
                                         r"is not a folder"):
        run_chunks(formula, design_table(), output=tmp_path / "taken", progress=False)


def test_function_that_workers_cannot_import(monkeypatch):
    monkeypatch.setitem(sys.modules, "__main__", types.ModuleType("__main__"))
    function = functools.partial(lambda chunk: chunk)
    function.func.__module__ = "__main__"
    with pytest.raises(StackError, match=r"defined in an interactive session or `python -c`"):
        run_chunks(function, design_table(), workers=2, progress=False)


def test_unfingerprintable_function_with_output(tmp_path):
    lock = __import__("threading").Lock()
    with pytest.raises(StackError, match=r"cannot fingerprint the study function: the keywords "
                                         r"bound by functools.partial cannot be pickled"):
        run_chunks(functools.partial(counted, marker_dir=lock), design_table(),
                   output=tmp_path, progress=False)


@pytest.mark.parametrize("missing, options, fix", [
    ("pyarrow", {"output": "folder"}, "pip install pyarrow (a dependency of siltandem: pip install -e .)"),
    ("distributed", {"cluster": "tcp://127.0.0.1:9"}, 'pip install -e ".[parallel]"'),
    ("tqdm", {"progress": "tqdm"}, "pip install tqdm, or pass progress=True for a line on stderr")])
def test_missing_package(tmp_path, monkeypatch, missing, options, fix):
    monkeypatch.setitem(sys.modules, missing, None)          # makes `import missing` fail
    for name in [m for m in sys.modules if m.startswith(missing + ".")]:
        monkeypatch.setitem(sys.modules, name, None)
    options = {k: tmp_path / v if k == "output" else v for k, v in options.items()}
    with pytest.raises(StackError, match=rf"{missing}.* is not installed") as error:
        run_chunks(formula, design_table(), **options)
    assert error.value.fix == fix
    assert not (tmp_path / "folder").exists()                # refused before any work


def test_unreachable_scheduler():
    dask = pytest.importorskip("dask")
    with dask.config.set({"distributed.comm.timeouts.connect": "1s"}):
        with pytest.raises(StackError, match=r"cannot reach the dask scheduler at "
                                             r"'tcp://127.0.0.1:9'"):
            run_chunks(formula, design_table(), cluster="tcp://127.0.0.1:9", progress=False)


# ----------------------------------------------------------------------------------------------
# the output folder is a dataset that reads back as exactly the table (issue 20)
#
# The readers' rule relied on: a folder is read as a dataset whose discovery skips names starting
# with "_" or "." (pyarrow.dataset.dataset, ignore_prefixes default [".", "_"], pyarrow API
# reference); pandas.read_parquet and dask.dataframe.read_parquet read folders through it.

def test_the_output_folder_reads_back_as_exactly_the_table(tmp_path):
    import pyarrow.dataset

    out = tmp_path / "out"
    result = run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out,
                        metadata={"siltandem_version": "x.y", "stack_sha256": "ab" * 32})
    assert len(chunk_files(out)) == N_CHUNKS                 # the chunks are there, aside
    read = pd.read_parquet(out)
    assert len(read) == N_ROWS
    pd.testing.assert_frame_equal(read, result, check_exact=True)
    assert pyarrow.dataset.dataset(out, format="parquet").count_rows() == N_ROWS
    dd = pytest.importorskip("dask.dataframe")
    frame = dd.read_parquet(out).compute().reset_index(drop=True)
    pd.testing.assert_frame_equal(frame, result, check_exact=True)


def test_the_table_metadata_says_where_it_came_from(tmp_path):
    import json

    import pyarrow.parquet

    out = tmp_path / "out"
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out,
               metadata={"siltandem_version": "x.y", "stack_sha256": "ab" * 32})
    stored = json.loads(pyarrow.parquet.read_schema(out / "results.parquet").metadata[b"siltandem"])
    assert stored["siltandem_version"] == "x.y" and stored["stack_sha256"] == "ab" * 32
    assert stored["rows"] == N_ROWS and stored["chunk_rows"] == CHUNK_ROWS
    assert re.fullmatch(r"[0-9a-f]{16}", stored["key"])


def test_chunks_of_the_older_flat_layout_are_moved_aside_and_resumed(tmp_path, markers):
    out = tmp_path / "out"
    study = functools.partial(counted, marker_dir=str(markers))
    run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out)
    for path in chunk_files(out):                            # as the older layout left them
        path.rename(out / path.name)
    (out / "_chunks").rmdir()
    (out / "_metadata").unlink()
    assert len(pd.read_parquet(out)) == 2 * N_ROWS          # the older layout's double count
    before = calls(markers)
    result = run_chunks(study, design_table(), chunk_rows=CHUNK_ROWS, output=out)
    assert calls(markers) == before                          # resumed, nothing recomputed
    pd.testing.assert_frame_equal(result, expected(), check_exact=True)
    assert_only_complete_files(out)
    assert len(pd.read_parquet(out)) == N_ROWS


def test_progress_through_a_callback_and_a_bar(capsys):
    seen = []
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS,
               progress=lambda done, total: seen.append((done, total)))
    assert seen == [(CHUNK_ROWS * (i + 1), N_ROWS) for i in range(N_CHUNKS)]
    assert capsys.readouterr() == ("", "")
    pytest.importorskip("tqdm")
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, progress="tqdm")
    assert f"{N_ROWS}/{N_ROWS}" in capsys.readouterr().err    # tqdm's text bar off a notebook
    with pytest.raises(StackError, match=r"progress = 'bar' is not one of"):
        run_chunks(formula, design_table(), progress="bar")


def test_starting_afresh_is_silent_unless_progress_is_on(tmp_path, capsys, caplog):
    import logging

    out = tmp_path / "out"
    run_chunks(formula, design_table(), chunk_rows=CHUNK_ROWS, output=out)
    with caplog.at_level(logging.INFO, logger="siltandem"):
        run_chunks(formula_other, design_table(), chunk_rows=CHUNK_ROWS, output=out)
    assert capsys.readouterr() == ("", "")
    assert parallel.AFRESH_MESSAGE in caplog.text
    run_chunks(formula_from_index, design_table(), chunk_rows=CHUNK_ROWS, output=out,
               progress=True)
    assert parallel.AFRESH_MESSAGE in capsys.readouterr().err
