"""The derate command: flags become ReviewOptions, the library does the work, a Review becomes an
exit code and report files.  No library module imports this package."""

from __future__ import annotations

import os
import signal
import sys

from .. import exitcodes
from ..errors import DerateError, UnsafeNetlistError
from ..report.console import make_console
from .args import build_parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return exitcodes.USAGE
    err = make_console(getattr(args, "no_color", False), stderr=True)
    previous = _terminate_as_interrupt()
    try:
        return args.func(args)
    except DerateError as exc:
        label = "unsafe netlist" if isinstance(exc, UnsafeNetlistError) else "error"
        err.print(f"[bold red]{label}:[/] {escape(printable(str(exc)))}")
        return exc.exit_code
    except KeyboardInterrupt:
        err.print("interrupted")
        return exitcodes.INTERRUPTED
    except BrokenPipeError:
        return exitcodes.PASS
    except Exception as exc:  # a bug: one line, its own exit code, never the "findings" code
        if os.environ.get("DERATE_DEBUG"):
            import traceback
            traceback.print_exc()
        err.print(f"[bold red]internal error:[/] {escape(type(exc).__name__)}: {escape(printable(str(exc))[:300])} "
                  "(a bug in derate; please report it with the command that caused it; DERATE_DEBUG=1 shows "
                  "the traceback)")
        return exitcodes.INTERNAL
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _terminate_as_interrupt():
    """Turn SIGTERM into KeyboardInterrupt, so temporary files are removed and workers stopped."""
    def handler(signum, frame):
        raise KeyboardInterrupt
    try:
        return signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread (an embedding application): leave signals alone
        return None


def printable(text: str) -> str:
    """An error message with control, escape and direction characters shown (report/safe.py); its own
    line breaks (a message, then the card it is about) are kept."""
    from ..report.safe import plain
    return "\n".join(plain(line) for line in text.split("\n"))


def escape(text: str) -> str:
    from rich.markup import escape as rich_escape
    return rich_escape(text)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
