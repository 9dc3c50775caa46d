"""Atomic single-file writes."""

import pytest

from workbench.errors import InputError
from workbench.fileio import write_bytes_atomic


def test_writes_and_replaces(tmp_path):
    target = tmp_path / "out.json"
    write_bytes_atomic(target, b"one")
    write_bytes_atomic(target, b"two")
    assert target.read_bytes() == b"two"
    assert [p.name for p in tmp_path.iterdir()] == ["out.json"]  # no temporary left


def test_missing_folder_is_a_clear_error(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        write_bytes_atomic(tmp_path / "nope" / "out.json", b"x")
    assert not (tmp_path / "nope").exists()


def test_failure_keeps_previous_version(tmp_path, monkeypatch):
    target = tmp_path / "out.json"
    target.write_bytes(b"old")

    def boom(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("workbench.fileio.os.replace", boom)
    with pytest.raises(InputError, match="cannot write"):
        write_bytes_atomic(target, b"new")
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.json"]


def test_make_parents(tmp_path):
    write_bytes_atomic(tmp_path / "a" / "b.txt", b"x", make_parents=True)
    assert (tmp_path / "a" / "b.txt").read_bytes() == b"x"
