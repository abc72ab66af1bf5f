"""The law of propagation of uncertainty (JCGM 100:2008, clause 5) and the expanded uncertainty (clause 6, G).

This module is the only place of the package where u_c, the effective degrees of freedom and the coverage
factor are computed. It works on arrays, one entry per row (a sample of a batch, a candidate of a plan, or the
single row of ``ucalc run``):

- u_c^2 = sum c_i^2 u_i^2 + 2 sum_{i<j} c_i c_j r_ij u_i u_j (5.1.2, 5.2.2), with exact sensitivity coefficients
  c_i = df/dx_i (5.1.3) from symbolic differentiation;
- optional second-order terms for uncorrelated inputs (5.1.2 note), with the fourth moment of each input's
  stated distribution in place of the Gaussian 3 u^4 (see :func:`_second_order`);
- the effective degrees of freedom by Welch-Satterthwaite (G.4.1), generalised to correlated inputs by
  :func:`effective_dof`;
- k = t_p(nu_eff) (G.3, G.6.4) from ``scipy.special`` (no scipy.stats import on this path).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..budget.definitions import Budget
from ..errors import ComputationError
from ..results import ResultMethods

# fourth moment E[e^4]/u^4 of a component's distribution (kurtosis): rectangular 9/5, triangular 12/5,
# arcsine 3/2 (moments of the uniform, triangular and arcsine laws, JCGM 101 6.4.3-6.4.6); Gaussian 3. A Type A
# component enters the GUM as a Gaussian with standard uncertainty s/sqrt(n) (JCGM 100 4.2, G.3), so 3 as well.


@dataclass(frozen=True)
class Contribution:
    """One input's row of the budget table; output quantities are in the measurand's unit.

    ``variance_share`` is the input's share of u_c^2 (see :func:`variance_shares`): the shares of all rows add up
    to 1, and none is above 1, with or without correlations.
    """

    input: str
    value: float
    unit: str
    standard_uncertainty: float
    dof: float
    sensitivity: float
    contribution: float
    variance_share: float
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


@dataclass(frozen=True)
class Rows:
    """The GUM on arrays: ``terms`` and ``sensitivities`` have one line per input of ``names`` and one column per
    row; every other array has one entry per row. ``errors`` maps a row without a result to the reason."""

    names: tuple[str, ...]
    value: Any
    sensitivities: Any
    terms: Any
    standard_uncertainty: Any
    effective_dof: Any
    coverage_factor: Any
    expanded_uncertainty: Any
    coverage_probability: float | None
    uncorrelated_variance: Any
    correlation_variance: Any
    correlation_ratio: Any
    errors: dict[int, str]


def coverage_factors(probability: float, dof: Any) -> Any:
    """t_p(nu) for an array of nu: the two-sided coverage factor of the t-distribution (JCGM 100 G.3.4, Table G.2).

    Infinite nu (and nu beyond 1e12, where t and Gaussian quantiles agree to 1e-12) gives the Gaussian quantile.
    Quantiles are computed once per distinct nu (rows share few after truncation, G.6.4).
    """
    import numpy as np
    from scipy import special

    nu = np.asarray(dof, dtype=float)
    q = 0.5 + probability / 2.0
    gaussian = ~np.isfinite(nu) | (nu > 1e12)
    distinct, inverse = np.unique(np.where(gaussian, np.inf, nu), return_inverse=True)
    with np.errstate(all="ignore"):
        values = np.where(np.isinf(distinct), special.ndtri(q),
                          special.stdtrit(np.where(np.isinf(distinct), 1.0, distinct), q))
    return values[inverse.reshape(nu.shape)]


def coverage_factor(probability: float, dof: float) -> float:
    """t_p(nu) for one nu (JCGM 100 G.3.4, Table G.2); see :func:`coverage_factors`."""
    return float(coverage_factors(probability, [dof])[0])


def correlation_pairs(budget: Budget, names: tuple[str, ...]) -> list[tuple[int, int, float]]:
    """(i, j, r_ij) with i < j for every non-zero correlation coefficient between inputs of ``names``."""
    index = {n: i for i, n in enumerate(names)}
    pairs = []
    for (a, b), r in budget.correlations.items():
        if r and a in index and b in index and a != b:
            i, j = sorted((index[a], index[b]))
            pairs.append((i, j, float(r)))
    return sorted(pairs)


def _blocks(m: int, pairs: list[tuple[int, int, Any]]) -> list[list[int]]:
    """Groups of inputs linked by non-zero correlations (connected components), each sorted."""
    parent = list(range(m))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for i, j, _ in pairs:
        parent[find(i)] = find(j)
    groups: dict[int, list[int]] = {}
    for i in range(m):
        groups.setdefault(find(i), []).append(i)
    return list(groups.values())


def combine(terms: Any, dofs: Any, pairs: list[tuple[int, int, float]]) -> tuple[Any, Any, Any, Any, Any]:
    """u_c, nu_eff, the uncorrelated sum and the correlation part of (u_c/scale)^2, and the scale, per row, for
    terms c_i u_i of shape (m, n).

    Law of propagation: JCGM 100 5.1.2 and 5.2.2. Each row is scaled by its largest |c_i u_i| so that squares and
    fourth powers neither overflow nor underflow. Degrees of freedom: :func:`effective_dof`.
    """
    import numpy as np

    t = np.asarray(terms, dtype=float)
    m = t.shape[0]
    n = t.shape[1] if t.ndim == 2 else 1
    t = t.reshape(m, n)
    scale = np.max(np.abs(t), axis=0) if m else np.ones(n)
    scale = np.where((scale > 0) & np.isfinite(scale), scale, 1.0)
    s = t / scale
    first = np.sum(s * s, axis=0)
    cross = np.zeros(n)
    for i, j, r in pairs:
        cross = cross + 2.0 * r * s[i] * s[j]
    variance = first + cross
    nu = effective_dof(s, np.broadcast_to(np.asarray(dofs, dtype=float).reshape(m, -1 if m else 1), (m, n)), pairs,
                       variance)
    with np.errstate(over="ignore"):
        return scale * np.sqrt(np.clip(variance, 0.0, None)), nu, first, cross, scale


def effective_dof(s: Any, dofs: Any, pairs: list[tuple[int, int, Any]], variance: Any) -> Any:
    """Effective degrees of freedom, correlated inputs included: nu_eff = u_c^4 / sum_B v_B^2 / nu_B.

    B runs over groups of inputs linked by non-zero correlations (an uncorrelated input is a group of its own);
    v_B = sum_{i in B} t_i g_i with t_i = c_i u_i and g_i = sum_j r_ij t_j is the group's part of u_c^2, its
    correlation terms included. nu_B is nu_i for a single input, so that without correlations this is eq. (G.2b)
    of JCGM 100 G.4.1 exactly; for a correlated group it is the smallest nu_i among its inputs with a non-zero term.

    Reasoning: correlated estimates in a lab budget usually share their data (two quantities carrying one mean, a
    calibration's coefficients and predictions from one residual standard deviation). For estimates from the same
    nu-dof sample, t^T S t / t^T Sigma t is chi^2_nu / nu for any t (a quadratic form in a Wishart matrix; from
    memory), so the group's part of u_c^2 carries exactly nu dof whatever the correlations, and independent groups
    combine as in G.2b. Taking the smallest nu of a group with unequal dofs is ucalc's own conservative convention.
    """
    import numpy as np

    m, n = s.shape
    with np.errstate(all="ignore"):
        if pairs:
            g = s.copy()
            for i, j, r in pairs:
                g[i] = g[i] + r * s[j]
                g[j] = g[j] + r * s[i]
            denom = np.zeros(n)
            for block in _blocks(m, pairs):
                live = s[block] != 0.0
                part = np.sum(s[block] * g[block], axis=0)
                nu_b = np.min(np.where(live, dofs[block], np.inf), axis=0)
                denom = denom + np.where(np.isfinite(nu_b), part * part / nu_b, 0.0)
        else:
            denom = np.sum(np.where(np.isfinite(dofs) & (s != 0.0), s**4 / dofs, 0.0), axis=0)
        nu = np.where((denom > 0) & (variance > 0), variance * variance / np.where(denom > 0, denom, 1.0), np.inf)
    single = _single_term(s, dofs)
    return np.where(np.isnan(single), nu, single)


def _single_term(s: Any, dofs: Any) -> Any:
    """nu_i itself where only input i has a non-zero term (exact; avoids rounding in t^4/t^4), NaN elsewhere."""
    import numpy as np

    if s.shape[0] == 0:
        return np.full(s.shape[1], np.nan)
    live = s != 0.0
    only = np.sum(live, axis=0) == 1
    first = np.argmax(live, axis=0)
    return np.where(only, dofs[first, np.arange(s.shape[1])], np.nan)


def evaluate_rows(budget: Budget, env: dict[str, Any], u: dict[str, Any], dof: dict[str, Any], n: int,
                  correlations: dict[tuple[str, str], Any] | None = None,
                  pairs: list[tuple[int, int, Any]] | None = None) -> Rows:
    """The GUM on ``n`` rows at once: ``env``, ``u`` and ``dof`` give, per input of the model, its estimate,
    standard uncertainty and degrees of freedom (scalars for every row alike, or arrays of length n);
    ``correlations`` gives per-row coefficients that replace the budget's for those pairs (predictions of one
    calibration line whose covariance changes with each row's value); ``pairs`` replaces the budget's coefficients
    altogether by (i, j, r_ij), r a number or an array over rows (improvement candidates)."""
    import numpy as np

    model = budget.model
    names = model.inputs
    full = {name: np.broadcast_to(np.asarray(env[name], dtype=float), (n,)) for name in names}
    with np.errstate(all="ignore"):
        y = np.broadcast_to(np.asarray(model.function("numpy")(full), dtype=float), (n,)).copy()
        c = np.empty((len(names), n))
        for i, name in enumerate(names):
            c[i] = np.asarray(model.evaluate_tree(model.derivative(name), full, "numpy"), dtype=float)
        uu = np.empty((len(names), n))
        dd = np.empty((len(names), n))
        for i, name in enumerate(names):
            uu[i] = np.asarray(u[name], dtype=float)
            dd[i] = np.asarray(dof[name], dtype=float)
        terms = c * uu
    errors: dict[int, str] = {}
    bad_terms = ~np.isfinite(terms)
    if bad_terms.any():
        for row in np.flatnonzero(bad_terms.any(axis=0)):
            errors[int(row)] = ("a sensitivity coefficient times its standard uncertainty is not finite; express "
                                "the inputs in units that bring the numbers nearer 1")
    under = (terms == 0.0) & (c != 0.0) & (uu != 0.0)
    for row in np.flatnonzero(under.any(axis=0)):
        errors.setdefault(int(row), "a sensitivity coefficient times its standard uncertainty underflows to zero; "
                                    "express the inputs in units that bring the numbers nearer 1")
    if pairs is None:
        pairs = list(correlation_pairs(budget, names))
    if correlations:
        index = {name: i for i, name in enumerate(names)}
        given = {tuple(sorted((index[a], index[b]))): r for (a, b), r in correlations.items()
                 if a in index and b in index and a != b}
        pairs = [(i, j, given.pop((i, j), r)) for i, j, r in pairs] + [(i, j, r) for (i, j), r in given.items()]
    with np.errstate(all="ignore"):
        uc, nu, first, cross, scale = combine(np.where(np.isfinite(terms), terms, 0.0), dd, pairs)
    negative = (first + cross) < -1e-12 * first
    for row in np.flatnonzero(negative):
        relative = (cross[row] + first[row]) / first[row]
        errors.setdefault(int(row), f"combined variance is negative (relative {relative:.3g}); check the correlations")
    p = budget.coverage.probability
    if budget.coverage.k is not None:
        k = np.full(n, float(budget.coverage.k))
        p_out = None
    else:
        assert p is not None
        nu_used = np.floor(nu) if budget.coverage.dof_rounding == "down" else nu
        for row in np.flatnonzero(nu_used < 1):
            errors.setdefault(int(row), f"effective degrees of freedom {nu[row]:.3g} are below 1, so no coverage "
                                        "factor follows from the probability; collect more data or state a fixed "
                                        "'k' under 'coverage'")
        k = coverage_factors(p, np.maximum(nu_used, 1.0))
        p_out = p
    for row in np.flatnonzero(~(np.isfinite(y) & np.isfinite(uc))):
        errors.setdefault(int(row), "the result is not finite for this row's values")
    with np.errstate(over="ignore"):
        return Rows(names, y, c, terms, uc, nu, k, k * uc, p_out, first * scale * scale, cross * scale * scale,
                    (first + cross) / np.where(first > 0, first, 1.0), errors)


def variance_shares(terms: Any, pairs: list[tuple[int, int, float]]) -> Any:
    """Each input's share of u_c^2, for one row of terms t_i = c_i u_i: a_i^2 / u_c^2 with a = R^(1/2) t.

    R^(1/2) is the symmetric square root of the correlation matrix R, so u_c^2 = t' R t = sum a_i^2 (JCGM 100 5.2.2)
    is split over independent sources, one per input; the shares are never negative, add up to 1 and equal
    c_i^2 u_i^2 / u_c^2 (JCGM 100 5.1.2) when the inputs are uncorrelated.
    """
    import numpy as np

    t = np.asarray(terms, dtype=float)
    scale = float(np.max(np.abs(t))) if t.size else 0.0
    if scale == 0.0:
        return np.zeros_like(t)
    s = t / scale
    if not pairs:
        a2 = s * s
    else:
        r = np.eye(len(s))
        for i, j, rho in pairs:
            r[i, j] = r[j, i] = rho
        w, v = np.linalg.eigh(r)
        root = (v * np.sqrt(np.clip(w, 0.0, None))) @ v.T
        a2 = (root @ s) ** 2
    total = float(np.sum(a2))
    return a2 / total if total > 0 else np.zeros_like(t)


def propagate(budget: Budget, *, second_order: bool = False) -> GumResult:
    """Propagate a budget's uncertainties to the measurand by JCGM 100 clause 5 (one row of the kernel)."""
    names = budget.model.inputs
    q = [budget.quantities[n] for n in names]
    rows = evaluate_rows(budget, {x.name: x.value for x in q}, {x.name: x.standard_uncertainty for x in q},
                         {x.name: x.dof for x in q}, 1)
    if rows.errors:
        raise ComputationError(rows.errors[0], subject="coverage" if "below 1" in rows.errors[0] else "")
    y = float(rows.value[0])
    uc = float(rows.standard_uncertainty[0])
    nu = float(rows.effective_dof[0])
    k = float(rows.coverage_factor[0])
    cross, ratio = float(rows.correlation_variance[0]), float(rows.correlation_ratio[0])
    pairs = correlation_pairs(budget, names)
    notes: list[str] = []
    second = 0.0
    if second_order:
        if pairs:
            raise ComputationError("second-order terms (JCGM 100 5.1.2 note) need uncorrelated inputs; use "
                                   "--method mc (JCGM 101) for this model", subject="second_order")
        second = _second_order(budget, names, {x.name: x.value for x in q})
        total = uc * uc + second if second < 0 else None
        uc = math.sqrt(max(total, 0.0)) if total is not None else math.hypot(uc, math.sqrt(second))
        if not math.isfinite(uc):
            raise ComputationError("second-order terms overflow: the standard uncertainties are too large for "
                                   "this model; use --method mc (JCGM 101)", subject="second_order")
    terms = rows.terms[:, 0]
    shares = variance_shares(terms, pairs)
    kinks = _kinks(budget, {x.name: x.value for x in q})
    if kinks:
        notes.append(f"the model is evaluated at a kink: {kinks} is 0 at the estimates, where abs() has no derivative; "
                     "the sensitivity coefficients there (taken as 0) and the first-order GUM do not describe the "
                     "result: use --method mc (JCGM 101)")
    elif uc == 0.0:
        notes.append("every input is exact or has zero sensitivity: the combined uncertainty is zero")
    contributions = [
        Contribution(input=x.name, value=x.value, unit=x.unit, standard_uncertainty=x.standard_uncertainty,
                     dof=x.dof, sensitivity=float(rows.sensitivities[i, 0]), contribution=abs(float(terms[i])),
                     variance_share=float(shares[i]), kind=x.kind, shape=x.shape)
        for i, x in enumerate(q)
    ]
    contributions.sort(key=lambda row: (-row.contribution, row.input))
    if cross:
        change = "raise" if cross > 0 else "lower"
        notes.append(f"correlation terms {change} u_c^2 to {ratio:.0%} of the uncorrelated sum; effective dof by "
                     "Welch-Satterthwaite over groups of correlated inputs, each group counted as one source with the "
                     "smallest dof of its inputs (ucalc's rule, docs/budget-format.md)")
    if second:
        notes.append(f"second-order terms add {second / (uc * uc):.1%} of u_c^2")
    return GumResult(
        measurand=budget.measurand.symbol, unit=budget.measurand.unit, value=y, standard_uncertainty=uc,
        effective_dof=nu, coverage_factor=k, coverage_probability=rows.coverage_probability,
        expanded_uncertainty=k * uc, contributions=tuple(contributions), second_order=second_order,
        second_order_variance=second, correlation_variance=cross, notes=tuple(notes),
    )


def fourth_moment(budget: Budget, name: str) -> float:
    """E[e^4] of an input's deviation: 3 u^4 + sum_k (kurtosis_k - 3) u_k^4 over its independent components
    (fourth cumulants add for independent summands)."""
    q = budget.quantities[name]
    u = q.standard_uncertainty
    excess = sum((c.distribution.kurtosis - 3.0) * c.standard_uncertainty ** 4 for c in q.components)
    return 3.0 * u ** 4 + excess


def _second_order(budget: Budget, names: tuple[str, ...], env: dict[str, Any]) -> float:
    """Second-order variance of JCGM 100 5.1.2 note, with each input's own fourth moment mu4_i:

    sum_i [ (d2f/dxi2)^2 (mu4_i - u_i^4)/4 + df/dxi d3f/dxi3 mu4_i/3 ]
    + sum_{i != j} [ (d2f/dxi dxj)^2 / 2 + df/dxi d3f/(dxi dxj^2) ] u_i^2 u_j^2,

    from the variance of the third-order Taylor expansion for independent, symmetric inputs. For Gaussian inputs
    (mu4 = 3 u^4) this is the note's formula; for a rectangular input it is not (y = x^2 at x = 0: the note gives
    2 u^4, the exact variance is 4/5 u^4).
    """
    model = budget.model
    u = {n: budget.quantities[n].standard_uncertainty for n in names}
    c = {n: float(model.evaluate_tree(model.derivative(n), env)) for n in names}
    total = 0.0
    try:
        for a in names:
            if u[a] == 0.0:
                continue
            for b in names:
                if u[b] == 0.0:
                    continue
                d2 = float(model.evaluate_tree(model.derivative(a, b), env))
                d3 = float(model.evaluate_tree(model.derivative(a, b, b), env))
                if a == b:
                    mu4 = fourth_moment(budget, a)
                    total += 0.25 * d2 * d2 * (mu4 - u[a] ** 4) + c[a] * d3 * mu4 / 3.0
                else:
                    total += (0.5 * d2 * d2 + c[a] * d3) * u[a] ** 2 * u[b] ** 2
    except (OverflowError, ZeroDivisionError, ValueError):
        total = math.inf
    if not math.isfinite(total):
        raise ComputationError("second-order terms are not finite (they overflow at these standard uncertainties); "
                               "use --method mc (JCGM 101) for this model", subject="second_order")
    return total


def _kinks(budget: Budget, env: dict[str, Any]) -> str:
    """The arguments of abs() in the model that are exactly 0 at the estimates, as text ('' for none)."""
    from .. import expr

    found: list[str] = []
    for node in expr.postorder(budget.model.inlined):  # each shared sub-tree once, no recursion
        if isinstance(node, expr.Call) and node.fn == "abs":
            try:
                at = expr.compile_tree(node.arg, expr.FLOAT_BACKEND)(env)
            except (ArithmeticError, ValueError):
                at = None
            if at == 0.0:
                found.append("the argument of abs()")
    return found[0] if found else ""
