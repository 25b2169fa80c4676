"""The rich console: colour only when wanted (NO_COLOR, --no-color), nothing at all with --quiet."""

from __future__ import annotations

import os
import sys

from rich.console import Console

from .words import SEVERITY_STYLE  # noqa: F401  (re-exported for the reporters)


def make_console(no_color: bool = False, quiet: bool = False, stderr: bool = False, width: int | None = None) -> Console:
    """Return a Console for human output; NO_COLOR in the environment also turns colour off."""
    color_off = no_color or bool(os.environ.get("NO_COLOR"))
    stream = sys.stderr if stderr else sys.stdout
    # logs and pipes get 80 columns, which the compact table fits (a CI log viewer of any width shows
    # it unfolded); COLUMNS wins; --wide asks for every column
    if width is None and not getattr(stream, "isatty", lambda: False)() and "COLUMNS" not in os.environ:
        width = 80
    # diagnostics on stderr are never folded: one message, one line, whatever the log viewer's width
    # emoji off: ':100:' in 'board.cir:100: error' is a line number, never a picture
    return Console(file=stream, no_color=color_off, color_system=None if color_off else "auto",
                   quiet=quiet, highlight=False, soft_wrap=stderr, width=width, emoji=False)
