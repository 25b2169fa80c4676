"""derate: capacitor derating review from SPICE netlists, simulated with ngspice."""

__version__ = "0.1.0"
