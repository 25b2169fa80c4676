"""The simulator back end seen by a worker: load a deck, run it, hand over vectors.

A ``Backend`` lives inside one worker process (ngspice keeps global state: one instance per
process, no threads).  ``SharedLibraryBackend`` (shared.py, libngspice through PySpice) is the one
implementation today; a back end is chosen by name, so a worker never hard-wires one.
"""

from __future__ import annotations

from typing import Protocol, runtime_checkable

import numpy as np


@runtime_checkable
class Backend(Protocol):
    """What the measurement step needs from a simulator."""

    version: str

    def load(self, deck: str, dialect: str | None = None) -> list[str]:
        """Load a deck (read in the compatibility mode ``dialect``); return the simulator's messages."""

    def run(self, progress=None) -> list[str]:
        """Run the loaded deck's analyses (``progress(fraction)`` as they advance); return the messages."""

    def problems(self, messages: list[str]) -> list[str]:
        """The messages that report errors."""

    def warnings(self, messages: list[str]) -> list[str]:
        """The simulator's own warnings, once each."""

    def plots(self) -> list[str]:
        """Names of the result sets (``tran1``, ``op1`` ...)."""

    def vector_names(self, plot: str) -> list[str]:
        """Names of the vectors of one result set."""

    def vector(self, plot: str, name: str) -> np.ndarray:
        """A copy of one real vector."""

    def command(self, cmd: str) -> str:
        """Send one informational command (``listing e``, ``show c``); return its output."""

    def reset(self) -> bool:
        """Free results and circuit; False when the simulator cannot go on (the process must end)."""


def backend_names() -> tuple[str, ...]:
    return ("shared",)


def make_backend(name: str) -> Backend:
    """Start the back end called ``name`` in this (worker) process."""
    if name == "shared":
        from .shared import SharedLibraryBackend
        return SharedLibraryBackend()
    raise ValueError(f"unknown simulator back end {name!r}; known: {', '.join(backend_names())}")


def fingerprint(name: str) -> str:
    """Identify the back end's simulator for the cache, without starting it (in the parent process)."""
    if name == "shared":
        from .shared import library_fingerprint
        return "shared:" + library_fingerprint()
    if name == "stream":
        from .stream import program_fingerprint
        return "stream:" + program_fingerprint()
    raise ValueError(f"unknown simulator back end {name!r}")
