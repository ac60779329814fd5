"""Output files are written atomically: an interrupted write leaves the old file or none.

Pure unit tests of our own file handling: no outside source is needed.
"""
import os

import pytest

from siltandem import StackError
from siltandem.files import write_atomic


def test_a_write_interrupted_before_its_rename_leaves_the_old_file(tmp_path, monkeypatch):
    target = tmp_path / "result.json"
    write_atomic(target, "old\n")

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        write_atomic(target, "new\n")
    assert target.read_text() == "old\n"
    assert [p.name for p in tmp_path.iterdir()] == ["result.json"]   # no temporary file left


def test_a_first_write_that_fails_leaves_nothing(tmp_path, monkeypatch):
    monkeypatch.setattr(os, "fsync", lambda fd: (_ for _ in ()).throw(OSError("disk full")))
    with pytest.raises(StackError, match="cannot write the output file: disk full") as info:
        write_atomic(tmp_path / "curve.csv", b"voltage_V\n")
    assert info.value.file == str(tmp_path / "curve.csv")
    assert list(tmp_path.iterdir()) == []
