"""Mutation testing of the judgement core: small wrong changes to the code, each of which the tests must catch.

    make mutation            # every module of the core (about 10 minutes on 2 cores)
    make mutation MUTATE=derate/checks/voltage.py

The core is what turns stress into verdicts: the checks, thermal.py (ripple weighting, self-heating,
life), policy.py, measure.py (waveforms to stress figures) and gate.py.  The mutants are made by
mutmut (a maintained mutation-testing library from the package index) in a copy of the repository
under a temporary folder, so nothing lands in the checkout; the fast tests that cover the core (none that starts a simulator worker: a mutant is measured in one process) run
against each mutant.

String literals that are prose (they hold a space: the words of a finding's message) are not
mutated: a message reworded is not a wrong formula.  Every other string is (policy keys, rule
ids, technology names, status words: a misspelt key is a wrong judgement).

A mutant that survives is either killed by a new test or explained in
tests/data/mutation/equivalent.yaml, with its kind:

- ``equivalent``: it changes nothing a review can observe (a default that every caller overrides, a
  shift that a standard deviation ignores, a branch no input reaches);
- ``tie``: it changes only what happens when two floating-point values are exactly equal, a case no
  measured input reaches with a meaning (``<`` against ``<=`` beside a tolerance);
- ``unpinned``: a tuning constant of a heuristic (how many multiples of the scatter count as a trend)
  or a figure's resolution, which no outside truth fixes; the behaviour on either side is tested
  with margin.

An entry names the function and the changed lines (mutmut's numbering moves whenever a function is
edited; the change does not), so an edit elsewhere keeps the list valid and a changed line needs its
reason again.  The score is killed / (mutants - equivalents and ties): unpinned survivors count
against it.  The run fails below 90 % or on any survivor not explained.  ``--skeleton FILE`` writes
the unexplained survivors as entries to fill in.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import yaml

REPO = Path(__file__).resolve().parents[1]
CORE = ["derate/checks/*", "derate/thermal.py", "derate/policy.py", "derate/measure.py", "derate/gate.py"]
TESTS = ["tests/checks", "tests/judge/test_maker_rules.py", "tests/test_measure.py", "tests/test_measure_rules.py",
         "tests/test_measure_maths.py",
         "tests/test_gate.py", "tests/test_policy_rules.py",
         "tests/test_policy.py"]
EQUIVALENT = REPO / "tests" / "data" / "mutation" / "equivalent.yaml"
THRESHOLD = 0.90

CONFIG = """
[tool.mutmut]
source_paths = ["derate"]
only_mutate = {only}
pytest_add_cli_args_test_selection = {tests}
pytest_add_cli_args = ["-p", "no:cacheprovider", "-q", "-x"]
also_copy = ["rules"]
"""

PATCH = '''
import mutmut.mutation.mutators as m

_strings = m.operator_string


def _no_prose(node):
    """Prose (a message's words: a string holding a space) is not mutated."""
    value = getattr(node, "value", "")
    if isinstance(value, str) and " " in value:
        return iter(())
    return _strings(node)


m.mutation_operators[:] = [(t, _no_prose if f is _strings else f) for t, f in m.mutation_operators]
m.operator_string = _no_prose
from mutmut.__main__ import cli
cli()
'''


def change_of(diff: str) -> str:
    """The changed lines of a mutant's diff, stripped (the key of an equivalent entry)."""
    out = []
    for line in diff.splitlines():
        if line.startswith(("---", "+++")):
            continue
        if line[:1] in "-+":
            out.append(line[0] + " " + " ".join(line[1:].split()))
    return "\n".join(out)


KINDS = ("equivalent", "tie", "unpinned")


def load_equivalents(path: Path) -> dict[tuple[str, str], str]:
    """{(function, change): kind} from the explanations file (a list of entries, each with a reason)."""
    data = yaml.safe_load(path.read_text()) if path.is_file() else None
    out: dict[tuple[str, str], str] = {}
    for n, entry in enumerate(data or []):
        if entry.get("kind") not in KINDS or not str(entry.get("why", "")).strip() or entry["why"] == "TODO":
            raise SystemExit(f"{path}: entry {n + 1} ({entry.get('function')}) needs a kind ({', '.join(KINDS)}) "
                             "and a reason")
        change = "\n".join(ln[0] + " " + " ".join(ln[1:].split()) for ln in str(entry["change"]).strip().splitlines()
                           if ln.strip())
        out[(entry["function"], change)] = entry["kind"]
    return out


def _toml_list(items: list[str]) -> str:
    return "[" + ", ".join(f'"{x}"' for x in items) + "]"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--mutate", nargs="*", default=None, help="files or globs to mutate (default: the core)")
    ap.add_argument("--keep", action="store_true", help="keep the work folder and print its path")
    ap.add_argument("--show", type=int, default=30, help="the diffs of this many survivors (default 30)")
    ap.add_argument("--skeleton", metavar="FILE", help="write the unexplained survivors as equivalents entries "
                    "(function, change, why: TODO) to FILE")
    args = ap.parse_args(argv)
    only = args.mutate or CORE
    work = Path(tempfile.mkdtemp(prefix="derate-mutation-"))
    try:
        for name in ("derate", "rules", "tests"):
            shutil.copytree(REPO / name, work / name, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
        text = (REPO / "pyproject.toml").read_text()
        (work / "pyproject.toml").write_text(text + CONFIG.format(only=_toml_list(only), tests=_toml_list(TESTS)))
        env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
        env.pop("DERATE_CACHE_DIR", None)
        run = subprocess.run([sys.executable, "-c", PATCH, "run"], cwd=work, env=env, capture_output=True, text=True)
        if run.returncode not in (0, 1):
            sys.stderr.write(run.stdout[-4000:] + run.stderr[-4000:])
            return 2
        listed = subprocess.run([sys.executable, "-c", PATCH, "results", "--all", "true"], cwd=work, env=env,
                                capture_output=True, text=True).stdout
        status: dict[str, str] = {}
        for line in listed.splitlines():
            m = re.match(r"\s*([\w.\-]+__mutmut_\d+):\s*(\w[\w ]*)", line)
            if m:
                status[m.group(1)] = m.group(2).strip()
        if not status or not any(v in ("killed", "survived") for v in status.values()):
            sys.stderr.write("mutmut ran no mutant to the end:\n" + listed[-2000:] + run.stdout[-3000:]
                             + run.stderr[-3000:])
            return 2
        equivalent = load_equivalents(EQUIVALENT)
        killed = [k for k, v in status.items() if v == "killed"]
        survived = [k for k, v in status.items() if v in ("survived", "no tests", "suspicious", "timeout")]
        diffs = {}
        for name in survived:
            diffs[name] = subprocess.run([sys.executable, "-c", PATCH, "show", name], cwd=work, env=env,
                                         capture_output=True, text=True).stdout

        def key(name: str) -> tuple[str, str]:
            return name.rsplit("__mutmut_", 1)[0], change_of(diffs[name])
        explained = [k for k in survived if key(k) in equivalent]
        unexplained = [k for k in survived if key(k) not in equivalent]
        if args.skeleton:
            entries = [{"function": key(k)[0], "change": key(k)[1] + "\n", "kind": "TODO", "why": "TODO"}
                       for k in unexplained]
            Path(args.skeleton).write_text(yaml.safe_dump(entries, sort_keys=False, allow_unicode=True, width=120))
        excluded = [k for k in explained if equivalent[key(k)] in ("equivalent", "tie")]
        denominator = len(status) - len(excluded)
        score = len(killed) / denominator if denominator else 1.0
        kinds = {kind: sum(1 for k in explained if equivalent[key(k)] == kind) for kind in KINDS}
        print(f"mutants: {len(status)}; killed {len(killed)}; survived {len(survived)} "
              f"({', '.join(f'{v} {k}' for k, v in kinds.items())}; {len(unexplained)} unexplained); "
              f"score {100 * score:.1f} %")
        by_function: dict[str, int] = {}
        for name in unexplained:
            by_function[name.rsplit("__mutmut_", 1)[0]] = by_function.get(name.rsplit("__mutmut_", 1)[0], 0) + 1
        stale = len(set(equivalent) - {key(k) for k in survived})
        if stale and not args.mutate:  # a partial run leaves the other modules' entries unmatched
            print(f"  ({stale} explanation(s) match no surviving mutant any more: a test kills them now)")
        for function, count in sorted(by_function.items(), key=lambda kv: -kv[1]):
            print(f"  {count:4d}  {function}")
        for name in unexplained[:args.show]:
            print(f"\nsurvivor {name} ({status[name]}):\n{diffs[name].strip()}")
        if len(unexplained) > args.show:
            print(f"\n({len(unexplained) - args.show} more survivors not shown; --show N shows more)")
        if args.keep:
            print(f"work folder: {work}")
        return 0 if score >= THRESHOLD and not unexplained else 1
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
