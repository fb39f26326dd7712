"""Exception types. Every problem with user input is an ``InputError``: the CLI prints its
message and exits with status 2, never a traceback."""

from __future__ import annotations

from pathlib import Path


class InputError(Exception):
    """An input file (design, part sheet, policy) that cannot be used.

    The message always names the file and, where there is one, the key (and line).
    """

    def __init__(self, path: str | Path | None, key: str | None, message: str,
                 line: int | None = None):
        self.path = str(path) if path is not None else None
        self.key = key
        self.line = line
        self.detail = message
        where = self.path or "<input>"
        if line is not None:
            where += f", line {line}"
        if key:
            where += f", key '{key}'"
        super().__init__(f"{where}: {message}")


class RegulationError(InputError):
    """The design cannot regulate its output at some corner (duty limit, DCM not modelled...)."""


class SimulationError(Exception):
    """ngspice is missing, failed, or gave no usable result."""
