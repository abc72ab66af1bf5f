"""The ``ucalc`` command. Thin: parse arguments, call one library function, hand the result to a report.

ucalc's own errors become one line per problem on stderr and exit code 2; any other exception is a bug.
Heavy libraries are imported inside the commands so that ``ucalc --help`` starts fast.
"""

from __future__ import annotations

import copy
import math
import re
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer
from typer.core import TyperGroup

from .errors import BudgetErrors, UcalcError

if TYPE_CHECKING:
    from rich.console import Console

# option types named in words in --help (the library's own labels are Python types such as <list[str]>)
TYPE_WORDS = {"bool": "", "int range": "integer", "int": "integer", "float": "number", "float range": "number",
              "path": "file", "list[str]": "text", "str": "text"}


def _typed_in_words(params: list, ctx: object) -> list:  # type: ignore[type-arg]
    for param in params:
        label = param.display_type(ctx) if hasattr(param, "display_type") else None
        if label:
            plain = label.strip("<>")
            words = TYPE_WORDS.get(plain, plain.replace("|", ", "))
            param.display_type_rich = lambda ctx, words=words: words or None
    return params


class _Command(typer.core.TyperCommand):
    """A command whose help names each option's type in words."""

    def get_params(self, ctx):  # type: ignore[no-untyped-def]
        return _typed_in_words(super().get_params(ctx), ctx)


class _Commands(TyperGroup):
    """The command group; its one error handler prints ucalc's errors as lines on stderr and exits with code 2."""

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except UcalcError as exc:
            for line in error_lines(exc):
                typer.echo(one_line(line), err=True)
            raise typer.Exit(EXIT_BAD_INPUT) from None

    def get_params(self, ctx):  # type: ignore[no-untyped-def]
        return _typed_in_words(super().get_params(ctx), ctx)


app = typer.Typer(add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False, rich_markup_mode=None,
                  cls=_Commands,
                  help="Measurement-uncertainty budgets: check, propagate (GUM, Monte Carlo), report, plan "
                  "improvements and attach results to sample tables.")

EXIT_BAD_INPUT = 2


def _version(value: bool) -> None:
    if value:
        from . import __version__

        typer.echo(f"ucalc {__version__}")
        raise typer.Exit()


@app.callback()
def _main(
    version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True,
                                          help="print the version and exit")] = False,
) -> None:
    """Measurement-uncertainty budgets: check, propagate (GUM, Monte Carlo), report, plan and batch results."""


class Format(StrEnum):
    text = "text"
    json = "json"
    md = "md"
    csv = "csv"


class ReportFormat(StrEnum):
    html = "html"
    md = "md"
    pdf = "pdf"


BudgetArg = Annotated[Path, typer.Argument(help="budget file (YAML, format version 1)", show_default=False,
                                           metavar="BUDGET")]


# parameters named in errors (their Python names) -> the options that set them on the command line
FLAGS = {"second_order": "--second-order", "trials": "--trials", "digits": "--digits", "target": "--target",
         "maps": "--map", "limit_column": "--limit-column", "loq_column": "--loq-column",
         "analyte_column": "--analyte-column"}


def one_line(text: str) -> str:
    """A message as one line: control characters from names in the input (a key holding a line break) are
    shown escaped, so that no text can start a line of its own that looks like FILE:LINE."""
    return re.sub(r"[\x00-\x1f\x7f-\x9f\u2028\u2029]", lambda m: repr(m.group(0))[1:-1], text)


def error_lines(exc: UcalcError) -> list[str]:
    """The lines printed for an error: one per problem, parameters named by their command-line options."""
    if isinstance(exc, BudgetErrors):
        return [line for e in exc.errors for line in error_lines(e)]
    for attribute in ("option", "subject"):
        name = getattr(exc, attribute, None)
        if isinstance(name, str) and name in FLAGS:
            shown = copy.copy(exc)
            setattr(shown, attribute, FLAGS[name])
            return [str(shown)]
    return [str(exc)]


@app.command(cls=_Command)
def check(budget: BudgetArg) -> None:
    """Validate a budget; list every problem as FILE:LINE:COL and exit 2 if there is any."""
    from .workflow import check_budget

    b = check_budget(budget)
    for warning in b.warnings:
        typer.echo(one_line(f"{budget}: warning: {warning}"), err=True)
    inputs, lines = len(b.model.inputs), len(b.model.lines)
    typer.echo(f"{budget}: ok ({inputs} input{'s' * (inputs != 1)}, {lines} model line{'s' * (lines != 1)})")


class Method(StrEnum):
    gum = "gum"
    mc = "mc"
    both = "both"


@app.command(cls=_Command)
def run(
    budget: BudgetArg,
    format: Annotated[Format, typer.Option("--format", "-f", help="output format")] = Format.text,
    method: Annotated[Method, typer.Option("--method", "-m", help="GUM, Monte Carlo, or both")] = Method.gum,
    second_order: Annotated[bool, typer.Option("--second-order",
                                               help="add second-order terms (JCGM 100 5.1.2 note)")] = False,
    trials: Annotated[int, typer.Option("--trials", "-n", min=100, help="Monte Carlo trials")] = 1_000_000,
    adaptive: Annotated[bool, typer.Option("--adaptive", help="adaptive Monte Carlo (JCGM 101 7.9)")] = False,
    digits: Annotated[int, typer.Option("--digits", min=1, max=6,
                                        help="significant digits of u for adaptive MC and validation")] = 2,
    seed: Annotated[int | None, typer.Option("--seed", min=0, help="Monte Carlo seed (default: fresh, reported)")]
    = None,
    set_: Annotated[list[str] | None, typer.Option("--set", help="try a change, INPUT.FIELD=VALUE (repeatable)")]
    = None,
) -> None:
    """Propagate a budget and print the budget table and the expanded uncertainty."""
    from .workflow import MonteCarloOptions, evaluate

    options = MonteCarloOptions(trials=trials, seed=seed, adaptive=adaptive, digits=digits)
    with _progress(method is not Method.gum and (adaptive or trials >= 2_000_000)) as progress:
        result = evaluate(budget, method=method.value, second_order=second_order, mc=options,
                          progress=progress, settings=set_)
    if format is Format.json:
        from .reports.jsonout import dumps, evaluation_json

        data = evaluation_json(result.budget, result.gum, result.mc)
        if result.budget.limits is not None:
            from .reports.qc import to_json

            data["detection_limits"] = to_json(result.budget.limits)
        typer.echo(dumps(data))
        return
    if format is Format.csv:
        from .reports.csvout import budget_table

        typer.echo(budget_table(result.gum), nl=False)
        return
    if format is Format.md:
        from .workflow import render_report

        typer.echo(render_report(result, "md"), nl=False)
        return
    from .reports.text import render_evaluation

    console = _console()
    render_evaluation(console, result.budget, result.gum, result.mc, show_gum=method is not Method.mc)


@app.command("report", cls=_Command)
def report_command(
    budget: BudgetArg,
    output: Annotated[Path, typer.Option("--output", "-o", help="report file to write: .html, .md or .pdf",
                                         show_default=False)],
    format: Annotated[ReportFormat | None, typer.Option("--format", "-f",
                                                        help="html, md or pdf (default: from the file name)")] = None,
    method: Annotated[Method, typer.Option("--method", "-m", help="GUM, Monte Carlo, or both")] = Method.both,
    trials: Annotated[int, typer.Option("--trials", "-n", min=100, help="Monte Carlo trials")] = 1_000_000,
    seed: Annotated[int | None, typer.Option("--seed", min=0, help="Monte Carlo seed (default: fresh, reported)")]
    = None,
    digits: Annotated[int, typer.Option("--digits", min=1, max=4, help="significant digits of U")] = 2,
    set_: Annotated[list[str] | None, typer.Option("--set", help="report a changed budget, INPUT.FIELD=VALUE "
                                                   "(repeatable; the report says so)")] = None,
    force: Annotated[bool, typer.Option("--force", help="replace an existing output file")] = False,
) -> None:
    """Write a self-contained HTML, PDF or Markdown report of a budget for the accreditation file."""
    from .workflow import MonteCarloOptions, report

    options = MonteCarloOptions(trials=trials, seed=seed)
    fmt = format.value if format else None
    with _progress(method is not Method.gum and trials >= 2_000_000) as progress:
        written = report(budget, output, fmt=fmt, method=method.value, mc=options, force=force, digits=digits,
                         progress=progress, settings=set_)
    typer.echo(f"wrote {written}")


@app.command("improve", cls=_Command)
def improve_command(
    budget: BudgetArg,
    target: Annotated[str | None, typer.Option("--target", "-t",
                                               help="expanded uncertainty to reach, e.g. 0.5 or 5%")] = None,
    format: Annotated[Format, typer.Option("--format", "-f", help="text or json")] = Format.text,
    chart: Annotated[Path | None, typer.Option("--chart", help="also write the chart as SVG")] = None,
    set_: Annotated[list[str] | None, typer.Option("--set", help="start from a changed budget, INPUT.FIELD=VALUE")]
    = None,
    force: Annotated[bool, typer.Option("--force", help="replace an existing chart file")] = False,
) -> None:
    """What each change would buy in U, the step to improve first, and whether a target is reachable."""
    from .workflow import improve

    if format not in (Format.text, Format.json):
        raise UcalcError("--format for improve is text or json")
    result = improve(budget, target=target, settings=set_)
    if chart is not None:
        from .outputs import write_atomic
        from .reports.improvement import chart as draw

        write_atomic(chart, draw(result), force=force, inputs=[budget])
    from .reports import improvement

    if format is Format.json:
        from .reports.jsonout import dumps

        typer.echo(dumps(improvement.to_json(result)))
        return
    improvement.render(_console(), result)


class Rule(StrEnum):
    simple = "simple"
    guarded_acceptance = "guarded-acceptance"
    guarded_rejection = "guarded-rejection"


class Side(StrEnum):
    upper_limit = "upper"
    lower_limit = "lower"


@app.command("batch", cls=_Command)
def batch_command(
    budget: Annotated[Path, typer.Argument(help="budget file, or a folder of budgets (one per analyte)",
                                           show_default=False, metavar="BUDGET")],
    table: Annotated[Path, typer.Argument(help="samples table, .csv or .xlsx", show_default=False,
                                          metavar="TABLE")],
    output: Annotated[Path, typer.Option("--output", "-o", help="output table, .csv or .xlsx",
                                         show_default=False)],
    map_: Annotated[list[str] | None, typer.Option("--map", help="INPUT=COLUMN (repeatable)")] = None,
    limit: Annotated[float | None, typer.Option("--limit", help="limit in the measurand's unit")] = None,
    limit_column: Annotated[str | None, typer.Option("--limit-column", help="column holding each row's limit")]
    = None,
    rule: Annotated[Rule, typer.Option("--rule", help="decision rule (docs/batch.md)")] = Rule.simple,
    side: Annotated[Side, typer.Option("--side", help="the limit is a maximum (upper) or minimum (lower)")]
    = Side.upper_limit,
    loq: Annotated[float | None, typer.Option("--loq", help="limit of quantification")] = None,
    loq_column: Annotated[str | None, typer.Option("--loq-column", help="column holding each row's LOQ")] = None,
    analyte_column: Annotated[str, typer.Option("--analyte-column", help="column naming the analyte")]
    = "analyte",
    digits: Annotated[int, typer.Option("--digits", min=1, max=4, help="significant digits of U")] = 2,
    force: Annotated[bool, typer.Option("--force", help="replace an existing output file")] = False,
    sep: Annotated[str | None, typer.Option("--sep", help="CSV separator: ',' ';' or tab (default: detected)")]
    = None,
    decimal: Annotated[str | None, typer.Option("--decimal", help="decimal mark: '.' or ',' (default: detected)")]
    = None,
    prefix: Annotated[str, typer.Option("--prefix", help="put before the names of the result columns")] = "",
) -> None:
    """Attach U, a result statement and (with a limit) a decision to every sample of a table."""
    from .samples.table import BatchOptions, batch, parse_maps

    if limit is not None and limit_column is not None:
        raise UcalcError("give --limit or --limit-column, not both")
    if loq is not None and loq_column is not None:
        raise UcalcError("give --loq or --loq-column, not both")
    for option, value in (("--limit", limit), ("--loq", loq)):
        if value is not None and not math.isfinite(value):
            raise UcalcError(f"{option} {value}: give a finite number")
    options = BatchOptions(maps=parse_maps(map_ or []), limit=limit, limit_column=limit_column,
                           rule=rule.value.replace("-", "_"), side=side.value,  # type: ignore[arg-type]
                           loq=loq, loq_column=loq_column, analyte_column=analyte_column, digits=digits,
                           sep=sep, decimal=decimal, prefix=prefix)
    with _progress(True) as progress:
        summary = batch(budget, table, output, options, force=force, progress=progress)
    decided = ", ".join(f"{count} {name}" for name, count in sorted(summary.decisions.items()))
    line = f"{summary.output}: {summary.rows} rows, {summary.failed} failed"
    if summary.below_loq:
        line += f", {summary.below_loq} below the LOQ"
    if summary.rule:
        line += f"; decisions: {decided or 'none'} ({summary.rule})"
    typer.echo(line)
    if summary.failed:
        typer.echo(f"{summary.failed} rows could not be computed; see the 'error' column", err=True)
        raise typer.Exit(EXIT_BAD_INPUT)


@app.command("compare")
def compare_command(
    budget: BudgetArg,
    data: Annotated[Path, typer.Argument(help="QC data, .csv or .xlsx: control-sample results",
                                         show_default=False)],
    column: Annotated[str | None, typer.Option("--column", help="column of results (default: the measurand's "
                                               "symbol, 'value' or 'result')")] = None,
    run_column: Annotated[str | None, typer.Option("--run-column", help="column naming each result's run")] = None,
    level_column: Annotated[str | None, typer.Option("--level-column", help="column naming the control level, "
                                                     "for several control samples")] = None,
    format: Annotated[Format, typer.Option("--format", "-f", help="text or json")] = Format.text,
) -> None:
    """Set the budget's u against the within-lab reproducibility the QC data show: ratio, F-test, verdict."""
    from .qc.compare import compare
    from .reports import qc

    if format not in (Format.text, Format.json):
        raise UcalcError("--format for compare is text or json")
    result = compare(budget, data, column, run_column, level_column)
    if format is Format.json:
        from .reports.jsonout import dumps

        typer.echo(dumps(qc.to_json(result)))
        return
    qc.render_comparison(_console(), result)


@app.command("working-range")
def working_range_command(
    data: Annotated[Path, typer.Argument(help="QC or validation data, .csv or .xlsx, at several levels",
                                         show_default=False)],
    column: Annotated[str, typer.Option("--column", help="column of results")],
    level_column: Annotated[str, typer.Option("--level-column", help="column naming each result's level")],
    run_column: Annotated[str | None, typer.Option("--run-column", help="column naming each result's run")] = None,
    unit: Annotated[str, typer.Option("--unit", help="unit of the results, for labels")] = "",
    format: Annotated[Format, typer.Option("--format", "-f", help="text or json")] = Format.text,
    chart: Annotated[Path | None, typer.Option("--chart", help="also write the fit as an SVG chart")] = None,
    force: Annotated[bool, typer.Option("--force", help="replace an existing chart file")] = False,
) -> None:
    """Fit u(c) = sqrt(u0^2 + (b c)^2) to the precision at each level of QC or validation data."""
    from .qc.range_fit import fit, levels_from_data
    from .reports import qc

    if format not in (Format.text, Format.json):
        raise UcalcError("--format for working-range is text or json")
    try:
        result = fit(levels_from_data(str(data), column, level_column, run_column))
    except ValueError as exc:
        if isinstance(exc, UcalcError):
            raise
        raise UcalcError(f"{data}: {exc}") from None
    if chart is not None:
        from .outputs import write_atomic

        write_atomic(chart, qc.range_chart(result, unit), force=force, inputs=[data])
    if format is Format.json:
        from .reports.jsonout import dumps

        typer.echo(dumps(qc.to_json(result)))
        return
    qc.render_range(_console(), result, unit)


@app.command("proficiency")
def proficiency_command(
    table: Annotated[Path, typer.Argument(help="rounds table, .csv or .xlsx: round, assigned, u_assigned, result, U "
                                          "[, k, sigma_pt, U_assigned]", show_default=False)],
    k: Annotated[float, typer.Option("--k", min=0.1, help="coverage factor of the lab's U where no k column")] = 2.0,
    format: Annotated[Format, typer.Option("--format", "-f", help="text, json or csv")] = Format.text,
    chart: Annotated[Path | None, typer.Option("--chart", help="also write the score chart as SVG")] = None,
    force: Annotated[bool, typer.Option("--force", help="replace an existing chart file")] = False,
) -> None:
    """z, zeta and E_n scores of proficiency-testing rounds (ISO 13528) and whether the lab's U looks too small."""
    from .qc.proficiency import from_table
    from .reports import qc

    if format is Format.md:
        raise UcalcError("--format for proficiency is text, json or csv")
    result = from_table(str(table), k)
    if chart is not None:
        from .outputs import write_atomic

        write_atomic(chart, qc.proficiency_chart(result), force=force, inputs=[table])
    if format is Format.json:
        from .reports.jsonout import dumps

        typer.echo(dumps(qc.to_json(result)))
    elif format is Format.csv:
        typer.echo(qc.proficiency_csv(result), nl=False)
    else:
        qc.render_proficiency(_console(), result)


@contextmanager
def _progress(wanted: bool) -> Iterator[Callable[[int, int], None] | None]:
    """A progress bar on stderr, only when stderr is a terminal and the run is long."""
    if not (wanted and sys.stderr.isatty()):
        yield None
        return
    from rich.console import Console
    from rich.progress import Progress

    with Progress(console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task("Monte Carlo", total=None)

        def update(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        yield update


DEFAULT_WIDTH = 100  # columns when output goes to a file or pipe and COLUMNS is not set


def _width() -> int:
    """COLUMNS when it holds a sensible width, else the default (a pipe has no width of its own)."""
    import os

    text = os.environ.get("COLUMNS", "").strip()
    return max(40, min(int(text), 1000)) if text.isdigit() else DEFAULT_WIDTH


def _console() -> Console:
    """A console for stdout; when output goes to a file or pipe, as wide as COLUMNS says and without colour.

    Highlighting is off: rich would otherwise colour every number inside free text (titles, notes).
    """
    from rich.console import Console

    if sys.stdout.isatty():
        return Console(highlight=False)
    return Console(width=_width(), color_system=None, highlight=False)


def main() -> None:
    """Console-script entry point."""
    app(prog_name="ucalc")


if __name__ == "__main__":  # pragma: no cover
    main()
