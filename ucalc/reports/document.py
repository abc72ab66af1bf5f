"""The content of a report as plain, formatted values, shared by the HTML and Markdown renderings.

Everything a reader needs to re-derive the numbers: budget identity (file SHA-256, seed), model, every input with
its components and working, the budget table, the result statement, the Monte Carlo check and the caution.
"""

from __future__ import annotations

import datetime as _dt
import math
from typing import TYPE_CHECKING, Any

from .. import __version__, units
from ..budget.definitions import Budget
from ..engines.gum import GumResult
from .common import (
    CAUTION,
    SHARE_LABEL,
    at_place_of,
    dof_equation,
    dof_text,
    estimate_text,
    fig,
    kind_text,
    num,
    probability_text,
    share_text,
)
from .rounding import round_pair

if TYPE_CHECKING:
    from ..engines.montecarlo import MonteCarloResult


pretty_unit = units.display


def _divisor(c: Any) -> str:
    shape = c.distribution.shape
    return {"rectangular": "√3", "triangular": "√6", "arcsine": "√2"}.get(shape, num(c.distribution.divisor, 4))


def _limits_note(budget: Budget, unit: str) -> list[str]:
    """The budget's LOD/LOQ (docs/top-down.md), stated with the result."""
    if budget.limits is None:
        return []
    from .qc import limits_lines

    return [limits_lines(budget.limits, unit)[0]]


def _document_control(budget: Budget) -> dict[str, Any] | None:
    d = budget.document
    if d is None:
        return None
    roles = {"prepared": "Prepared by", "reviewed": "Reviewed by", "approved": "Approved by"}
    return {"method": d.method, "id": d.id, "version": d.version,
            "signoffs": [{"role": roles[role], "by": by, "date": date} for role, by, date in d.signoffs]}


def build(budget: Budget, gum: GumResult, mc: MonteCarloResult | None = None, *, digits: int = 2,
          charts: bool = True, generated: _dt.datetime | None = None) -> dict[str, Any]:
    """A dictionary of strings and lists for the report templates; every figure carries its unit."""
    mu = pretty_unit(budget.measurand.unit)
    when = generated or _dt.datetime.now(_dt.UTC)
    inputs = []
    for q in budget.quantities.values():
        qu = pretty_unit(q.unit)
        inputs.append({
            "name": q.name, "model": q.model, "description": q.description,
            "value": estimate_text(q.value, q.standard_uncertainty), "unit": qu,
            "u": fig(q.standard_uncertainty) if q.components else "exact", "dof": dof_equation("ν", q.dof),
            "kind": kind_text(q.kind, q.shape),
            "components": [{"name": c.name, "type": c.kind, "distribution": c.distribution.shape,
                            "divisor": _divisor(c), "u": fig(c.standard_uncertainty), "dof": dof_text(c.dof),
                            "origin": c.origin} for c in q.components],
            "working": list(q.working),
        })
    defined = [{"name": name, "model": model, "working": list(lines)}
               for name, (model, lines) in budget.working.items() if lines]
    rows = [{"input": r.input, "value": estimate_text(r.value, r.standard_uncertainty), "unit": pretty_unit(r.unit),
             "u": fig(r.standard_uncertainty), "dof": dof_text(r.dof), "c": fig(r.sensitivity),
             "c_unit": units.per(budget.measurand.unit, r.unit), "contribution": fig(r.contribution),
             "share": share_text(r.variance_share)}
            for r in gum.contributions]
    from ..statement import sentence, state

    stated = state(budget, gum, mc)
    y_text, U_text = round_pair(gum.value, gum.expanded_uncertainty, digits)
    result = {
        "statement": sentence(stated, mu, digits), "method": stated.method_name, "reason": stated.reason,
        "by_monte_carlo": stated.method == "monte-carlo",
        "value": y_text, "u": at_place_of(gum.standard_uncertainty, gum.standard_uncertainty, digits),
        "dof": dof_text(gum.effective_dof), "k": f"{gum.coverage_factor:.2f}", "U": U_text,
        "p": probability_text(gum.coverage_probability) if gum.coverage_probability else "fixed k",
        "second_order": gum.second_order, "notes": list(gum.notes) + _limits_note(budget, mu), "digits": digits,
    }
    data: dict[str, Any] = {
        "title": budget.title, "symbol": budget.measurand.symbol, "unit": mu,
        "description": budget.measurand.description, "date": when.strftime("%Y-%m-%d %H:%M UTC"),
        "version": __version__, "sha256": budget.sha256, "source": budget.source,
        "model": [f"{line.name} = {line.text}" for line in budget.model.lines],
        "inputs": inputs, "defined": defined, "rows": rows, "result": result, "warnings": list(budget.warnings),
        "caution": CAUTION, "mc": None, "charts": {}, "settings": list(budget.settings),
        "document": _document_control(budget), "share_label": SHARE_LABEL,
    }
    if mc is not None:
        v = mc.validation
        sd = mc.standard_uncertainty  # None where an input's variance does not exist (JCGM 101 6.4.9)
        # JCGM 101 7.6, 7.7: the estimate and interval ends to the decimal place of u at two significant digits;
        # without a u, to that of a quarter of the interval's width (the u of a Gaussian of that interval)
        ref = sd if sd is not None and math.isfinite(sd) and sd > 0 else abs(mc.interval[1] - mc.interval[0]) / 4

        def at(x: float) -> str:
            return at_place_of(x, ref, 2)

        from ..statement import interval_texts  # the digits of the result statement (JCGM 101 7.8)

        mean_text, low, high = interval_texts(mc.value, mc.interval)
        _, short_low, short_high = interval_texts(mc.value, mc.shortest_interval)

        data["mc"] = {
            "trials": f"{mc.trials:,}", "seed": str(mc.seed), "mean": mean_text,
            "sd": at_place_of(sd, sd, 2) if sd is not None else "not defined",
            "estimate": mc.estimate, "p": probability_text(mc.coverage_probability),
            "precision": None if mc.precision is None else (
                f"Standard errors ({mc.precision.blocks} blocks, JCGM 101 7.9): {mc.estimate} "
                f"{fig(mc.precision.value, 2)}, u "
                + (fig(mc.precision.standard_uncertainty, 2) if mc.precision.standard_uncertainty is not None
                   else "not defined")
                + f", endpoints {fig(mc.precision.low, 2)} and {fig(mc.precision.high, 2)}"
                + (f" {mu}" if mu else "")),
            "interval": f"[{low}, {high}]", "shortest": f"[{short_low}, {short_high}]",
            "nonfinite": mc.nonfinite, "adaptive": mc.adaptive, "stages": mc.stages, "notes": list(mc.notes),
            "validation": None if v is None else {
                "delta": fig(v.delta, 2), "d_low": fig(v.d_low, 2), "d_high": fig(v.d_high, 2),
                "digits": v.digits, "passed": v.verdict == "passed", "verdict": {
                    "passed": "the GUM result is validated.",
                    "failed": "the GUM result is not validated at this tolerance; the Monte Carlo interval is "
                              "stated.",
                    "undecided": "undecided: the margin to δ is within the endpoints' scatter.",
                }[v.verdict], "causes": list(v.causes),
                "gum_interval": f"[{at(v.gum_interval[0])}, {at(v.gum_interval[1])}]"},
        }
    data["correlations"] = [{"a": a, "b": b, "r": f"{r:.4f}", "origin": budget.correlation_origins.get((a, b), "")}
                            for (a, b), r in sorted(budget.correlations.items())
                            if r and a in budget.model.inputs and b in budget.model.inputs]
    data["calibrations"] = calibration_sections(budget, charts)
    if charts:
        from . import charts as drawing

        if gum.contributions and any(r.contribution > 0 for r in gum.contributions):
            data["charts"]["contributions"] = drawing.contribution_chart(gum, mu)
        if mc is not None:
            data["charts"]["distribution"] = drawing.distribution_chart(gum, mc, mu)
    return data


def calibration_sections(budget: Budget, charts: bool) -> list[dict[str, Any]]:
    """ISO 8466-1 diagnostics of each calibration input: test outcomes, residuals and their plot."""
    out = []
    for name, d in budget.details.items():
        if d.get("model") != "calibration":
            continue
        diag = d["diagnostics"]
        lines = []
        m, h = diag.get("mandel"), diag.get("homoscedasticity")
        if m:
            verdict = "linear" if m["passed"] else "the second-order fit is significantly better"
            lines.append(f"Mandel test: PG = {num(m['pg'], 3)}, F(1, {m['dof2']:.0f}; 99 %) = "
                         f"{num(m['f_critical'], 3)}: {verdict}")
        if h:
            verdict = "variances compatible" if h["passed"] else "variances differ"
            lines.append(f"homoscedasticity (ends of the range): s = {num(h['s_low'], 3)} and {num(h['s_high'], 3)}, "
                         f"PG = {num(h['pg'], 3)}, F({h['dof1']:.0f}, {h['dof2']:.0f}; 99 %) = "
                         f"{num(h['f_critical'], 3)}: {verdict}")
        lines.extend(diag.get("notes", []))
        residuals = [{"x": num(r["x"], 6), "y": num(r["y"], 6), "residual": num(r["residual"], 3)}
                     for r in diag["residuals"]]
        chart = ""
        if charts:
            from .charts import residual_chart

            chart = residual_chart(diag["residuals"], d["residual_sd"], pretty_unit(d["unit"]),
                                   pretty_unit(d["response_unit"]))
        out.append({"name": name, "lines": lines, "residuals": residuals, "chart": chart,
                    "function": d["function"]})
    return out
