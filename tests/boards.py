"""Small boards of our own for end-to-end tests: write a project, review it with real ngspice, and run
the same circuit (or its discrete equivalent) in bare ngspice for the outside truth.

The truth side never goes through derate: the deck is written by the test, run by ``ngspice -b`` in
its own process, and read from ngspice's own ``.meas`` lines.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import yaml

import derate
from derate.simulate.runner import LocalRunner


def write_board(folder: Path, netlist: str, project: dict | None = None, parts: dict | None = None,
                policy: dict | str | None = None) -> Path:
    """Write board.cir, parts.yaml, policy.yaml and derate.yaml into ``folder``; return the project file."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "board.cir").write_text(netlist)
    doc = {"netlist": "board.cir", **(project or {})}
    if parts is not None:
        (folder / "parts.yaml").write_text(yaml.safe_dump({"parts": parts}, sort_keys=False))
        doc["parts"] = "parts.yaml"
    if isinstance(policy, str):  # a built-in policy by name
        doc["policy"] = policy
    elif policy is not None:
        (folder / "policy.yaml").write_text(yaml.safe_dump(policy, sort_keys=False))
        doc["policy"] = "policy.yaml"
    (folder / "derate.yaml").write_text(yaml.safe_dump(doc, sort_keys=False))
    return folder / "derate.yaml"


def review_board(folder: Path, netlist: str, project: dict | None = None, parts: dict | None = None,
                 policy: dict | str | None = None, pool=None, **options) -> derate.Review:
    """Write a board and review it (real ngspice; no result cache unless asked)."""
    path = write_board(folder, netlist, project, parts, policy)
    options.setdefault("use_cache", False)
    runner = LocalRunner(pool=pool) if pool is not None else None
    return derate.review(derate.load_project(path), derate.ReviewOptions(**options), runner=runner)


def finding(review: derate.Review, capacitor: str, rule: str):
    """The finding of ``rule`` for ``capacitor`` (AssertionError when there is none)."""
    summary = next(c for c in review.assessment.capacitors if c.path == capacitor)
    got = summary.finding(rule)
    assert got is not None, (capacitor, rule, [(f.rule, f.message) for f in summary.findings])
    return got


def summary(review: derate.Review, capacitor: str):
    return next(c for c in review.assessment.capacitors if c.path == capacitor)


_MEAS = re.compile(r"^(\w+)\s*=\s*([-+0-9.eE]+)", re.M)


def bare_ngspice(folder: Path, deck: str) -> dict[str, float]:
    """Run ``deck`` in bare ngspice (batch mode, its own process) and return its ``.meas`` results
    ({name: value}, names lower case)."""
    program = shutil.which("ngspice")
    assert program, "the ngspice program is not installed; run `make test`"
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "truth.cir"
    path.write_text(deck)
    out = subprocess.run([program, "-b", str(path)], cwd=folder, capture_output=True, text=True, timeout=300,
                         env={"PATH": os.environ.get("PATH", "/usr/bin:/bin"), "HOME": str(folder)})
    got = {m.group(1).lower(): float(m.group(2)) for m in _MEAS.finditer(out.stdout)}
    assert got, f"ngspice printed no .meas results:\n{out.stdout[-2000:]}\n{out.stderr[-2000:]}"
    return got


def bare_ngspice_vectors(folder: Path, deck: str, vectors: list[str]) -> dict[str, tuple]:
    """Run ``deck`` (without its ``.end``) in bare ngspice and return each vector's samples as written by
    ngspice's own ``wrdata``: {vector: (time array, value array)}."""
    import numpy as np

    program = shutil.which("ngspice")
    assert program, "the ngspice program is not installed; run `make test`"
    folder.mkdir(parents=True, exist_ok=True)
    body = "\n".join(ln for ln in deck.rstrip("\n").splitlines() if ln.strip().lower() != ".end")
    text = (body + "\n.save " + " ".join(vectors) + "\n.control\nrun\nwrdata samples.txt " + " ".join(vectors)
            + "\n.endc\n.end\n")
    (folder / "samples.cir").write_text(text)
    (folder / "samples.txt").unlink(missing_ok=True)  # never read an earlier run's samples
    subprocess.run([program, "-b", "samples.cir"], cwd=folder, capture_output=True, text=True, timeout=300,
                   env={"PATH": os.environ.get("PATH", "/usr/bin:/bin"), "HOME": str(folder)})
    data = np.loadtxt(folder / "samples.txt", ndmin=2)
    return {name: (data[:, 2 * k], data[:, 2 * k + 1]) for k, name in enumerate(vectors)}


def exact_rms(t, y, a: float, b: float) -> float:
    """The RMS over [a, b] of the piecewise-linear waveform through the samples: each segment from y0 to
    y1 over dt contributes dt (y0^2 + y0 y1 + y1^2) / 3 (the integral of a straight line squared)."""
    import numpy as np

    ya, yb = np.interp(a, t, y), np.interp(b, t, y)
    inside = (t > a) & (t < b)
    tt = np.concatenate(([a], t[inside], [b]))
    yy = np.concatenate(([ya], y[inside], [yb]))
    y0, y1 = yy[:-1], yy[1:]
    return float(np.sqrt(np.sum(np.diff(tt) * (y0 * y0 + y0 * y1 + y1 * y1) / 3.0) / (b - a)))
