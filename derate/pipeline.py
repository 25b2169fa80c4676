"""`derate check`: lint -> simulate -> measure -> rules -> gate -> report, wired together."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from . import exitcodes
from .datafile import load_document, validate
from .errors import DataError
from .evaluate import evaluate
from .fileio import write_output
from .gate import Baseline, annotate, decide, load_waivers
from .hazard import caution_for
from .parts import PartTable, load_bom, load_parts, simulation_parasitics
from .policy import load_policy
from .project import analysis_from, scenarios_from
from .review import Review

DEFAULT_POLICY = "industrial"
EXTENSIONS = {"json": "json", "csv": "csv", "markdown": "md", "html": "html", "sarif": "sarif", "junit": "xml"}


def _scenario_file(project, path: Path):
    """Return the project with the scenarios (and analysis) of a --scenarios file."""
    doc = load_document(path)
    if not isinstance(doc.data, dict) or "scenarios" not in doc.data:
        raise DataError("expected a mapping with a 'scenarios' list", str(path))
    wrapped = dict(doc.data)
    wrapped.setdefault("netlist", "-")
    doc.data = wrapped
    validate(doc, "project")
    project = replace(project, scenarios=scenarios_from(doc, doc.data["scenarios"]))
    if "analysis" in doc.data:
        project = replace(project, analysis=analysis_from(doc, doc.data["analysis"]))
    return project


def output_targets(args, project) -> dict[str, Path | None]:
    """{format: file, or None for stdout} from the flags, else the project's ``outputs:``."""
    targets: dict[str, Path | None] = {}
    if args.formats:
        if len(args.formats) == 1 and not args.output:
            targets[args.formats[0]] = None
        elif len(args.formats) == 1 and args.output and not Path(args.output).is_dir():
            targets[args.formats[0]] = Path(args.output)
        else:
            folder = Path(args.output or ".")
            for fmt in args.formats:
                targets[fmt] = folder / f"derate-report.{EXTENSIONS[fmt]}"
    else:
        targets.update(project.outputs.reports)
    annotate_to = Path(args.annotate) if args.annotate else project.outputs.annotate
    if annotate_to:
        targets["annotate"] = annotate_to
    return targets


def run_check(args, console):
    """Return (Review, None), or (None, exit code) when the run stops before the rules (lint errors)."""
    from .cli import check_writable, lint_gate, load_target, open_cache, simulate

    project, netlist, circuit = load_target(args)
    if args.scenarios:
        project = _scenario_file(project, Path(args.scenarios))
    trust = project.confinement
    # everything that can fail on input is read and checked before the (long) simulation
    check_writable([p for p in output_targets(args, project).values() if p is not None])
    cache = open_cache(args)
    table = PartTable()
    for p in project.parts:
        load_parts(p, table, trust)
    for p in args.parts:
        load_parts(Path(p), table, trust.allowing(Path(p)))
    if project.bom:
        load_bom(project.bom.file, dict(project.bom.columns), project.bom.libraries, table)
    if args.policy:
        policy = load_policy(args.policy, Path.cwd(), trust.allowing(Path(args.policy)))
    else:
        policy = load_policy(project.policy or DEFAULT_POLICY, project.folder, trust)
    waivers = load_waivers(Path(args.waivers)) if args.waivers else (
        load_waivers(project.waivers) if project.waivers else [])
    baseline = Baseline.load(Path(args.baseline)) if args.baseline else None
    lint = lint_gate(console, circuit)
    if any(f.severity == "error" for f in lint):
        return None, exitcodes.FINDINGS
    parts = table.assign(circuit)
    run = simulate(args, project, netlist, circuit, args.quiet, parasitics=simulation_parasitics(parts), cache=cache)
    mission = args.mission_life if args.mission_life is not None else project.mission.life_h
    stresses = {r.scenario.name: r.stresses for r in run.results if r.ok}
    evaluation = evaluate(stresses, project.scenarios, circuit, parts, policy, mission, project.mission.duty)
    fail_on = args.fail_on or project.fail_on
    verdict = decide(evaluation.findings, fail_on, waivers, baseline, simulation_failed=bool(run.failed))
    findings = annotate(verdict)
    caps = {c.path: c.value for c in circuit.capacitors()}
    caution = caution_for(run.stresses(), caps, project.hazard)
    warnings = [f for f in lint if f.severity != "error"]
    review = Review(project, circuit, run, evaluation, verdict, findings, warnings, policy, caution)
    return review, None


def render(fmt: str, review: Review) -> str:
    from .report import machine
    if fmt == "html":
        from .report.html import to_html
        return to_html(review)
    return {"json": machine.to_json, "csv": machine.to_csv, "markdown": machine.to_markdown,
            "sarif": machine.to_sarif, "junit": machine.to_junit}[fmt](review)


def write_outputs(args, review: Review, console) -> None:
    """Write every requested report atomically (all are rendered before any is written)."""
    import sys

    targets = output_targets(args, review.project)
    rendered = {}
    for fmt in targets:
        if fmt == "annotate":
            from .report.annotate import annotate_netlist
            rendered[fmt] = annotate_netlist(review)
        else:
            rendered[fmt] = render(fmt, review)
    for fmt, path in targets.items():
        if path is None:
            sys.stdout.write(rendered[fmt])
        else:
            write_output(path, rendered[fmt])
            shown = _shown(path)
            console.print(f"wrote {fmt} report {shown}" if fmt != "annotate" else f"wrote annotated netlist {shown}")


def _shown(path: Path) -> str:
    import os
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return str(path)
    return rel if not rel.startswith("..") else str(path)
