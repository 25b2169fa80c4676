"""Content-addressed cache of scenario results under ``.derate-cache/``.

The key is a hash of the worker job (deck text, probes, window and measuring settings), the
ngspice library's identity and the measurement version: a re-run with nothing changed does no
simulation.  Entries are JSON plus a numpy ``.npz`` (loaded with ``allow_pickle=False``): a cache
folder committed by a pull request can hold data, never code.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import subprocess
from pathlib import Path
from typing import Any

import numpy as np

from ..fileio import write_atomic

CACHE_FORMAT = 2


def library_fingerprint() -> str:
    """Identify the libngspice that PySpice will load (path, size, mtime), without loading it."""
    explicit = os.environ.get("NGSPICE_LIBRARY_PATH")
    candidates = [explicit] if explicit else []
    if not candidates:
        try:
            out = subprocess.run(["ldconfig", "-p"], capture_output=True, text=True, timeout=5).stdout
        except (OSError, subprocess.SubprocessError):
            out = ""
        for line in out.splitlines():
            if "libngspice.so" in line and "=>" in line:
                candidates.append(line.split("=>", 1)[1].strip())
    for cand in candidates:
        try:
            real = os.path.realpath(cand)
            st = os.stat(real)
            return f"{real}:{st.st_size}:{st.st_mtime_ns}"
        except OSError:
            continue
    return "unknown-libngspice"


def key(job: dict[str, Any], fingerprint: str, measure_version: int) -> str:
    """Return the cache key of a worker job."""
    payload = {k: v for k, v in job.items() if k not in ("cache_key",)}
    text = json.dumps(payload, sort_keys=True, default=str)
    h = hashlib.sha256()
    h.update(f"{CACHE_FORMAT}|{measure_version}|{fingerprint}|".encode())
    h.update(text.encode())
    return h.hexdigest()


class Cache:
    """One folder of entries: ``<key>.json`` (records) and ``<key>.npz`` (plot envelopes)."""

    def __init__(self, folder: Path):
        self.folder = Path(folder)

    def load(self, k: str) -> dict[str, Any] | None:
        meta = self.folder / f"{k}.json"
        arrays = self.folder / f"{k}.npz"
        try:
            data = json.loads(meta.read_text(encoding="utf-8"))
            if data.get("format") != CACHE_FORMAT:
                return None
            waves: dict[str, dict[str, np.ndarray]] = {}
            index = data.pop("wave_index", {})
            with np.load(arrays, allow_pickle=False) as npz:
                packed = {name: npz[name] for name in npz.files}
            for path, (start, stop, run_start, run_stop) in index.items():
                w = {series: packed[series][start:stop] for series in data["wave_series"]}
                w.update({f"run_{series}": packed[f"run_{series}"][run_start:run_stop]
                          for series in data["wave_series"]})
                waves[path] = w
            data["waves"] = waves
            return data
        except (OSError, ValueError, KeyError):
            return None

    def save(self, k: str, data: dict[str, Any]) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        gitignore = self.folder / ".gitignore"
        if not gitignore.exists():
            write_atomic(gitignore, "*\n")
        # one array per series for all capacitors (a few large arrays load much faster than many)
        waves = data.get("waves", {})
        series = sorted(s for s in next(iter(waves.values()), {}) if not s.startswith("run_"))
        parts: dict[str, list[np.ndarray]] = {name: [] for name in series + [f"run_{s}" for s in series]}
        index, pos, run_pos = {}, 0, 0
        for path, w in waves.items():
            n, m = len(w[series[0]]), len(w[f"run_{series[0]}"])
            index[path] = (pos, pos + n, run_pos, run_pos + m)
            pos, run_pos = pos + n, run_pos + m
            for name in parts:
                parts[name].append(np.asarray(w[name], dtype=np.float64))
        arrays = {name: (np.concatenate(chunks) if chunks else np.zeros(0)) for name, chunks in parts.items()}
        buf = io.BytesIO()
        np.savez(buf, **arrays)
        write_atomic(self.folder / f"{k}.npz", buf.getvalue())
        meta = {k2: v for k2, v in data.items() if k2 != "waves"}
        meta["format"] = CACHE_FORMAT
        meta["wave_index"] = index
        meta["wave_series"] = series
        write_atomic(self.folder / f"{k}.json", json.dumps(meta))
