"""The commands: each maps its flags to the library and its result to output and an exit code."""

from __future__ import annotations

import sys
from pathlib import Path

from .. import api, exitcodes
from ..fileio import write_output
from ..report.console import make_console
from . import escape, printable
from .args import options_from
from .output import check_writable, output_targets, write_outputs
from .progress import progress_bar


def cmd_lint(args) -> int:
    from ..report.lint_report import lint_json, render_lint_table

    result = api.lint(args.netlist, options_from(args))
    if args.format == "json":
        sys.stdout.write(lint_json(args.netlist, list(result.findings), len(result.circuit.elements), result.nets))
    else:
        console = make_console(args.no_color, args.quiet)
        render_lint_table(console, args.netlist, list(result.findings), len(result.circuit.elements), result.nets)
    return exitcodes.FINDINGS if result.errors else exitcodes.PASS


def _print_notes_and_failures(args, run) -> None:
    err = make_console(args.no_color, quiet=args.quiet, stderr=True)
    for note in run.notes:
        err.print(f"note: {escape(printable(note))}")
    loud = make_console(args.no_color, stderr=True)
    for res in run.failed:
        loud.print(f"[bold red]simulation failed[/] in scenario {res.scenario.name}: {escape(printable(res.error))}")


def cmd_measure(args) -> int:
    from ..report.lint_report import render_lint_table
    from ..report.stress_table import measurements_json, render_measurements

    console = make_console(args.no_color, args.quiet)
    options = options_from(args)
    project = api.load_project(args.target, root=args.root)
    if args.output:
        check_writable([Path(args.output)])
    try:
        with progress_bar(len(project.scenarios), args.no_color, args.quiet) as on_progress:
            run = api.measure(project, options, on_progress=on_progress)
    except api.LintStop as stop:
        render_lint_table(console, str(project.netlist), stop.findings, 0, 0)
        return exitcodes.FINDINGS
    _print_notes_and_failures(args, run)
    if args.format == "json":
        text = measurements_json(run)
    elif args.output:
        from io import StringIO

        from rich.console import Console
        buf = StringIO()
        render_measurements(Console(file=buf, width=160, no_color=True), run)
        text = buf.getvalue()
    else:
        render_measurements(console, run)
        text = None
    if text is not None:
        if args.output:
            write_output(args.output, text)
        else:
            sys.stdout.write(text)
    return exitcodes.SIMULATION if run.failed else exitcodes.PASS


def cmd_check(args) -> int:
    from ..report.lint_report import render_lint_table
    from ..report.terminal import render_review

    console = make_console(args.no_color, args.quiet)
    options = options_from(args)
    project = api.load_project(args.target, root=args.root)
    targets = output_targets(args, project)
    check_writable([p for p in targets.values() if p is not None])
    with progress_bar(len(project.scenarios), args.no_color, args.quiet) as on_progress:
        review = api.review(project, options, on_progress=on_progress)
    _print_notes_and_failures(args, review.run)
    if review.halted_by_lint:
        errors = [f for f in review.findings if f.rule.split(".")[0] in ("topology", "netlist", "value")]
        render_lint_table(console, str(project.netlist), errors, len(review.circuit.elements),
                          len(review.circuit.nets()))
    single_stdout = len(targets) == 1 and None in targets.values()
    if not single_stdout:
        render_review(console, review)
    write_outputs(targets, review, console)
    return review.verdict.exit_code


def cmd_init(args) -> int:
    from ..netlist import ReadOptions
    from ..starter import write_starter

    console = make_console(args.no_color, args.quiet)
    read = ReadOptions(allow_control=args.allow_control, allow_outside_includes=args.allow_outside_includes,
                       root=args.root)
    for path in write_starter(Path(args.netlist), read, force=args.force, boms=[Path(b) for b in args.bom],
                              schematics=[Path(s) for s in args.schematic], policy_name=args.policy):
        console.print(f"wrote {path}")
    widened = [f for f, on in (("--allow-control", args.allow_control),
                               ("--allow-outside-includes", args.allow_outside_includes)) if on]
    if widened:
        console.print(f"note: a project file cannot widen its own trust; give {' '.join(widened)} again to "
                      "'derate check'")
    return exitcodes.PASS


def cmd_explain(args) -> int:
    from ..report.explain import explain

    return explain(make_console(args.no_color, args.quiet), args.rule)


def cmd_policy(args) -> int:
    from ..report.explain import show_policies

    return show_policies(make_console(args.no_color, args.quiet), args.policy, args.format)
