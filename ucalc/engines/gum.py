"""The law of propagation of uncertainty (JCGM 100:2008, clause 5) and the expanded uncertainty (clause 6, G).

u_c^2 = sum c_i^2 u_i^2 + 2 sum_{i<j} c_i c_j r_ij u_i u_j (5.1.2, 5.2.2), with exact sensitivity coefficients
c_i = df/dx_i (5.1.3) from symbolic differentiation; optional second-order terms for uncorrelated inputs
(5.1.2 note); effective degrees of freedom by Welch-Satterthwaite (G.4.1); k = t_p(nu_eff) (G.3, G.6.4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..budget.definitions import Budget
from ..errors import ComputationError
from ..results import ResultMethods


@dataclass(frozen=True)
class Contribution:
    """One input's row of the budget table; output quantities are in the measurand's unit."""

    input: str
    value: float
    unit: str
    standard_uncertainty: float
    dof: float
    sensitivity: float
    contribution: float
    index: float
    kind: str
    shape: str


@dataclass(frozen=True)
class GumResult(ResultMethods):
    """Result of the GUM propagation; ``contributions`` are sorted by decreasing contribution."""

    measurand: str
    unit: str
    value: float
    standard_uncertainty: float
    effective_dof: float
    coverage_factor: float
    coverage_probability: float | None
    expanded_uncertainty: float
    contributions: tuple[Contribution, ...]
    second_order: bool = False
    second_order_variance: float = 0.0
    correlation_variance: float = 0.0
    notes: tuple[str, ...] = ()

    @property
    def relative_expanded_uncertainty(self) -> float:
        return self.expanded_uncertainty / abs(self.value) if self.value else math.inf


def coverage_factor(probability: float, dof: float) -> float:
    """t_p(nu): the two-sided coverage factor of the t-distribution (JCGM 100 G.3.4, Table G.2)."""
    from scipy import stats

    if math.isinf(dof) or dof > 1e12:  # beyond 1e12 dof the t quantile equals the Gaussian one to 1e-12
        return float(stats.norm.ppf(0.5 + probability / 2.0))
    return float(stats.t.ppf(0.5 + probability / 2.0, dof))


def propagate(budget: Budget, *, second_order: bool = False) -> GumResult:
    """Propagate a budget's uncertainties to the measurand by JCGM 100 clause 5."""
    model = budget.model
    names = model.inputs
    env: dict[str, Any] = {n: budget.quantities[n].value for n in names}
    y = float(model.function("float")(env))
    q = [budget.quantities[n] for n in names]
    u = [x.standard_uncertainty for x in q]
    c = [float(model.evaluate_tree(model.derivative(n), env)) for n in names]
    terms = [ci * ui for ci, ui in zip(c, u, strict=True)]
    if any(t == 0.0 and ci != 0.0 and ui != 0.0 for t, ci, ui in zip(terms, c, u, strict=True)):
        raise ComputationError("a sensitivity coefficient times its standard uncertainty underflows to zero; "
                               "express the inputs in units that bring the numbers nearer 1")
    if not all(math.isfinite(t) for t in terms):
        raise ComputationError("a sensitivity coefficient times its standard uncertainty overflows; "
                               "express the inputs in units that bring the numbers nearer 1")
    scale = max((abs(t) for t in terms), default=0.0) or 1.0  # sums of squares of t/scale cannot overflow
    first_s = sum((t / scale) ** 2 for t in terms)
    cross_s = 0.0
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            r = budget.correlation(names[i], names[j])
            if r:
                cross_s += 2.0 * (terms[i] / scale) * (terms[j] / scale) * r
    second = 0.0
    notes: list[str] = []
    if second_order:
        if any(budget.correlation(a, b) for a in names for b in names if a != b):
            raise ComputationError("second-order terms (JCGM 100 5.1.2 note) need uncorrelated inputs",
                                   subject="second_order")
        second = _second_order(budget, names, env, u, c)
    variance_s = first_s + cross_s + ((second / scale) / scale if second else 0.0)
    if variance_s < 0:
        if variance_s > -1e-12 * (first_s + 1e-300):
            variance_s = 0.0
        else:
            raise ComputationError(f"combined variance is negative (relative {variance_s:.3g}); "
                                   "check the correlations")
    uc = scale * math.sqrt(variance_s)
    cross = cross_s * scale * scale if cross_s else 0.0
    nu = _effective_dof(first_s + cross_s, [t / scale for t in terms], [x.dof for x in q])
    p = budget.coverage.probability
    if uc == 0.0:
        notes.append("every input is exact or has zero sensitivity: the combined uncertainty is zero")
    if budget.coverage.k is not None:
        k, p_out = budget.coverage.k, None
    else:
        assert p is not None
        nu_used = float(math.floor(nu)) if (budget.coverage.dof_rounding == "down" and not math.isinf(nu)) else nu
        if nu_used < 1:
            raise ComputationError(
                f"effective degrees of freedom {nu:.3g} are below 1, so no coverage factor follows from the "
                "probability; collect more data or state a fixed 'k' under 'coverage'", subject="coverage")
        k, p_out = coverage_factor(p, nu_used), p
    contributions = []
    for x, ci, ui, t in zip(q, c, u, terms, strict=True):
        contributions.append(Contribution(
            input=x.name, value=x.value, unit=x.unit, standard_uncertainty=ui, dof=x.dof, sensitivity=ci,
            contribution=abs(t), index=((t / scale) ** 2 / variance_s) if variance_s > 0 else 0.0, kind=x.kind,
            shape=x.shape,
        ))
    contributions.sort(key=lambda row: (-row.contribution, row.input))
    if cross_s and first_s:
        change = "raise" if cross_s > 0 else "lower"
        share = (first_s + cross_s) / first_s
        notes.append(f"correlation terms {change} u_c^2 to {share:.0%} of the uncorrelated sum; effective dof"
                     " by Welch-Satterthwaite over the uncorrelated terms, which is conservative where correlations "
                     "cancel")
    if second:
        notes.append(f"second-order terms add {(second / scale) / scale / variance_s:.1%} of u_c^2")
    return GumResult(
        measurand=budget.measurand.symbol, unit=budget.measurand.unit, value=y, standard_uncertainty=uc,
        effective_dof=nu, coverage_factor=k, coverage_probability=p_out, expanded_uncertainty=k * uc,
        contributions=tuple(contributions), second_order=second_order, second_order_variance=second,
        correlation_variance=cross, notes=tuple(n for n in notes if n),
    )


def _effective_dof(variance: float, terms: list[float], dofs: list[float]) -> float:
    """Welch-Satterthwaite: nu_eff = u_c^4 / sum (c_i u_i)^4 / nu_i (JCGM 100 G.4.1, eq. G.2b).

    Second-order terms are left out of u_c here: they carry no degrees of freedom of their own.
    """
    denom = sum(t**4 / nu for t, nu in zip(terms, dofs, strict=True) if not math.isinf(nu) and t != 0.0)
    if denom == 0.0 or variance <= 0.0:
        return math.inf
    return variance * variance / denom


def _second_order(budget: Budget, names: tuple[str, ...], env: dict[str, Any], u: list[float],
                  c: list[float]) -> float:
    """sum_i sum_j [ (d2f/dxi dxj)^2 / 2 + df/dxi d3f/(dxi dxj^2) ] u_i^2 u_j^2 (JCGM 100 5.1.2 note)."""
    model = budget.model
    total = 0.0
    for i, a in enumerate(names):
        if u[i] == 0.0:
            continue
        for j, b in enumerate(names):
            if u[j] == 0.0:
                continue
            d2 = float(model.evaluate_tree(model.derivative(a, b), env))
            d3 = float(model.evaluate_tree(model.derivative(a, b, b), env))
            total += (0.5 * d2 * d2 + c[i] * d3) * u[i] ** 2 * u[j] ** 2
    if not math.isfinite(total):
        raise ComputationError("second-order terms are not finite at the estimates", subject="second_order")
    return total
