"""The terminal report of ``ucalc run``: the budget table sorted by contribution and the result line."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .. import units
from ..budget.definitions import Budget
from ..engines.gum import GumResult
from .common import (
    CAUTION,
    at_place_of,
    budget_table,
    dof_equation,
    estimate_text,
    fig,
    kind_text,
    probability_text,
    result_line,
)

if TYPE_CHECKING:
    from rich.console import Console

    from ..engines.montecarlo import MonteCarloResult


_unit = units.display


def _line(console: Console, text: str, indent: int = 0, hang: int = 2) -> None:
    """Plain text (never markup) at ``indent`` spaces; the lines it wraps onto keep ``indent + hang`` spaces."""
    import textwrap

    pieces = textwrap.wrap(text, width=max(console.width, 40), initial_indent=" " * indent,
                           subsequent_indent=" " * (indent + hang), break_on_hyphens=False) or [""]
    for piece in pieces:
        console.print(piece, markup=False, highlight=False, soft_wrap=True)


def render_header(console: Console, budget: Budget) -> None:
    """Title, measurand and model lines."""
    from rich.markup import escape

    mu = _unit(budget.measurand.unit)
    console.print(f"[bold]{escape(budget.title)}[/bold]")
    for setting in budget.settings:
        console.print(escape(f"scenario, not the file as written: --set {setting}"))
    desc = f" — {budget.measurand.description}" if budget.measurand.description else ""
    console.print(escape(f"measurand {budget.measurand.symbol}{' in ' + mu if mu else ' (no unit)'}{desc}"))
    for line in budget.model.lines:
        _line(console, f"{line.name} = {line.text}", 2, 4)


def render_monte_carlo(console: Console, budget: Budget, mc: MonteCarloResult) -> None:
    """The Monte Carlo summary and, when present, the GUM validation verdict (JCGM 101 7, 8)."""

    mu = _unit(mc.unit)
    unit = f" {mu}" if mu else ""
    how = (f"adaptive, {mc.stages} stages, {mc.digits} significant digits" if mc.adaptive else "fixed trials")
    console.print(f"[bold]Monte Carlo[/bold] (JCGM 101): {mc.trials:,} trials ({how}), seed {mc.seed}")
    pct = probability_text(mc.coverage_probability)
    estimate = "median" if mc.estimate == "median" else "mean"
    sd = mc.standard_uncertainty  # None where an input's variance does not exist (JCGM 101 6.4.9)

    sd_text = (f"standard deviation {at_place_of(sd, sd, 2)}{unit}" if sd is not None
               else "standard deviation not defined (an input's variance does not exist)")
    from ..statement import interval_texts  # the digits of the result statement (JCGM 101 7.8)

    mean_text, low, high = interval_texts(mc.value, mc.interval)
    _, short_low, short_high = interval_texts(mc.value, mc.shortest_interval)
    console.print(f"  {estimate} {mean_text}{unit}, {sd_text}")
    console.print(f"  {pct} probabilistically symmetric interval [{low}, {high}]{unit}")
    console.print(f"  {pct} shortest interval [{short_low}, {short_high}]{unit}")
    pr = mc.precision
    if pr is not None:
        se_u = fig(pr.standard_uncertainty, 2) if pr.standard_uncertainty is not None else "not defined"
        console.print(f"  standard errors from {pr.blocks} blocks of {pr.trials_per_block:,} trials (JCGM 101 7.9): "
                      f"{estimate} {fig(pr.value, 2)}, u {se_u}, low end {fig(pr.low, 2)}, high end "
                      f"{fig(pr.high, 2)}{unit}")
    if mc.nonfinite:
        console.print(f"  non-finite trials: {mc.nonfinite} (left out)")
    v = mc.validation
    if v is not None:
        verdict = {"passed": "[green]passed[/green]", "failed": "[red]failed[/red]",
                   "undecided": "[yellow]undecided[/yellow]"}[v.verdict]
        scatter = (f", endpoint scatter ±{fig(v.scatter_low, 2)}/±{fig(v.scatter_high, 2)}{unit}"
                   if v.scatter_low is not None and v.scatter_high is not None else "")
        console.print(f"  GUM validation (JCGM 101 8.2): delta = {fig(v.delta, 2)}{unit}, d_low = "
                      f"{fig(v.d_low, 2)}{unit}, d_high = {fig(v.d_high, 2)}{unit}{scatter}: {verdict}")
    for note in mc.notes:
        _line(console, f"note: {note}", 2)


def _table(columns: list[tuple[str, str]], rows: list[list[str]]) -> Any:
    """A plain table: header rule only, names fold onto a second line, numbers never wrap or get cut."""
    from rich import box
    from rich.table import Table

    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, header_style="bold", padding=(0, 1))
    for i, (title, justify) in enumerate(columns):
        if i == 0:
            table.add_column(title, justify="left", overflow="fold", min_width=6)
        else:
            table.add_column(title, justify=justify, no_wrap=True)  # type: ignore[arg-type]
    for row in rows:
        table.add_row(*row)
    return table


def _needed(columns: list[tuple[str, str]], rows: list[list[str]]) -> int:
    """Width the table takes with every cell on one line (header lines count by their longest line)."""
    widths = [max([len(line) for line in title.split("\n")] + [len(r[i]) for r in rows])
              for i, (title, _) in enumerate(columns)]
    return sum(widths) + 3 * (len(columns) - 1)  # one space of padding each side and a blank rule


def budget_rows(result: GumResult) -> tuple[list[tuple[str, str]], list[list[str]]]:
    """The budget table's columns (title, justification) and rows, escaped for rich markup."""
    from rich.markup import escape

    head, rows = budget_table(result)
    columns = [(escape(title), "left" if i in (0, 2) else "right") for i, title in enumerate(head)]
    return columns, [[escape(cell) for cell in row] for row in rows]


def render_gum(console: Console, budget: Budget, result: GumResult, show_result: bool = True) -> None:
    """Print the budget table and the result line; at a narrow width the table is printed in two parts."""
    from rich.markup import escape

    mu = _unit(result.unit)
    columns, rows = budget_rows(result)
    if _needed(columns, rows) <= console.width:
        console.print(_table(columns, rows))
    else:  # the input, its estimate and u(x_i); then what it contributes to u_c
        console.print(_table(columns[:5], [r[:5] for r in rows]))
        console.print(_table([columns[0], *columns[5:]], [[r[0], *r[5:]] for r in rows]))
    legend = ("share of u_c²: correlated inputs share the variance they carry together (docs/budget-format.md)"
              if result.correlation_variance else "share of u_c² = (u_i(y)/u_c)²")
    console.print(f"{legend}; u_c = {fig(result.standard_uncertainty)}{' ' + mu if mu else ''}, "
                  f"{dof_equation('ν_eff', result.effective_dof)}"
                  + (", second-order terms included" if result.second_order else ""))
    gum_line = escape(result_line(result.measurand, result.value, mu, result.expanded_uncertainty,
                                  result.coverage_factor, result.coverage_probability))
    console.print(f"[bold]{gum_line}[/bold]" if show_result else f"GUM: {gum_line}")
    for note in (*result.notes, *budget.warnings):
        _line(console, f"note: {note}", 0, 6)


def render_working(console: Console, budget: Budget, result: GumResult | None = None) -> None:
    """Each input: how its u was evaluated (type, distribution) and, for input models, the working."""

    order = [r.input for r in result.contributions] if result is not None else []
    names = [n for n in order if n in budget.quantities] + [n for n in budget.quantities if n not in order]
    console.print("[bold]Inputs[/bold] (type of evaluation, distribution, working)")
    for name, (model, lines) in budget.working.items():
        if lines:
            _line(console, f"{name} ({model}): defined in the model", 2)
            for line in lines:
                _line(console, line, 4)
    for name in names:
        q = budget.quantities[name]
        unit = f" {_unit(q.unit)}" if q.unit else ""
        how = kind_text(q.kind, q.shape)
        if q.components:
            count = len(q.components)
            how += f" from {count} components" if count > 1 else ""
            figures = f"{estimate_text(q.value, q.standard_uncertainty)}{unit}, u = {fig(q.standard_uncertainty)}" \
                      f"{unit}, {dof_equation('ν', q.dof)}"
        else:
            figures = f"{estimate_text(q.value, 0.0)}{unit}"
        _line(console, f"{q.name} ({q.model}): {figures}; {how}", 2)
        for line in q.working:
            _line(console, line, 4)


def render_correlations(console: Console, budget: Budget) -> None:
    """Correlation coefficients between the model's inputs, with why each exists (stated, input model, item)."""

    used = set(budget.model.inputs)
    shown = [(a, b, r) for (a, b), r in sorted(budget.correlations.items()) if r and a in used and b in used]
    if not shown:
        return
    console.print("[bold]Correlations[/bold]")
    for a, b, r in shown:
        origin = budget.correlation_origins.get((a, b), "")
        _line(console, f"r({a}, {b}) = {r:.4f}" + (f"  ({origin})" if origin else ""), 2)


def render_caution(console: Console) -> None:
    console.print(f"[dim]{CAUTION}[/dim]")


def render_evaluation(console: Console, budget: Budget, gum: GumResult, mc: MonteCarloResult | None,
                      show_gum: bool = True) -> None:
    """The whole terminal report of ``ucalc run``."""
    from ..statement import line, state

    render_header(console, budget)
    if show_gum:
        render_gum(console, budget, gum, show_result=mc is None)
        render_working(console, budget, gum)
        render_correlations(console, budget)
    if mc is not None:
        render_monte_carlo(console, budget, mc)
    if mc is not None or budget.reporting is not None:
        from rich.markup import escape

        stated = state(budget, gum, mc)
        console.print(f"[bold]Result[/bold] by {stated.method_name}: " + escape(stated.reason))
        console.print("[bold]" + escape(line(stated, _unit(gum.unit))) + "[/bold]")
    if budget.limits is not None:
        from .qc import render_limits

        render_limits(console, budget.limits, budget.measurand.unit)
    render_caution(console)  # last, after every figure
