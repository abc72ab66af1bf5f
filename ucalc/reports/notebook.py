"""Results in notebooks: a pandas table of a result and the HTML fragment Jupyter shows for it.

The fragment is plain escaped HTML (no script, no style sheet); names from the budget are escaped, so a budget
cannot inject markup into the notebook.
"""

from __future__ import annotations

import dataclasses
from html import escape
from typing import Any

from ..units import display
from .common import budget_table, dof_text, fig, num, probability_text, result_line


def frame(result: Any) -> Any:
    """GUM: one row per input (the budget table), indexed by input; Monte Carlo: one row of summary values."""
    import pandas as pd

    from ..engines.gum import GumResult

    if isinstance(result, GumResult):
        rows = [dataclasses.asdict(c) for c in result.contributions]
        columns = [f.name for f in dataclasses.fields(result.contributions[0])] if rows else ["input"]
        return pd.DataFrame(rows, columns=columns).set_index("input")
    low, high = result.interval
    short_low, short_high = result.shortest_interval
    return pd.DataFrame([{
        "measurand": result.measurand, "value": result.value, "standard_uncertainty": result.standard_uncertainty,
        "coverage_probability": result.coverage_probability, "interval_low": low, "interval_high": high,
        "shortest_low": short_low, "shortest_high": short_high, "unit": result.unit, "trials": result.trials,
        "seed": result.seed,
    }]).set_index("measurand")


def _table(head: list[str], rows: list[list[str]]) -> str:
    th = "".join(f"<th>{escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>" for row in rows)
    return f"<table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def html(result: Any) -> str:
    """A heading line with the rounded result (JCGM 100 7.2.6) and a table: the budget table for the GUM, the
    output distribution's summary for Monte Carlo (JCGM 101 7.6, 7.7)."""
    from ..engines.gum import GumResult

    if isinstance(result, GumResult):
        line = result_line(result.measurand, result.value, result.unit, result.expanded_uncertainty,
                           result.coverage_factor, result.coverage_probability)
        head, rows = budget_table(result)
        head = [h.replace("\n", " ") for h in head]
        rows.append([f"{result.measurand} (u_c, ν_eff)", num(result.value, 6), display(result.unit),
                     fig(result.standard_uncertainty), dof_text(result.effective_dof), "", "", ""])
        return f"<p>GUM (JCGM 100): {escape(line)}</p>{_table(head, rows)}"
    low, high = result.interval
    short_low, short_high = result.shortest_interval
    p = probability_text(result.coverage_probability)
    u = "not defined" if result.standard_uncertainty is None else num(result.standard_uncertainty)
    rows = [["estimate", num(result.value, 6)], ["standard uncertainty", u],
            [f"probabilistically symmetric {p} interval", f"[{num(low, 6)}, {num(high, 6)}]"],
            [f"shortest {p} interval", f"[{num(short_low, 6)}, {num(short_high, 6)}]"],
            ["trials", str(result.trials)], ["seed", str(result.seed)]]
    unit = f" ({result.unit})" if result.unit else ""
    return f"<p>Monte Carlo (JCGM 101): {escape(result.measurand + unit)}</p>{_table(['', ''], rows)}"
