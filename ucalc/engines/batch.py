"""The GUM over many samples at once: one budget, per-row values of some inputs, numpy arrays throughout.

Each row is the budget with the row's values put in, computed by the kernel of :mod:`ucalc.engines.gum` (no loop
over rows, no second copy of the GUM). An input whose value a row supplies gets, for that row, the estimate,
standard uncertainty and degrees of freedom its input model gives: an input model may provide
``rows(spec, column)`` (a calibration predicts x0, u(x0) from the sample's response); otherwise the row's value is
the estimate, components declared relative scale with it, absolute ones stay, and the dof is recomputed for the
row by Welch-Satterthwaite over the components (JCGM 100 G.4.1).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..budget.definitions import Budget, Quantity
from ..errors import ComputationError


@dataclass(frozen=True)
class RowInput:
    """Per-row estimates, standard uncertainties and dof of one input; ``errors`` maps a row to why it has none."""

    name: str
    values: Any
    u: Any
    errors: dict[int, str]
    dof: Any = None
    correlations: dict[str, Any] = field(default_factory=dict)  # other quantity -> per-row coefficient


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


def rescaled(q: Quantity, values: Any) -> tuple[Any, Any]:
    """u and dof of quantity ``q`` at other estimates: relative components scale with |value|, absolute ones stay;
    dof by Welch-Satterthwaite over the components (JCGM 100 G.4.1) for each value."""
    import numpy as np

    from .gum import combine

    values = np.asarray(values, dtype=float)
    if not q.components:
        return np.zeros(values.shape), np.full(values.shape, np.inf)
    if q.value == 0 and any(c.relative for c in q.components):
        raise ComputationError(f"input '{q.name}' has relative components and a zero value; they cannot be rescaled")
    scale = np.abs(values) / abs(q.value) if q.value else np.ones_like(values)
    parts = np.array([c.standard_uncertainty * (scale if c.relative else np.ones_like(values))
                      for c in q.components]).reshape(len(q.components), -1)
    dofs = np.array([c.dof for c in q.components], dtype=float)[:, None]
    with np.errstate(all="ignore"):
        u, dof, _, _, _ = combine(parts, dofs, [])
    if q.dof_override is not None:
        dof = np.full(values.shape, q.dof_override)
    return u.reshape(values.shape), dof.reshape(values.shape)


def row_input(budget: Budget, name: str, own: tuple[Any, Any, Any, dict[int, str], dict[str, Any]] | None,
              column: Any) -> RowInput:
    """Per-row estimate, u and dof of quantity ``name`` from a column of values.

    ``own`` is what the input's model makes of the column, as (estimates, u, dof, errors by row, per-row
    correlations with other quantities) (a calibration takes sample responses); None applies the rule of
    :func:`rescaled` to the column's values.
    """
    import numpy as np

    values = np.asarray(column, dtype=float)
    errors = {int(i): f"no value for '{name}'" for i in np.flatnonzero(~np.isfinite(values))}
    q = budget.quantities[name]
    if own is not None:
        x, u, dof, more, correlations = own
        for i, reason in more.items():
            errors.setdefault(i, reason)
        return RowInput(name, x, u, errors, dof, correlations)
    u, dof = rescaled(q, values)
    return RowInput(name, values, u, errors, dof)


def propagate_rows(budget: Budget, rows: list[RowInput], n: int) -> BatchResult:
    """JCGM 100 5.1.2, G.4.1 and G.3 on every row at once, by the kernel of :mod:`ucalc.engines.gum`."""
    import numpy as np

    from .gum import evaluate_rows

    per_row = {r.name: r for r in rows}
    env: dict[str, Any] = {}
    u: dict[str, Any] = {}
    dof: dict[str, Any] = {}
    for name in budget.model.inputs:
        q = budget.quantities[name]
        if name in per_row:
            r = per_row[name]
            env[name], u[name] = r.values, r.u
            dof[name] = q.dof if r.dof is None else r.dof
        else:
            env[name], u[name], dof[name] = q.value, q.standard_uncertainty, q.dof
    per_row_r = {(r.name, other): coefficient for r in rows for other, coefficient in r.correlations.items()}
    result = evaluate_rows(budget, env, u, dof, n, per_row_r)
    errors: dict[int, str] = {}
    for r in rows:
        for i, e in r.errors.items():
            errors.setdefault(i, e)
    for i, e in result.errors.items():
        errors.setdefault(i, e)
    arrays = [np.array(a, dtype=float) for a in (result.value, result.standard_uncertainty, result.effective_dof,
                                                 result.coverage_factor, result.expanded_uncertainty)]
    failed = np.fromiter(errors, dtype=np.intp, count=len(errors))
    for array in arrays:
        array[failed] = np.nan
    y, uc, nu, k, expanded = arrays
    return BatchResult(y, uc, nu, k, expanded, result.coverage_probability, errors)


def expanded_at(budget: Budget, make_rows: Any, values: Any, target: Any, iterations: int = 30) -> Any:
    """U where the measurand equals ``target``, per row: the secant method on one table column's values (the
    rows' ``values`` as the start), ``make_rows(values) -> list[RowInput]`` rebuilding the rows' inputs from that
    column. NaN where it does not converge to 1e-9 relative."""
    import numpy as np

    goal = np.asarray(target, dtype=float)
    n = goal.size

    def at(v: Any) -> tuple[Any, Any]:
        res = propagate_rows(budget, make_rows(v), n)
        return res.value, res.expanded_uncertainty

    x0 = np.asarray(values, dtype=float).copy()
    x1 = np.where(x0 != 0, x0 * 1.01, 1e-6)
    f0 = at(x0)[0] - goal
    y1, U = at(x1)
    f1 = y1 - goal
    with np.errstate(all="ignore"):
        for _ in range(iterations):
            step = np.where(f1 != f0, f1 * (x1 - x0) / (f1 - f0), 0.0)
            x0, f0 = x1, f1
            x1 = x1 - np.where(np.isfinite(step), step, 0.0)
            y1, U = at(x1)
            f1 = y1 - goal
            if np.all(~np.isfinite(f1) | (np.abs(f1) <= 1e-9 * np.abs(goal))):
                break
    done = np.isfinite(f1) & (np.abs(f1) <= 1e-9 * np.abs(goal))
    return np.where(done, U, np.nan)
