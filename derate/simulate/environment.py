"""The environment a simulation process gets: only what Python and ngspice need to start.

derate runs in CI jobs whose environment holds tokens and credentials; a derate worker and ngspice
need none of it, so they are started with an allowlist, never with a copy of ``os.environ``
(a deck cannot run commands, but nothing should be within its reach that it does not need).
"""

from __future__ import annotations

import os

# what a Python interpreter and the ngspice library or program need to be found and to start,
# on Linux, macOS and Windows
KEPT = ("PATH", "LD_LIBRARY_PATH", "DYLD_LIBRARY_PATH", "DYLD_FALLBACK_LIBRARY_PATH", "NGSPICE_LIBRARY_PATH",
        "SPICE_LIB_DIR", "TMPDIR", "TMP", "TEMP", "SYSTEMROOT", "WINDIR", "COMSPEC", "PATHEXT", "VIRTUAL_ENV", "PYTHONHOME")


def minimal_environment(home: str, **extra: str) -> dict[str, str]:
    """The allowlisted variables of this process, a private HOME, the C locale (numbers read and
    written the one way ngspice expects) and UTF-8 for Python, plus ``extra``."""
    env = {k: os.environ[k] for k in KEPT if k in os.environ}
    env.update(HOME=home, USERPROFILE=home, LC_ALL="C", LANG="C", PYTHONUTF8="1", PYTHONDONTWRITEBYTECODE="1")
    env.update(extra)
    return env
