"""The ``derate`` command's entry point: SIGTERM handling first, then everything else.

A pipeline that cancels a job sends SIGTERM, often while the program is still importing; from the
moment this module runs it is an interruption like Ctrl-C (exit 130, temporary files removed,
workers stopped), never the default death (exit 143) with files left behind.
"""

import signal
import sys


def _interrupt(signum, frame):
    raise KeyboardInterrupt


if hasattr(signal, "SIGTERM"):
    signal.signal(signal.SIGTERM, _interrupt)


def main(argv=None) -> int:
    try:
        from .cli import main as run
    except KeyboardInterrupt:
        sys.stderr.write("interrupted\n")
        return 130
    return run(argv)


if __name__ == "__main__":
    sys.exit(main())
