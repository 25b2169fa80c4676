"""The streaming back end: ngspice in batch mode writes its binary raw output into a pipe, and the
worker reduces every capacitor as the points arrive, so memory does not grow with the run's length.

Shared mode keeps every saved vector in memory until the run ends (8 bytes per vector per time
point: about 1 GB at 1,000 capacitors x 67k points).  Here the worker keeps only:

- the measuring window (and one running-RMS span and one sample before it), for the spectrum,
  the RMS, the steady-state check and the window's plot envelope;
- the whole run's extremes of v and |i| (start-up peaks), and a 200-bucket min/max envelope of
  the run (the start-up plot);
- per-period statistics (mean, max, min of v; RMS of i) of the last periods of the run, for the
  steady-state trend, integrated as the points pass with the same trapezoids and interpolated
  period edges as ``measure.period_stats``.

The raw format (ngspice's ``-r`` output, binary): per analysis a text header ending in
``Binary:\\n`` naming the variables, then one row of float64 values per time point.  Into a pipe
ngspice cannot seek back to fill in "No. Points", so it writes the count after the rows instead;
the reader takes the operating point (always one row) and the transient (rows up to the end of
the stream, then the count, which is checked).
"""

from __future__ import annotations

import fcntl
import math
import os
import re
import select
import shutil
import signal
import subprocess
import time
from typing import Any, Callable

import numpy as np

from ..measure import PERIOD_SLACK, TREND_PERIODS, Envelope, SpectrumPlan, envelope, measure, segment_squares, settle_spacing
from .environment import minimal_environment
from .job import SimulationJob

RUN_BUCKETS = 200  # buckets of the whole-run envelope (start-up plot)
REDUCE_BYTES = 8 << 20  # reduce when this much has arrived (or a quarter second has passed)
F_SETPIPE_SZ = 1031  # fcntl: pipe capacity (Linux)


class RawFormatError(Exception):
    """The raw stream is not what ngspice writes."""


def shared_name(raw: str) -> str:
    """The shared-library name of a raw-file variable: ``v(dn3)`` -> ``dn3``, ``i(@c1[i])`` -> ``@c1[i]``,
    ``i(v1)`` -> ``v1#branch``."""
    low = raw.lower()
    if low.startswith("v(") and low.endswith(")"):
        return low[2:-1]
    if low.startswith("i(") and low.endswith(")"):
        inner = low[2:-1]
        return inner if inner.startswith("@") else inner + "#branch"
    return low


class RawStream:
    """Parses ngspice's binary raw output as it arrives: ``feed(data)`` returns the complete rows
    of each analysis, ``finish()`` checks the end."""

    def __init__(self) -> None:
        self.buf = bytearray()
        self.plots: list[tuple[str, list[str]]] = []  # (plot name, variable names)
        self.in_header = True
        self.width = 0
        self.rows = 0  # rows of the current plot

    def feed(self, data: bytes) -> list[tuple[int, np.ndarray]]:
        self.buf += data
        out: list[tuple[int, np.ndarray]] = []
        while True:
            if self.in_header:
                if not self._header():
                    return out
                continue
            n = len(self.buf) // self.width
            name = self.plots[-1][0]
            if name == "op":
                n = min(n, 1 - self.rows)  # an operating point is one row, then the next analysis
            if n <= 0:
                return out
            block = np.frombuffer(bytes(self.buf[:n * self.width]), dtype="<f8").reshape(n, -1)
            del self.buf[:n * self.width]
            self.rows += n
            out.append((len(self.plots) - 1, block))
            if name == "op" and self.rows == 1:
                self.in_header = True
            else:
                return out

    def _header(self) -> bool:
        # after a plot's rows ngspice writes its point count (it could not seek back): skip it
        m = re.match(rb"[0-9\s]*", bytes(self.buf[:32]))
        skip = m.end() if m else 0
        if skip and skip == len(self.buf):
            return False
        if skip:
            del self.buf[:skip]
        end = self.buf.find(b"Binary:\n")
        if end < 0:
            if len(self.buf) > 4 << 20:
                raise RawFormatError("no 'Binary:' line within 4 MB of header")
            if len(self.buf) >= 6 and not self.buf.startswith(b"Title:"):
                raise RawFormatError("the raw output does not start with a 'Title:' header")
            return False
        text = bytes(self.buf[:end]).decode("ascii", "replace")
        del self.buf[:end + len(b"Binary:\n")]
        # an analysis that failed at once leaves a header without rows: the last one is this plot's
        text = text[text.rfind("Title:"):] if "Title:" in text else text
        fields: dict[str, str] = {}
        names: list[str] = []
        lines = text.splitlines()
        for k, line in enumerate(lines):
            if line.startswith("Variables:"):
                names = [ln.split()[1] for ln in lines[k + 1:] if len(ln.split()) >= 2]
                break
            key, _, value = line.partition(":")
            fields[key.strip().lower()] = value.strip()
        flags = fields.get("flags", "")
        if "complex" in flags:
            raise RawFormatError("complex data in a transient raw output")
        count = int(fields.get("no. variables", "0") or 0)
        if count != len(names) or not names:
            raise RawFormatError(f"header names {len(names)} variables, says {count}")
        plot = fields.get("plotname", "").lower()
        kind = "op" if plot.startswith("operating point") else "tran" if plot.startswith("transient") else plot
        self.plots.append((kind, names))
        self.width = 8 * len(names)
        self.rows = 0
        self.in_header = False
        return True

    def finish(self) -> int:
        """The rows of the last plot; raises when what is left is not its point count."""
        if self.in_header:  # the stream ended inside a header: the analysis wrote no rows
            return 0
        rest = bytes(self.buf).strip()
        if rest and not (rest.isdigit() and int(rest) == self.rows):
            raise RawFormatError(f"{len(rest)} bytes after the last row that are not its point count")
        return self.rows


class Reducer:
    """Reduces every probed capacitor of one transient as blocks of rows arrive."""

    def __init__(self, job: SimulationJob, names: list[str]):
        index = {shared_name(n): k for k, n in enumerate(names)}
        if names[0].lower() != "time":
            raise RawFormatError("the transient's first variable is not time")
        self.missing = [f"{p.path}: {', '.join(v for v in (p.v_plus, p.v_minus, p.current) if v and v not in index)}"
                        for p in job.probes if any(v and v not in index for v in (p.v_plus, p.v_minus, p.current))]
        probes = job.probes
        self.vp = np.array([index.get(p.v_plus, 0) if p.v_plus else 0 for p in probes], dtype=np.int64)
        self.vn = np.array([index.get(p.v_minus, 0) if p.v_minus else 0 for p in probes], dtype=np.int64)
        self.mvp = np.array([1.0 if p.v_plus else 0.0 for p in probes])
        self.mvn = np.array([1.0 if p.v_minus else 0.0 for p in probes])
        self.ic = np.array([index.get(p.current, 0) for p in probes], dtype=np.int64)
        n = len(probes)
        self.tstop = job.tstop_s
        self.t0, self.t1 = job.window.bounds(job.tstop_s)  # the run is expected to end at tstop
        self.period = job.measure.period_s
        span = self.period if self.period and self.period > 0 else (self.t1 - self.t0) / 20
        self.spacing = settle_spacing(self.period, self.t0, self.t1)  # the steady-state trend's span
        self.keep_from = self.t0 - span
        self.vmax = np.full(n, -np.inf)
        self.vmin = np.full(n, np.inf)
        self.iabs = np.zeros(n)
        self.env = [np.full((RUN_BUCKETS, n), np.inf), np.full((RUN_BUCKETS, n), -np.inf),
                    np.full((RUN_BUCKETS, n), np.inf), np.full((RUN_BUCKETS, n), -np.inf)]
        self.filled = np.zeros(RUN_BUCKETS, dtype=bool)
        self.tail: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
        self.before: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None  # the last row before keep_from
        self.last: tuple[float, np.ndarray, np.ndarray] | None = None  # the previous block's last row
        self.t_first: float | None = None
        self.t_last = 0.0
        self.rows = 0
        # per-period statistics: boundaries fixed once the first time point is known
        self.edges: np.ndarray | None = None
        self.cum_v = np.zeros(n)  # trapezoid integrals from the first row to the last row seen
        self.cum_i2 = np.zeros(n)
        self.edge_cum_v: list[np.ndarray] = []
        self.edge_cum_i2: list[np.ndarray] = []
        self.edge_v: list[np.ndarray] = []  # v at each edge (interpolated)
        self.pmax: np.ndarray | None = None
        self.pmin: np.ndarray | None = None

    # -------------------------------------------------------------- blocks
    def add(self, rows: np.ndarray) -> None:
        t = rows[:, 0]
        v = rows[:, self.vp] * self.mvp - rows[:, self.vn] * self.mvn
        i = rows[:, self.ic]
        if self.t_first is None:
            self.t_first = float(t[0])
            self._plan_periods()
        self.rows += len(t)
        self.t_last = float(t[-1])
        np.maximum(self.vmax, v.max(axis=0), out=self.vmax)
        np.minimum(self.vmin, v.min(axis=0), out=self.vmin)
        np.maximum(self.iabs, np.abs(i).max(axis=0), out=self.iabs)
        self._envelope(t, v, i)
        # the trend integrals only matter from the first period edge on (differences between edges)
        if self.edges is not None and t[-1] >= self.edges[0]:
            self._periods(t, v, i)
        keep = t >= self.keep_from
        if not keep.all():
            k = int(np.flatnonzero(~keep)[-1])
            self.before = (t[k:k + 1].copy(), v[k:k + 1].copy(), i[k:k + 1].copy())
        if keep.any():
            self.tail.append((t[keep].copy(), v[keep], i[keep]))
        self.last = (float(t[-1]), v[-1].copy(), i[-1].copy())

    def _envelope(self, t, v, i) -> None:
        b = np.minimum(np.maximum((t / self.tstop * RUN_BUCKETS).astype(np.int64), 0), RUN_BUCKETS - 1)
        starts = np.flatnonzero(np.r_[True, b[1:] != b[:-1]])
        at = b[starts]
        for k, (arr, op, red) in enumerate(((v, np.minimum, np.minimum.reduceat), (v, np.maximum, np.maximum.reduceat),
                                            (i, np.minimum, np.minimum.reduceat), (i, np.maximum, np.maximum.reduceat))):
            self.env[k][at] = op(self.env[k][at], red(arr, starts, axis=0))
        self.filled[at] = True

    def _plan_periods(self) -> None:
        p = self.spacing
        if not p or p <= 0:
            return
        # as measure.period_stats: whole periods ending at the window's end, oldest first
        n = int(min(TREND_PERIODS, math.floor((self.t1 - self.t_first) / p + PERIOD_SLACK)))
        if n < 1:
            return
        # the oldest edge can land a rounding before the first sample: values there are the first sample's
        self.edges = np.maximum(self.t1 - p * np.arange(n, -1, -1, dtype=float), self.t_first)
        size = len(self.vp)
        self.pmax = np.full((n, size), -np.inf)
        self.pmin = np.full((n, size), np.inf)

    def _periods(self, t, v, i) -> None:
        """Carry the trapezoid integrals across the block; record them (and v) at period edges."""
        if self.last is not None:  # join the previous block's last row, so no segment is lost
            t = np.concatenate(([self.last[0]], t))
            v = np.vstack((self.last[1][None, :], v))
            i = np.vstack((self.last[2][None, :], i))
        dt = np.diff(t)[:, None]
        seg_v = 0.5 * (v[1:] + v[:-1]) * dt
        i2 = i * i
        seg_i2 = segment_squares(t, i)  # exact for the piecewise-linear current, as measure.time_rms
        cum_v = np.vstack((np.zeros((1, v.shape[1])), np.cumsum(seg_v, axis=0))) + self.cum_v
        cum_i2 = np.vstack((np.zeros((1, v.shape[1])), np.cumsum(seg_i2, axis=0))) + self.cum_i2
        edges = self.edges
        # edges inside this stretch of time: (t[0], t[-1]], or [t[0], ...] for the very first block
        lo = np.searchsorted(edges, t[0], side="left" if self.last is None else "right")
        # the run's last time can fall a rounding short of tstop: an edge that close counts as reached
        hi = np.searchsorted(edges, t[-1] + 1e-9 * self.tstop, side="right")
        for e in edges[lo:hi]:
            k = min(max(int(np.searchsorted(t, e, side="left")) - 1, 0), len(t) - 2) if len(t) > 1 else 0
            if len(t) == 1 or t[k + 1] == t[k]:
                ve, ie2, cv, ci = v[k], i2[k], cum_v[k], cum_i2[k]
            else:
                f = min(1.0, (e - t[k]) / (t[k + 1] - t[k]))
                ve = v[k] + f * (v[k + 1] - v[k])
                ie = i[k] + f * (i[k + 1] - i[k])
                ie2 = ie * ie
                cv = cum_v[k] + 0.5 * (v[k] + ve) * (e - t[k])
                ci = cum_i2[k] + (i2[k] + i[k] * ie + ie2) * (e - t[k]) / 3.0
            self.edge_v.append(ve)
            self.edge_cum_v.append(cv)
            self.edge_cum_i2.append(ci)
        # maxima and minima of the rows strictly inside each period
        own = slice(1, None) if self.last is not None else slice(0, None)
        tt, vv = t[own], v[own]
        which = np.searchsorted(edges, tt, side="right") - 1
        inside = (which >= 0) & (which < len(edges) - 1) & (tt > edges[np.clip(which, 0, len(edges) - 1)])
        if inside.any():
            w = which[inside]
            vin = vv[inside]
            starts = np.flatnonzero(np.r_[True, w[1:] != w[:-1]])
            at = w[starts]
            self.pmax[at] = np.maximum(self.pmax[at], np.maximum.reduceat(vin, starts, axis=0))
            self.pmin[at] = np.minimum(self.pmin[at], np.minimum.reduceat(vin, starts, axis=0))
        self.cum_v = cum_v[-1]
        self.cum_i2 = cum_i2[-1]

    # -------------------------------------------------------------- results
    def period_stats(self, k: int) -> np.ndarray | None:
        """The rows of ``measure.period_stats`` for capacitor ``k`` (None when they cannot be had)."""
        if self.edges is None or len(self.edge_v) != len(self.edges):
            return None
        p = self.spacing
        if not hasattr(self, "_edge_arrays"):  # (edges x capacitors), built once for every capacitor
            self._edge_arrays = (np.array(self.edge_v), np.array(self.edge_cum_v), np.array(self.edge_cum_i2))
        ev, cv, ci = (a[:, k] for a in self._edge_arrays)
        mean = np.diff(cv) / p
        rms = np.sqrt(np.maximum(0.0, np.diff(ci) / p))
        vmax = np.maximum(np.maximum(ev[:-1], ev[1:]), self.pmax[:, k])
        vmin = np.minimum(np.minimum(ev[:-1], ev[1:]), self.pmin[:, k])
        return np.column_stack((mean, vmax, vmin, rms))

    def window_time(self) -> np.ndarray:
        parts = ([self.before] if self.before is not None else []) + self.tail
        return np.concatenate([p[0] for p in parts])

    def window_column(self, k: int) -> tuple[np.ndarray, np.ndarray]:
        """Capacitor ``k``'s v and i over the kept window, one capacitor at a time (concatenating every
        capacitor at once would hold the window twice)."""
        parts = ([self.before] if self.before is not None else []) + self.tail
        return np.concatenate([p[1][:, k] for p in parts]), np.concatenate([p[2][:, k] for p in parts])

    def run_envelope(self, k: int) -> Envelope:
        at = np.flatnonzero(self.filled)
        centres = (at + 0.5) * self.tstop / RUN_BUCKETS
        return Envelope(centres, self.env[0][at, k], self.env[1][at, k], self.env[2][at, k], self.env[3][at, k],
                        np.full(len(at), np.nan))


def ngspice_program() -> str | None:
    return shutil.which("ngspice")


def program_fingerprint() -> str:
    """Identify the ngspice program (path, size, mtime) for the cache, without running it."""
    path = ngspice_program()
    if not path:
        return "no-ngspice-program"
    real = os.path.realpath(path)
    st = os.stat(real)
    return f"{real}:{st.st_size}:{st.st_mtime_ns}"


def run_streaming(job: SimulationJob, progress: Callable[[float], None] | None = None,
                  workdir: str | None = None) -> dict[str, Any]:
    """Run a job's deck in ngspice batch mode into a pipe and measure every probed capacitor."""
    from .shared import problems_in, warnings_in

    program = ngspice_program()
    if not program:
        return {"ok": False, "error": "the ngspice program is not installed (the streaming simulator needs it)"}
    workdir = workdir or os.getcwd()
    deck_path = os.path.join(workdir, "deck.cir")
    raw_path = os.path.join(workdir, "out.raw")
    log_path = os.path.join(workdir, "batch.log")
    init_path = os.path.join(workdir, ".spiceinit")
    with open(deck_path, "w", encoding="utf-8") as fh:
        fh.write(job.deck)
    if job.dialect and job.dialect.isalnum():  # read by ngspice from its working folder
        with open(init_path, "w", encoding="ascii") as fh:
            fh.write(f"set ngbehavior={job.dialect}\n")
    if os.path.exists(raw_path):
        os.unlink(raw_path)
    os.mkfifo(raw_path, 0o600)
    t_start = time.perf_counter()
    log = open(log_path, "wb")
    try:
        proc = subprocess.Popen([program, "-b", "-r", raw_path, deck_path], cwd=workdir, stdin=subprocess.DEVNULL,
                                stdout=log, stderr=subprocess.STDOUT, env=minimal_environment(workdir))
    finally:
        log.close()
    fd = os.open(raw_path, os.O_RDONLY | os.O_NONBLOCK)
    stream = RawStream()
    reducer: Reducer | None = None
    op: tuple[list[str], np.ndarray] | None = None
    pending: list[bytes] = []
    pending_bytes = 0
    last_reduce = time.monotonic()
    error = ""
    try:
        try:
            fcntl.fcntl(fd, F_SETPIPE_SZ, 1 << 20)
        except OSError:
            pass
        writer_seen = False
        while True:
            try:
                chunk = os.read(fd, 1 << 20)
            except BlockingIOError:
                chunk = None
            if chunk:
                writer_seen = True
                pending.append(chunk)
                pending_bytes += len(chunk)
                if len(chunk) < 1 << 18:
                    # a trickle: let ngspice fill the pipe a while rather than wake for every row
                    time.sleep(0.01)
            now = time.monotonic()
            ended = chunk == b"" and (writer_seen or proc.poll() is not None)
            if pending and (ended or pending_bytes >= REDUCE_BYTES or now - last_reduce >= 0.25):
                for plot, rows in stream.feed(b"".join(pending)):
                    kind, names = stream.plots[plot]
                    if kind == "op":
                        op = (names, rows[0])
                    elif kind == "tran":
                        if reducer is None:
                            reducer = Reducer(job, names)
                        reducer.add(rows)
                pending, pending_bytes, last_reduce = [], 0, now
                if reducer is not None and progress is not None:
                    progress(min(1.0, reducer.t_last / job.tstop_s))
            if ended:
                break
            if chunk is None:  # ngspice has the pipe open and is computing: wait for data
                select.select([fd], [], [], 0.25)
            elif chunk == b"":  # ngspice is still reading the deck and has not opened the pipe
                time.sleep(0.02)
        stream.finish()
    except RawFormatError as exc:
        error = f"cannot read ngspice's raw output: {exc}"
    finally:
        os.close(fd)
    try:
        code = proc.wait(timeout=30)
    except subprocess.TimeoutExpired:
        os.kill(proc.pid, signal.SIGKILL)
        code = proc.wait()
    sim_s = time.perf_counter() - t_start
    try:
        with open(log_path, "rb") as fh:
            messages = fh.read(4 << 20).decode("utf-8", "replace").splitlines()
    except OSError:
        messages = []
    for path in (raw_path, deck_path, init_path):
        if os.path.exists(path):
            os.unlink(path)
    problems = problems_in(messages)
    warnings = warnings_in(messages)
    if reducer is None or reducer.rows < 2:
        why = "; ".join(problems[:5]) or error or f"ngspice exited with code {code} without transient results"
        return {"ok": False, "error": f"transient stopped at 0 s of {job.tstop_s:.6g} s: {why}" if problems else why,
                "warnings": warnings}
    if error:
        return {"ok": False, "error": error + (": " + "; ".join(problems[:3]) if problems else ""),
                "warnings": warnings}
    if reducer.missing:
        return {"ok": False, "error": "ngspice did not produce vectors for " + "; ".join(reducer.missing[:5])}
    stop = job.tstop_s
    if reducer.t_last < stop * (1 - 1e-6):
        return {"ok": False, "error": f"transient stopped at {reducer.t_last:.6g} s of {stop:.6g} s"
                + (": " + "; ".join(problems[:5]) if problems else ""), "warnings": warnings}
    t0_m = time.perf_counter()
    result = measure_reduced(job, reducer, op[1] if op else None, {shared_name(n): k for k, n in enumerate(op[0])}
                             if op else {})
    result.update({"warnings": warnings, "load_seconds": 0.0, "sim_seconds": sim_s,
                   "measure_seconds": time.perf_counter() - t0_m, "simulator": "stream"})
    return result


def measure_reduced(job: SimulationJob, reducer: Reducer, op_row: np.ndarray | None,
                    op_index: dict[str, int]) -> dict[str, Any]:
    """Measure every probed capacitor from a finished Reducer (both simulators end here)."""
    window = job.window.bounds(reducer.t_last)
    if window[1] - window[0] <= 0:
        return {"ok": False, "error": f"the measuring window {window} is empty for a run ending at {reducer.t_last:.6g} s"}
    t = reducer.window_time()
    m = job.measure
    plan = SpectrumPlan.make(window[0], window[1], m.points)
    stresses, waves = [], {}
    for k, pr in enumerate(job.probes):
        v_dc = 0.0
        if op_row is not None:
            dc_p = float(op_row[op_index[pr.v_plus]]) if pr.v_plus and pr.v_plus in op_index else 0.0
            dc_n = float(op_row[op_index[pr.v_minus]]) if pr.v_minus and pr.v_minus in op_index else 0.0
            v_dc = dc_p - dc_n
        v, i = reducer.window_column(k)
        s = measure(pr.path, pr.spice_name, job.scenario, t, v, i, v_dc, window, harmonics=m.harmonics,
                    points=m.points, period=m.period_s, tolerance=m.tolerance, model=pr.model, esr_ohm=pr.esr_ohm,
                    esl_h=pr.esl_h, plan=plan, extremes=(reducer.vmax[k], reducer.vmin[k], reducer.iabs[k]),
                    stats=reducer.period_stats(k))
        stresses.append(s.as_dict())
        if m.buckets:  # a Monte Carlo sample (buckets 0) brings back no waveforms
            env = envelope(t, v, i, window[0], window[1], m.buckets, m.period_s)
            run_env = reducer.run_envelope(k)
            waves[pr.path] = {**env.as_arrays(), **{f"run_{key}": a for key, a in run_env.as_arrays().items()}}
    return {"ok": True, "stress": stresses, "waves": waves, "points": int(reducer.rows)}
