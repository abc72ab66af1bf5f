"""The terminal report of ``ucalc run``: the budget table sorted by contribution and the result line."""

from __future__ import annotations

from typing import TYPE_CHECKING

from .. import units
from ..budget.definitions import Budget
from ..engines.gum import GumResult
from .common import CAUTION, dof_text, num, result_line

if TYPE_CHECKING:
    from rich.console import Console


SHAPES = {"rectangular": "rect", "triangular": "tri", "combined": "mixed"}


def _unit(text: str) -> str:
    if not text:
        return ""
    try:
        return units.pretty(units.parse_unit(text))
    except Exception:
        return text


def render_gum(console: Console, budget: Budget, result: GumResult) -> None:
    """Print the budget table and the result line to a rich console."""
    from rich.table import Table

    mu = _unit(result.unit)
    from rich.markup import escape

    console.print(f"[bold]{escape(budget.title)}[/bold]")
    desc = f" — {budget.measurand.description}" if budget.measurand.description else ""
    console.print(escape(f"measurand {result.measurand} [{mu or 'dimensionless'}]{desc}"))
    for line in budget.model.lines:
        console.print(escape(f"  {line.name} = {line.text}"))
    table = Table(title=None, show_lines=False, header_style="bold")
    for col, justify in [("input", "left"), ("estimate", "right"), ("unit", "left"), ("u", "right"),
                         ("type", "left"), ("dof", "right"), ("c_i", "right"), (escape(f"|c_i|·u [{mu}]"), "right"),
                         ("index %", "right")]:
        table.add_column(col, justify=justify)  # type: ignore[arg-type]
    for row in result.contributions:
        kind = row.kind if row.kind == "exact" else f"{row.kind} {SHAPES.get(row.shape, row.shape)}"
        table.add_row(row.input, num(row.value, 7), _unit(row.unit), num(row.standard_uncertainty, 3), kind,
                      dof_text(row.dof), num(row.sensitivity, 4), num(row.contribution, 3),
                      f"{100 * row.index:.1f}")
    console.print(table)
    console.print(f"u_c = {num(result.standard_uncertainty, 3)} {mu}, effective dof "
                  f"{dof_text(result.effective_dof)}" + (", second-order terms included" if result.second_order
                                                         else ""))
    console.print("[bold]" + result_line(result.measurand, result.value, mu, result.expanded_uncertainty,
                                         result.coverage_factor, result.coverage_probability) + "[/bold]")
    for note in (*result.notes, *budget.warnings):
        console.print(escape(f"note: {note}"))
    console.print(f"[dim]{CAUTION}[/dim]")
