"""Atomic output: a report is either written whole or not at all."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_atomic(path: str | os.PathLike, data: str | bytes, mode: int | None = None) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    The file gets ``mode`` when given, else the usual mode for a new file (0666 less the umask:
    0644 under 022), not the 0600 of a temporary file.  The temporary file is removed on any
    failure or interruption (KeyboardInterrupt, and SIGTERM, which the command line turns into
    an exception).
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            os.fchmod(fh.fileno(), mode if mode is not None else 0o666 & ~_umask())
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def write_all(files: list[tuple[Path, str | bytes]]) -> None:
    """Write several files as one: each is written whole beside its target first, and only when all of
    them are written are they renamed into place.  A failure before that (a full disk, a file-size
    limit, no permission) leaves every previous file as it was and no temporary file; OutputError."""
    from .errors import OutputError

    staged: list[tuple[str, Path]] = []
    try:
        for path, data in files:
            target = Path(path)
            try:
                target.parent.mkdir(parents=True, exist_ok=True)
                fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
            except OSError as exc:
                raise OutputError(f"cannot write {target}: {exc.strerror or exc}") from None
            staged.append((tmp, target))
            try:
                with os.fdopen(fd, "wb") as fh:
                    os.fchmod(fh.fileno(), 0o666 & ~_umask())
                    fh.write(data.encode("utf-8") if isinstance(data, str) else data)
                    fh.flush()
                    os.fsync(fh.fileno())
            except OSError as exc:
                raise OutputError(f"cannot write {target}: {exc.strerror or exc}") from None
        for tmp, target in staged:
            os.replace(tmp, target)
        staged.clear()
    except OSError as exc:
        raise OutputError(f"cannot put the reports in place: {exc.strerror or exc}") from None
    finally:
        for tmp, _ in staged:
            try:
                os.unlink(tmp)
            except OSError:
                pass


def write_output(path: str | os.PathLike, data: str | bytes) -> None:
    """write_atomic for a report or project file: a failure (no space, a file-size limit, no
    permission) is a DataError naming the file (exit 2), not a traceback."""
    from .errors import DataError

    try:
        write_atomic(path, data)
    except OSError as exc:
        raise DataError(f"cannot write: {exc.strerror or exc}", str(path)) from None


def read_capped(fh, limit: int) -> bytes:
    """Read an open binary file to its end, or to ``limit + 1`` bytes when it is longer (the caller
    refuses it then).  ``fh.read(limit + 1)`` would reserve the whole limit up front (512 MB of
    address space for every netlist), so the buffer is sized by the file and grows in 1 MB steps
    when the size is unknown (a pipe) or the file grows while it is read."""
    try:
        size = os.fstat(fh.fileno()).st_size
    except (OSError, AttributeError, ValueError):
        size = 0
    first = min(limit + 1, max(size + 1, 1 << 16))
    data = fh.read(first)
    if len(data) < first:  # the end of the file came first
        return data
    parts, total = [data], len(data)
    while total <= limit:
        chunk = fh.read(min(1 << 20, limit + 1 - total))
        if not chunk:
            break
        parts.append(chunk)
        total += len(chunk)
    return b"".join(parts)
