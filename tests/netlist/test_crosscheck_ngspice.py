"""Outside reference for the front end: ngspice 39's own expansion of the same netlists.

For each corpus netlist, ngspice loads the file (its own reader: comments, continuations,
includes, subcircuit expansion and parameter evaluation) and `listing e` prints the expanded
element lines; `show c : capacitance` prints evaluated capacitances.  The set of flattened device
names with their nodes that derate produces must equal ngspice's, and so must the capacitances.
"""

from __future__ import annotations

import re

import pytest

from derate.netlist import load_circuit
from tests.conftest import NETLISTS
from tests.netlist.ngspice_text import parse_listing, parse_show

CORPUS = ["all_elements.cir", "hierarchy.cir", "includes.cir", "sources.cir"]


def _ngspice_view(pool, path):
    text = path.read_text()
    # ngspice resolves relative includes against its working directory for the top file (the
    # worker runs in an empty one), so the top file's include paths are made absolute; nested
    # includes stay relative and are resolved by ngspice itself.
    text = re.sub(r"(?im)^(\.include|\.inc|\.lib)\s+(\S+)(?=\s+\S+|\s*$)",
                  lambda m: f"{m.group(1)} {path.parent / m.group(2)}", text)
    job = {"type": "inspect", "deck": text, "commands": ["listing e", "show c : capacitance"]}
    res = pool.run([(path.name, job, 30)])[0]
    assert res.ok, res.error
    return res.data["outputs"]


@pytest.mark.ngspice
@pytest.mark.parametrize("name", CORPUS)
def test_flattened_names_and_nodes_equal_ngspice_listing(ngspice_pool, name):
    path = NETLISTS / name
    circuit = load_circuit(path)
    outputs = _ngspice_view(ngspice_pool, path)
    rows = parse_listing(outputs["listing e"])
    ours = {e.spice_name: e.nodes for e in circuit.elements}
    theirs = {row[0]: row for row in rows}
    assert set(ours) == set(theirs), f"names differ: only ours {set(ours) - set(theirs)}, only ngspice {set(theirs) - set(ours)}"
    for dev, nodes in ours.items():
        assert tuple(theirs[dev][1:1 + len(nodes)]) == nodes, dev


@pytest.mark.ngspice
@pytest.mark.parametrize("name", CORPUS)
def test_capacitances_equal_ngspice_show(ngspice_pool, name):
    path = NETLISTS / name
    circuit = load_circuit(path)
    outputs = _ngspice_view(ngspice_pool, path)
    theirs = parse_show(outputs["show c : capacitance"], "capacitance")
    ours = {e.spice_name: e for e in circuit.capacitors()}
    assert set(ours) == set(theirs)
    for dev, el in ours.items():
        # both include the parallel multiplier m (C2 of all_elements.cir: 4.7u, m=2)
        assert theirs[dev] == pytest.approx(el.value, rel=1e-6), dev
