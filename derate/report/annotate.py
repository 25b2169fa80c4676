"""A copy of the netlist with each capacitor card followed by a comment: worst stress and status."""

from __future__ import annotations

from pathlib import Path

from ..review import Review, as_record
from .words import hours, percent, quantity, status_word, temperature

MARK = "*~ derate:"


def annotate_netlist(review: Review) -> str:
    """Return the top netlist's text with a stress comment after every capacitor card of that file."""
    rec = as_record(review)
    netlist = Path(review.project.netlist)
    lines = netlist.read_text(encoding="utf-8", errors="replace").splitlines()
    shown = rec["project"]["netlist"]
    notes: dict[int, list[str]] = {}
    for row in rec["capacitors"]:
        if row["file"] != shown or not row["line"]:
            continue
        bits = [f"{row['reference']} {status_word(row['status'])}"]
        if row["worst_scenario"]:
            bits.append(f"worst {row['worst_scenario']}")
        if row["v_stress_pct"] is not None:
            bits.append(f"V {quantity(row['v_peak_v'], 'V')} of {quantity(row['v_rated_v'], 'V')} = "
                        f"{percent(row['v_stress_pct'])} (limit {percent(row['v_limit_pct'])})")
        if row["ripple_equivalent_a"] is not None:
            bits.append(f"ripple {quantity(row['ripple_equivalent_a'], 'A')} of "
                        f"{quantity(row['ripple_allowed_a'], 'A')} allowed")
        if row["hotspot_c"] is not None:
            bits.append(f"hot spot {temperature(row['hotspot_c'])}")
        if row["life_h"] is not None:
            bits.append(f"life {hours(row['life_h'])}")
        if row["findings"]:
            bits.append("findings " + " ".join(sorted(set(row["findings"]))))
        notes.setdefault(row["line"], []).append("; ".join(bits))
    # the first line of a netlist is its title, copied by no one verbatim: the copy gets a title of
    # derate's own and keeps the original only inside a comment
    out: list[str] = [f"* derate: annotated copy of {netlist.name}"]
    if lines:
        out.append("* title: " + "".join(ch if ch.isprintable() else "?" for ch in lines[0]))
    pending: list[str] = []
    for i, line in enumerate(lines, start=1):
        if i == 1:
            continue
        # a card may continue on '+' lines: the comment goes after the last of them
        if pending and not line.lstrip().startswith("+"):
            out.extend(f"{MARK} {n}" for n in pending)
            pending = []
        out.append(line)
        if i in notes:
            pending = notes[i]
    out.extend(f"{MARK} {n}" for n in pending)
    return "\n".join(out) + "\n"
