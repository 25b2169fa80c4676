"""The trust boundary: which paths a file from the repository may name.

Everything in a repository is untrusted: the netlist, derate.yaml, parts, policies, waivers, BOMs.
A path written in any of them must resolve (symbolic links followed) inside the project root:
the repository that holds the project (the nearest folder with a ``.git`` entry), else the
project file's folder.  A file that derate writes because a data file named it must also stay out
of ``.git`` folders and carry the extension of its format, so an ``outputs:`` entry can never
become a git hook, a shell profile or a build script.

A netlist is read on one rule: ngspice is the judge of what it can run.  derate refuses only what
would run a program, write a file, or read one outside these roots (netlist/parser.py,
netlist/control.py); what cannot change its analysis is ignored with a note, and what it need not
understand (values only ngspice can evaluate, unknown model parameters) is passed to ngspice as
written, in a deck built from parsed cards (simulate/deck.py), never from pasted text.

Only the person running derate widens this, with command-line flags: ``--root DIR`` moves the
root; a file given on the command line (``--parts``, ``--policy`` ...) lets the files it names
sit beside it; ``--output``/``--annotate`` write wherever they say.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from pathlib import Path

from .errors import DataError

# the extensions a data file may give an output of each format
OUTPUT_SUFFIXES = {
    "json": (".json",), "csv": (".csv",), "markdown": (".md", ".markdown"), "html": (".html", ".htm"),
    "sarif": (".sarif", ".json"), "junit": (".xml",), "annotate": (".cir", ".sp", ".spi", ".spice", ".net", ".txt"),
}


def repository_root(start: Path) -> Path | None:
    """Return the nearest folder at or above ``start`` that holds a ``.git`` entry, or None."""
    here = start.resolve()
    for folder in [here, *here.parents]:
        if (folder / ".git").exists():
            return folder
    return None


@dataclass(frozen=True)
class Confinement:
    """Folders that paths named in data files must stay inside (all resolved)."""

    root: Path
    beside: tuple[Path, ...] = ()  # folders of files given on the command line

    @classmethod
    def for_project(cls, folder: Path, root: str | os.PathLike | None = None) -> "Confinement":
        """The default: ``--root`` when given, else the repository of ``folder``, else ``folder``."""
        if root is not None:
            resolved = Path(root).resolve()
            if not resolved.is_dir():
                raise DataError("the project root given with --root is not a folder", str(root))
            return cls(resolved)
        folder = folder.resolve()
        return cls(repository_root(folder) or folder)

    def allowing(self, path: Path) -> "Confinement":
        """This confinement plus the folder of a file the person running derate named."""
        folder = path.resolve().parent
        return self if folder in self.beside else replace(self, beside=self.beside + (folder,))

    def _inside(self, resolved: Path) -> bool:
        return any(resolved == r or r in resolved.parents for r in (self.root, *self.beside))

    def read(self, path: Path, where: str | None = None, key: str | None = None) -> Path:
        """Return ``path`` resolved; DataError when it leaves the root (the file named at ``where``)."""
        resolved = _resolve(path, where, key)
        if not self._inside(resolved):
            raise DataError(f"'{path}' is outside the project root '{self.root}'; a file in the project may "
                            "only name files inside it (the person running derate can widen this with --root)",
                            where, key)
        return resolved

    def write(self, path: Path, fmt: str, where: str | None = None, key: str | None = None) -> Path:
        """Check an output path a data file named; return it resolved."""
        resolved = _resolve(path, where, key)
        if not self._inside(resolved):
            raise DataError(f"'{path}' is outside the project root '{self.root}'; outputs named in a project "
                            "file are written inside it (use --output to write elsewhere)", where, key)
        if any(part.lower() == ".git" for part in resolved.parts):
            raise DataError(f"'{path}' is inside a .git folder; derate does not write there", where, key)
        suffixes = OUTPUT_SUFFIXES.get(fmt, ())
        if suffixes and resolved.suffix.lower() not in suffixes:
            raise DataError(f"a {fmt} output must end in {' or '.join(suffixes)}, got '{path.name}'", where, key)
        return resolved


def _resolve(path: Path, where: str | None, key: str | None) -> Path:
    try:
        text = os.fspath(path)
        if any(ord(ch) < 32 for ch in text):
            raise ValueError("control character")
        return Path(text).resolve()
    except (ValueError, OSError, RuntimeError) as exc:  # NUL byte, symlink loop
        raise DataError(f"cannot use the path {str(path)!r}: {exc}", where, key) from None
