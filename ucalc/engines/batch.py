"""The GUM over many samples at once: one budget, per-row values of some inputs, numpy arrays throughout.

Each row is the budget with the row's values put in: sensitivity coefficients, u_c, nu_eff, k and U follow JCGM
100 exactly as in :mod:`ucalc.engines.gum`, evaluated on arrays (no loop over rows). A row's input supplies the
estimate; components declared relative scale with it, absolute ones stay; a calibration input takes the row's
sample response and predicts x0 and u(x0) for it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..budget.definitions import Budget
from ..errors import ComputationError


@dataclass(frozen=True)
class RowInput:
    """Per-row estimates and standard uncertainties of one input; ``errors`` maps a row to why it has none."""

    name: str
    values: Any
    u: Any
    errors: dict[int, str]


@dataclass(frozen=True)
class BatchResult:
    """Arrays over rows; ``errors`` maps each row without a result to the reason."""

    value: Any
    standard_uncertainty: Any
    effective_dof: Any
    coverage_factor: Any
    expanded_uncertainty: Any
    coverage_probability: float | None
    errors: dict[int, str]


def row_input(budget: Budget, name: str, raw: dict[str, Any] | None, column: Any) -> RowInput:
    """Per-row estimate and u of quantity ``name`` from a column of values (sample responses for a calibration)."""
    import numpy as np

    values = np.asarray(column, dtype=float)
    errors = {int(i): f"no value for '{name}'" for i in np.flatnonzero(~np.isfinite(values))}
    q = budget.quantities[name]
    if q.model == "calibration" and raw is not None and "calibration" in raw:
        from ..inputs.calibration import Spec, predict_many

        spec = Spec.model_validate(raw)
        x0, u, _, outside = predict_many(spec.calibration, values)
        lo, hi = min(spec.calibration.standards), max(spec.calibration.standards)
        for i in np.flatnonzero(outside):
            errors.setdefault(int(i), f"'{name}': the sample (x0 = {x0[i]:.4g}) lies outside the calibrated "
                                      f"range [{lo:g}, {hi:g}]")
        return RowInput(name, x0, u, errors)
    scale = np.abs(values) / abs(q.value) if q.value else np.ones_like(values)
    if q.value == 0 and any(c.relative for c in q.components):
        raise ComputationError(f"input '{name}' has relative components and a zero value; they cannot be rescaled")
    var = sum((c.standard_uncertainty * (scale if c.relative else 1.0)) ** 2 for c in q.components)
    u = np.sqrt(var) * np.ones_like(values)
    return RowInput(name, values, u, errors)


def propagate_rows(budget: Budget, rows: list[RowInput], n: int) -> BatchResult:
    """JCGM 100 5.1.2, G.4.1 and G.3 on every row at once."""
    import numpy as np
    from scipy import stats

    model = budget.model
    per_row = {r.name: r for r in rows}
    env: dict[str, Any] = {}
    u: dict[str, Any] = {}
    for name in model.inputs:
        q = budget.quantities[name]
        if name in per_row:
            env[name], u[name] = per_row[name].values, per_row[name].u
        else:
            env[name], u[name] = q.value, q.standard_uncertainty
    errors: dict[int, str] = {}
    for r in rows:
        for i, e in r.errors.items():
            errors.setdefault(i, e)
    with np.errstate(all="ignore"):
        y = np.broadcast_to(np.asarray(model.function("numpy")(env), dtype=float), (n,)).copy()
        terms = []
        for name in model.inputs:
            c = np.broadcast_to(np.asarray(model.evaluate_tree(model.derivative(name), env, "numpy"), dtype=float),
                                (n,))
            terms.append((name, c * u[name]))
        scale = np.max([np.abs(t) for _, t in terms], axis=0) if terms else np.ones(n)
        scale = np.where(scale > 0, scale, 1.0)  # per row, so squares neither overflow nor underflow
        scaled = [(name, t / scale) for name, t in terms]
        variance = sum(t * t for _, t in scaled)
        for i, (a, ta) in enumerate(scaled):
            for b, tb in scaled[i + 1:]:
                rho = budget.correlation(a, b)
                if rho:
                    variance = variance + 2.0 * rho * ta * tb
        variance = np.broadcast_to(np.asarray(variance, dtype=float), (n,))
        uc = scale * np.sqrt(np.clip(variance, 0.0, None))
        denom = sum(t**4 / budget.quantities[name].dof for name, t in scaled
                    if math.isfinite(budget.quantities[name].dof))
        denom = np.broadcast_to(np.asarray(denom, dtype=float), (n,))
        nu = np.where(denom > 0, variance**2 / np.where(denom > 0, denom, 1.0), np.inf)
    p = budget.coverage.probability
    if budget.coverage.k is not None:
        k = np.full(n, budget.coverage.k)
    else:
        assert p is not None
        nu_used = np.floor(nu) if budget.coverage.dof_rounding == "down" else nu
        # t quantiles once per distinct degrees of freedom (rows share few after truncation, G.6.4)
        distinct, inverse = np.unique(np.where(np.isfinite(nu_used), np.maximum(nu_used, 1), np.inf),
                                      return_inverse=True)
        with np.errstate(all="ignore"):
            quantiles = np.where(np.isinf(distinct), stats.norm.ppf(0.5 + p / 2),
                                 stats.t.ppf(0.5 + p / 2, np.where(np.isinf(distinct), 1, distinct)))
        k = quantiles[inverse.reshape(-1)]
        for row in np.flatnonzero(nu_used < 1):
            errors.setdefault(int(row), f"effective degrees of freedom {nu[row]:.3g} are below 1")
    bad = ~(np.isfinite(y) & np.isfinite(uc))
    for row in np.flatnonzero(bad):
        errors.setdefault(int(row), "the result is not finite for this row's values")
    expanded = k * uc
    failed = np.fromiter(errors, dtype=np.intp, count=len(errors))
    nu = np.array(nu, dtype=float)
    for array in (y, uc, nu, k, expanded):
        array[failed] = np.nan
    return BatchResult(y, uc, nu, k, expanded, p if budget.coverage.k is None else None, errors)
