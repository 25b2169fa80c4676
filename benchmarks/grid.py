"""Scale benchmark: boards of 200 / 1,000 / 3,000 capacitors x a short and a long run.

For every cell, in the same run and each in its own session (so an automatic CPU group treats them
alike):
- bare ngspice: `ngspice -b deck.cir` (everything in memory) and `ngspice -b -r raw deck.cir`
  (streaming to a file): CPU seconds and peak memory;
- derate: `derate check --no-cache` of the same board (deck, simulate, measure, assess, JSON and
  HTML reports), with the simulator chosen by size (auto) or forced: total CPU seconds of derate and
  its workers, peak memory of the main process, of the worker and of the streaming ngspice;
- the report stage alone, for a board where every capacitor is near its limit: HTML size and CPU.

Run with `make bench-grid` or `python benchmarks/grid.py [--caps 200,1000] [--runs short,long]
[--simulator auto|shared|stream]`.  Prints a Markdown table (the README's performance section).
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

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
from simulation import board  # noqa: E402  (the generated line-fed board)

RUNS = {"short": "2m", "long": "20m"}

PROJECT = """netlist: board.cir
parts: parts.yaml
analysis:
  tran: {{step: 0.2u, stop: {stop}, max_step: 0.2u}}
  window: {{last: 0.5m}}
  timeout_s: 86400
  simulator: {simulator}
  power_up: "off"    # one run per scenario, as bare ngspice runs the deck (simulation.py says why)
  settle_budget: 1
"""

WRAPPER = """
import json, resource, sys, time
t0 = time.process_time()
from derate.cli import main
code = main(sys.argv[1:])
print(json.dumps({"code": code, "main_peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}),
      file=sys.stderr)
"""


def _session(args: list[str], cwd: Path, stdout=subprocess.DEVNULL) -> tuple[float, float, float, str]:
    """Run in a new session; return (CPU seconds of it and its waited descendants, peak MB, wall, stderr)."""
    t0 = time.monotonic()
    proc = subprocess.Popen(args, cwd=cwd, stdout=stdout, stderr=subprocess.PIPE, start_new_session=True)
    err = proc.stderr.read().decode("utf-8", "replace")
    _, status, ru = os.wait4(proc.pid, 0)
    if os.waitstatus_to_exitcode(status) not in (0, 1):
        raise RuntimeError(f"{' '.join(args[:3])} failed: {err[-2000:]}")
    return ru.ru_utime + ru.ru_stime, ru.ru_maxrss / 1024, time.monotonic() - t0, err


def _parts(caps_refs: list[str], rated: str = "100") -> str:
    return "parts:\n" + "".join(f"  {r}: {{technology: ceramic-class1, rated_voltage_v: {rated}}}\n" for r in caps_refs)


def _refs(text: str) -> list[str]:
    return [ln.split()[0] for ln in text.splitlines() if ln[:1] in "Cc" and len(ln.split()) >= 3]


def cell(folder: Path, caps: int, run: str, simulator: str) -> dict:
    folder.mkdir(parents=True)
    net = board(caps)
    (folder / "board.cir").write_text(net)
    (folder / "parts.yaml").write_text(_parts(_refs(net)))
    (folder / "derate.yaml").write_text(PROJECT.format(stop=RUNS[run], simulator=simulator))
    import derate
    from derate.simulate.scenarios import prepare
    project = derate.load_project(folder / "derate.yaml")
    netlist, circuit = derate.read_circuit(project)
    (_, _, deck, job), = prepare(project, netlist, circuit)
    (folder / "deck.cir").write_text(deck.text)
    bare_cpu, bare_mb, bare_wall, _ = _session(["ngspice", "-b", "deck.cir"], folder)
    raw_cpu, raw_mb, _, _ = _session(["ngspice", "-b", "-r", "bare.raw", "deck.cir"], folder)
    raw_size = (folder / "bare.raw").stat().st_size
    (folder / "bare.raw").unlink()
    cpu, wrapper_mb, wall, err = _session(
        [sys.executable, "-c", WRAPPER, "check", "--no-cache", "--quiet", "derate.yaml",
         "--format", "json", "--format", "html", "--output", "out/"], folder)
    info = json.loads(err.strip().splitlines()[-1])
    report = json.loads((folder / "out" / "derate-report.json").read_text())
    sc = report["scenarios"][0]
    return {"caps": len(report["capacitors"]), "run": run, "points": sc["run"].get("points"),
            "simulator": sc["run"].get("simulator"), "bare_cpu": bare_cpu, "bare_mb": bare_mb, "bare_wall": bare_wall,
            "bare_stream_cpu": raw_cpu, "bare_stream_mb": raw_mb, "raw_mb": raw_size / 2 ** 20,
            "derate_cpu": cpu, "derate_wall": wall, "main_mb": info["main_peak_mb"],
            "worker_mb": sc["run"].get("worker_peak_mb"), "ngspice_mb": sc["run"].get("ngspice_peak_mb"),
            "html_mb": (folder / "out" / "derate-report.html").stat().st_size / 2 ** 20}


# thermal data for the self-heating check (ripple-carrying capacitors need it to be judged at all);
# an ESR this small leaves the stresses as they were; the ratings change, the deck does not
THERMAL = ", rated_temperature_c: 125, thermal_resistance_c_per_w: 2, esr_ohm: 0.0002"


def report_stage(folder: Path, caps: int) -> dict:
    """Every capacitor near its limit: the HTML's size and the report stage's CPU next to the simulation's."""
    import derate
    from derate.review import as_record

    folder.mkdir(parents=True)
    net = board(caps)
    (folder / "board.cir").write_text(net)
    (folder / "parts.yaml").write_text(_parts(_refs(net)).replace("}\n", THERMAL + "}\n"))
    (folder / "derate.yaml").write_text(PROJECT.format(stop=RUNS["short"], simulator="auto"))
    opts = derate.ReviewOptions(use_cache=True, cache_dir=folder.parent / "report-cache")
    run = derate.measure(derate.load_project(folder / "derate.yaml"), opts)
    # ratings that put every capacitor at 95 % of what the industrial policy allows (60 % for ceramics)
    peaks = {s.capacitor: max(abs(s.v_max_v), abs(s.v_min_v)) for s in run.results[0].stresses}
    (folder / "parts.yaml").write_text("parts:\n" + "".join(
        f"  {ref}: {{technology: ceramic-class1, rated_voltage_v: {max(peaks[ref], 0.01) / 0.6 / 0.95:.6g}"
        + THERMAL + "}\n" for ref in peaks))
    review = derate.review(derate.load_project(folder / "derate.yaml"), opts)  # served from the cache
    for _ in range(2):  # a rating band with another factor: scale each rating by what its ratio says
        rated = {c["reference"]: c["v_rated_v"] for c in review.record["capacitors"]}
        ratio = {c["reference"]: (c.get("governing") or {}).get("ratio") for c in review.record["capacitors"]}
        (folder / "parts.yaml").write_text("parts:\n" + "".join(
            f"  {ref}: {{technology: ceramic-class1, rated_voltage_v: {rated[ref] * (ratio[ref] or 0.95) / 0.95:.6g}"
            + THERMAL + "}\n" for ref in rated))
        review = derate.review(derate.load_project(folder / "derate.yaml"), opts)
    from derate.report.formats import FORMATS
    t0 = time.process_time()
    rec = as_record(review)
    rendered = {name: fmt.render(review) for name, fmt in FORMATS.items()}  # every format, as `check` writes them
    cpu = time.process_time() - t0
    html = rendered["html"]
    near = sum(1 for c in rec["capacitors"] if c["status"] == "near")
    sim_cpu = sum((r.resources.get("sim_seconds") or 0) for r in review.run.results) or None
    return {"caps": len(rec["capacitors"]), "near": near, "html_mb": len(html.encode()) / 2 ** 20,
            "report_cpu": cpu, "sim_seconds": sim_cpu}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--caps", default="200,1000,3000")
    ap.add_argument("--runs", default="short,long")
    ap.add_argument("--simulator", default="auto", choices=("auto", "shared", "stream"))
    ap.add_argument("--report-caps", type=int, default=1000, help="board size for the report-stage figure (0: skip)")
    args = ap.parse_args(argv)
    if not shutil.which("ngspice"):
        print("ngspice not installed (run `make test` or `make demo` first)")
        return 2
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for caps in [int(c) for c in args.caps.split(",") if c]:
            for run in args.runs.split(","):
                r = cell(Path(tmp) / f"{caps}-{run}", caps, run, args.simulator)
                rows.append(r)
                print(json.dumps(r), flush=True)
        print()
        print("| capacitors | run | points | simulator | bare ngspice CPU s (peak MB) | bare -r CPU s (peak MB) | "
              "derate CPU s | CPU ratio | derate main / worker / ngspice MB |")
        print("|---|---|---|---|---|---|---|---|---|")
        for r in rows:
            ng = f"{r['ngspice_mb']:.0f}" if r["ngspice_mb"] else "—"
            print(f"| {r['caps']} | {r['run']} | {r['points']:,} | {r['simulator']} | {r['bare_cpu']:.1f} "
                  f"({r['bare_mb']:.0f}) | {r['bare_stream_cpu']:.1f} ({r['bare_stream_mb']:.0f}) | "
                  f"{r['derate_cpu']:.1f} | {r['derate_cpu'] / r['bare_cpu']:.2f} | "
                  f"{r['main_mb']:.0f} / {r['worker_mb']:.0f} / {ng} |")
        if args.report_caps:
            s = report_stage(Path(tmp) / "report", args.report_caps)
            print()
            print(f"report stage, {s['caps']} capacitors ({s['near']} near their limit): HTML {s['html_mb']:.2f} MB; "
                  f"every format rendered in {s['report_cpu']:.2f} CPU-s (simulation {s['sim_seconds']:.1f} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
