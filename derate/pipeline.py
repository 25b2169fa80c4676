"""`derate check`: lint -> simulate -> measure -> rules -> gate -> report, wired together."""

from __future__ import annotations

from pathlib import Path

from . import exitcodes
from .datafile import load_document, validate
from .errors import DataError
from .evaluate import evaluate
from .fileio import write_atomic
from .gate import Baseline, annotate, decide, load_waivers
from .hazard import caution_for
from .parts import PartTable, load_bom, load_parts, simulation_parasitics
from .policy import load_policy
from .project import _analysis, _scenarios
from .review import Review

DEFAULT_POLICY = "industrial"
EXTENSIONS = {"json": "json", "csv": "csv", "markdown": "md", "html": "html", "sarif": "sarif", "junit": "xml"}


def _scenario_file(project, path: Path) -> None:
    doc = load_document(path)
    if not isinstance(doc.data, dict) or "scenarios" not in doc.data:
        raise DataError("expected a mapping with a 'scenarios' list", str(path))
    wrapped = dict(doc.data)
    wrapped.setdefault("netlist", "-")
    doc.data = wrapped
    validate(doc, "project")
    project.scenarios = _scenarios(doc, doc.data["scenarios"])
    if "analysis" in doc.data:
        project.analysis = _analysis(doc, doc.data["analysis"])


def run_check(args, console):
    """Return (Review, None), or (None, exit code) when the run stops before the rules (lint errors)."""
    from .cli import lint_gate, load_target, simulate

    project, netlist, circuit = load_target(args)
    if args.scenarios:
        _scenario_file(project, Path(args.scenarios))
    lint = lint_gate(console, circuit)
    if any(f.severity == "error" for f in lint):
        return None, exitcodes.FINDINGS
    table = PartTable()
    for p in project.parts + [Path(x) for x in args.parts]:
        load_parts(p, table)
    if project.bom:
        folder = project.folder
        libs = project.bom.get("library") or []
        libs = [libs] if isinstance(libs, str) else libs
        load_bom(folder / project.bom["file"], project.bom.get("columns", {"reference": "reference"}),
                 [folder / x for x in libs], table)
    parts = table.assign(circuit)
    policy_spec = args.policy or project.policy or DEFAULT_POLICY
    policy = load_policy(policy_spec, project.folder if not args.policy else Path.cwd())
    run = simulate(args, project, netlist, circuit, args.quiet, parasitics=simulation_parasitics(parts))
    mission = args.mission_life if args.mission_life is not None else project.mission.get("life_h")
    duty = project.mission.get("duty", 1.0)
    stresses = {r.scenario.name: r.stresses for r in run.results if r.ok}
    evaluation = evaluate(stresses, project.scenarios, circuit, parts, policy, mission, duty)
    waivers_path = args.waivers or (str(project.waivers) if project.waivers else None)
    waivers = load_waivers(Path(waivers_path)) if waivers_path else []
    baseline = Baseline.load(Path(args.baseline)) if args.baseline else None
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
        for fmt, path in review.project.outputs.items():
            if fmt != "annotate":
                targets[fmt] = path
    annotate_to = args.annotate or (str(review.project.outputs["annotate"]) if "annotate" in review.project.outputs else None)
    rendered = {fmt: render(fmt, review) for fmt in targets}
    if annotate_to:
        from .report.annotate import annotate_netlist
        rendered["annotate"] = annotate_netlist(review)
        targets["annotate"] = Path(annotate_to)
    for fmt, path in targets.items():
        if path is None:
            sys.stdout.write(rendered[fmt])
        else:
            write_atomic(path, rendered[fmt])
            shown = _shown(path)
            console.print(f"wrote {fmt} report {shown}" if fmt != "annotate" else f"wrote annotated netlist {shown}")


def _shown(path: Path) -> str:
    import os
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return str(path)
    return rel if not rel.startswith("..") else str(path)
