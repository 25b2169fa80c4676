"""Content-addressed cache of scenario results, outside the project and authenticated.

The key is a hash of the worker job (deck text, probes, window and measuring settings), the
ngspice library's identity and the measurement version: a re-run with nothing changed does no
simulation.

A cache is data that decides verdicts, so it is treated as untrusted input:
- it lives outside the project tree by default (``$DERATE_CACHE_DIR``, else
  ``$XDG_CACHE_HOME/derate``, else ``~/.cache/derate``; ``--cache-dir`` on the command line), so a
  pull request cannot ship entries;
- every entry carries an HMAC-SHA256 over its key and contents, made with a per-user secret that is
  created on first use (mode 0600, in a folder owned by the user and writable by nobody else);
- an entry is checked for structure before use (types, finite numbers, array shapes); a bad entry
  is deleted, noted and simulated again.  Entries hold JSON and ``.npz`` arrays loaded with
  ``allow_pickle=False``: data, never code.
"""

from __future__ import annotations

import hashlib
import hmac
import io
import json
import math
import os
import stat
import struct
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import DataError
from ..fileio import read_capped, write_atomic

CACHE_FORMAT = 3
MAGIC = b"derate-cache-3\n"
SECRET_NAME = "secret.key"
MAX_ENTRY_BYTES = 512 * 1024 * 1024
DEFAULT_MAX_BYTES = 2 * 1024 ** 3  # pruned to this size, oldest first
DEFAULT_MAX_AGE_S = 30 * 24 * 3600.0


def key(job: dict[str, Any], fingerprint: str, measure_version: int) -> str:
    """Return the cache key of a worker job."""
    payload = {k: v for k, v in job.items() if k not in ("cache_key",)}
    text = json.dumps(payload, sort_keys=True, default=str)
    h = hashlib.sha256()
    h.update(f"{CACHE_FORMAT}|{measure_version}|{fingerprint}|".encode())
    h.update(text.encode())
    return h.hexdigest()


def default_folder() -> Path:
    """The per-user cache folder (not inside any project)."""
    explicit = os.environ.get("DERATE_CACHE_DIR")
    if explicit:
        return Path(explicit)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "derate"


@dataclass
class Cache:
    """One folder of authenticated entries ``<key>.entry``."""

    folder: Path
    notes: list[str] = field(default_factory=list)
    _secret: bytes | None = field(default=None, repr=False)

    @property
    def enabled(self) -> bool:
        return self._secret is not None

    @classmethod
    def open(cls, folder: Path | None = None, explicit: bool = False) -> "Cache":
        """Open (creating) a cache folder and its secret.

        With ``explicit`` (the folder came from --cache-dir) an unusable folder is a DataError
        (exit 2, before any simulation); the default folder being unusable only turns caching off,
        with a note.
        """
        cache = cls(Path(folder) if folder is not None else default_folder())
        try:
            cache._secret = cache._load_secret()
        except (OSError, ValueError) as exc:
            reason = getattr(exc, "strerror", None) or str(exc)
            if explicit:
                raise DataError(f"cannot use the cache folder: {reason}", str(cache.folder)) from None
            cache.notes.append(f"cache off: cannot use {cache.folder} ({reason})")
        return cache

    def _load_secret(self) -> bytes:
        self.folder.mkdir(parents=True, exist_ok=True, mode=0o700)
        st = os.stat(self.folder)
        if not stat.S_ISDIR(st.st_mode):
            raise ValueError("not a folder")
        if hasattr(os, "getuid") and st.st_uid != os.getuid():
            raise ValueError("the folder belongs to another user")
        if st.st_mode & 0o022:
            raise ValueError("the folder is writable by other users")
        path = self.folder / SECRET_NAME
        if not os.path.lexists(path):
            self._create_secret(path)
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NOFOLLOW", 0))
        with os.fdopen(fd, "rb") as fh:
            st = os.fstat(fh.fileno())
            secret = fh.read(64)
        if hasattr(os, "getuid") and st.st_uid != os.getuid():
            raise ValueError("the cache secret belongs to another user")
        if st.st_mode & 0o077:
            raise ValueError("the cache secret is readable by other users")
        if len(secret) != 32:
            raise ValueError("the cache secret is damaged (delete it to start a new cache)")
        return secret

    def _create_secret(self, path: Path) -> None:
        """Write a new secret whole under a private name, then link it into place: the name appears
        only with its 32 bytes, and of two processes creating it at once one wins and both read it."""
        tmp = self.folder / f".{SECRET_NAME}.{os.getpid()}.{os.urandom(4).hex()}"
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0), 0o600)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(os.urandom(32))
                fh.flush()
                os.fsync(fh.fileno())
            try:
                os.link(tmp, path)
            except FileExistsError:
                pass  # another process made it first: its secret is the one
        finally:
            try:
                os.unlink(tmp)
            except OSError:
                pass

    def _mac(self, k: str, body: bytes) -> bytes:
        assert self._secret is not None
        return hmac.new(self._secret, k.encode("ascii") + b"\0" + body, hashlib.sha256).digest()

    def _path(self, k: str) -> Path:
        if not (len(k) == 64 and all(c in "0123456789abcdef" for c in k)):
            raise ValueError(f"bad cache key {k!r}")
        return self.folder / f"{k}.entry"

    # ------------------------------------------------------------ read
    def load(self, k: str) -> dict[str, Any] | None:
        """Return the entry for key ``k``, or None (absent, or bad: then deleted and noted)."""
        if not self.enabled:
            return None
        path = self._path(k)
        try:
            with open(path, "rb") as fh:
                blob = read_capped(fh, MAX_ENTRY_BYTES)
        except FileNotFoundError:
            return None
        except OSError as exc:
            self.notes.append(f"cache entry {k[:12]} unreadable ({exc.strerror}); simulated again")
            return None
        try:
            data = self._decode(k, blob)
        except (ValueError, KeyError, TypeError, IndexError, OSError, struct.error) as exc:
            self.notes.append(f"cache entry {k[:12]} discarded ({exc}); simulated again")
            try:
                path.unlink()
            except OSError:
                pass
            return None
        try:
            os.utime(path)  # last use, for pruning
        except OSError:
            pass
        return data

    def _decode(self, k: str, blob: bytes) -> dict[str, Any]:
        if len(blob) > MAX_ENTRY_BYTES:
            raise ValueError("too large")
        head = len(MAGIC) + 32 + 8
        if len(blob) < head or not blob.startswith(MAGIC):
            raise ValueError("not a derate cache entry of this version")
        mac = blob[len(MAGIC):len(MAGIC) + 32]
        (n_json,) = struct.unpack(">Q", blob[len(MAGIC) + 32:head])
        body = blob[head:]
        if not hmac.compare_digest(mac, self._mac(k, body)):
            raise ValueError("its authentication code does not match: edited, planted or damaged")
        if n_json > len(body):
            raise ValueError("truncated")
        meta = json.loads(body[:n_json].decode("utf-8"))
        with np.load(io.BytesIO(body[n_json:]), allow_pickle=False) as npz:
            packed = {name: npz[name] for name in npz.files}
        return _checked(meta, packed)

    # ------------------------------------------------------------ write
    def save(self, k: str, data: dict[str, Any]) -> None:
        """Store a worker result; a failure to write only loses this entry (noted)."""
        if not self.enabled:
            return
        waves = data.get("waves", {})
        series = sorted(s for s in next(iter(waves.values()), {}) if not s.startswith("run_"))
        # one array per series for all capacitors (a few large arrays load much faster than many)
        parts: dict[str, list[np.ndarray]] = {name: [] for name in series + [f"run_{s}" for s in series]}
        index, pos, run_pos = {}, 0, 0
        for path, w in waves.items():
            n, m = len(w[series[0]]), len(w[f"run_{series[0]}"])
            index[path] = [pos, pos + n, run_pos, run_pos + m]
            pos, run_pos = pos + n, run_pos + m
            for name in parts:
                parts[name].append(np.asarray(w[name], dtype=np.float64))
        arrays = {name: (np.concatenate(chunks) if chunks else np.zeros(0)) for name, chunks in parts.items()}
        buf = io.BytesIO()
        np.savez(buf, **arrays)
        meta = {k2: v for k2, v in data.items() if k2 != "waves"}
        meta["format"] = CACHE_FORMAT
        meta["wave_index"] = index
        meta["wave_series"] = series
        try:
            text = json.dumps(meta, allow_nan=False, default=_plain).encode("utf-8")
        except (ValueError, TypeError) as exc:
            self.notes.append(f"cache entry not written ({exc})")
            return
        body = text + buf.getvalue()
        blob = MAGIC + self._mac(k, body) + struct.pack(">Q", len(text)) + body
        try:
            write_atomic(self._path(k), blob, mode=0o600)
        except OSError as exc:
            self.notes.append(f"cache entry not written ({exc.strerror or exc})")

    def prune(self, max_bytes: int = DEFAULT_MAX_BYTES, max_age_s: float = DEFAULT_MAX_AGE_S) -> int:
        """Delete entries unused for ``max_age_s`` and the least recently used beyond ``max_bytes``."""
        try:
            entries = [(p.stat().st_mtime, p.stat().st_size, p) for p in self.folder.glob("*.entry")]
        except OSError:
            return 0
        now = time.time()
        removed = 0
        total = sum(size for _, size, _ in entries)
        for mtime, size, p in sorted(entries):
            if now - mtime > max_age_s or total > max_bytes:
                try:
                    p.unlink()
                    removed += 1
                    total -= size
                except OSError:
                    pass
        return removed

    def clear(self) -> int:
        """Delete every entry (the secret stays); return how many."""
        removed = 0
        for p in self.folder.glob("*.entry"):
            try:
                p.unlink()
                removed += 1
            except OSError:
                pass
        return removed


def _plain(o: Any):
    if hasattr(o, "item"):
        return o.item()
    if isinstance(o, (set, tuple)):
        return list(o)
    raise TypeError(f"cannot store {type(o).__name__}")


# ---------------------------------------------------------------- structure of an entry
_STRESS_TEXT = {"capacitor", "spice_name", "scenario", "model", "power_up"}
_STRESS_OPTIONAL = {"esr_ohm", "esl_h", "f_fundamental_hz", "steady_state", "drift_ratio", "settle_more_s"}


def _checked(meta: Any, packed: dict[str, np.ndarray]) -> dict[str, Any]:
    """Return the entry as the runner expects it; ValueError on any structural problem."""
    if not isinstance(meta, dict) or meta.get("format") != CACHE_FORMAT:
        raise ValueError("unknown entry format")
    stress = meta.get("stress")
    if not isinstance(stress, list):
        raise ValueError("no stress records")
    from ..measure import _STRESS_FIELDS  # the record's own field list
    for rec in stress:
        if not isinstance(rec, dict) or set(rec) - set(_STRESS_FIELDS):
            raise ValueError("bad stress record")
        for name, value in rec.items():
            if name in _STRESS_TEXT:
                ok = isinstance(value, str)
            elif name == "steady_state":
                ok = value is None or isinstance(value, bool)
            elif name in ("harmonics", "bands"):
                ok = isinstance(value, list) and all(
                    isinstance(row, list) and all(_finite(x) for x in row) for row in value)
            elif name == "notes":
                ok = isinstance(value, list) and all(isinstance(x, str) for x in value)
            else:
                ok = _finite(value) or (value is None and name in _STRESS_OPTIONAL)
            if not ok:
                raise ValueError(f"bad value for {name}")
    series = meta.get("wave_series")
    index = meta.get("wave_index")
    if not isinstance(series, list) or not isinstance(index, dict):
        raise ValueError("no wave index")
    for name in series + [f"run_{s}" for s in series]:
        arr = packed.get(name)
        if arr is None or arr.dtype != np.float64 or arr.ndim != 1:
            raise ValueError(f"bad array {name!r}")
    waves: dict[str, dict[str, np.ndarray]] = {}
    for path, bounds in index.items():
        if not (isinstance(bounds, list) and len(bounds) == 4 and all(isinstance(b, int) for b in bounds)):
            raise ValueError("bad wave index")
        start, stop, run_start, run_stop = bounds
        w = {}
        for s in series:
            arr, run = packed[s], packed[f"run_{s}"]
            if not (0 <= start <= stop <= len(arr) and 0 <= run_start <= run_stop <= len(run)):
                raise ValueError("wave index out of range")
            w[s] = arr[start:stop]
            w[f"run_{s}"] = run[run_start:run_stop]
        waves[path] = w
    out = {k: v for k, v in meta.items() if k not in ("wave_index", "wave_series", "format")}
    out["waves"] = waves
    return out


def _finite(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)
