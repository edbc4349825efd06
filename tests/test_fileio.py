"""Output files: atomic writes, no overwrite without force, safe names, clear errors.

Behaviour checks only: no published check value here, so none needs a source.
"""

import errno
import os
import tempfile

import pytest
from hypothesis import given, strategies as st

from toolkit import OutputError
from toolkit.fileio import safe_filename, write_atomic


def test_writes_and_refuses_to_overwrite(tmp_path):
    target = tmp_path / "sub" / "order.txt"
    write_atomic(target, "first")
    assert target.read_text() == "first"
    with pytest.raises(OutputError, match=r"order\.txt already exists; give force to overwrite it"):
        write_atomic(target, "second")
    assert target.read_text() == "first"
    write_atomic(target, b"second", force=True)
    assert target.read_text() == "second"
    assert [p.name for p in target.parent.iterdir()] == ["order.txt"]  # no temporary file left behind


def test_interrupted_write_leaves_the_old_file_and_no_debris(tmp_path):
    target = tmp_path / "order.xlsx"
    target.write_bytes(b"old complete file")

    def half_then_fail(handle):
        handle.write(b"half of a new fi")
        raise RuntimeError("power cut")

    with pytest.raises(RuntimeError, match="power cut"):
        write_atomic(target, half_then_fail, force=True)
    assert target.read_bytes() == b"old complete file"
    assert [p.name for p in tmp_path.iterdir()] == ["order.xlsx"]

    fresh = tmp_path / "new.pdf"
    with pytest.raises(RuntimeError):
        write_atomic(fresh, half_then_fail)
    assert not fresh.exists()


@pytest.mark.parametrize("code, reason", [(errno.EROFS, "the file system is read-only"),
                                          (errno.EACCES, "permission denied")])
def test_read_only_folder_gives_a_clear_error(tmp_path, monkeypatch, code, reason):
    # simulated: the suite runs as root in CI, where folder permissions do not bind
    def refuse(*args, **kwargs):
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(OutputError, match=f"cannot write .*x.txt: {reason}"):
        write_atomic(tmp_path / "x.txt", "data")


def test_folder_that_is_a_file_gives_a_clear_error(tmp_path):
    blocker = tmp_path / "out"
    blocker.write_text("not a folder")
    with pytest.raises(OutputError, match=r"cannot write .*out/x\.txt: "):
        write_atomic(blocker / "x.txt", "data")


def test_full_disk_gives_a_clear_error(tmp_path):
    def write_to_full(handle):
        with open("/dev/full", "wb") as full:
            full.write(b"x" * 4096)
            full.flush()

    with pytest.raises(OutputError, match="the disk is full"):
        write_atomic(tmp_path / "x.txt", write_to_full)
    assert list(tmp_path.iterdir()) == []


@given(st.text(max_size=200))
def test_safe_names_never_leave_the_folder(text):
    name = safe_filename(text)
    assert name and "/" not in name and "\\" not in name
    assert not name.startswith(".") and ".." not in name
    assert len(name) <= 80
