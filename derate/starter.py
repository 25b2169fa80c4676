"""`derate init`: a starter project file and a parts file with an empty slot for every capacitor."""

from __future__ import annotations

from pathlib import Path

from .errors import DerateError
from .fileio import write_output
from .netlist import ReadOptions, flatten, read_netlist
from .simulate.deck import netlist_tran
from .units import format_number

FIELDS_HINT = ("technology, rated_voltage_v, rated_temperature_c, ripple_current_a, ripple_frequency_hz, esr_ohm, "
               "thermal_resistance_c_per_w, base_life_h (electrolytics), dc_bias (class-2 ceramics)")


def write_starter(netlist: Path, options: ReadOptions, force: bool = False) -> list[Path]:
    """Write derate.yaml and parts.yaml next to the netlist; return the paths written."""
    nl = read_netlist(netlist, options)
    circuit = flatten(nl)
    folder = netlist.parent
    project, parts = folder / "derate.yaml", folder / "parts.yaml"
    for p in (project, parts):
        if p.exists() and not force:
            raise DerateError(f"{p} exists; use --force to overwrite it")
    tran = netlist_tran(nl)
    if tran:
        tran_text = (f"  # from the netlist's .tran; the window should hold whole periods of the slowest source\n"
                     f"  tran: {{step: {tran.step_s!r}, stop: {tran.stop_s!r}}}\n"
                     f"  window: {{last: {tran.stop_s / 4!r}}}\n")
    else:
        tran_text = ("  # no .tran in the netlist: set the run length and the steady-state window\n"
                     "  tran: {step: 1u, stop: 10m}\n  window: {last: 2m}\n")
    write_output(project, (
        f"# derate project for {netlist.name} (written by derate init; edit to suit)\n"
        f"netlist: {netlist.name}\nparts: parts.yaml\npolicy: industrial      # or commercial, spaceflight, or a file\n"
        f"mission: {{life_h: 50000, duty: 1.0}}\nanalysis:\n{tran_text}  timeout_s: 300\n"
        "scenarios:\n  - name: nominal\n    ambient_c: 25\n"
        "  # - name: hot\n  #   params: {vin: 26.4}\n  #   temperature_c: 60\n  #   ambient_c: 60\n"))
    lines = [f"# part data for {netlist.name}: fill in each capacitor's ratings (or name a library part with",
             "# 'part:'); an empty record makes every check report the capacitor as unrated.",
             f"# fields: {FIELDS_HINT}", "parts:"]
    internal = []
    for cap in circuit.capacitors():
        if cap.instance and cap.loc.file in nl.library_files:
            internal.append(cap)  # part of a device model: not reviewed, no part data wanted
            continue
        value = f" {format_number(cap.value, 'F')}" if cap.value else ""
        lines.append(f"  {cap.path}: {{}}   # {cap.loc.file}:{cap.loc.line}{value}")
    if internal:
        lines.append(f"# {len(internal)} capacitor(s) inside device models are not reviewed and need no data: "
                     + ", ".join(c.path for c in internal[:10]) + (" ..." if len(internal) > 10 else ""))
    write_output(parts, "\n".join(lines) + "\n")
    return [project, parts]
