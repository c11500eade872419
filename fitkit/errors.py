"""The one exception family fitkit raises for things a user can fix.

    FitkitError                 base: message, where it happened, what to do
    +-- InputError              a sweep or setup file that cannot be read as asked
    +-- SetupError              bench setup values that are missing or contradictory
    +-- FitError                a fit that cannot give an honest answer
    +-- PredictionError         a prediction asked for something no circuit can do

The CLI turns any of these into a message and exit status 2; a poor but finished fit is
not an exception but state on the result (warnings on ``CircuitFit``).
"""

from __future__ import annotations

from pathlib import Path


class FitkitError(Exception):
    """A failure the user can act on: the facts, where, and the remedy."""

    exit_code = 2

    def __init__(
        self,
        message: str,
        *,
        remedy: str = "",
        path: str | Path | None = None,
        line: int | None = None,
        column: str | int | None = None,
    ) -> None:
        self.message = message
        self.remedy = remedy
        self.path = str(path) if path is not None else None
        self.line = line
        self.column = column
        super().__init__(self.user_text())

    def where(self) -> str:
        parts = []
        if self.path:
            parts.append(self.path)
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.column is not None:
            parts.append(f"column {self.column}")
        return ", ".join(parts)

    def user_text(self) -> str:
        where = self.where()
        text = f"{where}: {self.message}" if where else self.message
        if self.remedy:
            text += f"\n  fix: {self.remedy}"
        return text


class InputError(FitkitError):
    """A sweep or setup file that cannot be read as asked."""


class SetupError(FitkitError):
    """Bench setup values that are missing or contradictory."""


class FitError(FitkitError):
    """A fit that cannot give an honest answer."""


class PredictionError(FitkitError):
    """A prediction that asks for something no circuit of this kind can do."""


def refuse_overwrite(path, what: str, force: bool) -> None:
    """Raise an InputError when ``path`` exists and ``force`` was not given.

    Nothing fitkit writes replaces an existing file unless the user says so.
    """
    if not force and Path(path).exists():
        raise InputError(
            f"the {what} file exists already",
            remedy="choose another name or add --force to replace it",
            path=path,
        )
