"""Studies on a real dask cluster, and the same rows bit for bit in every mode (issue 20).

- A scheduler and workers started as separate processes (the ``dask scheduler`` and ``dask
  worker`` programs of dask.distributed) in other working folders than the client's, as on a real
  cluster: a map of a stack whose spectrum is a CSV given relative to the stack file must run
  there, the workers reading no file (the spectrum's table travels with each task).
- In-process with the default chunk, in small chunks, in one chunk larger than the junction-table
  limit, and on the cluster: every number equal (``==``, not a tolerance).

The reference is the in-process run of the same code; what is checked is that the execution mode
does not change a bit. The spectrum is ASTM G173-03 global tilt read through pvlib
(``pvlib.spectrum.get_reference_spectra``), written out as the user's CSV.
"""
import json
import os
from pathlib import Path
import shutil
import subprocess
import sys
import time

import numpy as np
import pytest

from siltandem import load_stack, parse_vary
from siltandem.circuit.elements import TABLE_ROWS
from siltandem.studies.maps import design_map
from siltandem.studies.runner import MAX_CHUNK_ROWS

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ROOT / "src"

distributed = pytest.importorskip("distributed")


def write_g173_csv(path):
    from pvlib.spectrum import get_reference_spectra

    table = get_reference_spectra(standard="ASTM G173-03")
    rows = "".join(f"{float(w)!r},{float(e)!r}\n" for w, e in zip(table.index, table["global"]))
    path.write_text("wavelength_nm,irradiance_W_m2_nm\n" + rows)


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    """A stack file naming its spectrum CSV relative to itself, in a folder of its own."""
    folder = tmp_path_factory.mktemp("project")
    text = (ROOT / "stacks" / "demo_dual.toml").read_text()
    assert 'spectrum = "am1.5g"' in text
    (folder / "dual.toml").write_text(text.replace('spectrum = "am1.5g"',
                                                   'spectrum = "light/g173.csv"'))
    (folder / "light").mkdir()
    write_g173_csv(folder / "light" / "g173.csv")
    return folder


@pytest.fixture(scope="module")
def remote_cluster(tmp_path_factory):
    """``dask scheduler`` and ``dask worker`` (2 processes, 1 thread each) as subprocesses, each
    in a working folder where no stack or spectrum file is."""
    base = tmp_path_factory.mktemp("cluster")
    for name in ("scheduler", "workers"):
        (base / name).mkdir()
    scheduler_file = base / "scheduler.json"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [str(SOURCE), *filter(None, [os.environ.get("PYTHONPATH")])])}
    started = []
    try:
        started.append(subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1",
             "--port", "0", "--no-dashboard", "--scheduler-file", str(scheduler_file)],
            cwd=base / "scheduler", env=env, stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL))
        deadline = time.monotonic() + 60
        while not scheduler_file.exists():
            assert time.monotonic() < deadline, "the scheduler did not start"
            time.sleep(0.2)
        time.sleep(0.2)
        address = json.loads(scheduler_file.read_text())["address"]
        started.append(subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_worker", address, "--nworkers", "2",
             "--nthreads", "1", "--no-dashboard", "--host", "127.0.0.1"],
            cwd=base / "workers", env=env, stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL))
        with distributed.Client(address, set_as_default=False) as client:
            client.wait_for_workers(2, timeout=120)
        yield address
    finally:
        for process in reversed(started):
            process.terminate()
        for process in reversed(started):
            try:
                process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait()
        shutil.rmtree(base, ignore_errors=True)


def numbers(table):
    return {c: table[c].to_numpy() for c in table.columns}


def assert_identical(a, b):
    assert list(a.columns) == list(b.columns)
    for column in a.columns:
        x, y = a[column].to_numpy(), b[column].to_numpy()
        if x.dtype.kind == "f":
            assert np.array_equal(x, y, equal_nan=True), column      # == , no tolerance
        else:
            assert (x == y).all(), column


def test_the_default_chunk_stays_within_the_junction_tables():
    assert MAX_CHUNK_ROWS <= TABLE_ROWS == 5952        # 4,000,000 entries / (512 + 160) points


def test_a_csv_spectrum_map_runs_on_workers_elsewhere_bit_identical_in_every_mode(
        project, remote_cluster, monkeypatch, capsys):
    from siltandem.cli.main import main

    monkeypatch.chdir(project)                         # the client, as a user starts it
    stack = load_stack("dual.toml")                    # a relative path, as typed
    gap = parse_vary("top.gap_eV=1.6:1.9:80", stack)
    absorb = parse_vary("top.absorptance=0.8:1:80", stack)  # 6,400 designs > TABLE_ROWS
    default = design_map(stack, gap, absorb)
    assert len(default) == 6400 and default["efficiency_pct"].notna().all()
    assert_identical(design_map(stack, gap, absorb, chunk_rows=300), default)
    assert_identical(design_map(stack, gap, absorb, chunk_rows=8000), default)  # one chunk
    on_cluster = design_map(stack, gap, absorb, cluster=remote_cluster, chunk_rows=1000)
    assert_identical(on_cluster, default)
    # the command line, as the report ran it: exit 0, the folder reads back exactly
    code = main(["map", "dual.toml", "--vary", "top.gap_eV=1.6:1.9:5", "--vary",
                 "top.absorptance=0.8:1:4", "--cluster", remote_cluster, "--out", "out",
                 "--quiet"])
    assert code == 0, capsys.readouterr().err
    import pandas as pd

    assert len(pd.read_parquet(project / "out")) == 20


def test_placements_with_a_csv_spectrum_rank_on_workers_elsewhere_as_in_process(
        project, remote_cluster, monkeypatch):
    """rank_placements binds the spectrum read on the client into its tasks (as design_map):
    the workers, in another working folder, read no spectrum file, and every number is the
    in-process one (``==``)."""
    from siltandem import rank_placements

    text = (ROOT / "stacks" / "demo_placements.toml").read_text()
    assert 'spectrum = "am1.5g"' in text
    (project / "placements.toml").write_text(text.replace('spectrum = "am1.5g"',
                                                          'spectrum = "light/g173.csv"'))
    monkeypatch.chdir(project)
    stack = load_stack("placements.toml")              # relative, as typed
    here = rank_placements(stack)
    assert len(here) == 3 and here["efficiency_pct"].notna().all()
    there = rank_placements(stack, cluster=remote_cluster)
    assert_identical(there, here)
