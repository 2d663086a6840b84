"""The one error type for bad input: a position and a message."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Pos:
    """A source position: file path as given, 1-based line and column."""

    file: str
    line: int
    col: int

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.col}"


class InputError(Exception):
    """Bad input (a file, a design, a command-line value): ``FILE:LINE:COL: message``."""

    def __init__(self, pos: Pos, message: str) -> None:
        super().__init__(f"{pos}: {message}")
        self.pos = pos
        self.message = message

    def __reduce__(self):  # keeps the error intact across the timeout's child process
        return (InputError, (self.pos, self.message))

    def to_json(self) -> dict:
        return {"error": {"file": self.pos.file, "line": self.pos.line,
                          "col": self.pos.col, "message": self.message}}
