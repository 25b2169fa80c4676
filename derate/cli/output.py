"""Where `derate check` writes its reports: targets from flags or the project, checked before simulating."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from ..errors import DataError
from ..fileio import write_all
from ..project import Project
from ..report.formats import ANNOTATED_NETLIST, FORMATS, ReportFormat
from ..review import Review


def output_targets(args, project: Project) -> dict[str, Path | None]:
    """{format name: file, or None for stdout} from the flags, else the project's ``outputs:``."""
    targets: dict[str, Path | None] = {}
    if args.formats:
        suffixes = {f.extension: name for name, f in FORMATS.items()}
        out = Path(args.output) if args.output else None
        if out is not None and not out.is_dir() and out.suffix.lower() in suffixes:
            if len(args.formats) > 1:
                raise DataError(f"{len(args.formats)} formats need a folder, but --output names a "
                                f"{out.suffix} file; give a folder (it is made) or one --format", str(out))
            own = FORMATS[args.formats[0]].extension
            if suffixes[out.suffix.lower()] != args.formats[0] and own not in out.name.lower():  # x.sarif.json is fine
                raise DataError(f"--format {args.formats[0]} writes {args.formats[0]}, but --output ends in "
                                f"{out.suffix} (a {suffixes[out.suffix.lower()]} report's suffix); give a "
                                f"{FORMATS[args.formats[0]].extension} file", str(out))
        if len(args.formats) == 1 and not args.output:
            targets[args.formats[0]] = None
        elif len(args.formats) == 1 and args.output and not Path(args.output).is_dir():
            targets[args.formats[0]] = Path(args.output)
        else:
            folder = Path(args.output or ".")
            for fmt in args.formats:
                targets[fmt] = folder / f"derate-report{FORMATS[fmt].extension}"
    else:
        targets.update(project.outputs.reports)
    annotate_to = Path(args.annotate) if args.annotate else project.outputs.annotate
    if annotate_to:
        targets[ANNOTATED_NETLIST.name] = annotate_to
    return targets


def check_writable(paths) -> None:
    """Refuse, before any simulation, an output that cannot be written (exit 2)."""
    for path in paths:
        path = Path(path)
        if path.is_dir():
            raise DataError("the output is a folder; expected a file name", str(path))
        folder = path.parent
        while not folder.exists() and folder != folder.parent:
            folder = folder.parent
        if not folder.is_dir():
            raise DataError(f"cannot create the output: '{folder}' is a file, not a folder", str(path))
        if not os.access(folder, os.W_OK | os.X_OK):
            raise DataError(f"cannot write the output: no permission to write in '{folder}'", str(path))


def _format(name: str) -> ReportFormat:
    return ANNOTATED_NETLIST if name == ANNOTATED_NETLIST.name else FORMATS[name]


def write_files(targets: dict[str, Path | None], review: Review) -> list[str]:
    """Render every report, write the ones with a path, then the one for stdout; return 'wrote ...' lines.

    Files come first, so a closed pipe on stdout (``derate check ... | head``) never costs the reports."""
    rendered = {name: _format(name).render(review) for name in targets}
    lines = []
    files = [(path, rendered[name]) for name, path in targets.items() if path is not None]
    write_all(files)  # all of them or none: a full disk never leaves this run's JSON beside the last run's SARIF
    for name, path in targets.items():
        if path is not None:
            shown = _shown(path)
            lines.append(f"wrote {name} report {shown}" if name != ANNOTATED_NETLIST.name
                         else f"wrote annotated netlist {shown}")
    for name, path in targets.items():
        if path is None:
            sys.stdout.write(rendered[name])
    return lines


def _shown(path: Path) -> str:
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return str(path)
    return rel if not rel.startswith("..") else str(path)
