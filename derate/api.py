"""The library entry points: load a project, lint it, measure it, review it.

    import derate
    project = derate.load_project("examples/irrigation-controller/derate.yaml")
    review = derate.review(project)             # lint, simulate, measure, apply the policy, gate
    review.verdict.exit_code                    # 1: findings at or above the fail level
    [(c.path, c.status) for c in review.assessment.capacitors]

Everything the command line can override is a field of ``ReviewOptions`` (frozen; change it with
``dataclasses.replace``).  Nothing here prints, reads argv or exits: the command line
(``derate.cli``) maps flags to options and a Review to an exit code and report files.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Callable

from . import pipeline
from .errors import DerateError
from .findings import Finding
from .netlist import lint as lint_circuit
from .netlist.flatten import Circuit
from .options import DEFAULT_POLICY, DIALECT, Progress, ReviewOptions
from .pipeline import LintStop, Plan, read_circuit, with_netlist
from .project import Project, find_project, load_project as _load_file, project_for_netlist
from .review import Review
from .simulate.results import SimulationRun
from .simulate.runner import Runner
from .status import Severity

__all__ = ["DEFAULT_POLICY", "DIALECT", "LintResult", "LintStop", "Plan", "Progress", "ReviewOptions", "lint",
           "load_project", "measure", "plan", "read_circuit", "review", "with_netlist"]


@dataclass(frozen=True)
class LintResult:
    """The topology and value findings of one netlist."""

    path: str
    circuit: Circuit
    findings: tuple[Finding, ...]

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == Severity.ERROR]

    @property
    def nets(self) -> int:
        return len(self.circuit.nets())


def load_project(path: str | Path | None = None, *, root: str | Path | None = None) -> Project:
    """Return the Project of a ``derate.yaml``, or of a bare netlist (defaults everywhere).

    Without ``path`` the nearest ``derate.yaml`` in the current folder or a parent is used.
    ``root`` widens the project root (``--root``); see README, "Running on untrusted input".
    """
    if path is None:
        found = find_project()
        if found is None:
            raise DerateError("no derate.yaml in this folder or a parent; give a project file or a netlist")
        return _load_file(found, root=root)
    if Path(path).suffix.lower() in (".yaml", ".yml"):
        return _load_file(path, root=root)
    return project_for_netlist(path, root=root)


def lint(target: Project | str | Path, options: ReviewOptions | None = None) -> LintResult:
    """Lint a netlist (a path) or a project's netlist (every deck of a board): topology and value findings,
    no simulation."""
    if isinstance(target, Project) and target.decks:
        results = [lint(deck, options) for deck in target.decks]
        circuit = results[0].circuit
        circuit = replace(circuit, elements=[e for r in results for e in r.circuit.elements])
        return LintResult(", ".join(r.path for r in results), circuit, tuple(f for r in results for f in r.findings))
    if isinstance(target, Project):
        _, circuit = read_circuit(target, options)
        return LintResult(str(target.netlist), circuit, tuple(lint_circuit(circuit)))
    options = options or ReviewOptions()
    project = project_for_netlist(target)
    _, circuit = read_circuit(project, options)
    return LintResult(str(target), circuit, tuple(lint_circuit(circuit)))


def plan(project: Project, options: ReviewOptions | None = None) -> Plan:
    """Read and check every input of a review without simulating (``derate.pipeline.plan``)."""
    return pipeline.plan(project, options)


def measure(project: Project, options: ReviewOptions | None = None, runner: Runner | None = None,
            on_progress: Callable[[Progress], None] | None = None) -> SimulationRun:
    """Simulate every scenario and measure every capacitor (no policy): the same decks a review
    simulates, the parts' ESR and ESL included.  Lint errors stop the run before simulating (a
    DerateError naming them).  A board of several decks is measured deck by deck, its scenarios named
    deck/scenario."""
    if project.decks:
        plans = pipeline.board_plans(project, options, policy=False)
        runs = _deck_by_deck(plans, lambda p, cb: pipeline.measure(p, runner, cb), on_progress)
        return pipeline.board(project, plans, runs)[1]
    return pipeline.measure(pipeline.plan(project, options, policy=False), runner, on_progress)


def review(project: Project, options: ReviewOptions | None = None, runner: Runner | None = None,
           on_progress: Callable[[Progress], None] | None = None) -> Review:
    """The whole review: lint, simulate, measure, apply the policy, gate.

    Every input is read and checked before the (long) simulation.  When lint finds errors nothing
    is simulated: the Review then holds the lint errors as gating findings and every capacitor's
    stress is unknown (``measure.no-result``), so the verdict fails and every report can still be
    written.
    """
    if project.decks:  # a board of several decks: each simulated with its own analysis, one review
        plans = pipeline.board_plans(project, options)
        runs = _deck_by_deck(plans, lambda p, cb: pipeline.simulate(p, runner, cb), on_progress)
        return pipeline.judge(*pipeline.board(project, plans, runs))
    the_plan = pipeline.plan(project, options)
    return pipeline.judge(the_plan, pipeline.simulate(the_plan, runner, on_progress))


def _deck_by_deck(plans: list[Plan], run, on_progress) -> list[SimulationRun]:
    """Run each deck's plan in turn, its progress counted among the board's scenarios."""
    total = sum(len(p.project.scenarios) for p in plans)
    out: list[SimulationRun] = []
    offset = 0
    for p in plans:
        def shifted(event: Progress, offset: int = offset) -> None:
            on_progress(replace(event, done=event.done + offset, total=total))
        out.append(run(p, shifted if on_progress is not None else None))
        offset += len(p.project.scenarios)
    return out
