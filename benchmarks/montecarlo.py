"""Monte Carlo benchmark: N samples of one corner of the example board on the local worker pool.

Measures, each run in its own session: one plain run of the corner (wall, CPU); N samples with
`--jobs 2` (wall, CPU of derate and its workers, peak memory of the client process); and the same
for a tenth of the samples, so the client's memory can be compared (it must not grow with the
number of samples beyond the stress records).  Target: N samples take at most 0.6 of N plain runs.

Run with `make bench-mc` or `python benchmarks/montecarlo.py [--samples 100] [--runner local|dask]`.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

EXAMPLE = Path(__file__).parents[1] / "examples" / "irrigation-controller"
WRAPPER = """
import json, resource, sys
from derate.cli import main
code = main(sys.argv[1:])
print(json.dumps({"code": code, "client_peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}),
      file=sys.stderr)
"""


def _board(folder: Path) -> Path:
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    text = (folder / "derate.yaml").read_text()
    head, tail = text[:text.index("scenarios:")], text[text.index("parts: parts.yaml"):]
    tail = tail.replace("  profile: {low-line-cold: 0.15, nominal: 0.60, high-line-hot: 0.25}   # share of the "
                        "years in each corner\n", "")
    (folder / "derate.yaml").write_text(
        head + "scenarios:\n  - {name: high-line-hot, params: {vac_rms: 26.4}, temperature_c: 60}\n" + tail)
    return folder / "derate.yaml"


def _run(args: list[str], cwd: Path) -> dict:
    t0 = time.monotonic()
    proc = subprocess.Popen([sys.executable, "-c", WRAPPER, *args], cwd=cwd, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, start_new_session=True)
    err = proc.stderr.read().decode("utf-8", "replace")
    _, status, ru = os.wait4(proc.pid, 0)
    info = json.loads(err.strip().splitlines()[-1])
    if info["code"] not in (0, 1):
        raise RuntimeError(err[-2000:])
    return {"wall": time.monotonic() - t0, "cpu": ru.ru_utime + ru.ru_stime, **info}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=100)
    ap.add_argument("--runner", default="local", choices=("local", "dask"))
    args = ap.parse_args(argv)
    if not shutil.which("ngspice"):
        print("ngspice not installed (run `make test` or `make demo` first)")
        return 2
    with tempfile.TemporaryDirectory() as tmp:
        project = _board(Path(tmp) / "board")
        common = ["check", "--quiet", "--no-cache", str(project), "--format", "json", "--output", "r.json"]
        one = _run(common + ["--jobs", "1"], Path(tmp))
        small = _run(common + ["--jobs", "2", "--runner", args.runner, "--samples", str(max(1, args.samples // 10))],
                     Path(tmp))
        many = _run(common + ["--jobs", "2", "--runner", args.runner, "--samples", str(args.samples)], Path(tmp))
    n = args.samples
    ratio = many["wall"] / (n * one["wall"])
    print(f"one run of the corner: {one['wall']:.1f} s wall, {one['cpu']:.1f} CPU-s")
    print(f"{n} samples, 2 workers ({args.runner}): {many['wall']:.1f} s wall, {many['cpu']:.1f} CPU-s; "
          f"{ratio:.2f} of {n} plain runs' wall time (target <= 0.6)")
    print(f"client peak memory: {small['client_peak_mb']:.0f} MB with {max(1, n // 10)} samples, "
          f"{many['client_peak_mb']:.0f} MB with {n}")
    return 0 if ratio <= 0.6 else 1


if __name__ == "__main__":
    sys.exit(main())
