"""JSON output: unrounded numbers under stable keys (documented in docs/json-output.md).

Infinite degrees of freedom are written as null; output quantities are in the measurand's unit.
"""

from __future__ import annotations

import json
import math
from typing import TYPE_CHECKING, Any

from .. import __version__
from ..budget.definitions import Budget, Quantity
from ..engines.gum import GumResult

if TYPE_CHECKING:
    from ..engines.montecarlo import MonteCarloResult


def _dof(nu: float) -> float | None:
    return None if math.isinf(nu) else nu


def quantity_json(q: Quantity) -> dict[str, Any]:
    return {
        "value": q.value,
        "unit": q.unit,
        "standard_uncertainty": q.standard_uncertainty,
        "dof": _dof(q.dof),
        "model": q.model,
        "description": q.description,
        "components": [
            {"name": c.name, "type": c.kind, "distribution": c.distribution.shape,
             "divisor": c.distribution.divisor, "standard_uncertainty": c.standard_uncertainty,
             "dof": _dof(c.dof), "origin": c.origin}
            for c in q.components
        ],
        "working": list(q.working),
    }


def monte_carlo_json(mc: MonteCarloResult) -> dict[str, Any]:
    v = mc.validation
    return {
        "trials": mc.trials,
        "seed": mc.seed,
        "value": mc.value,
        "standard_uncertainty": mc.standard_uncertainty,
        "estimate": mc.estimate,
        "heavy_tailed_inputs": list(mc.heavy_tailed),
        "coverage_probability": mc.coverage_probability,
        "interval": list(mc.interval),
        "shortest_interval": list(mc.shortest_interval),
        "nonfinite": mc.nonfinite,
        "adaptive": mc.adaptive,
        "digits": mc.digits,
        "precision": None if mc.precision is None else {
            "blocks": mc.precision.blocks, "trials_per_block": mc.precision.trials_per_block,
            "value": mc.precision.value, "standard_uncertainty": mc.precision.standard_uncertainty,
            "interval_low": mc.precision.low, "interval_high": mc.precision.high},
        "validation": None if v is None else {
            "delta": v.delta, "d_low": v.d_low, "d_high": v.d_high, "passed": v.passed, "digits": v.digits,
            "gum_interval": list(v.gum_interval), "verdict": v.verdict, "scatter_low": v.scatter_low,
            "scatter_high": v.scatter_high, "rerun_trials": v.rerun_trials, "causes": list(v.causes),
        },
        "histogram": {"counts": list(mc.histogram.counts), "edges": list(mc.histogram.edges),
                      "outside": mc.histogram.outside},
        "correlations": [{"between": [c.a, c.b], "stated": c.stated, "achieved": c.achieved, "method": c.method}
                         for c in mc.correlations],
        "notes": list(mc.notes),
    }


def result_json(budget: Budget, gum: GumResult, mc: MonteCarloResult | None = None) -> dict[str, Any]:
    """The stated result (ucalc.statement): the method it comes from, its figures and the reason."""
    from ..statement import line, state

    s = state(budget, gum, mc)
    return {"method": s.method, "value": s.value, "unit": s.unit, "coverage_probability": s.probability,
            "expanded_uncertainty": s.expanded_uncertainty, "coverage_factor": s.coverage_factor,
            "interval": None if s.interval is None else list(s.interval), "reason": s.reason,
            "line": line(s, s.unit)}


def evaluation_json(budget: Budget, gum: GumResult, mc: MonteCarloResult | None = None) -> dict[str, Any]:
    data = gum_json(budget, gum)
    if mc is not None:
        data["monte_carlo"] = monte_carlo_json(mc)
    data["result"] = result_json(budget, gum, mc)
    return data


def gum_json(budget: Budget, result: GumResult) -> dict[str, Any]:
    return {
        "ucalc_version": __version__,
        "title": budget.title,
        "source": budget.source,
        "sha256": budget.sha256,
        "measurand": result.measurand,
        "unit": result.unit,
        "value": result.value,
        "standard_uncertainty": result.standard_uncertainty,
        "effective_dof": _dof(result.effective_dof),
        "coverage_factor": result.coverage_factor,
        "coverage_probability": result.coverage_probability,
        "expanded_uncertainty": result.expanded_uncertainty,
        "second_order": result.second_order,
        "contributions": [
            {"input": c.input, "value": c.value, "unit": c.unit, "standard_uncertainty": c.standard_uncertainty,
             "dof": _dof(c.dof), "sensitivity": c.sensitivity, "contribution": c.contribution,
             "variance_share": c.variance_share}
            for c in result.contributions
        ],
        "inputs": {name: quantity_json(q) for name, q in budget.quantities.items()},
        "defined_inputs": {name: {"model": model, "expression": next(
            (line.text for line in budget.model.lines if line.name == name), ""), "working": list(lines)}
            for name, (model, lines) in budget.working.items()},
        "input_models": budget.details,
        "correlations": correlations_json(budget),
        "notes": list(result.notes),
        "warnings": list(budget.warnings),
        "settings": list(budget.settings),
    }


def correlations_json(budget: Budget) -> list[dict[str, Any]]:
    """Every non-zero correlation coefficient with why it exists (budget file, calibration, shared item)."""
    return [{"between": [a, b], "r": r, "origin": budget.correlation_origins.get((a, b), "")}
            for (a, b), r in sorted(budget.correlations.items()) if r != 0.0]


def dumps(data: dict[str, Any]) -> str:
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False)
