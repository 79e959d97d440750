"""Atomic writes: a reader sees the old file or the new one, never half of one.

Common practice (write a temporary file in the same folder, flush, fsync, rename), no source.
"""

from __future__ import annotations

import os

import pytest

from freezeout.io import atomic


def test_new_file_and_folder_are_made(tmp_path):
    target = tmp_path / "a" / "b" / "out.txt"
    assert atomic.atomic_write_text(target, "héllo\n") == target
    assert target.read_bytes() == "héllo\n".encode()
    assert [p.name for p in target.parent.iterdir()] == ["out.txt"]  # no temporary left


def test_replaces_an_existing_file_whole(tmp_path):
    target = tmp_path / "out.bin"
    target.write_bytes(b"old" * 1000)
    atomic.atomic_write_bytes(target, b"new")
    assert target.read_bytes() == b"new"


def test_failure_keeps_the_old_file_and_leaves_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "out.txt"
    target.write_text("old contents")

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "replace", broken_replace)
    with pytest.raises(OSError, match="No space"):
        atomic.atomic_write_text(target, "new contents")
    assert target.read_text() == "old contents"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.txt"]


def test_interrupt_during_write_leaves_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "out.txt"

    def interrupted(fd):
        raise KeyboardInterrupt

    monkeypatch.setattr(atomic.os, "fsync", interrupted)
    with pytest.raises(KeyboardInterrupt):
        atomic.atomic_write_bytes(target, b"data")
    assert not target.exists() and list(tmp_path.iterdir()) == []


def test_permissions_follow_the_umask(tmp_path):
    old = os.umask(0o027)
    try:
        target = atomic.atomic_write_text(tmp_path / "f.txt", "x")
    finally:
        os.umask(old)
    assert (target.stat().st_mode & 0o777) == 0o640


def test_a_failure_names_the_path_given_not_the_temporary(tmp_path):
    """An error about our own temporary file or folder is reported as one about the path
    the user named (project choice, no source)."""
    from freezeout.io.atomic import atomic_folder, atomic_write_bytes

    folder = tmp_path / "run.csv"
    folder.mkdir()  # a folder where a file is to go
    with pytest.raises(OSError) as info:
        atomic_write_bytes(folder, b"x")
    assert info.value.filename == str(folder)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.csv"]  # no temporary left
    if os.path.isdir("/proc/self"):  # a parent where nothing can be created (Linux)
        with pytest.raises(OSError) as info, atomic_folder("/proc/freezeout-report"):
            pass
        assert info.value.filename == "/proc/freezeout-report"
