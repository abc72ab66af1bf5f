"""ucalc's own exceptions.

Every problem a user can cause is a :class:`UcalcError`; the CLI turns it into one line per problem on stderr and
exit code 2. Anything else escaping the CLI is a bug. Fields are stored on the exception and the message is built
from them, so tests can pin the exact text.
"""

from __future__ import annotations

from dataclasses import dataclass


class UcalcError(Exception):
    """Base class of every error ucalc raises on bad input."""


@dataclass(frozen=True)
class Location:
    """A place in a budget file: 1-based line and column (0 when unknown)."""

    file: str
    line: int = 0
    column: int = 0

    def __str__(self) -> str:
        if self.line:
            return f"{self.file}:{self.line}:{self.column or 1}"
        return self.file


class BudgetError(UcalcError, ValueError):
    """One problem in a budget, with its place and the quantity or model line it concerns."""

    def __init__(self, rule: str, *, location: Location | None = None, subject: str = "") -> None:
        self.rule = rule
        self.location = location
        self.subject = subject
        super().__init__(self.message)

    @property
    def message(self) -> str:
        head = f"{self.location}: " if self.location else ""
        subject = f"{self.subject}: " if self.subject else ""
        return f"{head}{subject}{self.rule}"

    def __str__(self) -> str:
        return self.message


class BudgetErrors(UcalcError, ValueError):
    """Several budget problems found in one pass; ``errors`` keeps them in file order."""

    def __init__(self, errors: list[BudgetError]) -> None:
        def key(e: BudgetError) -> tuple[int, int]:
            loc = e.location
            return (loc.line, loc.column) if loc else (0, 0)

        self.errors = sorted(errors, key=key)
        super().__init__("\n".join(e.message for e in self.errors))


class ExpressionError(UcalcError, ValueError):
    """A problem in one model expression; ``column`` is 1-based within the expression text (0 if unknown)."""

    def __init__(self, rule: str, column: int = 0) -> None:
        self.rule = rule
        self.column = column
        super().__init__(rule)


class UnitError(ExpressionError):
    """A dimensional inconsistency in a model expression."""


class ComputationError(UcalcError, ArithmeticError):
    """A budget that is well formed but cannot be computed (non-finite value, invalid degrees of freedom...)."""

    def __init__(self, rule: str, subject: str = "", location: Location | None = None) -> None:
        self.rule = rule
        self.subject = subject
        self.location = location
        super().__init__(self.message)

    @property
    def message(self) -> str:
        head = f"{self.location}: " if self.location else ""
        return head + (f"{self.subject}: {self.rule}" if self.subject else self.rule)

    def __str__(self) -> str:
        return self.message

    def located(self, file: str) -> ComputationError:
        """The same error, placed in ``file`` if it has no place yet."""
        if self.location is None:
            self.location = Location(file)
        return self
