"""Progress on stderr while scenarios simulate (none when quiet).

In a terminal a bar counts the scenarios done and shows how far the running ones have simulated
(ngspice reports the share of the simulated time), so a long scenario is seen moving.  Elsewhere (a
CI log, a file) one line per scenario as it ends, so a job with a no-output timeout, and a person
watching the log, see the run move.
"""

from __future__ import annotations

from contextlib import contextmanager

from ..report.console import make_console
from ..report.safe import terminal


@contextmanager
def progress_bar(total: int, no_color: bool, quiet: bool):
    """Yield an ``on_progress`` callback for ``derate.review``/``measure`` that updates a bar."""
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    err = make_console(no_color, quiet=quiet, stderr=True)
    show = not quiet and err.is_terminal
    if not quiet and not err.is_terminal:
        yield _log_lines(err, total)
        return
    running: dict[str, float] = {}
    with Progress(TextColumn("simulating"), BarColumn(), TextColumn("{task.description}"),
                  TimeElapsedColumn(), console=err, disable=not show, transient=True) as bar:
        task = bar.add_task(f"0/{total} scenarios", total=total)

        def update(event) -> None:
            if event.stage == "bias":  # the second pass: ceramics at their biased capacitance
                bar.update(task, completed=total, description=f"{total}/{total} scenarios; again with biased "
                                                              f"ceramics {event.done}/{event.total}")
                return
            if event.result is not None:
                running.pop(event.result.scenario.name, None)
            elif event.scenario is not None:
                running[event.scenario] = event.fraction or 0.0
            detail = ", ".join(f"{terminal(name)} {100 * f:.0f} %" for name, f in list(running.items())[:3])
            bar.update(task, completed=event.done + sum(running.values()),
                       description=f"{event.done}/{total} scenarios" + (f" ({detail})" if detail else ""))
        yield update


def _log_lines(err, total: int):
    """One line per ended scenario: ``scenario 2/3 high-line-hot ended (8.4 s)``."""
    def update(event) -> None:
        if event.result is None:
            return
        res = event.result
        how = "from the cache" if res.from_cache else f"{res.seconds:.1f} s" if res.ok else "failed"
        label = "scenario" if event.stage == "simulate" else "again with biased ceramics"
        err.print(f"{label} {event.done}/{event.total} {terminal(res.scenario.name)} ended ({how})", soft_wrap=True)
    return update
