"""Exception hierarchy of freezeout.

Exceptions are for bad input and broken runs. Data-quality and claim checks return
findings instead (see :mod:`freezeout.reduction.quality`, :mod:`freezeout.claims`).
"""

from __future__ import annotations


class FreezeoutError(Exception):
    """Base class of every error raised on purpose by freezeout."""


class InputError(ValueError, FreezeoutError):
    """Bad input: a malformed file, a wrong unit, an absurd value.

    Parameters
    ----------
    message
        What is wrong, in plain words.
    file
        The file the problem was found in, if any.
    line
        1-based line number in that file, if known.
    column
        Column name (or 1-based index) in that file, if known.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: str | int | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        super().__init__(self.__str__())

    def __str__(self) -> str:
        where = []
        if self.file is not None:
            where.append(str(self.file))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column!r}" if isinstance(self.column, str)
                         else f"column {self.column}")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class FitError(RuntimeError, FreezeoutError):
    """A fit that could not be completed; carries the optimizer's message and the run's file."""

    def __init__(self, message: str, *, optimizer_message: str | None = None,
                 file: str | None = None) -> None:
        self.message = message
        self.optimizer_message = optimizer_message
        self.file = file
        text = message if optimizer_message is None else f"{message} ({optimizer_message})"
        super().__init__(text if file is None else f"{file}: {text}")
