"""The terminal report of ``ucalc run``: the budget table sorted by contribution and the result line."""

from __future__ import annotations

from typing import TYPE_CHECKING

from .. import units
from ..budget.definitions import Budget
from ..engines.gum import GumResult
from .common import CAUTION, dof_text, num, probability_text, result_line

if TYPE_CHECKING:
    from rich.console import Console

    from ..engines.montecarlo import MonteCarloResult


SHAPES = {"rectangular": "rect", "triangular": "tri", "combined": "mixed"}


_unit = units.display


def render_header(console: Console, budget: Budget) -> None:
    """Title, measurand and model lines."""
    from rich.markup import escape

    mu = _unit(budget.measurand.unit)
    console.print(f"[bold]{escape(budget.title)}[/bold]")
    for setting in budget.settings:
        console.print(escape(f"scenario, not the file as written: --set {setting}"))
    desc = f" — {budget.measurand.description}" if budget.measurand.description else ""
    console.print(escape(f"measurand {budget.measurand.symbol} [{mu or 'dimensionless'}]{desc}"))
    for line in budget.model.lines:
        console.print(escape(f"  {line.name} = {line.text}"))


def render_monte_carlo(console: Console, budget: Budget, mc: MonteCarloResult) -> None:
    """The Monte Carlo summary and, when present, the GUM validation verdict (JCGM 101 7, 8)."""
    from rich.markup import escape

    mu = _unit(mc.unit)
    unit = f" {mu}" if mu else ""
    how = (f"adaptive, {mc.stages} stages, {mc.digits} significant digits" if mc.adaptive else "fixed trials")
    console.print(f"[bold]Monte Carlo[/bold] (JCGM 101): {mc.trials:,} trials ({how}), seed {mc.seed}")
    pct = probability_text(mc.coverage_probability)
    estimate = "median" if mc.estimate == "median" else "mean"
    sd = (f"standard deviation {num(mc.standard_uncertainty, 3)}{unit}" if mc.standard_uncertainty is not None
          else "standard deviation not defined (an input's variance does not exist)")
    console.print(f"  {estimate} {num(mc.value, 8)}{unit}, {sd}")
    console.print(f"  {pct} probabilistically symmetric interval [{num(mc.interval[0], 8)}, "
                  f"{num(mc.interval[1], 8)}]{unit}")
    console.print(f"  {pct} shortest interval [{num(mc.shortest_interval[0], 8)}, "
                  f"{num(mc.shortest_interval[1], 8)}]{unit}")
    pr = mc.precision
    if pr is not None:
        se_u = num(pr.standard_uncertainty, 2) if pr.standard_uncertainty is not None else "not defined"
        console.print(f"  standard errors from {pr.blocks} blocks of {pr.trials_per_block:,} trials (JCGM 101 7.9): "
                      f"{estimate} {num(pr.value, 2)}, u {se_u}, low end {num(pr.low, 2)}, high end "
                      f"{num(pr.high, 2)}{unit}")
    if mc.nonfinite:
        console.print(f"  non-finite trials: {mc.nonfinite} (left out)")
    v = mc.validation
    if v is not None:
        verdict = {"passed": "[green]passed[/green]", "failed": "[red]failed[/red]",
                   "undecided": "[yellow]undecided[/yellow]"}[v.verdict]
        scatter = (f", endpoint scatter ±{num(v.scatter_low, 2)}/±{num(v.scatter_high, 2)}{unit}"
                   if v.scatter_low is not None and v.scatter_high is not None else "")
        console.print(f"  GUM validation (JCGM 101 8.2): delta = {num(v.delta, 2)}{unit}, d_low = "
                      f"{num(v.d_low, 2)}{unit}, d_high = {num(v.d_high, 2)}{unit}{scatter}: {verdict}")
    for note in mc.notes:
        console.print(escape(f"  note: {note}"))


def render_gum(console: Console, budget: Budget, result: GumResult, show_result: bool = True) -> None:
    """Print the budget table and the result line to a rich console."""
    from rich.table import Table

    mu = _unit(result.unit)
    from rich.markup import escape

    table = Table(title=None, show_lines=False, header_style="bold")
    for col, justify in [("input", "left"), ("estimate", "right"), ("unit", "left"), ("u", "right"),
                         ("type", "left"), ("dof", "right"), ("c_i", "right"), (escape(f"|c_i|·u [{mu}]"), "right"),
                         ("index %", "right")]:
        table.add_column(col, justify=justify)  # type: ignore[arg-type]
    for row in result.contributions:
        kind = row.kind if row.kind == "exact" else f"{row.kind} {SHAPES.get(row.shape, row.shape)}"
        table.add_row(row.input, num(row.value, 7), _unit(row.unit), num(row.standard_uncertainty, 3), kind,
                      dof_text(row.dof), num(row.sensitivity, 4), num(row.contribution, 3),
                      f"{100 * row.variance_share:.1f}")
    console.print(table)
    console.print(f"u_c = {num(result.standard_uncertainty, 3)}{' ' + mu if mu else ''}, effective dof "
                  f"{dof_text(result.effective_dof)}" + (", second-order terms included" if result.second_order
                                                         else ""))
    if show_result:
        console.print("[bold]" + result_line(result.measurand, result.value, mu, result.expanded_uncertainty,
                                             result.coverage_factor, result.coverage_probability) + "[/bold]")
    else:
        console.print(escape("GUM: " + result_line(result.measurand, result.value, mu, result.expanded_uncertainty,
                                                   result.coverage_factor, result.coverage_probability)))
    for note in (*result.notes, *budget.warnings):
        console.print(escape(f"note: {note}"))


def render_working(console: Console, budget: Budget) -> None:
    """How each derived input was obtained (input models), one block per quantity that has working."""
    from rich.markup import escape

    shown = [q for q in budget.quantities.values() if q.working]
    if not shown and not budget.working:
        return
    console.print("[bold]Derived inputs[/bold]")
    for name, (model, lines) in budget.working.items():
        if lines:
            console.print(escape(f"  {name} ({model}): defined in the model"))
            for line in lines:
                console.print(escape(f"    {line}"))
    for q in shown:
        unit = f" {_unit(q.unit)}" if q.unit else ""
        console.print(escape(f"  {q.name} ({q.model}): {num(q.value, 7)}{unit}, u = {num(q.standard_uncertainty, 3)}"
                             f"{unit}, dof {dof_text(q.dof)}"))
        for line in q.working:
            console.print(escape(f"    {line}"))


def render_correlations(console: Console, budget: Budget) -> None:
    """Correlation coefficients between the model's inputs, with why each exists (stated, input model, item)."""
    from rich.markup import escape

    used = set(budget.model.inputs)
    shown = [(a, b, r) for (a, b), r in sorted(budget.correlations.items()) if r and a in used and b in used]
    if not shown:
        return
    console.print("[bold]Correlations[/bold]")
    for a, b, r in shown:
        origin = budget.correlation_origins.get((a, b), "")
        console.print(escape(f"  r({a}, {b}) = {r:.4f}" + (f"  ({origin})" if origin else "")))


def render_caution(console: Console) -> None:
    console.print(f"[dim]{CAUTION}[/dim]")


def render_evaluation(console: Console, budget: Budget, gum: GumResult, mc: MonteCarloResult | None,
                      show_gum: bool = True) -> None:
    """The whole terminal report of ``ucalc run``."""
    from ..statement import line, state

    render_header(console, budget)
    if show_gum:
        render_gum(console, budget, gum, show_result=mc is None)
        render_working(console, budget)
        render_correlations(console, budget)
    if mc is not None:
        render_monte_carlo(console, budget, mc)
    if mc is not None or budget.reporting is not None:
        from rich.markup import escape

        stated = state(budget, gum, mc)
        console.print(f"[bold]Result[/bold] ({stated.method_name}): " + escape(stated.reason))
        console.print("[bold]" + escape(line(stated, _unit(gum.unit))) + "[/bold]")
    render_caution(console)
