"""derate: capacitor derating review from SPICE netlists, simulated with ngspice.

The library API (the command line only calls it)::

    import derate
    project = derate.load_project("examples/irrigation-controller/derate.yaml")
    review = derate.review(project)                   # derate.ReviewOptions(...) for overrides
    print(review.verdict.exit_code, review.assessment.counts())

``derate.lint(path)`` and ``derate.measure(project)`` run the first stages alone.
"""

__version__ = "0.2.0"

from .api import LintResult, LintStop, Progress, ReviewOptions, lint, load_project, measure, read_circuit, review  # noqa: E402
from .errors import DataError, DerateError, NetlistError, UnsafeNetlistError  # noqa: E402
from .review import Review  # noqa: E402
from .status import Severity, Status  # noqa: E402

__all__ = ["DataError", "DerateError", "LintResult", "LintStop", "NetlistError", "Progress", "Review",
           "ReviewOptions", "Severity", "Status", "UnsafeNetlistError", "__version__", "lint",
           "load_project", "measure", "read_circuit", "review"]
