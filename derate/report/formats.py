"""One registry of report formats: name, file extension, renderer.

The command line's ``--format`` choices, output writing and the golden tests all read it.  Renderers
are named as ``module:function`` and imported on first use, so a run that writes JSON never pays for
the HTML and plotting imports.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import import_module
from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:
    from ..review import Review


@dataclass(frozen=True)
class ReportFormat:
    """A machine or human report written to a file."""

    name: str
    extension: str  # with the dot
    renderer: str  # "module:function" inside derate.report, taking a Review and returning text

    def render(self, review: "Review") -> str:
        module, _, function = self.renderer.partition(":")
        fn: Callable[["Review"], str] = getattr(import_module(f"derate.report.{module}"), function)
        return fn(review)


FORMATS: dict[str, ReportFormat] = {f.name: f for f in (
    ReportFormat("json", ".json", "machine:to_json"),
    ReportFormat("csv", ".csv", "machine:to_csv"),
    ReportFormat("markdown", ".md", "machine:to_markdown"),
    ReportFormat("html", ".html", "html:to_html"),
    ReportFormat("sarif", ".sarif", "machine:to_sarif"),
    ReportFormat("junit", ".xml", "machine:to_junit"),
    ReportFormat("github", ".annotations", "machine:to_github"),  # GitHub Actions workflow commands, for stdout
)}
# the annotated netlist is written like a report but chosen with --annotate / outputs.annotate
ANNOTATED_NETLIST = ReportFormat("annotate", ".cir", "annotate:annotate_netlist")
