"""Errors that cross module boundaries, each carrying the context a user needs."""

from __future__ import annotations


class HarnessError(Exception):
    """Base of every error the harness reports to a user without a traceback."""


class InputError(HarnessError):
    """Invalid input at a place in a file: printed as ``FILE:LINE:COLUMN: message``.

    ``line`` and ``column`` are 1-based; 0 means "unknown", and then it prints as ``FILE: message``.
    """

    def __init__(self, message: str, file: str = "<input>", line: int = 0, column: int = 0):
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        super().__init__(self.__str__())

    def __str__(self) -> str:
        if not self.line:
            return f"{self.file}: {self.message}"
        return f"{self.file}:{self.line}:{self.column}: {self.message}"


class InputErrors(InputError):
    """Several input errors found in one pass; printed one per line."""

    def __init__(self, errors: list[InputError]):
        self.errors = errors
        first = errors[0]
        super().__init__(first.message, first.file, first.line, first.column)

    def __str__(self) -> str:
        return "\n".join(str(e) for e in self.errors)


class UsageError(HarnessError):
    """A command-line option that cannot be used as given (no file position to point at)."""
