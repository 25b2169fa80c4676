"""Simulation: deck building, isolated ngspice workers with timeouts, and the result cache."""
