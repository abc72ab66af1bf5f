"""ucalc's own exceptions, all of them.

Every problem a user can cause is a :class:`UcalcError`; the CLI turns it into one line per problem on stderr and
exit code 2. Anything else escaping the CLI is a bug. Fields are stored on the exception and the message is built
from them, so tests can pin the exact text; an error names a function's parameter by its Python name
(``second_order``), and the CLI shows the matching option (``--second-order``). Every error can be serialised
and rebuilt with its fields (``__reduce__``), for process pools and notebook tools.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any


def _restore(cls: type[UcalcError], args: tuple[Any, ...], state: dict[str, Any]) -> UcalcError:
    error = cls.__new__(cls)
    error.args = args
    error.__dict__.update(state)
    return error


class UcalcError(Exception):
    """Base class of every error ucalc raises on bad input."""

    def __reduce__(self) -> tuple[Any, ...]:
        return _restore, (type(self), self.args, dict(self.__dict__))


class OptionError(UcalcError, ValueError):
    """A value given to a function (an option on the command line) that cannot be used.

    ``option`` is the parameter's Python name (``target``, ``maps``, ``limit_column``).
    """

    def __init__(self, option: str, rule: str) -> None:
        self.option = option
        self.rule = rule
        super().__init__(self.message)

    @property
    def message(self) -> str:
        return f"{self.option}: {self.rule}"

    def __str__(self) -> str:
        return self.message


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


class MonteCarloError(ComputationError):
    """A Monte Carlo run that cannot be trusted; ``partial`` holds what was computed."""

    def __init__(self, rule: str, partial: Any = None) -> None:
        super().__init__(rule, subject="Monte Carlo")
        self.partial = partial


class OutputError(UcalcError, OSError):
    """An output that cannot or must not be written."""

    def __init__(self, path: str | Any, rule: str) -> None:
        self.path = str(path)
        self.rule = rule
        super().__init__(f"{path}: {rule}")

    def __str__(self) -> str:
        return f"{self.path}: {self.rule}"
