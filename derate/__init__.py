"""derate: capacitor derating review from SPICE netlists, simulated with ngspice.

The library API (the command line only calls it)::

    import derate
    project = derate.load_project("examples/irrigation-controller/derate.yaml")
    review = derate.review(project)                   # derate.ReviewOptions(...) for overrides
    print(review.verdict.exit_code, review.assessment.counts())

``derate.lint(path)`` and ``derate.measure(project)`` run the first stages alone.
"""

__version__ = "0.2.0"

import importlib
import sys
import types

# The API is imported when first used (PEP 562), so ``import derate.entry`` (the command line) can
# set its signal handling before the heavy imports: a SIGTERM during start-up is an interruption.
_API = {"LintResult": "api", "LintStop": "api", "Progress": "api", "ReviewOptions": "api", "lint": "api",
        "load_project": "api", "measure": "api", "read_circuit": "api", "review": "api",
        "DataError": "errors", "DerateError": "errors", "NetlistError": "errors", "UnsafeNetlistError": "errors",
        "Review": "review", "Severity": "status", "Status": "status"}

__all__ = sorted(_API) + ["__version__"]


def __getattr__(name: str):
    if name in _API:
        value = getattr(importlib.import_module(f".{_API[name]}", __name__), name)
        globals()[name] = value
        return value
    try:
        return importlib.import_module(f".{name}", __name__)
    except ModuleNotFoundError as exc:
        if exc.name != f"{__name__}.{name}":
            raise
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}") from None


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_API))


class _Package(types.ModuleType):
    """``derate.review()`` and ``derate.measure()`` share their names with submodules: importing those
    submodules (which the import system records on the package) must not hide the functions."""

    def __setattr__(self, name: str, value) -> None:
        if _API.get(name) == "api" and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
