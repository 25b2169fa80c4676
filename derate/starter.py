"""`derate init`: a project that runs, from the netlist and the part data engineers already have.

derate.yaml names the netlist, the BOM and schematic given, the policy and one nominal scenario;
the netlist's own transient analysis is used as it is (step, stop and maximum step), else a run of
twenty periods of its slowest source.  parts.yaml is written only for capacitors that the BOM and
schematic leave without the data the policy requires, each with a comment naming exactly the
missing fields; capacitors inside device models and do-not-populate ones are left out.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

from . import typical
from .bom import load_bom
from .cardparts import load_card_attributes
from .checks import STRESS_CHECKS
from .errors import DerateError
from .fileio import write_output
from .netlist import ReadOptions, flatten, read_netlist
from .parts import Part, PartTable, designator_aliases
from .policy import load_policy
from .schematic import load_schematic
from .simulate.deck import netlist_tran
from .simulate.window import source_periods
from .trust import Confinement
from .units import format_number

_SPICE_PREFIX = {"T": "T", "G": "G", "M": "Meg", "k": "k", "": "", "m": "m", "\u00b5": "u", "n": "n", "p": "p", "f": "f"}


def spice_number(x: float) -> str:
    """A number as a netlist would write it (``100n``, ``2.2u``, ``47``), exact to 4 digits."""
    text = format_number(x, "", 4)
    number, _, prefix = text.partition(" ")
    return number + _SPICE_PREFIX.get(prefix, prefix)


def needs(part: Part | None, policy, technology_hint: str | None = None) -> dict[str, list[str]]:
    """{check: missing part fields} for the checks the policy requires of this part."""
    if part is None:
        return {"all": ["technology", "rated_voltage_v"]}
    if part.technology is None:
        return {"all": ["technology"]}
    out: dict[str, list[str]] = {}
    for module in STRESS_CHECKS:
        info = module.INFO
        if not info.applies(part) or not policy.required(part.technology, info.short):
            continue
        missing = [n for n in info.needs if getattr(part, n, None) is None]
        if info.short == "dc-bias" and part.dc_bias is None:
            missing = ["dc_bias (or case_size for typical data)" if policy.accepts_typical else "dc_bias"]
        if info.short == "life" and part.base_life_h is None:
            missing.append("base_life_h")
        if info.short == "ripple" and part.ripple_current_a is None:
            missing.append("ripple_current_a")
        if missing:
            out[info.short] = sorted(set(missing))
    return out


def write_starter(netlists: Path | list[Path], options: ReadOptions, force: bool = False, boms: list[Path] = (),
                  schematics: list[Path] = (), policy_name: str = "industrial",
                  project_file: Path | None = None) -> list[Path]:
    """Write derate.yaml (and parts.yaml when something is missing) for one netlist, or for the decks of one
    board (several netlists: a project with ``netlists:``); return the paths.  ``project_file`` is where
    the project goes (default: derate.yaml beside the first netlist); parts.yaml goes beside it."""
    netlists = [netlists] if isinstance(netlists, Path) else list(netlists)
    if not netlists:
        raise DerateError("give at least one netlist")
    if project_file is not None and project_file.suffix.lower() not in (".yaml", ".yml"):
        raise DerateError(f"{project_file}: a project file is YAML; give a name ending in .yaml")
    project = project_file if project_file is not None else netlists[0].parent / "derate.yaml"
    folder = project.parent
    parts_file = folder / "parts.yaml"
    for p in (project, parts_file):
        if p.exists() and not force:
            raise DerateError(f"{p} exists; use --force to overwrite it")
    if not folder.is_dir():
        raise DerateError(f"{folder}: no such folder for the project file")
    policy = load_policy(policy_name)
    decks = []
    for netlist in netlists:
        nl = read_netlist(netlist, options)
        decks.append((netlist, nl, flatten(nl)))
    table = PartTable()
    trust = Confinement.for_project(folder)
    for b in boms:
        load_bom(Path(b), table)
    for s in schematics:
        load_schematic(Path(s), table, trust.allowing(Path(s)))
    rows, internal, dnp, electrolytic, seen = [], [], [], False, set()
    for netlist, nl, circuit in decks:
        load_card_attributes(circuit, table)
        for cap in circuit.capacitors():
            if cap.path in seen:
                continue  # one designator in two decks is one part on the board
            seen.add(cap.path)
            if cap.instance and cap.loc.file in nl.library_files:
                internal.append(cap.path)
                continue
            if any(n in table.dnp for n in designator_aliases(cap.path)):
                dnp.append(cap.path)
                continue
            part = table.lookup(cap.path)
            if part is not None and policy.accepts_typical:
                part = typical.fill(part)
            electrolytic |= part is not None and part.technology in ("aluminum-electrolytic", "aluminum-polymer")
            missing = needs(part, policy)
            if missing:
                value = f", {format_number(cap.value, 'F')} in the netlist" if cap.value else ""
                what = "; ".join(f"{k}: {', '.join(v)}" for k, v in missing.items())
                rows.append(f"  {cap.path}: {{}}   # {cap.loc}{value}; needs {what}")

    def rel(p: Path) -> str:
        return Path(os.path.relpath(Path(p).resolve(), folder.resolve())).as_posix()
    names = ", ".join(n.name for n in netlists)
    lines = [f"# derate project for {names} (written by derate init; edit to suit)"]
    scenarios = ["  - name: nominal", "    ambient_c: 25"]
    if len(decks) == 1:
        netlist, nl, circuit = decks[0]
        lines += [f"netlist: {rel(netlist)}"]
    else:
        lines += ["# one board, several decks: each simulated with its own analysis and scenarios, one review",
                  "netlists:"]
        used: set[str] = set()
        for netlist, nl, circuit in decks:
            name = _deck_name(netlist, used)
            own = _analysis(nl, circuit)
            lines += [f"  - name: {name}", f"    netlist: {rel(netlist)}"]
            if all(a.strip().startswith("#") for a in own):
                lines += ["  " + a for a in own]  # the netlist's own .tran: nothing to set
            else:
                lines += ["    analysis:", *("    " + a for a in own)]
    if boms:
        lines.append(f"bom: {{file: {rel(boms[0])}}}")
    if schematics:
        lines.append(f"schematic: [{', '.join(rel(s) for s in schematics)}]")
    if rows:
        lines.append("parts: parts.yaml")
    lines.append(f"policy: {policy_name}      # commercial, industrial, spaceflight, or a policy file")
    if electrolytic:
        lines.append("# mission: {life_h: HOURS}   # required service life: the electrolytics' life check needs it")
    if len(decks) == 1:
        lines += ["analysis:", *_analysis(nl, circuit), "  timeout_s: 300"]
    else:
        lines += ["analysis:", "  timeout_s: 300"]
    lines += ["scenarios:", *scenarios]
    params = sorted({p.name for _, nl, _ in decks for p in nl.top.params})
    if params:
        lines.append(f"  # more corners: set the netlist's parameters ({', '.join(params[:6])}) per scenario, e.g.")
        lines.append(f"  # - {{name: hot, params: {{{params[0]}: ...}}, temperature_c: 60, ambient_c: 60}}")
    if internal or dnp:
        lines.append(f"# not reviewed: {len(internal)} capacitor(s) inside device models, {len(dnp)} not fitted")
    written = [project]
    write_output(project, "\n".join(lines) + "\n")
    if rows:
        head = [f"# part data derate still needs for {names} under policy '{policy_name}' (fill in, or name a",
                "# library part with 'part:'); a capacitor without what its required checks need is unrated."]
        write_output(parts_file, "\n".join(head + ["parts:"] + rows) + "\n")
        written.append(parts_file)
    return written


def _deck_name(netlist: Path, used: set[str]) -> str:
    """A deck name from its file name, letters, digits, '_', '.', '-' only, unique in the board."""
    base = re.sub(r"[^A-Za-z0-9_.-]+", "-", netlist.stem).strip("-.") or "deck"
    if not base[0].isalnum():
        base = "d" + base
    base = base[:36]
    name, k = base, 2
    while name in used:
        name, k = f"{base}-{k}", k + 1
    used.add(name)
    return name


def _analysis(nl, circuit) -> list[str]:
    tran = netlist_tran(nl)
    if tran is not None:
        return ["  # the netlist's own transient analysis is used: "
                f"step {spice_number(tran.step_s)}, stop {spice_number(tran.stop_s)}"
                + (f", maximum step {spice_number(tran.max_step_s)}" if tran.max_step_s else "")]
    periods = source_periods(circuit)
    if periods:
        slow, fast = max(periods), min(periods)
        return [f"  tran: {{step: {spice_number(fast / 100)}, stop: {spice_number(20 * slow)}}}   "
                "# twenty periods of the slowest source; lengthen it if the steady-state check says so"]
    return ["  tran: {step: 1u, stop: 10m}   # no .tran and no periodic source in the netlist: set the run length"]
