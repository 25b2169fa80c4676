"""Netlist front end: read (parser), expand (flatten), and check topology (graph)."""

from .flatten import Circuit, Element, flatten
from .graph import CircuitGraph, circuit_graph, lint
from .parser import Location, Netlist, ReadOptions, read_netlist

__all__ = ["Circuit", "Element", "Location", "Netlist", "ReadOptions", "CircuitGraph", "circuit_graph", "flatten", "lint",
           "read_netlist", "load_circuit"]


def load_circuit(path, options: ReadOptions | None = None, param_overrides=None) -> Circuit:
    """Read and flatten a netlist in one call."""
    return flatten(read_netlist(path, options), param_overrides)
