"""Simulation benchmark: a generated board with >= 200 capacitors whose transient takes >= 2 s.

Reports, over several runs (medians):
- derate's end-to-end wall time (deck, simulate, measure every capacitor) against bare
  `ngspice -b -r` on the same deck (target <= 1.15);
- 4 scenarios on 2 workers against the same 4 run one after another (target <= 0.6 of serial);
- a re-run served from the cache (target <= 1 s);
- peak memory of the main process and of one worker.
Run with `make bench` or `python benchmarks/simulation.py [--caps N] [--repeat K]`.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def board(caps: int) -> str:
    """A line-fed board: many buck-like stages with LC filters and decoupling (caps capacitors)."""
    stages = max(1, -(-(caps - 1) // 3))  # three capacitors a stage, plus the bulk capacitor
    lines = [f"generated board, {3 * stages + 1} capacitors", ".param vin=24 fsw=100k",
             "VIN in 0 {vin}", "RIN in bus 0.05", "CBULK bus 0 470u",
             "VG g 0 PULSE(0 10 0 20n 20n {0.4/fsw} {1/fsw})",
             ".model swm SW(Ron=0.05 Roff=10MEG Vt=5 Vh=0.2)",
             ".model dfw D(Is=1e-6 Rs=0.02 N=1.1)"]
    for k in range(stages):
        lines += [
            f"S{k} bus sw{k} g 0 swm",
            f"D{k} 0 sw{k} dfw",
            f"L{k} sw{k} o{k} {22 + k % 5}u",
            f"C{k}a o{k} 0 {47 + k % 3 * 10}u",
            f"C{k}b o{k} 0 1u",
            f"R{k} o{k} f{k} 0.5",
            f"C{k}c f{k} 0 10u",
            f"RL{k} f{k} 0 {5 + k % 7}",
        ]
    return "\n".join(lines) + "\n"


# the overhead against bare ngspice is measured on one run per scenario: no switch-on run (the board is
# DC-fed: a review runs each scenario twice, and would compare two runs against one) and no longer
# settling runs (bare ngspice runs the deck once as written)
PROJECT = """netlist: board.cir
analysis:
  tran: {{step: 0.2u, stop: {stop}, max_step: 0.2u}}
  window: {{last: 1m}}
  timeout_s: 600
  power_up: "off"
  settle_budget: 1
scenarios:
{scenarios}
"""


def write_project(folder: Path, caps: int, stop: str, scenarios: int) -> Path:
    (folder / "board.cir").write_text(board(caps))
    sc = "\n".join(f"  - {{name: s{i}, params: {{vin: {20 + i}}}}}" for i in range(scenarios))
    (folder / "derate.yaml").write_text(PROJECT.format(stop=stop, scenarios=sc))
    return folder / "derate.yaml"


def run_derate(project: Path, jobs: int, cache: bool) -> tuple[float, dict]:
    code = f"""
import json, resource, time, sys
t0 = time.perf_counter()
import derate
p = derate.load_project({str(project)!r})
run = derate.measure(p, derate.ReviewOptions(jobs={jobs}, use_cache={cache},
                                             cache_dir=derate.load_project({str(project)!r}).folder / "cache"))
wall = time.perf_counter() - t0
assert not run.failed, [r.error for r in run.failed]
print(json.dumps({{"wall": wall, "caps": len(run.results[0].stresses), "points": run.results[0].points,
                  "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  "child_rss_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024}}))
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    import json
    data = json.loads(out.stdout.strip().splitlines()[-1])
    return data["wall"], data


def bare_ngspice(project: Path) -> float:
    import derate
    from derate.simulate.scenarios import prepare
    p = derate.load_project(project)
    nl, circuit = derate.read_circuit(p)
    (_, _, deck, _), *_ = prepare(p, nl, circuit)
    deck_path = project.parent / "bare.cir"
    deck_path.write_text(deck.text)
    t0 = time.perf_counter()
    subprocess.run(["ngspice", "-b", "-r", str(project.parent / "bare.raw"), str(deck_path)],
                   cwd=project.parent, capture_output=True, check=True)
    return time.perf_counter() - t0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--caps", type=int, default=200)
    ap.add_argument("--stop", default="3m")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    if not shutil.which("ngspice"):
        print("ngspice not installed (run `make test` or `make demo` first)")
        return 2
    ok = True
    with tempfile.TemporaryDirectory() as tmp:
        one = Path(tmp) / "one"
        one.mkdir()
        p1 = write_project(one, args.caps, args.stop, 1)
        bare = [bare_ngspice(p1) for _ in range(args.repeat)]
        ours = []
        info = {}
        for _ in range(args.repeat):
            wall, info = run_derate(p1, 1, False)
            ours.append(wall)
        b, o = statistics.median(bare), statistics.median(ours)
        ratio = o / b
        print(f"board: {info['caps']} capacitors, {info['points']} time points per scenario")
        print(f"  bare ngspice -b: {b:.2f} s   derate end-to-end (1 scenario): {o:.2f} s   ratio {ratio:.3f} "
              f"(target <= 1.15)")
        ok &= ratio <= 1.15 and b >= 2.0
        if b < 2.0:
            print("  (the transient took less than 2 s: raise --stop)")

        four = Path(tmp) / "four"
        four.mkdir()
        p4 = write_project(four, args.caps, args.stop, 4)
        serial = statistics.median(run_derate(p4, 1, False)[0] for _ in range(max(1, args.repeat - 1)))
        par, pinfo = zip(*(run_derate(p4, 2, False) for _ in range(max(1, args.repeat - 1))))
        parallel = statistics.median(par)
        print(f"  4 scenarios: serial {serial:.2f} s, 2 workers {parallel:.2f} s, ratio {parallel / serial:.3f} "
              f"(target <= 0.6)")
        ok &= parallel / serial <= 0.6
        run_derate(p4, 2, True)  # fill the cache
        hits = [run_derate(p4, 2, True)[0] for _ in range(args.repeat)]
        hit = statistics.median(hits)
        print(f"  cache-hit re-run of 4 scenarios: {hit:.2f} s (target <= 1 s, includes Python start-up)")
        ok &= hit <= 1.0
        print(f"  peak RSS: main process {pinfo[-1]['rss_mb']:.0f} MB, largest worker {pinfo[-1]['child_rss_mb']:.0f} MB")
    print("  PASS" if ok else "  OVER TARGET")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
