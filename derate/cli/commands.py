"""The commands: each maps its flags to the library and its result to output and an exit code."""

from __future__ import annotations

import dataclasses
import os
import sys
from pathlib import Path

from .. import api, exitcodes
from ..errors import DataError, ForeignNetlistError, OutputError
from ..fileio import write_all, write_output
from ..report.console import make_console
from ..report.safe import terminal
from .args import options_from
from .output import check_writable, output_targets, write_files
from .progress import progress_bar


def cmd_lint(args) -> int:
    from ..report.lint_report import lint_github, lint_json, lint_sarif, render_lint_table

    options = options_from(args)
    if getattr(args, "output", None):
        check_writable([Path(args.output)])
    results, paths = [], []
    for path in args.netlists:  # an unreadable one stops with exit 2
        try:
            results.append(api.lint(path, options))
            paths.append(path)
        except ForeignNetlistError as exc:
            if not getattr(args, "skip_other_formats", False):
                raise
            if not args.quiet:
                make_console(args.no_color, stderr=True).print(f"skipped {terminal(path)}: {terminal(exc.message)}")
    args.netlists = paths
    if args.format in ("json", "sarif", "github"):
        runs = [(path, list(r.findings)) for path, r in zip(args.netlists, results)]
        if args.format == "json":
            docs = [lint_json(path, list(r.findings), len(r.circuit.elements), r.nets)
                    for path, r in zip(args.netlists, results)]
            text = docs[0] if len(docs) == 1 else "[\n" + ",\n".join(d.rstrip("\n") for d in docs) + "\n]\n"
        else:
            text = lint_sarif(runs) if args.format == "sarif" else lint_github(runs)
        if args.output:
            write_all([(Path(args.output), text)])
        else:
            sys.stdout.write(text)
    elif args.output:
        raise DataError("--output takes the json, sarif or github output; give --format too")
    elif args.quiet:  # a hook or CI log: nothing when clean, one line per error otherwise
        out = make_console(args.no_color)
        for path, r in zip(args.netlists, results):
            for f in r.errors:
                where = f"{f.file or path}:{f.line}" if f.line else str(f.file or path)
                out.print(f"{terminal(where)}: error {f.rule}: {terminal(f.message)}", soft_wrap=True)
    else:
        console = make_console(args.no_color)
        for path, r in zip(args.netlists, results):
            render_lint_table(console, path, list(r.findings), len(r.circuit.elements), r.nets)
    return exitcodes.FINDINGS if any(r.errors for r in results) else exitcodes.PASS


def cmd_cache(args) -> int:
    from ..simulate.cache import Cache

    console = make_console(args.no_color, args.quiet)
    cache = Cache.open(Path(args.cache_dir) if args.cache_dir else None, explicit=bool(args.cache_dir))
    if not cache.enabled:
        console.print(f"cache off: {'; '.join(cache.notes)}", soft_wrap=True)
        return exitcodes.PASS
    if args.action == "clear":
        console.print(f"removed {cache.clear()} entries from {cache.folder}")
    elif args.action == "prune":
        console.print(f"removed {cache.prune()} entries from {cache.folder}")
    entries = list(cache.folder.glob("*.entry"))
    size = sum(p.stat().st_size for p in entries)
    console.print(f"{cache.folder}: {len(entries)} entries, {size / 2**20:.1f} MB (entries unused for 30 days and the "
                  "least recently used beyond 2 GB are pruned after each run)", soft_wrap=True)
    return exitcodes.PASS


def _print_notes_and_failures(args, run) -> None:
    err = make_console(args.no_color, quiet=args.quiet, stderr=True)
    for note in run.notes:
        err.print(f"note: {terminal(note)}")
    loud = make_console(args.no_color, stderr=True)
    for res in run.failed:
        loud.print(f"[bold red]simulation failed[/] in scenario {terminal(res.scenario.name)}: {terminal(res.error)}")


def _scenario_count(project) -> int:
    """The scenarios a project's run is expected to have (every deck's, for a board of several)."""
    return sum(len(d.scenarios) for d in project.decks) or len(project.scenarios)


def cmd_measure(args) -> int:
    from ..report.lint_report import render_lint_table
    from ..report.stress_table import measurements_json, render_measurements

    console = make_console(args.no_color, args.quiet)
    options = options_from(args)
    project = api.load_project(args.target, root=args.root)
    if args.output:
        check_writable([Path(args.output)])
    try:
        with progress_bar(_scenario_count(project), args.no_color, args.quiet) as on_progress:
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
        render_measurements(Console(file=buf, width=160, no_color=True, emoji=False), run)
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
    if getattr(args, "report_url", None):
        project = dataclasses.replace(project, report_url=args.report_url)
    if getattr(args, "figures", None) is not None:
        project = dataclasses.replace(project, report_figures=args.figures)
    check_writable([p for p in targets.values() if p is not None])
    with progress_bar(_scenario_count(project), args.no_color, args.quiet) as on_progress:
        review = api.review(project, options, on_progress=on_progress)
    _print_notes_and_failures(args, review.run)
    single_stdout = len(targets) == 1 and None in targets.values()
    if review.halted_by_lint and not single_stdout:  # a report on stdout carries the lint errors itself
        errors = [f for f in review.findings if f.rule.split(".")[0] in ("topology", "netlist", "value")]
        render_lint_table(console, str(project.netlist), errors, len(review.circuit.elements),
                          len(review.circuit.nets()))
    try:
        try:
            wrote = write_files(targets, review)
        except OutputError as exc:
            v = review.verdict
            raise OutputError(f"{exc.message}; no report was changed (the previous ones are as they were). The "
                              f"review itself was {review.record['summary']['verdict']} (exit {v.exit_code})") from None
        if not single_stdout and not args.quiet:
            wide = make_console(args.no_color, args.quiet, width=190) if args.wide else console
            render_review(wide, review, wide=args.wide)
        for line in wrote:
            console.print(line)
        if args.quiet and review.verdict.exit_code != exitcodes.PASS:
            _gate_summary(args, review, to_stderr=None in targets.values())
    except BrokenPipeError:  # stdout closed early (| head): the reports are written, the verdict still counts
        _silence_stdout()
    return review.verdict.exit_code


def _silence_stdout() -> None:
    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, sys.stdout.fileno())


def _gate_summary(args, review, to_stderr: bool) -> None:
    """With --quiet, a failing gate still says why: the verdict and each gating finding on one line.

    On stderr when stdout carries a report, which must stay one valid document."""
    from ..report.terminal import finding_line

    out = make_console(args.no_color, stderr=to_stderr)
    rec = review.record
    gating = [f for f in rec["findings"] if f["details"].get("gates")]
    out.print(f"derate: {rec['summary']['verdict']} (exit {rec['summary']['exit_code']}): {len(gating)} finding(s) "
              f"at or above '{rec['project']['fail_on']}' gate the review", soft_wrap=True)
    for f in gating:
        out.print(finding_line(f), soft_wrap=True)
    for sc in rec["scenarios"]:
        if not sc["ok"]:
            out.print(f"simulation failed in scenario {terminal(sc['name'])}: {terminal(sc['error'] or '')}",
                      soft_wrap=True)


def cmd_init(args) -> int:
    from ..netlist import ReadOptions
    from ..starter import write_starter

    console = make_console(args.no_color, args.quiet)
    read = ReadOptions(allow_control=args.allow_control, allow_outside_includes=args.allow_outside_includes,
                       root=args.root)
    for path in write_starter([Path(n) for n in args.netlists], read, force=args.force, boms=[Path(b) for b in args.bom],
                              schematics=[Path(s) for s in args.schematic], policy_name=args.policy,
                              project_file=Path(args.project) if args.project else None):
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
