"""The derate command: parse arguments, call the stages, map errors to exit codes."""

from __future__ import annotations

import argparse
import math
import os
import signal
import sys
from dataclasses import replace
from pathlib import Path

from . import __version__
from . import exitcodes
from .errors import DerateError
from .project import MAX_LIFE_H, MAX_TIMEOUT_S
from .report.console import make_console


def _positive_seconds(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds, got {text!r}") from None
    if not math.isfinite(x) or x <= 0 or x > MAX_TIMEOUT_S:
        raise argparse.ArgumentTypeError(f"expected seconds above 0 and at most {MAX_TIMEOUT_S:g}, got {text!r}")
    return x


def _positive_hours(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of hours, got {text!r}") from None
    if not math.isfinite(x) or x <= 0 or x > MAX_LIFE_H:
        raise argparse.ArgumentTypeError(f"expected hours above 0 and at most {MAX_LIFE_H:g}, got {text!r}")
    return x


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


def _add_output_flags(p: argparse.ArgumentParser) -> None:
    p.add_argument("--no-color", action="store_true", help="no colour in terminal output (NO_COLOR is honoured too)")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors (for CI)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="derate",
        description="Capacitor derating review from a SPICE netlist, simulated with ngspice.",
        epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"derate {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("lint", help="check a netlist's topology and values without simulating",
                       epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="SPICE netlist (ngspice dialect)")
    p.add_argument("--format", choices=("text", "json"), default="text", help="output format (default: text)")
    _add_netlist_safety(p)
    _add_output_flags(p)
    p.set_defaults(func=cmd_lint)

    p = sub.add_parser("measure", help="simulate every scenario and print what each capacitor sees",
                       epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("target", nargs="?", help="derate.yaml project file or a netlist with its own .tran "
                   "(default: the derate.yaml in this folder or a parent)")
    _add_run_flags(p)
    p.add_argument("--format", choices=("text", "json"), default="text", help="output format (default: text)")
    p.add_argument("--output", "-o", metavar="FILE", help="write the output to FILE (atomically) instead of stdout")
    _add_netlist_safety(p)
    _add_output_flags(p)
    p.set_defaults(func=cmd_measure)

    p = sub.add_parser("check", help="the whole review: lint, simulate, measure, apply the policy, gate, report",
                       epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("target", nargs="?", help="derate.yaml, or a netlist (then give --parts/--policy/--scenarios); "
                   "default: the derate.yaml in this folder or a parent")
    p.add_argument("--parts", action="append", default=[], metavar="FILE", help="parts file (repeatable)")
    p.add_argument("--policy", metavar="NAME|FILE", help="built-in policy name or policy file (default: the "
                   "project's, else industrial)")
    p.add_argument("--scenarios", metavar="FILE", help="YAML file with a 'scenarios:' list (and optionally 'analysis:')")
    p.add_argument("--mission-life", type=_positive_hours, metavar="HOURS",
                   help="required life in hours (overrides the project)")
    p.add_argument("--fail-on", choices=("error", "warning"), help="lowest severity that fails the gate (default: error)")
    p.add_argument("--waivers", metavar="FILE", help="waivers file (default: the project's)")
    p.add_argument("--baseline", metavar="REPORT.json", help="fail only on findings new or worse than in this report")
    p.add_argument("--format", action="append", default=[], dest="formats",
                   choices=("json", "csv", "markdown", "html", "sarif", "junit"),
                   help="write a report in this format (repeatable)")
    p.add_argument("--output", "-o", metavar="PATH", help="report file (one format) or folder (several); "
                   "default: stdout for one format, else the current folder")
    p.add_argument("--annotate", metavar="OUT.cir", help="write a copy of the netlist with a stress comment after "
                   "every capacitor card")
    _add_run_flags(p)
    _add_netlist_safety(p)
    _add_output_flags(p)
    p.set_defaults(func=cmd_check)

    p = sub.add_parser("init", help="write a starter derate.yaml and parts.yaml for a netlist")
    p.add_argument("netlist")
    p.add_argument("--force", action="store_true", help="overwrite existing files")
    _add_netlist_safety(p)
    _add_output_flags(p)
    p.set_defaults(func=cmd_init)

    p = sub.add_parser("explain", help="what a check or lint rule does, its formula and sources")
    p.add_argument("rule", nargs="?", help="rule id (stress.voltage, voltage, topology.no-dc-path, ...); "
                   "none: list them all")
    _add_output_flags(p)
    p.set_defaults(func=cmd_explain)

    p = sub.add_parser("rules", help="list the built-in policies, or show a policy's values with their sources")
    p.add_argument("policy", nargs="?", help="policy name or file")
    p.add_argument("--format", choices=("text", "json"), default="text")
    _add_output_flags(p)
    p.set_defaults(func=cmd_rules)
    return parser


def _add_run_flags(p: argparse.ArgumentParser) -> None:
    p.add_argument("--jobs", "-j", type=_job_count, default=None, metavar="N",
                   help="scenarios simulated in parallel (default: number of cores)")
    p.add_argument("--no-cache", action="store_true", help="simulate even when the cache has the result")
    p.add_argument("--cache-dir", metavar="DIR", help="result cache folder (default: $DERATE_CACHE_DIR, else "
                   "$XDG_CACHE_HOME/derate or ~/.cache/derate; never inside the project)")
    p.add_argument("--timeout", type=_positive_seconds, metavar="S", help="wall-clock limit per scenario in "
                   "seconds (default: analysis.timeout_s, else 300)")


def _read_options(args):
    from .netlist import ReadOptions
    return ReadOptions(allow_control=args.allow_control, allow_outside_includes=args.allow_outside_includes,
                       root=args.root)


def cmd_lint(args) -> int:
    from .netlist import build_graph, lint, load_circuit
    from .report.lint_report import lint_json, render_lint_table

    circuit = load_circuit(args.netlist, _read_options(args))
    graph = build_graph(circuit)
    findings = lint(circuit)
    if args.format == "json":
        sys.stdout.write(lint_json(args.netlist, findings, len(circuit.elements), graph.number_of_nodes()))
    else:
        console = make_console(args.no_color, args.quiet)
        render_lint_table(console, args.netlist, findings, len(circuit.elements), graph.number_of_nodes())
    return exitcodes.FINDINGS if any(f.severity == "error" for f in findings) else exitcodes.PASS


def load_target(args):
    """Return (project, netlist, circuit) for a project file, a bare netlist, or the nearest derate.yaml."""
    from .netlist import ReadOptions, flatten, read_netlist
    from .project import find_project, load_project, project_for_netlist

    target = getattr(args, "target", None)
    if target is None:
        found = find_project()
        if found is None:
            raise DerateError("no derate.yaml in this folder or a parent; give a project file or a netlist")
        project = load_project(found, root=args.root)
    elif Path(target).suffix.lower() in (".yaml", ".yml"):
        project = load_project(target, root=args.root)
    else:
        project = project_for_netlist(target, root=args.root)
    if getattr(args, "timeout", None):
        project = replace(project, analysis=replace(project.analysis, timeout_s=args.timeout))
    options = ReadOptions(allow_control=args.allow_control, allow_outside_includes=args.allow_outside_includes,
                          root=str(project.include_root or project.confinement.root))
    netlist = read_netlist(project.netlist, options)
    return project, netlist, flatten(netlist)


def open_cache(args):
    """The result cache the flags ask for (None with --no-cache); an unusable --cache-dir is exit 2."""
    from .simulate.cache import Cache

    if args.no_cache:
        return None
    return Cache.open(Path(args.cache_dir) if args.cache_dir else None, explicit=bool(args.cache_dir))


def lint_gate(console, circuit) -> list:
    """Lint before simulating; return the findings (errors stop the run: ngspice would fail or stall)."""
    from .netlist import lint
    from .report.lint_report import render_lint_table

    findings = lint(circuit)
    if any(f.severity == "error" for f in findings):
        render_lint_table(console, circuit.netlist.path, findings, len(circuit.elements), len(circuit.nets()))
    return findings


def simulate(args, project, netlist, circuit, quiet: bool, parasitics=None, cache=None):
    """Run every scenario with a progress bar on stderr (none when quiet or not a terminal).

    ``parasitics`` ({capacitor path: Parasitics}, from part data) are simulated in series with
    the capacitors; they override the project's ``esr`` table.
    """
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from .simulate.runner import run_scenarios

    err = make_console(args.no_color, quiet=quiet, stderr=True)
    show = not quiet and err.is_terminal
    with Progress(TextColumn("simulating"), BarColumn(), TextColumn("{task.completed}/{task.total} scenarios"),
                  TimeElapsedColumn(), console=err, disable=not show, transient=True) as progress:
        task = progress.add_task("sim", total=len(project.scenarios))
        run = run_scenarios(project, netlist, circuit, jobs=args.jobs, cache=cache,
                            on_done=lambda r: progress.advance(task), parasitics=parasitics)
    err_console = make_console(args.no_color, quiet=quiet, stderr=True)
    for note in run.notes:
        err_console.print(f"note: {_escape(note)}")
    for res in run.failed:
        err_console = make_console(args.no_color, stderr=True)
        err_console.print(f"[bold red]simulation failed[/] in scenario {res.scenario.name}: {_escape(res.error)}")
    return run


def cmd_measure(args) -> int:
    from .fileio import write_output
    from .report.stress_table import measurements_json, render_measurements

    console = make_console(args.no_color, args.quiet)
    project, netlist, circuit = load_target(args)
    if args.output:
        check_writable([Path(args.output)])
    cache = open_cache(args)
    findings = lint_gate(console, circuit)
    if any(f.severity == "error" for f in findings):
        return exitcodes.FINDINGS
    run = simulate(args, project, netlist, circuit, args.quiet, cache=cache)
    if args.format == "json":
        text = measurements_json(run)
        if args.output:
            write_output(args.output, text)
        else:
            sys.stdout.write(text)
    else:
        if args.output:
            from io import StringIO
            from rich.console import Console
            buf = StringIO()
            render_measurements(Console(file=buf, width=160, no_color=True), run)
            write_output(args.output, buf.getvalue())
        else:
            render_measurements(console, run)
    return exitcodes.SIMULATION if run.failed else exitcodes.PASS


def cmd_check(args) -> int:
    from .pipeline import run_check, write_outputs

    console = make_console(args.no_color, args.quiet)
    review, early = run_check(args, console)
    if early is not None:
        return early
    single_stdout = len(args.formats) == 1 and not args.output
    if not single_stdout:
        from .report.terminal import render_review
        render_review(console, review)
    write_outputs(args, review, console)
    return review.verdict.exit_code


def cmd_init(args) -> int:
    from .starter import write_starter

    console = make_console(args.no_color, args.quiet)
    for path in write_starter(Path(args.netlist), _read_options(args), force=args.force):
        console.print(f"wrote {path}")
    return exitcodes.PASS


def cmd_explain(args) -> int:
    from .report.explain import explain

    console = make_console(args.no_color, args.quiet)
    return explain(console, args.rule)


def cmd_rules(args) -> int:
    from .report.explain import show_policies

    console = make_console(args.no_color, args.quiet)
    return show_policies(console, args.policy, args.format)


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return exitcodes.USAGE
    err = make_console(getattr(args, "no_color", False), stderr=True)
    previous = _terminate_as_interrupt()
    try:
        return args.func(args)
    except DerateError as exc:
        from .errors import UnsafeNetlistError
        label = "unsafe netlist" if isinstance(exc, UnsafeNetlistError) else "error"
        err.print(f"[bold red]{label}:[/] {_escape(_printable(str(exc)))}")
        return exc.exit_code
    except KeyboardInterrupt:
        err.print("interrupted")
        return exitcodes.INTERRUPTED
    except BrokenPipeError:
        return exitcodes.PASS
    except Exception as exc:  # a bug: one line, its own exit code, never the "findings" code
        if os.environ.get("DERATE_DEBUG"):
            import traceback
            traceback.print_exc()
        err.print(f"[bold red]internal error:[/] {_escape(type(exc).__name__)}: {_escape(_printable(str(exc))[:300])} "
                  "(a bug in derate; please report it with the command that caused it; DERATE_DEBUG=1 shows "
                  "the traceback)")
        return exitcodes.INTERNAL
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _terminate_as_interrupt():
    """Turn SIGTERM into KeyboardInterrupt, so temporary files are removed and workers stopped."""
    def handler(signum, frame):
        raise KeyboardInterrupt
    try:
        return signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread (an embedding application): leave signals alone
        return None


def _printable(text: str) -> str:
    """Text from files with terminal control characters made visible (no escape-sequence injection)."""
    return "".join(ch if ch in "\n\t" or (ord(ch) >= 32 and ord(ch) != 127) else f"\\x{ord(ch):02x}"
                   for ch in text)


def check_writable(paths) -> None:
    """Refuse, before any simulation, an output that cannot be written (exit 2)."""
    from .errors import DataError

    for path in paths:
        path = Path(path)
        if path.is_dir():
            raise DataError("the output is a folder; expected a file name", str(path))
        folder = path.parent
        while not folder.exists() and folder != folder.parent:
            folder = folder.parent
        if not folder.is_dir():
            raise DataError(f"cannot create the output: '{folder}' is a file, not a folder", str(path))
        if not os.access(folder, os.W_OK | os.X_OK):
            raise DataError(f"cannot write the output: no permission to write in '{folder}'", str(path))


def _escape(text: str) -> str:
    from rich.markup import escape
    return escape(text)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
