"""The ``derate`` command's entry point: SIGTERM handling first, then everything else.

A pipeline that cancels a job sends SIGTERM, often while the program is still importing; from the
moment this module runs it is an interruption like Ctrl-C (exit 130, temporary files removed,
workers stopped), never the default death (exit 143) with files left behind.
"""

import signal
import sys


_TERMINATED = []


def _interrupt(signum, frame):
    _TERMINATED.append(signum)  # kept: a library's bare `except:` during an import may swallow the exception
    raise KeyboardInterrupt


if hasattr(signal, "SIGTERM"):
    signal.signal(signal.SIGTERM, _interrupt)


def main(argv=None) -> int:
    try:
        from .cli import main as run
    except KeyboardInterrupt:
        _TERMINATED.append(0)
    try:
        if not _TERMINATED:
            return run(argv)
    except KeyboardInterrupt:  # between the imports and the command's own handling
        pass
    sys.stderr.write("interrupted\n")
    return 130


if __name__ == "__main__":
    sys.exit(main())
