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


def test_read_capped_reads_to_the_end_or_one_byte_past_the_limit(tmp_path):
    import os
    import threading
    import tracemalloc

    from derate.fileio import read_capped

    for size in (0, 10, 100, 101, 5000):
        p = tmp_path / f"f{size}"
        p.write_bytes(b"x" * size)
        with open(p, "rb") as fh:
            got = read_capped(fh, 100)
        assert got == b"x" * min(size, 101)  # 101 bytes: the caller sees it is over the limit
    # the buffer follows the file, not the limit (a 512 MB limit must not reserve 512 MB)
    small = tmp_path / "small"
    small.write_bytes(b"y" * 1000)
    tracemalloc.start()
    with open(small, "rb") as fh:
        assert read_capped(fh, 512 * 2 ** 20) == b"y" * 1000
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 2 ** 20
    # a pipe has no size: read in steps to its end, or one byte past the limit
    def feed(fd: int, total: int) -> None:
        with open(fd, "wb") as out:
            try:
                out.write(b"z" * total)
            except BrokenPipeError:  # the reader stopped one byte past the limit
                pass

    for total in (3 << 20, 10):
        r, w = os.pipe()
        writer = threading.Thread(target=feed, args=(w, total))
        writer.start()
        with open(r, "rb") as fh:
            got = read_capped(fh, 2 << 20)
        writer.join()
        assert got == b"z" * min(total, (2 << 20) + 1)
