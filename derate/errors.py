"""The exception hierarchy: every error names where it came from, so the CLI can print it plainly."""

from __future__ import annotations


class DerateError(Exception):
    """Base of every error the tool raises on purpose (the CLI prints these without a traceback)."""

    exit_code = 2


class NetlistError(DerateError):
    """A netlist cannot be read: carries file, line and the offending text."""

    def __init__(self, message: str, file: str | None = None, line: int | None = None,
                 text: str | None = None):
        self.message = message
        self.file = file
        self.line = line
        self.text = text
        super().__init__(str(self))

    def __str__(self) -> str:
        where = ""
        if self.file:
            where = f"{self.file}:{self.line}: " if self.line else f"{self.file}: "
        text = self.text.strip() if self.text else ""
        if len(text) > 200:
            text = text[:200] + f"... ({len(text):,} characters)"
        quoted = f"\n    {text}" if text else ""
        return f"{where}{self.message}{quoted}"


class ForeignNetlistError(NetlistError):
    """The file is a netlist of another kind (a layout or XML netlist), not a SPICE deck."""


class UnsafeNetlistError(NetlistError):
    """A netlist contains a construct that could run commands or load code through the simulator."""


class DataError(DerateError):
    """A data file (parts, policy, project, waivers) is invalid: carries file and key path."""

    def __init__(self, message: str, file: str | None = None, key: str | None = None):
        self.message = message
        self.file = file
        self.key = key
        super().__init__(str(self))

    def __str__(self) -> str:
        parts = [p for p in (self.file, self.key) if p]
        prefix = ": ".join(parts)
        return f"{prefix}: {self.message}" if prefix else self.message


class OutputError(DerateError):
    """The reports could not be written (no space, no permission): none was changed.  Exit 4, with
    the review's own verdict kept in the message."""

    exit_code = 4

    def __init__(self, message: str):
        self.message = message
        super().__init__(message)
