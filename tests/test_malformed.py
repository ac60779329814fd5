"""Bad input: a corpus of malformed stack files, each with its own clear message.

Every file in ``tests/malformed/`` is listed in ``tests/malformed/expected.toml`` with the
fragment of the message it must produce and where the message must point. For each file:

* the Python API raises :class:`siltandem.errors.StackError` (never another exception), with
  ``file``, ``where``, ``problem`` and ``fix`` filled in and all four in its text;
* ``siltandem run FILE`` exits with status 2, prints one message on stderr, no traceback,
  nothing on stdout, and writes none of the output files it was asked for;
* no two files give the same message.

The expected wording is our own (no external source); the ranges behind it are the README's
stack-file reference. Entries marked ``bug`` are open defects: strict expected failures, so
the test starts passing (and must be un-marked) when the defect is fixed.
"""
from pathlib import Path
import subprocess
import sys
import tomllib

import pytest

from siltandem.cli import main as cli
from siltandem import StackError, run_stack, load_stack

FOLDER = Path(__file__).resolve().parent / "malformed"
EXPECTED = tomllib.loads((FOLDER / "expected.toml").read_text(encoding="utf-8"))
STRICT = {name: entry for name, entry in EXPECTED.items() if not entry.get("loose")}


def _cases(entries):
    cases = []
    for name, entry in sorted(entries.items()):
        marks = [pytest.mark.xfail(strict=True, reason=entry["bug"])] if "bug" in entry else []
        cases.append(pytest.param(name, entry, marks=marks, id=name))
    return cases


def _error_of(path, entry):
    """The StackError the file produces, from load_stack or (stage "run") run_stack."""
    with pytest.raises(StackError) as info:
        stack = load_stack(path)
        if entry.get("stage", "load") == "run":
            run_stack(stack, curve_points=20)
    return info.value


def _expected_file(path, entry):
    return (FOLDER / entry["file"]).resolve() if "file" in entry else path.resolve()


def test_corpus_is_complete_and_large_enough():
    on_disk = {p.name for p in FOLDER.glob("*.toml")} - {"expected.toml"}
    assert on_disk == set(EXPECTED), "every corpus file has an entry, every entry a file"
    assert len(STRICT) >= 40
    for name, entry in EXPECTED.items():
        if "file" in entry and entry["file"] != "no_such_spectrum.csv":
            assert (FOLDER / entry["file"]).is_file(), name
    assert not (FOLDER / "no_such_spectrum.csv").exists()
    # the bytes that make the binary file binary, and the emptiness of the empty one
    assert b"\xff" in (FOLDER / "binary_garbage.toml").read_bytes()
    assert (FOLDER / "empty.toml").read_bytes() == b""


@pytest.mark.parametrize("name, entry", _cases(STRICT))
def test_api_gives_one_stack_error_with_every_field(name, entry):
    path = FOLDER / name
    error = _error_of(path, entry)
    assert entry["problem"] in error.problem
    if entry["where"]:
        assert error.where is not None and entry["where"] in error.where
    else:
        assert error.where is None
    assert error.file is not None and Path(error.file).resolve() == _expected_file(path, entry)
    assert error.fix.strip(), "every message says how to fix it"
    text = str(error)
    for part in (error.file, error.where, error.problem, error.fix):
        if part:
            assert part in text
    assert "fix: " in text
    assert error.to_dict() == {"file": error.file, "where": error.where,
                               "problem": error.problem, "fix": error.fix}


@pytest.mark.parametrize("name, entry", _cases({k: v for k, v in EXPECTED.items()
                                                if v.get("loose")}))
def test_layer_stacks_give_a_stack_error(name, entry):
    path = FOLDER / name
    error = _error_of(path, {"stage": "run"})
    assert Path(error.file).resolve() == path.resolve()
    assert error.problem and error.fix


@pytest.mark.parametrize("name, entry", _cases(EXPECTED))
def test_command_line_exits_2_with_one_message_and_writes_nothing(name, entry, tmp_path,
                                                                   capsys):
    path = FOLDER / name
    outputs = [tmp_path / "result.json", tmp_path / "curve.csv"]
    status = cli.main(["run", str(path), "--json", str(outputs[0]), "--curve", str(outputs[1])])
    out, err = capsys.readouterr()
    assert status == 2
    assert out == ""
    assert err.startswith("siltandem: error: ")
    assert err.count("siltandem: error: ") == 1
    assert "Traceback" not in err
    assert "fix: " in err
    if not entry.get("loose"):
        assert entry["problem"] in err
        assert str(_expected_file(path, entry).name) in err
        if entry["where"]:
            assert entry["where"] in err
    assert not any(p.exists() for p in outputs)


# one file of each family through a real interpreter: what a user's shell sees
SUBPROCESS_FILES = ["binary_garbage.toml", "syntax_duplicate_key.toml",
                    "csv_negative_wavelength.toml", "isotype_unknown_material.toml"]


def test_command_line_in_a_fresh_interpreter():
    runs = [subprocess.Popen([sys.executable, "-m", "siltandem.cli.main", "run", str(FOLDER / name)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
            for name in SUBPROCESS_FILES]
    for name, run in zip(SUBPROCESS_FILES, runs):
        out, err = run.communicate(timeout=120)
        assert run.returncode == 2, (name, err)
        assert out == ""
        assert "Traceback" not in err
        assert err.startswith("siltandem: error: ")
        assert EXPECTED[name]["problem"] in err


def test_every_file_gives_its_own_message():
    """No two defects share a message: the problem text alone tells them apart."""
    problems = {}
    for name, entry in STRICT.items():
        if "bug" in entry:
            continue
        problems[name] = _error_of(FOLDER / name, entry).problem
    assert len(problems) >= 40
    assert len(set(problems.values())) == len(problems), sorted(problems.values())
    # and the expected fragments themselves are distinct (each file tests its own defect)
    fragments = [entry["problem"] for entry in STRICT.values()]
    assert len(set(fragments)) == len(fragments)


def test_missing_file_and_a_folder_instead_of_a_file(capsys):
    for path in (FOLDER / "does_not_exist.toml", FOLDER):
        with pytest.raises(StackError, match="stack file not found") as info:
            load_stack(path)
        assert info.value.file == str(path) and info.value.fix
        assert cli.main(["run", str(path)]) == 2
        out, err = capsys.readouterr()
        assert out == "" and "stack file not found" in err and "Traceback" not in err
