"""Read a SPICE netlist (ngspice dialect) into cards, scopes and definitions, with file:line kept.

The reader is an allow-list: only known element letters and known dot cards pass.  Anything that
could make ngspice run a command or load code is refused with an UnsafeNetlistError naming the
file and line, after continuations are joined and includes expanded, and
case-insensitively.  Includes are confined to the project root unless the caller allows more.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import ForeignNetlistError, NetlistError, UnsafeNetlistError
from ..fileio import read_capped
from .control import read_control
from .lexer import poly_node_pairs, split_assignment, split_tokens, strip_inline_comment

# Element letters we understand (ngspice manual, chapters 3-12) and XSPICE 'A'.
ELEMENT_LETTERS = frozenset("rclkvieifghbdqjmswtouxa")

# Dot cards we accept.  Everything else is refused: an allow-list, not a block-list.
DOT_CARDS = frozenset({
    ".param", ".parameter", ".parameters", ".func", ".subckt", ".ends", ".model", ".include",
    ".inc", ".lib", ".endl", ".global", ".option", ".options", ".opt", ".temp", ".tran", ".op",
    ".ac", ".dc", ".noise", ".tf", ".disto", ".pz", ".sens", ".four", ".ic", ".nodeset",
    ".save", ".print", ".plot", ".probe", ".meas", ".measure", ".end", ".title", ".width",
    ".csparam", ".step", ".backanno", ".external", ".aliases", ".endaliases",
})
# cards of other simulators' netlists that derate reads but does not simulate (a note says so)
NOTED_CARDS = {".backanno": "another simulator's back-annotation card", ".probe": "derate saves its own vectors",
               ".meas": "derate measures every capacitor itself", ".measure": "derate measures every capacitor itself",
               ".print": "derate saves its own vectors", ".plot": "derate saves its own vectors",
               ".four": "derate computes the spectrum itself", ".width": "an output setting",
               ".external": "another simulator's port declaration",
               ".aliases": "another simulator's table of net aliases (derate uses the netlist's own names)"}

# Words of ngspice's control language that run commands, load code or write files.  As the first
# word of a card outside .control they are refused too: ngspice would read most of them as a device,
# but no honest netlist starts a card with them, and they are what an attacker would try.
CONTROL_WORDS = frozenset({
    "shell", "source", "codemodel", "load", "write", "wrdata", "wrs2p", "gnuplot", "edit",
    "aspice", "rspice", "setcs", "unixcom", "osdi", "cd", "hardcopy", "print", "plot", "run",
    "set", "alias", "sysinfo", "rusage",
})

# XSPICE code models that read files given in their .model card.
FILE_READING_MODELS = frozenset({"filesource", "d_source", "d_state", "table2d", "table3d"})

MODEL_LIBRARY_SUFFIXES = frozenset({".lib", ".mod", ".mdl", ".model", ".models", ".sub", ".subckt", ".pspice",
                                    ".ckt", ".bib"})
MAX_INCLUDE_DEPTH = 50  # files including files
MAX_INCLUSIONS = 10_000  # .include/.lib expansions in one netlist (an include "diamond" doubles per level)
MAX_CARDS = 2_000_000  # logical lines after includes are expanded
MAX_FILE_BYTES = 512 * 1024 * 1024

@dataclass(frozen=True, slots=True)
class Location:
    """Where a card starts: the file as shown to the user and the 1-based line number."""

    file: str
    line: int

    def __str__(self) -> str:
        return f"{self.file}:{self.line}"


# constructs only another simulator's PSpice dialect has: ngspice runs them in its compatibility mode
PSPICE_MODEL_TYPES = frozenset({"vswitch", "iswitch"})
PSPICE_TEMP = re.compile(r"(?i)(?<![\w.])temp(?![\w(])")
DEFINES_TEMP = re.compile(r"(?i)(?<![\w.])temp\s*=")


@dataclass(frozen=True, slots=True)
class Card:
    """One logical line: continuations joined, comments removed, tokens split."""

    text: str
    tokens: tuple[str, ...]
    loc: Location

    @property
    def keyword(self) -> str:
        """The lowercased first token (``.param``, ``c5``, ...)."""
        return self.tokens[0].lower()


@dataclass(frozen=True)
class ModelDef:
    """A ``.model name type (params)`` card."""

    name: str
    type: str
    params: dict[str, str]
    card: Card
    problem: str | None = None  # why the card cannot be read (an error only where the model is used)


@dataclass(frozen=True)
class ParamDef:
    """One ``name=expression`` of a ``.param`` card."""

    name: str
    expr: str
    card: Card


@dataclass
class Scope:
    """The contents of the top level or of one ``.subckt`` body."""

    elements: list[Card] = field(default_factory=list)
    params: list[ParamDef] = field(default_factory=list)
    funcs: list[Card] = field(default_factory=list)
    models: dict[str, ModelDef] = field(default_factory=dict)
    subckts: dict[str, "SubcktDef"] = field(default_factory=dict)
    parent: "Scope | None" = None

    def find_subckt(self, name: str) -> "SubcktDef | None":
        scope: Scope | None = self
        key = name.lower()
        while scope is not None:
            if key in scope.subckts:
                return scope.subckts[key]
            scope = scope.parent
        return None

    def find_model(self, name: str) -> ModelDef | None:
        scope: Scope | None = self
        key = name.lower()
        while scope is not None:
            if key in scope.models:
                return scope.models[key]
            scope = scope.parent
        return None


@dataclass
class SubcktDef:
    """A ``.subckt name pins params: k=v`` definition."""

    name: str
    pins: tuple[str, ...]
    params: dict[str, str]
    body: Scope
    card: Card
    problem: str | None = None  # why the header cannot be read (an error only where an instance uses it)


@dataclass
class Netlist:
    """A parsed netlist: the title, the top scope, every card in order, and the files read."""

    path: str
    title: str
    top: Scope
    cards: list[Card]
    analyses: list[Card]
    options: list[Card]
    other: list[Card]
    globals: set[str]
    files: list[str]
    notes: list[tuple[Location, str]] = field(default_factory=list)
    dialect: str | None = None  # a compatibility mode asked for by the netlist (set ngbehavior=...)
    steps: list[Card] = field(default_factory=list)  # .step cards (another simulator's sweeps -> scenarios)
    # files holding device models (found on the model search path, included with .lib, or named
    # like one): capacitors inside them are parts of a device model, not of the board
    library_files: set[str] = field(default_factory=set)
    # analyses written as control-block commands (file, line, text): a user's .control runs these itself
    from_control: set[tuple[str, int, str]] = field(default_factory=set)


@dataclass(frozen=True)
class ReadOptions:
    """What the reader permits beyond the safe default."""

    allow_control: bool = False
    allow_outside_includes: bool = False
    root: str | None = None  # project root for includes; default: the top netlist's folder
    # folders searched, by file name, for an include that does not resolve inside the root (an
    # exported netlist's absolute path from its author's machine, a Windows path ...)
    model_path: tuple[str, ...] = ()


def _display(path: Path) -> str:
    try:
        rel = os.path.relpath(path)
    except ValueError:  # other drive (Windows)
        return str(path)
    return rel if not rel.startswith("..") else str(path)


@dataclass
class _Physical:
    text: str
    loc: Location


class NetlistReader:
    """Reads the top netlist and its includes into a Netlist."""

    def __init__(self, options: ReadOptions | None = None):
        self.options = options or ReadOptions()
        self.files: list[str] = []
        self.notes: list[tuple[Location, str]] = []
        self.from_control: set[tuple[str, int, str]] = set()
        self.inclusions = 0
        self.card_count = 0
        self.dialect: str | None = None
        self.library_files: set[str] = set()  # files that hold device models (see is_model_library)

    # ------------------------------------------------------------ files and includes
    def read(self, path: str | os.PathLike) -> Netlist:
        top = Path(path)
        if not top.is_file():
            raise NetlistError("netlist file not found", file=str(path))
        self.root = Path(self.options.root).resolve() if self.options.root else top.resolve().parent
        text = self._read_text(top, None)
        _not_spice(text, str(path))
        shown = _display(top)
        lines = _lines(text, shown)
        title = lines[0].strip() if lines else ""
        self.files.append(shown)
        self._check_title(title, Location(shown, 1))
        physical = [_Physical(t, Location(shown, i + 1)) for i, t in enumerate(lines)][1:]
        try:
            cards = self._expand(self._logical(physical), [top.resolve()], top.resolve().parent, None)
        except RecursionError:  # backstop: MAX_INCLUDE_DEPTH normally stops first
            raise NetlistError("includes nest too deeply", file=shown) from None
        if title.lower().startswith(".title"):  # a first line `.title KiCad schematic` is the title line too
            title = title[len(".title"):].strip()
        return self._build(str(path), title, cards)

    def _check_title(self, title: str, loc: Location) -> None:
        """The title line is not a card to ngspice, but it is copied into reports: check it like one."""
        if any(ord(ch) < 32 and ch != "\t" for ch in title) or "\x7f" in title:
            raise NetlistError("the title line holds control characters", loc.file, loc.line)
        if self.options.allow_control:
            return
        low = title.lower()
        if "`" in title:
            raise UnsafeNetlistError("backquote in the title line: ngspice substitutes the output of a shell "
                                     "command; refused", loc.file, loc.line, title)
        if low.startswith(("*#", ".control")):
            raise UnsafeNetlistError("the title line reads as a control command; refused (the first line of a "
                                     "netlist is its title: start it with a plain description)",
                                     loc.file, loc.line, title)

    def _read_text(self, path: Path, at: Card | None) -> str:
        try:
            with open(path, "rb") as fh:
                data = read_capped(fh, MAX_FILE_BYTES)
            if len(data) > MAX_FILE_BYTES:
                where = (at.loc.file, at.loc.line, at.text) if at is not None else (str(path), None, None)
                raise NetlistError(f"'{path.name}' is larger than {MAX_FILE_BYTES // 2**20} MB", *where)
        except OSError as exc:
            if at is not None:
                raise NetlistError(f"cannot read included file '{path}': {exc.strerror}",
                                   at.loc.file, at.loc.line, at.text) from None
            raise NetlistError(f"cannot read netlist: {exc.strerror}", file=str(path)) from None
        # a DOS end-of-file byte (Ctrl-Z, 0x1A; old vendor model files end with one): the file ends there
        data = data.split(b"\x1a", 1)[0]
        try:
            return data.decode("utf-8")
        except UnicodeDecodeError:
            # Exported netlists from older tools are often Latin-1 (where 0xB5 is the micro sign).
            return data.decode("latin-1")

    def _include_target(self, card: Card, base: Path) -> tuple[Path, bool, bool]:
        """The file an .include/.lib card names.  Another simulator reads the rest of the line as the path
        (``.lib vendor models/diodes.lib``, ``.include C:\\Program Files\\...``): when the first word names
        no file but the whole rest of the line does, that file is taken, with a note.  Returns (file, found by
        name on the model search path, read from the whole rest of the line)."""
        try:
            return (*self._resolve_include(card.tokens[1], base, card), False)
        except NetlistError as first:
            rest = card.text.split(None, 1)[1].strip() if len(card.tokens) > 2 else ""
            if not rest or rest.startswith(("'", '"')):
                raise
            try:
                found = self._resolve_include(rest, base, card)
            except NetlistError:
                raise first from None
            self.notes.append((card.loc, f"include path with spaces '{rest}' read as one path (ngspice would "
                                         "need it in quotes)"))
            return (*found, True)

    def _resolve_include(self, raw: str, base: Path, card: Card) -> tuple[Path, bool]:
        """The file an include names, and whether it was found by name on the model search path."""
        name = raw.strip().strip('"').strip("'")
        if not name:
            raise NetlistError("include without a file name", card.loc.file, card.loc.line, card.text)
        if any(ord(ch) < 32 for ch in name):
            raise NetlistError("include path holds a control character", card.loc.file, card.loc.line, card.text)
        windows = "\\" in name or (len(name) > 1 and name[1] == ":")
        target = Path(os.path.expanduser(name)) if name.startswith("~") else Path(name)
        if not target.is_absolute() and not windows:
            target = base / target
        resolved = target.resolve()
        inside = self._inside_root(resolved)
        if not windows and resolved.is_file() and (inside or self.options.allow_outside_includes):
            return resolved, False
        # another machine's path: look for the file by its name on the model search path
        found = self._search(re.split(r"[\\/]", name)[-1], base)
        if found is not None:
            self.notes.append((card.loc, f"include '{name}' resolved by file name to {_display(found)} "
                                         "(model search path)"))
            return found, True
        if not inside and not self.options.allow_outside_includes:
            raise UnsafeNetlistError(
                f"include path '{name}' leaves the project root '{_display(self.root)}'; refused (give --root "
                "a folder that holds both the netlist and the file, put the file on the model search path, or "
                "use --allow-outside-includes to permit it)",
                card.loc.file, card.loc.line, card.text) from None
        where = ", ".join(_display(d) for d, _ in self._search_dirs(base)) or "none"
        hint = ""
        if windows:  # a path on the machine the netlist was exported from (a simulator's own model libraries)
            base_name = re.split(r"[\\/]", name)[-1]
            hint = (f"; it is a path on the machine that wrote the netlist: put '{base_name}', "
                    "or a file with the models the circuit uses, in the project folder or a model_path folder")
        raise NetlistError(f"included file '{name}' not found (nor a file of that name on the model search path: "
                           f"{where}){hint}", card.loc.file, card.loc.line, card.text)

    def _inside_root(self, resolved: Path) -> bool:
        return resolved == self.root or self.root in resolved.parents

    def _search_dirs(self, base: Path) -> list[tuple[Path, bool]]:
        """(folder, searched recursively): the including file's folder and the project root by
        themselves, then the configured model folders with their subfolders."""
        out: list[tuple[Path, bool]] = []
        for d, recursive in [(base, False), (self.root, False)] + [(Path(m), True) for m in self.options.model_path]:
            r = d.resolve()
            if r.is_dir() and not any(r == o and rec >= recursive for o, rec in out):
                out.append((r, recursive))
        return out

    def _search(self, filename: str, base: Path) -> Path | None:
        """A file called ``filename`` (any case) in the search folders (at most 20,000 entries looked at)."""
        if not filename or filename in (".", ".."):
            return None
        low = filename.lower()
        looked = 0
        for d, recursive in self._search_dirs(base):
            walker = os.walk(d) if recursive else [(str(d), [], os.listdir(d))]
            for folder, dirnames, files in walker:
                dirnames[:] = sorted(x for x in dirnames if not x.startswith("."))
                for f in sorted(files):
                    looked += 1
                    if f.lower() == low:
                        hit = (Path(folder) / f).resolve()
                        if hit.is_file() and (self._inside_root(hit) or self.options.allow_outside_includes
                                              or any(hit.is_relative_to(Path(m).resolve())
                                                     for m in self.options.model_path)):
                            return hit
                if looked > 20_000:
                    return None
        return None

    def _expand(self, cards: list[Card], stack: list[Path], base: Path, lib_section: str | None) -> list[Card]:
        """Replace .include/.lib cards by the cards they name; keep only the chosen .lib section."""
        out: list[Card] = []
        section_stack: list[str] = []  # .lib sections being defined in this file
        selecting = lib_section is not None
        keep_depth = -1
        # a one-word .lib opens a section when an .endl follows to close it; without one it names a
        # whole file to include (LTspice writes `.lib C:\...\standard.dio`)
        endls_after = [0] * (len(cards) + 1)
        for k in range(len(cards) - 1, -1, -1):
            endls_after[k] = endls_after[k + 1] + (cards[k].keyword == ".endl")
        for at, card in enumerate(cards):
            kw = card.keyword
            if kw == ".lib" and len(card.tokens) == 2 and endls_after[at] > len(section_stack):
                # start of a section definition inside a library file
                section_stack.append(card.tokens[1].lower())
                if selecting and card.tokens[1].lower() == lib_section and keep_depth < 0:
                    keep_depth = len(section_stack)
                continue
            if kw == ".endl":
                if not section_stack:
                    raise NetlistError(".endl without .lib", card.loc.file, card.loc.line, card.text)
                if keep_depth == len(section_stack):
                    keep_depth = -1
                section_stack.pop()
                continue
            inside = (keep_depth > 0) if selecting else (not section_stack)
            if not inside:
                continue
            if kw in (".include", ".inc", ".lib"):
                if len(card.tokens) < 2:
                    raise NetlistError("include without a file name", card.loc.file, card.loc.line, card.text)
                target, by_name, joined = self._include_target(card, base)
                self.inclusions += 1
                if self.inclusions > MAX_INCLUSIONS:
                    raise NetlistError(f"more than {MAX_INCLUSIONS:,} include expansions: files include each "
                                       "other too often (is a file included twice at every level?)",
                                       card.loc.file, card.loc.line, card.text)
                if len(stack) >= MAX_INCLUDE_DEPTH:
                    raise NetlistError(f"includes nest more than {MAX_INCLUDE_DEPTH} files deep",
                                       card.loc.file, card.loc.line, card.text)
                if target in stack:
                    chain = " -> ".join(_display(p) for p in stack + [target])
                    raise NetlistError(f"include cycle: {chain}", card.loc.file, card.loc.line, card.text)
                section = card.tokens[2].lower() if kw == ".lib" and len(card.tokens) >= 3 and not joined else None
                shown = _display(target)
                if shown not in self.files:
                    self.files.append(shown)
                if by_name or kw == ".lib" or target.suffix.lower() in MODEL_LIBRARY_SUFFIXES:
                    self.library_files.add(shown)
                lines = _lines(self._read_text(target, card), shown)
                physical = [_Physical(t, Location(shown, i + 1)) for i, t in enumerate(lines)]
                sub = self._expand(self._logical(physical), stack + [target], target.parent, section)
                if section is not None and not sub and not self._has_section(lines, section):
                    raise NetlistError(f"library section '{card.tokens[2]}' not found in '{card.tokens[1]}'",
                                       card.loc.file, card.loc.line, card.text)
                out.extend(sub)
                continue
            out.append(card)
        if section_stack:
            raise NetlistError(f".lib section '{section_stack[-1]}' has no .endl", cards[-1].loc.file,
                               cards[-1].loc.line, cards[-1].text)
        return out

    @staticmethod
    def _has_section(lines: list[str], section: str) -> bool:
        for line in lines:
            toks = line.split()
            if len(toks) == 2 and toks[0].lower() == ".lib" and toks[1].lower() == section:
                return True
        return False

    # ------------------------------------------------------------ physical -> logical lines
    def _logical(self, physical: list[_Physical]) -> list[Card]:
        """Join continuation lines, drop comments, check line-level safety, stop at .end."""
        allow = self.options.allow_control
        pending: list[tuple[str, Location]] = []  # (text, first location)
        cards: list[Card] = []
        in_control: Location | None = None
        control_lines: list[tuple[str, Location]] = []

        def control(lines: list[tuple[str, Location]]) -> None:
            """Read control text with the allow-list (netlist/control.py): its analysis and options
            become cards, everything else a note or a refusal."""
            flush()
            result = read_control(lines, allow)
            for text, i in result.cards:
                loc = lines[i][1]
                cards.append(Card(text, tuple(split_tokens(text)), loc))
                self.from_control.add((loc.file, loc.line, text))
            for i, note in result.notes:
                self.notes.append((lines[i][1], note))
            if result.dialect:
                self.dialect = self.dialect or result.dialect

        def flush() -> None:
            if not pending:
                return
            text, loc = pending[0][0], pending[0][1]
            if len(pending) > 1:
                text = " ".join(p[0] for p in pending)
            pending.clear()
            try:
                tokens = split_tokens(text)
            except ValueError as exc:
                if not text.lower().startswith(".model"):
                    raise NetlistError(f"cannot split card: {exc}", loc.file, loc.line, text) from None
                tokens = text.split()  # a broken model is an error only where it is used (_model)
            if tokens:
                tokens = poly_node_pairs(tokens)
                cards.append(Card(text, tuple(tokens), loc))
                self.card_count += 1
                if self.card_count > MAX_CARDS:
                    raise NetlistError(f"more than {MAX_CARDS:,} cards once includes are expanded", loc.file,
                                       loc.line)

        in_aliases: Location | bool = False  # .ALIASES ... .ENDALIASES: another simulator's table of names
        for ph in physical:
            raw = ph.text
            stripped = raw.strip()
            if not stripped:
                continue
            low = stripped.lower()
            if in_aliases:
                in_aliases = False if low.startswith(".endaliases") else in_aliases
                continue
            if low.split(None, 1)[0] == ".aliases":
                in_aliases = ph.loc  # the .aliases line itself stays, for the note
            if "`" in raw and not allow:
                raise UnsafeNetlistError(
                    "backquote: ngspice substitutes the output of a shell command; refused",
                    ph.loc.file, ph.loc.line, raw)
            if in_control is not None:
                if low.startswith(".endc"):
                    in_control = None
                    control(control_lines)
                    control_lines = []
                else:
                    control_lines.append((stripped, ph.loc))
                continue
            if stripped.startswith("*"):
                if stripped.startswith("*#"):
                    # ngspice runs a '*#' line as a control command although it looks like a comment;
                    # an empty or decorative one (*#, *#-----, *####) is a separator: no command starts
                    # with punctuation, except '!' (a shell escape), which the control reader refuses
                    content = stripped[2:].strip()
                    if content and (content[0].isalpha() or content[0] in "!_"):
                        control([(content, ph.loc)])
                continue
            if low.startswith(".control"):
                in_control = ph.loc
                continue
            if low.startswith(".endc"):
                raise NetlistError(".endc without .control", ph.loc.file, ph.loc.line, raw)
            text = strip_inline_comment(stripped).strip()
            if not text:
                continue
            if text.startswith("+"):
                if not pending:
                    raise NetlistError("continuation line '+' with no card before it",
                                       ph.loc.file, ph.loc.line, raw)
                pending.append((text[1:].strip(), ph.loc))
                continue
            flush()
            if text.lower().split()[0] == ".end":
                break
            pending.append((text, ph.loc))
        flush()
        if in_control is not None:
            raise NetlistError(".control block has no .endc", in_control.file, in_control.line)
        if in_aliases:  # everything after it would be skipped unread
            raise NetlistError(".aliases table has no .endaliases", in_aliases.file, in_aliases.line)
        for card in cards:
            self._check_card_safety(card)
        return cards

    def _check_card_safety(self, card: Card) -> None:
        kw = card.keyword
        allow = self.options.allow_control
        if kw.startswith("pre_") and not allow:
            raise UnsafeNetlistError(f"'{card.tokens[0]}' command: ngspice runs it before the circuit "
                                     "is read; refused", card.loc.file, card.loc.line, card.text)
        if kw in CONTROL_WORDS and not allow:
            raise UnsafeNetlistError(f"'{card.tokens[0]}' is an ngspice control command, not a circuit "
                                     "card; refused", card.loc.file, card.loc.line, card.text)
        if kw.startswith("."):
            if kw not in DOT_CARDS:
                raise NetlistError(f"unsupported dot card '{card.tokens[0]}' (derate accepts only known "
                                   "circuit cards)", card.loc.file, card.loc.line, card.text)
        elif kw[0] not in ELEMENT_LETTERS:
            raise NetlistError(f"unknown element type '{card.tokens[0][0]}' (expected one of "
                               "R C L K V I E F G H B D Q J M S W T O U X A)",
                               card.loc.file, card.loc.line, card.text)

    # ------------------------------------------------------------ cards -> scopes
    def _build(self, path: str, title: str, cards: list[Card]) -> Netlist:
        top = Scope()
        scope = top
        open_subckts: list[SubcktDef] = []
        analyses: list[Card] = []
        options: list[Card] = []
        other: list[Card] = []
        globals_: set[str] = set()
        steps: list[Card] = []
        noted: dict[str, list[Card]] = {}
        for card in cards:
            kw = card.keyword
            if not kw.startswith("."):
                scope.elements.append(card)
                continue
            if kw == ".subckt":
                sub = self._subckt_header(card, scope)
                if sub.name.lower() in scope.subckts:
                    prev = scope.subckts[sub.name.lower()].card.loc
                    raise NetlistError(f"subcircuit '{sub.name}' defined twice (first at {prev})",
                                       card.loc.file, card.loc.line, card.text)
                scope.subckts[sub.name.lower()] = sub
                open_subckts.append(sub)
                scope = sub.body
            elif kw == ".ends":
                if not open_subckts:
                    raise NetlistError(".ends without .subckt", card.loc.file, card.loc.line, card.text)
                sub = open_subckts.pop()
                if len(card.tokens) > 1 and card.tokens[1].lower() != sub.name.lower():
                    raise NetlistError(f".ends {card.tokens[1]} closes subcircuit '{sub.name}'",
                                       card.loc.file, card.loc.line, card.text)
                scope = scope.parent or top
            elif kw in (".param", ".parameter", ".parameters"):
                scope.params.extend(self._params(card))
            elif kw == ".func":
                scope.funcs.append(card)
            elif kw == ".model":
                model = self._model(card)
                if model.name.lower() in scope.models:
                    prev = scope.models[model.name.lower()].card.loc
                    self.notes.append((card.loc, f"model '{model.name}' redefined (first at {prev}); "
                                       "the last definition is used"))
                scope.models[model.name.lower()] = model
            elif kw == ".global":
                globals_.update(t.lower() for t in card.tokens[1:])
            elif kw in (".tran", ".op", ".ac", ".dc", ".noise", ".tf", ".disto", ".pz", ".sens"):
                if open_subckts:
                    raise NetlistError(f"analysis card {card.tokens[0]} inside subcircuit "
                                       f"'{open_subckts[-1].name}'", card.loc.file, card.loc.line, card.text)
                analyses.append(card)
            elif kw in (".option", ".options", ".opt"):
                options.append(card)
            elif kw == ".step":
                steps.append(card)
            else:
                if kw in NOTED_CARDS:
                    noted.setdefault(kw, []).append(card)
                other.append(card)
        if open_subckts:
            sub = open_subckts[-1]
            raise NetlistError(f"subcircuit '{sub.name}' has no .ends", sub.card.loc.file,
                               sub.card.loc.line, sub.card.text)
        for kw, found in noted.items():
            self.notes.append((found[0].loc, f"{kw} card{'s' if len(found) > 1 else ''} ignored ({len(found)}x): "
                               f"{NOTED_CARDS[kw]}"))
        if self.dialect is None:
            self.dialect = self._detect_pspice(cards)
        return Netlist(path=path, title=title, top=top, cards=cards, analyses=analyses, options=options,
                       other=other, globals=globals_, files=list(self.files), notes=list(self.notes),
                       dialect=self.dialect, steps=steps, library_files=set(self.library_files),
                       from_control=set(self.from_control))

    def _detect_pspice(self, cards: list[Card]) -> str | None:
        """The compatibility mode PSpice constructs need (``VSWITCH``/``ISWITCH`` models, ``TEMP`` in an
        expression), with a note naming the first: 'psa' (derate's deck is one file with the libraries'
        text in it); None without any."""
        found: list[tuple[Card, str]] = []
        # a netlist that defines its own 'temp' parameter means that one, not PSpice's built-in
        own_temp = any(c.keyword in (".param", ".parameter", ".parameters", ".subckt") and DEFINES_TEMP.search(c.text)
                       for c in cards)
        for card in cards:
            kw = card.keyword
            if kw == ".model" and len(card.tokens) > 2 and card.tokens[2].split("(")[0].lower() in PSPICE_MODEL_TYPES:
                found.append((card, f"a {card.tokens[2].split('(')[0].upper()} model"))
            elif not own_temp and PSPICE_TEMP.search(card.text) and (
                    kw in (".param", ".func") or "{" in card.text or "'" in card.text):
                found.append((card, "TEMP in an expression"))
        if not found:
            return None
        card, what = found[0]
        self.notes.append((card.loc, f"PSpice construct ({what}): ngspice reads the deck in its PSpice compatibility "
                                     "mode 'psa' (derate's deck holds the libraries' text, so the mode that ngspice "
                                     "applies to included files ('ps') must cover the whole deck; dialect in "
                                     "derate.yaml or --dialect chooses another)"))
        return "psa"

    def _subckt_header(self, card: Card, parent: Scope) -> SubcktDef:
        toks = card.tokens
        if len(toks) < 2:
            raise NetlistError(".subckt without a name", card.loc.file, card.loc.line, card.text)
        pins: list[str] = []
        params: dict[str, str] = {}
        in_params = False
        problem: str | None = None
        for tok in toks[2:]:
            if tok.lower() == "params:":
                in_params = True
                continue
            kv = split_assignment(tok)
            if kv:
                params[kv[0].lower()] = kv[1]
                in_params = True
            elif in_params:
                # ngspice runs a deck whose broken subcircuit nothing uses: an error only where it is used
                problem = problem or f"expected name=value after the pins, got '{tok}'"
            else:
                pins.append(tok.lower())
        return SubcktDef(toks[1], tuple(pins), params, Scope(parent=parent), card, problem)

    def _params(self, card: Card) -> list[ParamDef]:
        out = []
        for tok in card.tokens[1:]:
            kv = split_assignment(tok)
            if not kv or not kv[1]:
                raise NetlistError(f"expected name=value in {card.tokens[0]}, got '{tok}'",
                                   card.loc.file, card.loc.line, card.text)
            out.append(ParamDef(kv[0].lower(), kv[1], card))
        return out

    def _model(self, card: Card) -> ModelDef:
        """Read a .model card.  A card that cannot be read becomes a ModelDef with a ``problem``:
        ngspice runs a deck whose broken model is never used, so only a use of it is an error
        (netlist.bad-model); the safety checks run on the raw text either way."""
        toks = card.tokens
        if len(toks) < 2:
            raise NetlistError(".model needs a name and a type", card.loc.file, card.loc.line, card.text)
        name = toks[1]
        rest = " ".join(toks[2:])
        mtype = ""
        for ch in rest:
            if ch.isalnum() or ch == "_":
                mtype += ch
            else:
                break
        if not self.options.allow_control:
            if mtype.lower() in FILE_READING_MODELS:
                raise UnsafeNetlistError(f"XSPICE model type '{mtype}' reads files named in the netlist; "
                                         "refused (use --allow-control to permit it)",
                                         card.loc.file, card.loc.line, card.text)
            found = _FILE_PARAM.search(rest)
            if found:
                raise UnsafeNetlistError(f"model parameter '{found.group(1)}' names a file to read; refused",
                                         card.loc.file, card.loc.line, card.text)
        if not mtype:
            return ModelDef(name, "", {}, card, problem=f"no model type after '{name}'")
        body = rest[len(mtype):].strip()
        if body.startswith("(") and body.endswith(")"):
            body = body[1:-1]
        params: dict[str, str] = {}
        try:
            for tok in split_tokens(body):
                kv = split_assignment(tok)
                if kv:
                    params[kv[0].lower()] = kv[1]
        except ValueError as exc:
            return ModelDef(name, mtype.lower(), {}, card, problem=f"cannot read its parameters ({exc})")
        return ModelDef(name, mtype.lower(), params, card)


_FILE_PARAM = re.compile(r"(?i)(?<![\w])(file|filename|input_file)\s*=")


def _lines(text: str, file: str) -> list[str]:
    """The physical lines as ngspice reads them: split at newlines only (a CR before one is dropped);
    form feeds, Unicode line separators and other characters Python would split at stay in the line."""
    if "\r" in text and "\n" not in text:
        raise NetlistError("the lines end with a carriage return alone (classic Mac OS); ngspice would read the "
                           "file as one line: save it with LF or CRLF line endings", file=file)
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return [ln[:-1] if ln.endswith("\r") else ln for ln in lines]


def _not_spice(text: str, path: str) -> None:
    """A clear error for files that are netlists of another kind (the layout netlist a schematic editor
    writes for the board), which are no SPICE deck."""
    head = text.lstrip("\ufeff \t\r\n")[:400].lower()
    if head.startswith("(export") or (head.startswith("(") and "(design" in head and "(components" in text[:20000]):
        raise ForeignNetlistError("this is KiCad's layout netlist (an s-expression file for the board editor), not a SPICE "
                           "netlist: export one from the schematic editor (File > Export > Netlist..., the SPICE tab, "
                           "or the simulator's netlist export) and give derate that file", file=path, line=1)
    if head.startswith("<?xml") or head.startswith("<export"):
        raise ForeignNetlistError("this is an XML netlist (a schematic editor's intermediate file), not a SPICE netlist: "
                           "export the SPICE netlist and give derate that file", file=path, line=1)


def read_netlist(path: str | os.PathLike, options: ReadOptions | None = None) -> Netlist:
    """Return the parsed netlist at ``path`` (includes expanded, safety checked)."""
    return NetlistReader(options).read(path)
