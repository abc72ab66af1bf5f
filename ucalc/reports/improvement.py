"""Presentation of an improvement plan: terminal table, JSON (docs/improve.md) and a chart."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .common import expanded_text

if TYPE_CHECKING:
    from rich.console import Console

    from ..planning import Improvement

KINDS = {"zero": "bound", "halved": "bound", "action": "action"}


def render(console: Console, result: Improvement, most: int = 40) -> None:
    """The options as a table (the change text wraps; numbers never do), the first step and the target plan.

    U is rounded as ``ucalc run`` rounds it: two significant digits (JCGM 100 7.2.6).
    """
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    from .document import pretty_unit

    unit = pretty_unit(result.unit)
    u = f" {unit}" if unit else ""

    def big_u(x: float) -> str:
        return expanded_text(x)

    console.print(f"[bold]Improvement options for {escape(result.measurand)}[/bold]: now U = "
                  f"{big_u(result.expanded_uncertainty)}{escape(u)}")
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, header_style="bold")
    table.add_column("input", overflow="fold", min_width=6)
    table.add_column("change", overflow="fold", ratio=1, min_width=16)
    table.add_column("kind", no_wrap=True)
    table.add_column(escape(f"U after\n{unit}".rstrip()), justify="right", no_wrap=True)
    table.add_column("U less\nby %", justify="right", no_wrap=True)
    for o in result.options[:most]:
        table.add_row(escape(o.input), escape(o.action.removesuffix(" (bound)")), KINDS[o.kind],
                      big_u(o.expanded_uncertainty), f"{100 * o.relative_reduction:.1f}")
    console.print(table)
    if len(result.options) > most:
        console.print(f"({len(result.options) - most} more options in --format json)")
    actions = [o for o in result.options if o.kind == "action"]
    if actions:
        best = actions[0]
        console.print(escape(f"step to improve first: {best.input} — {best.action}: U from "
                             f"{big_u(result.expanded_uncertainty)} to {big_u(best.expanded_uncertainty)}{u} "
                             f"({100 * best.relative_reduction:.0f} % less)"))
    plan = result.plan
    if plan is not None:
        console.print(f"[bold]Target U ≤ {plan.target:.3g}{escape(u)}[/bold] ({escape(plan.searched)})")
        if plan.reachable and plan.actions:
            for o in plan.actions:
                console.print(escape(f"  - {o.input}: {o.action}"))
            console.print(f"  reaches U = {big_u(plan.expanded_uncertainty)}{escape(u)}")
        elif plan.reachable:
            console.print("  the budget already meets the target")
        else:
            console.print(f"  no combination of the listed actions reaches it; the floor with every action "
                          f"applied is U = {big_u(plan.floor)}{escape(u)}")
    for o in result.options:
        if o.note:
            console.print(escape(f"note: {o.input}, {o.action.removesuffix(' (bound)')}: {o.note}"))
    for note in result.skipped:
        console.print(escape(f"note: not evaluated: {note}"))


def to_json(result: Improvement) -> dict[str, Any]:
    def option(o: Any) -> dict[str, Any]:
        return {"input": o.input, "action": o.action, "kind": o.kind,
                "expanded_uncertainty": o.expanded_uncertainty, "reduction": o.reduction,
                "relative_reduction": o.relative_reduction, "note": o.note}

    plan = result.plan
    return {
        "measurand": result.measurand, "unit": result.unit, "value": result.value,
        "expanded_uncertainty": result.expanded_uncertainty,
        "options": [option(o) for o in result.options],
        "target": None if plan is None else {
            "target": plan.target, "reachable": plan.reachable, "actions": [option(o) for o in plan.actions],
            "expanded_uncertainty": plan.expanded_uncertainty, "floor": plan.floor, "searched": plan.searched,
            "evaluated": plan.evaluated},
        "skipped": list(result.skipped),
    }


def chart(result: Improvement, most: int = 15) -> str:
    """Horizontal bars of U after each option, the current U marked; SVG text."""
    from .charts import _figure, _svg
    from .document import pretty_unit

    rows = list(result.options[:most])[::-1]
    plt, fig, ax = _figure(0.32 * len(rows) + 1.2)
    labels = [f"{o.input}: {o.action}"[:75] for o in rows]
    hatch = {"zero": "...", "halved": "xx", "action": "///"}
    for y, o in enumerate(rows):
        ax.barh(y, o.expanded_uncertainty, color="#d0d7e3" if o.kind == "action" else "#f0f0f0",
                edgecolor="black", hatch=hatch[o.kind], linewidth=0.6)
    ax.set_yticks(range(len(rows)), labels, fontsize=7)
    ax.axvline(result.expanded_uncertainty, color="black", linestyle="dashed", linewidth=1.0, label="U now")
    if result.plan is not None:
        ax.axvline(result.plan.target, color="black", linestyle="dotted", linewidth=1.4, label="target")
    unit = pretty_unit(result.unit)
    ax.set_xlabel("expanded uncertainty U after the change" + (f" / {unit}" if unit else ""))
    ax.legend(fontsize=7, frameon=False)
    ax.set_title("What each change would buy (/// concrete action; xx halved, ... zero: bounds)", fontsize=9,
                 loc="left")
    return _svg(plt, fig)
