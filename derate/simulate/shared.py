"""The shared-library back end: one ngspice instance through PySpice, inside a worker process.

PySpice 1.5 on ngspice 39 has known defects (see DEVELOPERS.md, "Simulator notes"): it logs an
"Unsupported Ngspice version" warning, raises on harmless ngspice notes written to stderr and keeps
global state.  This module therefore uses PySpice only to load the library and hold the callbacks,
captures ngspice's output itself, sends commands straight through the C API, and reads vectors as
numpy arrays.  After every run it sends ``destroy all`` and ``remcirc`` so memory stays flat.
"""

from __future__ import annotations

import logging
import os
import re
import subprocess

import numpy as np

_ERROR_PATTERNS = (
    re.compile(r"timestep too small", re.I),
    re.compile(r"singular matrix", re.I),
    re.compile(r"no convergence", re.I),
    re.compile(r"circuit not parsed", re.I),
    re.compile(r"^error", re.I),
    re.compile(r"fatal", re.I),
    re.compile(r"unknown (subckt|model|device|parameter)", re.I),
    re.compile(r"could not find", re.I),
    re.compile(r"analysis failed|run simulation\(s\) aborted|simulation\(s\) aborted", re.I),
)
# ngspice's reasons that carry no "error" word
_REASONS = re.compile(r"undefined parameter|expression err|cannot compute substitute|unknown (function|model type)", re.I)
# stderr lines ngspice writes that are not problems
_NOISE = (
    re.compile(r"^Note: can't find (the )?init(ialization)? file", re.I),
    re.compile(r"^Using SPARSE", re.I),
    re.compile(r"^\*+$"),
    re.compile(r"^\*\* ", re.I),
    re.compile(r"^Note: No compatibility mode selected", re.I),
    re.compile(r"^Circuit: ", re.I),
    re.compile(r"^doAnalyses: pause requested", re.I),
    re.compile(r"^Doing analysis at TEMP", re.I),
    re.compile(r"^(No\. of Data Rows|Reference value)", re.I),
)


_STAT = re.compile(r"tran\w*:\s*([0-9.]+)\s*%", re.I)


# ngspice's reason for a deck it cannot read comes on the line after "Netlist line no. N:"; the shared
# library then says only that it stops, which is no reason at all
_LINE_HEADER = re.compile(r"^netlist line no\.\s*(\d+)\s*:?\s*$", re.I)
_GENERIC_STOP = re.compile(r"cannot recover and awaits to be detached|please check your input netlist", re.I)


def problems_in(messages: list[str]) -> list[str]:
    """Return the ngspice messages that report errors (not notes, not progress), ngspice's own reason
    first: a message after a "Netlist line no. N:" header is given with its line ("line no. 4: Expression
    err: }}"); the shared library's generic stop is given only when there is nothing else."""
    out: list[str] = []
    generic: list[str] = []
    header: str | None = None
    for msg in messages:
        m = msg.strip()
        if not m or any(p.search(m) for p in _NOISE):
            continue
        got = _LINE_HEADER.match(m)
        if got:
            header = f"line no. {got.group(1)}"
            continue
        if _GENERIC_STOP.search(m):
            generic.append(m)
        elif header is not None:
            text = f"{header}: {m}"
            if text not in out:
                out.append(text)
        elif any(p.search(m) for p in _ERROR_PATTERNS) or _REASONS.search(m):
            out.append(m)
        header = None
    return out or generic


def warnings_in(messages: list[str]) -> list[str]:
    """Return ngspice's own warnings (worth showing to the user, once each)."""
    seen: list[str] = []
    for msg in messages:
        m = msg.strip()
        if m.lower().startswith("warning") and m not in seen:
            seen.append(m)
    return seen


def _quiet_pyspice() -> None:
    # The version warning is cosmetic on ngspice 39 (PySpice falls back to the same vector table).
    for name in ("PySpice", "PySpice.Spice", "PySpice.Spice.NgSpice.Shared"):
        logger = logging.getLogger(name)
        logger.setLevel(logging.CRITICAL + 1)
        logger.propagate = False


class SharedLibraryBackend:
    """A quiet ngspice session: load a deck, run it, read vectors, reset (a ``Backend``)."""

    def __init__(self) -> None:
        _quiet_pyspice()
        from PySpice.Spice.NgSpice.Shared import NgSpiceShared, ffi  # imported late: loads libngspice

        self._ffi = ffi
        lines: list[tuple[str, str]] = []
        self.lines = lines
        status: list = [None]  # the progress sink of the run in hand (set by run())
        self._status = status

        class _Quiet(NgSpiceShared):
            @staticmethod
            def _send_char(message_c, ngspice_id, user_data):
                text = ffi.string(message_c).decode("utf-8", "replace")
                stream, _, content = text.partition(" ")
                lines.append((stream, content))
                return 0

            @staticmethod
            def _send_stat(message, ngspice_id, user_data):
                # "tran: 45.2%": the share of the simulated time done; passed on as a fraction
                sink = status[0]
                if sink is not None:
                    text = ffi.string(message).decode("utf-8", "replace")
                    m = _STAT.search(text)
                    if m:
                        try:
                            sink(float(m.group(1)) / 100.0)
                        except Exception:  # a progress report must never break the run
                            pass
                return 0

        self._ng = _Quiet.new_instance()
        self._lib = self._ng._ngspice_shared
        self.version = self._read_version()
        self.lines.clear()

    def _read_version(self) -> str:
        out = self.command("version -f")
        m = re.search(r"ngspice-(\d+(?:\.\d+)?)", out)
        return m.group(1) if m else "unknown"

    # ------------------------------------------------------------ commands
    def command(self, cmd: str) -> str:
        """Send one command; return what ngspice printed (stdout and stderr) for it."""
        start = len(self.lines)
        self._lib.ngSpice_Command(cmd.encode("ascii", "replace"))
        return "\n".join(c for _, c in self.lines[start:])

    def load(self, deck: str, dialect: str | None = None) -> list[str]:
        """Load a deck; return ngspice's messages about it (errors are for the caller to judge).

        ``dialect`` (validated by the caller: letters of ngspice's compatibility modes) is set as
        ngbehavior before the deck is read and unset otherwise, so one worker can read decks of
        different dialects in turn.
        """
        if dialect and dialect.isalnum():
            self._lib.ngSpice_Command(f"set ngbehavior={dialect}".encode("ascii"))
        else:
            self._lib.ngSpice_Command(b"unset ngbehavior")
        start = len(self.lines)
        lines = [ln for ln in deck.splitlines() if ln.strip()] + [""]
        keep = [self._ffi.new("char[]", ln.encode("utf-8", "replace")) for ln in lines]
        array = self._ffi.new("char *[]", keep + [self._ffi.NULL])
        self._lib.ngSpice_Circ(array)
        return [c for _, c in self.lines[start:]]

    def run(self, progress=None) -> list[str]:
        """Run the loaded circuit's analyses in the foreground; return the messages printed.

        ``progress(fraction)`` is called as ngspice reports the share of the analysis done.
        """
        start = len(self.lines)
        self._status[0] = progress
        try:
            self._lib.ngSpice_Command(b"run")
        finally:
            self._status[0] = None
        return [c for _, c in self.lines[start:]]

    def problems(self, messages: list[str]) -> list[str]:
        return problems_in(messages)

    @staticmethod
    def warnings(messages: list[str]) -> list[str]:
        return warnings_in(messages)

    # ------------------------------------------------------------ results
    def plots(self) -> list[str]:
        names = []
        arr = self._lib.ngSpice_AllPlots()
        i = 0
        while arr[i] != self._ffi.NULL:
            names.append(self._ffi.string(arr[i]).decode())
            i += 1
        return names

    def vector_names(self, plot: str) -> list[str]:
        out = []
        arr = self._lib.ngSpice_AllVecs(plot.encode())
        if arr == self._ffi.NULL:
            return out
        i = 0
        while arr[i] != self._ffi.NULL:
            out.append(self._ffi.string(arr[i]).decode())
            i += 1
        return out

    def vector(self, plot: str, name: str) -> np.ndarray:
        """Return a copy of one real vector of a plot."""
        info = self._lib.ngGet_Vec_Info(f"{plot}.{name}".encode())
        if info == self._ffi.NULL:
            raise KeyError(name)
        n = info.v_length
        if info.v_realdata != self._ffi.NULL:
            return np.frombuffer(self._ffi.buffer(info.v_realdata, n * 8), dtype=np.float64).copy()
        raw = np.frombuffer(self._ffi.buffer(info.v_compdata, n * 16), dtype=np.complex128)
        return raw.real.copy()

    def vector_view(self, plot: str, name: str) -> np.ndarray:
        """One real vector of a plot without copying it: valid until ``reset()``."""
        info = self._lib.ngGet_Vec_Info(f"{plot}.{name}".encode())
        if info == self._ffi.NULL:
            raise KeyError(name)
        if info.v_realdata == self._ffi.NULL:
            return self.vector(plot, name)
        return np.frombuffer(self._ffi.buffer(info.v_realdata, info.v_length * 8), dtype=np.float64)

    def reset(self) -> bool:
        """Free every plot and the circuit (both are needed for flat memory over many runs).

        Returns False when ngspice reported that it cannot recover (the process must end).
        """
        dead = any("cannot recover" in c for _, c in self.lines)
        if not dead:
            self._lib.ngSpice_Command(b"destroy all")
            self._lib.ngSpice_Command(b"remcirc")
        self.lines.clear()
        return not dead


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
