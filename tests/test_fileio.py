"""Atomic writes: a report is written whole or not at all."""

from __future__ import annotations

import os

import pytest

from derate.fileio import write_atomic


def test_write_atomic_replaces_whole(tmp_path):
    target = tmp_path / "sub" / "r.json"
    write_atomic(target, "first")
    write_atomic(target, b"second")
    assert target.read_text() == "second"
    assert [p.name for p in target.parent.iterdir()] == ["r.json"]


def test_failure_leaves_old_file_and_no_temp(tmp_path, monkeypatch):
    target = tmp_path / "r.json"
    target.write_text("old")

    def boom(src, dst):
        raise OSError("disk full")
    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError):
        write_atomic(target, "new")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["r.json"]
