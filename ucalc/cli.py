"""The ``ucalc`` command. Thin: parse arguments, call one library function, hand the result to a report.

ucalc's own errors become one line per problem on stderr and exit code 2; any other exception is a bug.
Heavy libraries are imported inside the commands so that ``ucalc --help`` starts fast.
"""

from __future__ import annotations

import sys
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

if TYPE_CHECKING:
    from rich.console import Console

app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  help="Measurement-uncertainty budgets: check, propagate (GUM, Monte Carlo) and report.")

EXIT_BAD_INPUT = 2


class Format(StrEnum):
    text = "text"
    json = "json"


BudgetArg = Annotated[Path, typer.Argument(help="budget file (YAML, format version 1)", show_default=False)]


def _fail(exc: Exception) -> None:
    from .errors import BudgetErrors

    lines = [e.message for e in exc.errors] if isinstance(exc, BudgetErrors) else [str(exc)]
    for line in lines:
        typer.echo(line, err=True)
    raise typer.Exit(EXIT_BAD_INPUT)


@app.command()
def check(budget: BudgetArg) -> None:
    """Validate a budget; list every problem as FILE:LINE:COL and exit 2 if there is any."""
    from .errors import UcalcError
    from .workflow import check_budget

    try:
        b = check_budget(budget)
    except UcalcError as exc:
        _fail(exc)
        return
    for warning in b.warnings:
        typer.echo(f"{budget}: warning: {warning}", err=True)
    typer.echo(f"{budget}: ok ({len(b.model.inputs)} inputs, {len(b.model.lines)} model lines)")


@app.command()
def run(
    budget: BudgetArg,
    format: Annotated[Format, typer.Option("--format", "-f", help="output format")] = Format.text,
    second_order: Annotated[bool, typer.Option("--second-order",
                                               help="add second-order terms (JCGM 100 5.1.2 note)")] = False,
) -> None:
    """Propagate a budget and print the budget table and the expanded uncertainty."""
    from .errors import UcalcError
    from .workflow import evaluate

    try:
        result = evaluate(budget, second_order=second_order)
    except UcalcError as exc:
        _fail(exc)
        return
    if format is Format.json:
        from .reports.jsonout import dumps, gum_json

        typer.echo(dumps(gum_json(result.budget, result.gum)))
        return
    from .reports.text import render_gum

    render_gum(_console(), result.budget, result.gum)


def _console() -> Console:
    """A console for stdout, 120 columns wide when output goes to a file or pipe."""
    from rich.console import Console

    return Console() if sys.stdout.isatty() else Console(width=120, color_system=None)


def main() -> None:
    """Console-script entry point."""
    app(prog_name="ucalc")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
