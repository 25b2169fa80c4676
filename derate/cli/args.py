"""Command-line arguments: the parser, flag validation, and flags -> ReviewOptions."""

from __future__ import annotations

import argparse
import math
from pathlib import Path
from typing import TYPE_CHECKING

from .. import __version__, exitcodes
from ..project import MAX_FILE_SCENARIOS, MAX_LIFE_H, MAX_SCENARIOS, MAX_SETTLE_BUDGET, MAX_TIMEOUT_S

if TYPE_CHECKING:
    from ..options import ReviewOptions


def _positive_seconds(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds, got {text!r}") from None
    if not math.isfinite(x) or x <= 0 or x > MAX_TIMEOUT_S:
        raise argparse.ArgumentTypeError(f"expected seconds above 0 and at most {MAX_TIMEOUT_S:g}, got {text!r}")
    return x


def _scenario_limit(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of scenarios, got {text!r}") from None
    if not 1 <= n <= MAX_SCENARIOS:
        raise argparse.ArgumentTypeError(f"expected 1 to {MAX_SCENARIOS}, got {text!r}")
    return n


def _settle_budget(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a multiple of the run, got {text!r}") from None
    if not math.isfinite(x) or not 1 <= x <= MAX_SETTLE_BUDGET:
        raise argparse.ArgumentTypeError(f"expected 1 to {MAX_SETTLE_BUDGET:g}, got {text!r}")
    return x


def _positive_hours(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of hours, got {text!r}") from None
    if not math.isfinite(x) or x <= 0 or x > MAX_LIFE_H:
        raise argparse.ArgumentTypeError(f"expected hours above 0 and at most {MAX_LIFE_H:g}, got {text!r}")
    return x


def _sample_count(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        n = 0
    if not 1 <= n <= 10_000:
        raise argparse.ArgumentTypeError(f"expected a whole number from 1 to 10000, got {text!r}")
    return n


def _seed(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        n = -1
    if not 0 <= n < 2 ** 63:
        raise argparse.ArgumentTypeError(f"expected a whole number from 0, got {text!r}")
    return n


def _percentile(text: str) -> float:
    try:
        p = float(text)
    except ValueError:
        p = -1.0
    if not 50.0 <= p <= 100.0:
        raise argparse.ArgumentTypeError(f"expected a percentile from 50 to 100, got {text!r}")
    return p


def _figure_count(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        n = -1
    if not 0 <= n <= 10_000:
        raise argparse.ArgumentTypeError(f"expected a whole number from 0 to 10000, got {text!r}")
    return n


def _web_address(text: str) -> str:
    from urllib.parse import urlsplit

    parts = urlsplit(text)
    if parts.scheme not in ("http", "https") or not parts.netloc or any(c.isspace() or ord(c) < 32 for c in text):
        raise argparse.ArgumentTypeError(f"expected an http:// or https:// address without spaces, got {text!r}")
    return text


def _job_count(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if not 1 <= n <= 256:
        raise argparse.ArgumentTypeError(f"expected 1 to 256 parallel simulations, got {n}")
    return n


def _add_netlist_safety(p: argparse.ArgumentParser) -> None:
    p.add_argument("--allow-control", action="store_true",
                   help="UNSAFE: accept .control blocks, '*#' lines and file-reading models in the netlist "
                        "(derate never runs control commands; only for netlists you trust)")
    p.add_argument("--allow-outside-includes", action="store_true",
                   help="follow .include/.lib paths that leave the project root")
    p.add_argument("--root", metavar="DIR",
                   help="project root that every path named in a project file must stay inside (default: the "
                        "repository holding the project, else its folder)")
    p.add_argument("--model-path", action="append", default=[], metavar="DIR",
                   help="folder (with subfolders) searched by file name for model files that an include names "
                        "by another machine's path (repeatable; the project's model_path is searched too)")
    p.add_argument("--dialect", metavar="MODES", help="ngspice compatibility mode for the deck (ngbehavior: ps, lt, "
                   "ltps, hs, ki, spe ...; default: the project's, else a 'set ngbehavior' in the netlist)")


def _add_output_flags(p: argparse.ArgumentParser) -> None:
    p.add_argument("--no-color", action="store_true", help="no colour in terminal output (NO_COLOR is honoured too)")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors (for CI)")


def _add_run_flags(p: argparse.ArgumentParser) -> None:
    p.add_argument("--jobs", "-j", type=_job_count, default=None, metavar="N",
                   help="scenarios simulated in parallel (default: number of cores)")
    p.add_argument("--no-cache", action="store_true", help="simulate even when the cache has the result")
    p.add_argument("--cache-dir", metavar="DIR", help="result cache folder (default: $DERATE_CACHE_DIR, else "
                   "$XDG_CACHE_HOME/derate or ~/.cache/derate; never inside the project)")
    p.add_argument("--timeout", type=_positive_seconds, metavar="S", help="overall time budget per scenario in "
                   "seconds (default: analysis.timeout_s, else 3600)")
    p.add_argument("--stall-timeout", type=_positive_seconds, metavar="S", help="stop a scenario whose simulated "
                   "time has not advanced for S seconds (default: analysis.stall_s, else 120)")
    p.add_argument("--scenario", action="append", default=[], metavar="NAME", help="run only this scenario "
                   "(repeatable; a name or glob; deck/scenario on a board of several decks)")
    p.add_argument("--only", action="append", default=[], metavar="REF", help="review only these capacitors "
                   "(repeatable or comma-separated; references or globs: C11, X1.C*); the circuit is simulated "
                   "whole, the others are listed as not reviewed")
    p.add_argument("--max-scenarios", type=_scenario_limit, metavar="N", help="run up to N scenarios (the project's "
                   "list, matrix or .step cards; default and most a project file gets: 200; up to 1000)")
    p.add_argument("--settle-budget", type=_settle_budget, metavar="X", help="simulate an unsettled run up to X times "
                   "its length to reach steady state (default: analysis.settle_budget, else 10; 1 to 100)")
    p.add_argument("--samples", type=_sample_count, default=None, metavar="N", help="Monte Carlo: N samples of "
                   "every corner, varying what 'tolerances:' in derate.yaml names")
    p.add_argument("--seed", type=_seed, default=1, metavar="S", help="the samples' seed (default 1): the same seed "
                   "gives the same samples on any runner")
    p.add_argument("--worst-case", nargs="?", const="auto", default=False, choices=("auto", "vertices", "sensitivity"),
                   metavar="METHOD", help="the worst case inside the tolerances: vertices (every vertex of the "
                   "tolerance box, 2^n runs per corner), sensitivity (each tolerance alone, then the worst vertex per "
                   "capacitor and figure), auto (default: vertices up to 4 tolerances); README 'Worst case'")
    p.add_argument("--gate-percentile", type=_percentile, default=100.0, metavar="P", help="judge a corner's samples "
                   "at this percentile of the stress (default 100: the worst sample; 99.73 is the 3-sigma one)")
    p.add_argument("--runner", choices=("local", "dask"), default=None, help="where scenarios run: local worker "
                   "processes (default) or a Dask cluster (an embedded LocalCluster of --jobs processes, or --scheduler)")
    p.add_argument("--scheduler", metavar="ADDRESS", default=None, help="a running Dask scheduler "
                   "(tcp://host:8786); implies --runner dask")
    p.add_argument("--simulator", choices=("auto", "shared", "stream"), default=None,
                   help="shared: ngspice's library, every point in memory; stream: ngspice in batch mode, reduced "
                   "as it runs, memory flat in run length; auto (default): stream for large runs")


def build_parser() -> argparse.ArgumentParser:
    from . import commands
    from ..report.formats import FORMATS

    parser = argparse.ArgumentParser(
        prog="derate",
        description="Capacitor derating review from a SPICE netlist, simulated with ngspice.",
        epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"derate {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    def command(name, help_text, func, **kw):
        p = sub.add_parser(name, help=help_text, epilog=exitcodes.EPILOG,
                           formatter_class=argparse.RawDescriptionHelpFormatter, **kw)
        p.set_defaults(func=func)
        return p

    p = command("lint", "check a netlist's topology and values without simulating", commands.cmd_lint)
    p.add_argument("netlists", nargs="+", metavar="NETLIST", help="SPICE netlist(s) (ngspice dialect)")
    p.add_argument("--format", choices=("text", "json", "sarif", "github"), default="text",
                   help="output format (default: text; sarif for code scanning, github for inline annotations)")
    p.add_argument("--skip-other-formats", action="store_true", help="skip files that are netlists of another "
                   "kind (a KiCad layout or XML netlist with a .net suffix) instead of failing (for hooks)")
    p.add_argument("--output", "-o", metavar="FILE", help="write the json, sarif or github output to FILE "
                   "(written whole or not at all) instead of stdout")
    _add_netlist_safety(p)
    _add_output_flags(p)

    p = command("measure", "simulate every scenario and print what each capacitor sees", commands.cmd_measure)
    p.add_argument("target", nargs="?", help="derate.yaml project file or a netlist with its own .tran "
                   "(default: the derate.yaml in this folder or a parent)")
    _add_run_flags(p)
    p.add_argument("--format", choices=("text", "json"), default="text", help="output format (default: text)")
    p.add_argument("--output", "-o", metavar="FILE", help="write the output to FILE (atomically) instead of stdout")
    _add_netlist_safety(p)
    _add_output_flags(p)

    p = command("check", "the whole review: lint, simulate, measure, apply the policy, gate, report", commands.cmd_check)
    p.add_argument("target", nargs="?", help="derate.yaml, or a netlist (then give --parts/--policy/--scenarios); "
                   "default: the derate.yaml in this folder or a parent")
    p.add_argument("--parts", action="append", default=[], metavar="FILE", help="parts file (repeatable)")
    p.add_argument("--bom", action="append", default=[], metavar="FILE", help="a BOM export (CSV; columns recognised "
                   "by their headers; repeatable)")
    p.add_argument("--schematic", action="append", default=[], metavar="FILE.kicad_sch",
                   help="a KiCad 6+ schematic whose capacitor fields give part data (repeatable)")
    p.add_argument("--policy", metavar="NAME|FILE", help="built-in policy name or policy file (default: the "
                   "project's, else industrial)")
    p.add_argument("--scenarios", metavar="FILE", help="YAML file with a 'scenarios:' list (and optionally 'analysis:')")
    p.add_argument("--mission-life", type=_positive_hours, metavar="HOURS",
                   help="required life in hours (overrides the project)")
    p.add_argument("--fail-on", choices=("error", "warning", "never"), help="lowest severity that fails the gate "
                   "(default: the project's, else error); never: write every report and exit 0 whatever the "
                   "findings (input errors and failed simulations keep their exit codes)")
    p.add_argument("--waivers", metavar="FILE", help="waivers file (default: the project's)")
    p.add_argument("--baseline", metavar="REPORT.json", help="fail only on findings new or worse than in this report")
    p.add_argument("--format", action="append", default=[], dest="formats", choices=tuple(FORMATS),
                   help="write a report in this format (repeatable)")
    p.add_argument("--output", "-o", metavar="PATH", help="report file (one format) or folder (several); "
                   "default: stdout for one format, else the current folder")
    p.add_argument("--annotate", metavar="OUT.cir", help="write a copy of the netlist with a stress comment after "
                   "every capacitor card")
    p.add_argument("--wide", action="store_true", help="every column in the terminal table (needs about 170 columns)")
    p.add_argument("--figures", type=_figure_count, default=None, metavar="N", help="near-limit capacitors drawn "
                   "in the HTML report, worst first (default 20; failing ones are always drawn, the rest listed)")
    p.add_argument("--report-url", metavar="URL", type=_web_address, help="where the HTML report will be "
                   "published, http(s) only (the Markdown summary links to it)")
    _add_run_flags(p)
    _add_netlist_safety(p)
    _add_output_flags(p)

    p = command("init", "write a derate.yaml (and parts.yaml for what no BOM or schematic gives) for a netlist",
                commands.cmd_init)
    p.add_argument("netlists", nargs="+", metavar="NETLIST",
                   help="the netlist; several: the decks of one board (a project with netlists:)")
    p.add_argument("--project", "-o", metavar="FILE.yaml", help="where to write the project file (default: derate.yaml "
                   "beside the first netlist); parts.yaml goes beside it")
    p.add_argument("--bom", action="append", default=[], metavar="FILE", help="a BOM export to take part data from")
    p.add_argument("--schematic", action="append", default=[], metavar="FILE.kicad_sch",
                   help="a KiCad schematic to take part data from")
    p.add_argument("--policy", metavar="NAME", default="industrial", help="policy to write (default: industrial)")
    p.add_argument("--force", action="store_true", help="overwrite existing files")
    _add_netlist_safety(p)
    _add_output_flags(p)

    p = command("explain", "what a check or lint rule does, its formula and sources", commands.cmd_explain)
    p.add_argument("rule", nargs="?", help="rule id (stress.voltage, voltage, topology.no-dc-path, ...); "
                   "none: list them all")
    _add_output_flags(p)

    p = command("cache", "show the result cache, or clear it", commands.cmd_cache)
    p.add_argument("action", nargs="?", choices=("info", "clear", "prune"), default="info",
                   help="info (default): folder, entries and size; clear: delete every entry; prune: apply the "
                        "age and size limits now")
    p.add_argument("--cache-dir", metavar="DIR", help="the cache folder (default: as for check)")
    _add_output_flags(p)

    p = command("policy", "list the built-in policies, or show a policy's values with their sources",
                commands.cmd_policy, aliases=["rules"])
    p.add_argument("policy", nargs="?", help="policy name or file")
    p.add_argument("--format", choices=("text", "json"), default="text")
    _add_output_flags(p)
    return parser


def options_from(args) -> "ReviewOptions":
    """The ReviewOptions a command's flags ask for."""
    from ..options import ReviewOptions

    return ReviewOptions(
        parts=tuple(Path(p) for p in getattr(args, "parts", []) or []),
        policy=getattr(args, "policy", None),
        scenarios=Path(args.scenarios) if getattr(args, "scenarios", None) else None,
        mission_life_h=getattr(args, "mission_life", None),
        fail_on=getattr(args, "fail_on", None),
        waivers=Path(args.waivers) if getattr(args, "waivers", None) else None,
        baseline=Path(args.baseline) if getattr(args, "baseline", None) else None,
        jobs=getattr(args, "jobs", None),
        use_cache=not getattr(args, "no_cache", False),
        cache_dir=Path(args.cache_dir) if getattr(args, "cache_dir", None) else None,
        timeout_s=getattr(args, "timeout", None),
        stall_s=getattr(args, "stall_timeout", None),
        settle_budget=getattr(args, "settle_budget", None),
        max_scenarios=getattr(args, "max_scenarios", None) or MAX_FILE_SCENARIOS,
        scenario_names=tuple(getattr(args, "scenario", None) or ()),
        only=tuple(getattr(args, "only", None) or ()),
        samples=getattr(args, "samples", None),
        seed=getattr(args, "seed", 1),
        worst_case=getattr(args, "worst_case", False),
        gate_percentile=getattr(args, "gate_percentile", 100.0),
        runner="dask" if getattr(args, "scheduler", None) else (getattr(args, "runner", None) or "local"),
        scheduler=getattr(args, "scheduler", None),
        simulator=getattr(args, "simulator", None),
        allow_control=getattr(args, "allow_control", False),
        allow_outside_includes=getattr(args, "allow_outside_includes", False),
        model_path=tuple(Path(p) for p in getattr(args, "model_path", []) or []),
        bom=tuple(Path(p) for p in getattr(args, "bom", []) or []),
        schematic=tuple(Path(p) for p in getattr(args, "schematic", []) or []),
        dialect=getattr(args, "dialect", None))
