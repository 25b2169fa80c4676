"""Front-end benchmark: parse + flatten + graph of a generated 100k-element hierarchical netlist.

Target on a 2-core machine (issue: front end): <= 2 s and <= 500 MB peak.  Run with
`make bench` or `python benchmarks/frontend.py [--elements N] [--repeat K]`.  Each repeat runs
in a fresh subprocess so peak RSS is the front end's own.
"""

from __future__ import annotations

import argparse
import json
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

LEAF = """.subckt leaf in out vref
R1 in n1 {rs}
C1 n1 0 {cs}
R2 n1 out 100
C2 out 0 10n
L1 out n2 1u
R3 n2 vref 1k
D1 n2 vref dleaf
C3 n2 vref 1n
R4 vref 0 1MEG
C4 in 0 100p
.ends leaf
"""
CELL = """.subckt cell a b params: rs=1k cs=1u
X1 a m1 b leaf
X2 m1 m2 b leaf
X3 m2 m3 b leaf
X4 m3 m4 b leaf
R1 m4 b 10k
C1 m4 0 {cs*2}
R2 a b 1MEG
C2 a b 1n
R3 m1 0 1k
R4 m2 0 1k
R5 m3 0 1k
C3 m1 m3 1p
E1 e 0 m2 0 2
RE e 0 1k
.ends cell
"""


def generate(elements: int) -> str:
    per_cell = 4 * 10 + 10  # leaf elements + cell's own (X lines excluded)
    cells = max(1, elements // per_cell)
    lines = [f"generated board, {cells * per_cell} elements", ".param rs=1k cs=1u", ".model dleaf D(Is=1e-14)",
             "VIN in 0 DC 5", "RIN in bus 0.1"]
    lines += [LEAF, CELL]
    for i in range(cells):
        lines.append(f"XC{i} bus n{i} cell rs={{rs*{1 + i % 3}}}")
        lines.append(f"RL{i} n{i} 0 1k")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def one_run(path: str) -> dict:
    t0 = time.perf_counter()
    from derate.netlist import circuit_graph, flatten, lint, read_netlist
    t_import = time.perf_counter()
    netlist = read_netlist(path)
    t_parse = time.perf_counter()
    circuit = flatten(netlist)
    t_flat = time.perf_counter()
    graph = circuit_graph(circuit)
    t_graph = time.perf_counter()
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    lint(circuit, graph)
    t_lint = time.perf_counter()
    return {"lint_s": t_lint - t_graph, "elements": len(circuit.elements), "nets": len(graph.nets),
            "import_s": t_import - t0, "parse_s": t_parse - t_import, "flatten_s": t_flat - t_parse,
            "graph_s": t_graph - t_flat, "total_s": t_graph - t_import, "peak_rss_mb": peak_mb}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--elements", type=int, default=100_000)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--child", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        print(json.dumps(one_run(args.child)))
        return 0
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.cir"
        path.write_text(generate(args.elements))
        runs = []
        for _ in range(args.repeat):
            out = subprocess.run([sys.executable, __file__, "--child", str(path)], capture_output=True,
                                 text=True, check=True)
            runs.append(json.loads(out.stdout))
    med = {k: statistics.median(r[k] for r in runs) for k in runs[0]}
    print(f"front end: {int(med['elements'])} elements, {int(med['nets'])} nets, median of {len(runs)} runs")
    print(f"  parse {med['parse_s']:.3f} s  flatten {med['flatten_s']:.3f} s  graph {med['graph_s']:.3f} s  "
          f"total {med['total_s']:.3f} s (target <= 2 s)")
    print(f"  peak RSS {med['peak_rss_mb']:.0f} MB (target <= 500 MB); import {med['import_s']:.3f} s; "
          f"lint afterwards {med['lint_s']:.3f} s (not in the target)")
    ok = med["total_s"] <= 2.0 and med["peak_rss_mb"] <= 500
    print("  PASS" if ok else "  OVER TARGET")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
