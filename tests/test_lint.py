"""One style: the linter (ruff, rules in pyproject.toml) finds nothing in the package, the tests
and the benchmarks. A project rule of our own, no outside source."""
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_finds_nothing():
    pytest.importorskip("ruff")
    run = subprocess.run([sys.executable, "-m", "ruff", "check", "--no-cache", "src", "tests", "benchmarks"],
                         cwd=ROOT, capture_output=True, text=True)
    assert run.returncode == 0, run.stdout + run.stderr
