"""The result cache decides verdicts without simulating, so it is untrusted input too: planted, edited,
truncated or foreign entries are discarded, noted and simulated again (real ngspice)."""

from __future__ import annotations

import json
import os
import struct

import pytest

from derate.cli import main
from derate.simulate.cache import MAGIC, Cache

NETLIST = "cache board\nV1 in 0 SIN(0 5 1k)\nR1 in out 100\nC1 out 0 1u\n.tran 1u 8m\n.end\n"  # settled in its run


@pytest.fixture
def project(tmp_path):
    (tmp_path / "board.cir").write_text(NETLIST)
    (tmp_path / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 10}\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\nparts: parts.yaml\npolicy: commercial\n")
    return tmp_path


def check(project, cache_dir, capsys):
    code = main(["check", "--no-color", "--cache-dir", str(cache_dir), "--format", "json",
                 str(project / "derate.yaml")])
    out = capsys.readouterr()
    assert "Traceback" not in out.err
    return code, json.loads(out.out), out.err


def entries(cache_dir):
    return sorted(cache_dir.glob("*.entry"))


def test_a_clean_run_hits_and_nothing_lands_in_the_project(project, tmp_path, capsys):
    cache_dir = tmp_path / "cache"
    code, first, _ = check(project, cache_dir, capsys)
    assert not first["scenarios"][0]["from_cache"] and len(entries(cache_dir)) == 1
    code2, second, _ = check(project, cache_dir, capsys)
    assert second["scenarios"][0]["from_cache"] and code2 == code
    assert not (project / ".derate-cache").exists()
    assert (cache_dir / "secret.key").stat().st_mode & 0o777 == 0o600


def _forge(entry, mutate):
    """Rewrite an entry's JSON with ``mutate`` but keep its old authentication code."""
    blob = entry.read_bytes()
    head = len(MAGIC) + 32 + 8
    (n,) = struct.unpack(">Q", blob[len(MAGIC) + 32:head])
    meta = json.loads(blob[head:head + n])
    mutate(meta)
    text = json.dumps(meta).encode()
    entry.write_bytes(blob[:len(MAGIC) + 32] + struct.pack(">Q", len(text)) + text + blob[head + n:])


@pytest.mark.parametrize("attack", ["edited verdict", "flipped byte", "truncated", "empty", "foreign secret",
                                    "planted without secret"])
def test_bad_entries_are_discarded_and_simulated_again(project, tmp_path, capsys, attack):
    cache_dir = tmp_path / "cache"
    code, honest, _ = check(project, cache_dir, capsys)
    (entry,) = entries(cache_dir)
    if attack == "edited verdict":  # make C1 look unstressed: would turn a fail into a pass
        def calm(meta):
            for rec in meta["stress"]:
                rec.update(v_max_v=0.01, v_min_v=-0.01, v_peak_abs_v=0.01)
        _forge(entry, calm)
    elif attack == "flipped byte":
        blob = bytearray(entry.read_bytes())
        blob[-10] ^= 0xFF
        entry.write_bytes(bytes(blob))
    elif attack == "truncated":
        entry.write_bytes(entry.read_bytes()[:100])
    elif attack == "empty":
        entry.write_bytes(b"")
    elif attack == "foreign secret":  # an entry made by someone else's derate (another secret)
        other = Cache.open(tmp_path / "other")
        data = Cache.open(cache_dir).load(entry.stem)
        other.save(entry.stem, data)
        entry.write_bytes((tmp_path / "other" / entry.name).read_bytes())
    elif attack == "planted without secret":
        (cache_dir / "secret.key").unlink()  # a new secret: every old entry is now unauthenticated
    code2, again, err = check(project, cache_dir, capsys)
    assert not again["scenarios"][0]["from_cache"]
    assert "cache entry" in err and "discarded" in err
    assert code2 == code
    assert again["capacitors"][0]["v_peak_v"] == pytest.approx(honest["capacitors"][0]["v_peak_v"], rel=1e-9)


def test_a_shared_or_foreign_cache_folder_is_not_trusted(tmp_path):
    folder = tmp_path / "shared"
    folder.mkdir()
    os.chmod(folder, 0o777)
    cache = Cache.open(folder)
    assert not cache.enabled and "writable by other users" in cache.notes[0]
    with pytest.raises(Exception, match="writable by other users"):
        Cache.open(folder, explicit=True)


def test_pruning_removes_old_and_excess_entries(tmp_path):
    cache = Cache.open(tmp_path / "c")
    for i in range(3):
        (tmp_path / "c" / f"{i:064x}.entry").write_bytes(b"x" * 1000)
    old = tmp_path / "c" / f"{0:064x}.entry"
    os.utime(old, (1, 1))
    assert cache.prune(max_bytes=10_000) == 1 and not old.exists()
    assert cache.prune(max_bytes=1500) == 1


def test_cache_command_shows_prunes_and_clears(tmp_path, capsys):
    """`derate cache [info|prune|clear]`: the housekeeping a user can run by hand (issue 13)."""
    from derate.cli import main

    folder = tmp_path / "c"
    Cache.open(folder, explicit=True)
    for i in range(3):
        (folder / f"{i:064x}.entry").write_bytes(b"x" * 1000)
    os.utime(folder / f"{0:064x}.entry", (1, 1))  # unused since 1970: past the 30-day age limit
    assert main(["cache", "--no-color", "--cache-dir", str(folder)]) == 0
    assert "3 entries" in capsys.readouterr().out
    assert main(["cache", "prune", "--no-color", "--cache-dir", str(folder)]) == 0
    out = capsys.readouterr().out
    assert "removed 1 entries" in out and "2 entries" in out
    assert main(["cache", "clear", "--no-color", "--cache-dir", str(folder)]) == 0
    assert "removed 2 entries" in capsys.readouterr().out and not list(folder.glob("*.entry"))


def test_a_new_cache_opened_by_many_at_once_is_never_damaged(tmp_path):
    """Two runs sharing a fresh cache once saw its secret half-written (7.5 % of opens said "damaged");
    the secret now appears whole or not at all, and every opener reads the same one."""
    import threading

    from derate.simulate.cache import Cache

    for round_ in range(30):
        folder = tmp_path / f"cache{round_}"
        start = threading.Barrier(8)
        got: list = []

        def open_it():
            start.wait()
            c = Cache.open(folder, explicit=True)
            got.append(c._secret)
        threads = [threading.Thread(target=open_it) for _ in range(8)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        assert len(got) == 8 and len(set(got)) == 1 and len(got[0]) == 32
        assert sorted(p.name for p in folder.iterdir()) == ["secret.key"]  # no private copy left behind
