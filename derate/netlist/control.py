"""A safe reading of ngspice control text (``.control`` ... ``.endc`` blocks and ``*#`` lines).

derate never runs control text.  It reads it with an allow-list, because real decks keep their
analysis there (schematic tools and ngspice's own examples write ``tran``, ``option``, ``save``,
``run``, ``plot``, ``meas`` and ``wrdata`` in a control block):

- commands that set up the analysis become derate's: ``tran`` (and ``op``/``ac``/``dc`` ..., kept
  as analyses derate does not measure), ``option``/``options`` (known ngspice options only);
- display and bookkeeping commands are ignored and listed as notes (``run``, ``plot``, ``print``,
  ``echo``, ``meas``, ``let``, ``save``, ``quit`` ..., ``set`` of display variables, and ``wrdata``
  or ``write`` to a plain file name in the working folder);
- commands that change the circuit before the run (``alter``, ``alterparam``, ``reset``) are
  ignored with a note saying so: derate measures the netlist as written;
- anything that can run a program, read or write a file elsewhere or load code is refused by
  name with file:line (``shell``, ``source``, ``load``, ``codemodel``, ``osdi``, ``pre_...``,
  ``set unixcom``/``sourcepath``, ``edit``, ``aspice``, ``rspice``, ``cd``, ``write``/``wrdata``/
  ``hardcopy``/``gnuplot`` to a path, ``alias``, backquotes); any other command, and any other
  ``set`` (``set color0 = white``, ``set gnuplot_terminal qt``), is ignored with a note: derate never
  runs the block, so it cannot change the analysis.  With ``--allow-control`` (for netlists you
  trust) refused commands are ignored with a note instead; derate still runs none of them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..errors import UnsafeNetlistError
from ..units import NumberError, parse_number
from .lexer import split_assignment
from .values import BadValue, parse_option

ANALYSES = frozenset({"tran", "op", "ac", "dc", "noise", "tf", "pz", "sens", "disto", "pss", "sp"})
IGNORED = frozenset({
    "run", "plot", "print", "echo", "meas", "measure", "let", "display", "setplot", "linearize", "fft", "spec",
    "fourier", "quit", "exit", "destroy", "remcirc", "save", "show", "showmod", "listing", "status", "version",
    "rusage", "iplot", "asciiplot", "unset", "unlet", "compose", "settype", "cutout", "psd", "transpose",
    "where", "trace", "step", "stop", "resume", "delete", "state", "inventory", "mdump", "mrdump",
    "if", "else", "end", "while", "repeat", "dowhile", "foreach", "label", "goto", "break", "continue",
    "define", "undefine", "strcmp", "option_verbose", "snsave", "snload", "bg_run", "devhelp", "help",
    "wrnodev", "optran", "remzerovec", "plot_phase", "deftype", "history",
})
CIRCUIT_CHANGES = frozenset({"alter", "altermod", "alterparam", "reset", "mc_source"})
REFUSED = {
    "shell": "runs a program", "source": "reads and runs another file", "load": "reads a file",
    "codemodel": "loads code", "osdi": "loads code", "unixcom": "runs unknown words as programs",
    "sourcepath": "changes where files are read from", "edit": "runs an editor", "aspice": "runs a program",
    "rspice": "runs a program on another host", "cd": "changes the working folder", "alias": "redefines commands",
    "setcs": "changes settings", "rehash": "searches for programs", "sysinfo": "reads system files",
    "jobs": "manages background programs", "!": "runs a program",
}
FILE_WRITERS = frozenset({"write", "wrdata", "wrs2p", "hardcopy", "gnuplot", "snsave"})
# set variables that only change display or output formatting (ngspice manual, chapter 17.7)
HARMLESS_SET = frozenset({
    "color0", "color1", "color2", "color3", "color4", "color5", "color6", "color7", "color8", "color9",
    "xbrushwidth", "xfont", "xgridwidth", "hcopydevtype", "hcopypscolor", "hcopywidth", "hcopyheight",
    "hcopyfont", "hcopyfontsize", "hcopypstxcolor", "noaskquit", "nomoremode", "numdgt", "width", "height",
    "wr_singlescale", "wr_vecnames", "filetype", "gnuplot_terminal", "svg_intopts", "nobreak",
    "noprintscale", "units", "curplottitle", "controlswait", "num_threads", "sqrnoise", "specwindow",
    "plotwinfo", "appendwrite", "nolegend", "pointchars", "ticmarks", "ticlist", "polydegree", "polysteps",
    "gridsize", "interactive", "echo", "noinit", "ngbehavior", "ngdebug", "nounits", "strict_errorhandling",
    "askquit", "batchmode", "noacct", "nobjthack", "norefvalue", "brief", "gridstyle", "xlabel", "ylabel",
    "title", "plottype", "nogrid", "colorsymb", "rndseed", "wfont", "wfont_size", "gnu_terminal",
})


@dataclass
class ControlResult:
    """What control text contributed: analysis and option card texts, notes, a dialect hint."""

    cards: list[tuple[str, int]] = field(default_factory=list)  # (dot-card text, index of the line it came from)
    notes: list[tuple[int, str]] = field(default_factory=list)  # (line index, note)
    dialect: str | None = None


def read_control(lines: list[tuple[str, object]], allow: bool) -> ControlResult:
    """Read control lines ``[(text, Location)]``; UnsafeNetlistError for a refused command.

    Returns dot-card texts (``.tran ...``, ``.options ...``) for the analysis and options, and
    notes for everything ignored.
    """
    out = ControlResult()
    ignored: dict[str, list[int]] = {}
    for i, (raw, loc) in enumerate(lines):
        text = raw.strip()
        if not text or text.startswith(("*", "#")):
            continue
        words = text.split()
        cmd = words[0].lower()

        def refuse(why: str) -> None:
            if allow:
                out.notes.append((i, f"control command '{words[0]}' ignored ({why}; allowed by --allow-control, "
                                     "never run)"))
                return
            raise UnsafeNetlistError(f"control command '{words[0]}' {why}; refused (derate reads a control "
                                     "block's analysis and options only; --allow-control ignores such commands "
                                     "for netlists you trust)", loc.file, loc.line, raw)

        if cmd.startswith("pre_") or cmd in REFUSED:
            refuse(REFUSED.get(cmd, "runs before the circuit is read"))
            continue
        if cmd.startswith("!"):
            refuse(REFUSED["!"])
            continue
        if cmd in FILE_WRITERS:
            target = words[1] if len(words) > 1 else ""
            if any(c in target for c in "/\\~$`") or ".." in target or target.startswith("-"):
                refuse("writes a file to a path")
            else:  # a plot or data file by a plain name in ngspice's own folder: display, never run by derate
                ignored.setdefault(cmd, []).append(i)
            continue
        if cmd in ANALYSES:
            card = _analysis(cmd, words[1:], loc, raw, allow, out, i)
            if card:
                out.cards.append((card, i))
            continue
        if cmd in ("option", "options", "opt"):
            _options(words[1:], out, i)
            continue
        if cmd == "set":
            _set(words[1:], raw, loc, allow, out, i, refuse)
            continue
        if cmd in CIRCUIT_CHANGES:
            out.notes.append((i, f"control command '{words[0]}' ignored: it changes the circuit before the run, "
                                 "and derate measures the netlist as written"))
            continue
        if cmd in IGNORED:
            ignored.setdefault(cmd, []).append(i)
            continue
        if "`" in text:
            refuse("holds backquotes, which run a program")
            continue
        # derate never runs a control block: a command it does not know cannot change its analysis
        out.notes.append((i, f"control command '{words[0]}' ignored: not one derate reads (it never runs the control "
                             "block)"))
    for cmd, idx in ignored.items():
        out.notes.append((idx[0], f"control command{'s' if len(idx) > 1 else ''} '{cmd}' ignored ({len(idx)}x): "
                                  "derate runs its own analysis and saves its own vectors"))
    return out


def _analysis(cmd: str, args: list[str], loc, raw: str, allow: bool, out: ControlResult, i: int) -> str | None:
    vals = []
    for a in args:
        if a.lower() == "uic":
            vals.append("uic")
            continue
        try:
            parse_number(a)
        except NumberError:
            if cmd != "tran":  # ac/dc/noise arguments hold words (dec, source names): kept as written
                vals.append(a)
                continue
            msg = f"'{cmd}' argument '{a}' is not a number"
            if allow:
                out.notes.append((i, msg + "; the analysis is ignored"))
                return None
            raise UnsafeNetlistError(msg + " (derate reads control-block analyses with numbers only)",
                                     loc.file, loc.line, raw)
        vals.append(a)
    if cmd == "tran":
        out.notes.append((i, "the transient analysis in the control block sets derate's run (" +
                          " ".join(["tran"] + vals) + ")"))
    return "." + " ".join([cmd] + vals)


def _options(args: list[str], out: ControlResult, i: int) -> None:
    good = []
    for a in args:
        kv = split_assignment(a)
        name, value = (kv[0], kv[1]) if kv else (a, True)
        try:
            key, rendered = parse_option(name, value if kv else True)
        except BadValue as exc:
            out.notes.append((i, f"control option '{a}' ignored: {exc}"))
            continue
        good.append(key if rendered is None else f"{key}={rendered}")
    if good:
        out.cards.append((".options " + " ".join(good), i))


# set variables that make ngspice run programs or read files: refused (everything else a `set` changes is
# inside a control block derate never runs: ignored with a note)
DANGEROUS_SET = frozenset({"unixcom", "sourcepath", "editor", "shell", "ngspice_lib"})


def set_assignments(args: list[str]) -> list[tuple[str, str | None]]:
    """The (name, value) pairs of a `set` command, as ngspice reads them: ``a=1``, ``a = 1``, ``a= 1``,
    ``a =1`` and flags (``a``)."""
    text = " ".join(args)
    out = []
    pos = 0
    pattern = re.compile(r"\s*([^\s=]+)\s*(?:=\s*(\([^)]*\)|'[^']*'|\"[^\"]*\"|[^\s]+))?")
    while pos < len(text):
        m = pattern.match(text, pos)
        if not m or m.end() == pos:
            break
        out.append((m.group(1), m.group(2)))
        pos = m.end()
    return out


def _set(args: list[str], raw: str, loc, allow: bool, out: ControlResult, i: int, refuse) -> None:
    unknown = []
    for name, value in set_assignments(args):
        low = name.lower()
        if low == "ngbehavior" and value:
            out.dialect = value.strip().strip("'\"").lower()
            out.notes.append((i, f"compatibility mode '{out.dialect}' requested in the control block (derate uses "
                                 "the project's dialect setting, default none)"))
            continue
        if low in DANGEROUS_SET:
            refuse(f"sets '{name}', which makes ngspice run programs or read files")
            return
        if low not in HARMLESS_SET:
            unknown.append(name)
    if unknown:
        out.notes.append((i, f"control 'set' of {', '.join(repr(u) for u in unknown)} ignored: derate never runs the "
                             "control block"))
    else:
        out.notes.append((i, "control 'set' of display variables ignored"))
