"""Run every benchmark (`make bench`); each prints its figures and whether it meets its target."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).parent
BENCHMARKS = ["frontend.py", "simulation.py"]


def main() -> int:
    worst = 0
    for name in BENCHMARKS:
        print(f"== {name}", flush=True)
        worst = max(worst, subprocess.run([sys.executable, str(HERE / name)]).returncode)
    return worst


if __name__ == "__main__":
    sys.exit(main())
