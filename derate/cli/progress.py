"""Progress on stderr while scenarios simulate (none when quiet or not a terminal)."""

from __future__ import annotations

from contextlib import contextmanager

from ..report.console import make_console


@contextmanager
def progress_bar(total: int, no_color: bool, quiet: bool):
    """Yield an ``on_progress`` callback for ``derate.review``/``measure`` that advances a bar."""
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    err = make_console(no_color, quiet=quiet, stderr=True)
    show = not quiet and err.is_terminal
    with Progress(TextColumn("simulating"), BarColumn(), TextColumn("{task.completed}/{task.total} scenarios"),
                  TimeElapsedColumn(), console=err, disable=not show, transient=True) as bar:
        task = bar.add_task("sim", total=total)
        yield lambda event: bar.update(task, completed=event.done)
