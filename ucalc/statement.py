"""The one result that ucalc states for an evaluation, and the reason it comes from that method.

JCGM 101 8.2: when Monte Carlo has run and the GUM result is not validated, the Monte Carlo coverage interval is
the result; a validated GUM result is stated as y ± U. A budget may fix the reporting method (``reporting``);
its reason is stated beside the result. The terminal, JSON, report and batch outputs all take their result line
from :func:`state`, so they cannot contradict each other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    from .budget.definitions import Budget
    from .engines.gum import GumResult
    from .engines.montecarlo import MonteCarloResult

StatedMethod = Literal["gum", "monte-carlo"]
METHOD_NAMES: dict[str, str] = {"gum": "GUM (JCGM 100)", "monte-carlo": "Monte Carlo (JCGM 101)"}


@dataclass(frozen=True)
class StatedResult:
    """The stated result: y ± U with k (``gum``) or y with a coverage interval (``monte-carlo``).

    ``probability`` is None for a GUM result with a fixed k; ``reason`` says why this method's result is the
    one stated.
    """

    method: StatedMethod
    measurand: str
    unit: str
    value: float
    probability: float | None
    reason: str
    expanded_uncertainty: float | None = None
    coverage_factor: float | None = None
    interval: tuple[float, float] | None = None

    @property
    def method_name(self) -> str:
        return METHOD_NAMES[self.method]


def budget_method(budget: Budget) -> StatedMethod | None:
    """The reporting method the budget fixes, if any."""
    return budget.reporting.method if budget.reporting is not None else None


def state(budget: Budget, gum: GumResult, mc: MonteCarloResult | None) -> StatedResult:
    """Choose the stated result (JCGM 101 8.2, or the method the budget fixes) and say why."""
    fixed = budget.reporting
    if fixed is not None:
        why = f"the budget fixes the reporting method: {fixed.reason}"
        if fixed.method == "gum":
            return _gum(gum, why)
        if mc is None:  # the workflow runs Monte Carlo for such budgets; a caller without it gets the GUM
            return _gum(gum, "the budget fixes Monte Carlo, which was not run; GUM result given instead")
        return _monte_carlo(mc, why)
    if mc is None:
        return _gum(gum, "Monte Carlo not run")
    v = mc.validation
    if v is None:
        return _monte_carlo(mc, "Monte Carlo result; the GUM result was not compared with it")
    if v.verdict == "passed":
        return _gum(gum, f"GUM validated by Monte Carlo (JCGM 101 8.2): d_low and d_high within "
                         f"delta = {v.delta:.2g}")
    causes = "; ".join(v.causes) if v.causes else (
        "no input far from Gaussian and no marked non-linearity found; run more trials to confirm")
    if v.verdict == "undecided":
        return _monte_carlo(mc, f"GUM validation undecided at {v.trials:,} trials (JCGM 101 8.2, margin within "
                                f"the endpoints' scatter); {v.rerun_trials:,} trials would decide")
    worst = max(v.d_low, v.d_high)
    return _monte_carlo(mc, f"GUM not validated (JCGM 101 8.2): the endpoints differ by up to {worst:.2g}, more "
                            f"than delta = {v.delta:.2g}; {causes}")


def _gum(gum: GumResult, reason: str) -> StatedResult:
    return StatedResult("gum", gum.measurand, gum.unit, gum.value, gum.coverage_probability, reason,
                        expanded_uncertainty=gum.expanded_uncertainty, coverage_factor=gum.coverage_factor)


def _monte_carlo(mc: MonteCarloResult, reason: str) -> StatedResult:
    return StatedResult("monte-carlo", mc.measurand, mc.unit, mc.value, mc.coverage_probability, reason,
                        interval=mc.interval)


def interval_texts(value: float, interval: tuple[float, float], digits: int = 2) -> tuple[str, str, str]:
    """(value, low, high) rounded to the decimal place of ``digits`` significant digits of the nearer
    endpoint's distance from the value (JCGM 101 7.8: the endpoints to the digits of u)."""
    from .reports.rounding import round_pair

    low, high = interval
    gap = min(value - low, high - value)
    if not gap > 0 or not math.isfinite(gap):
        gap = 0.5 * (high - low)
    value_text, _ = round_pair(value, gap, digits)
    low_text, _ = round_pair(low, gap, digits)
    high_text, _ = round_pair(high, gap, digits)
    return value_text, low_text, high_text


def line(result: StatedResult, unit: str, digits: int = 2) -> str:
    """The result line: 'c = 1002.7 mg/L, U = 1.6 mg/L (k = 1.96, ...)' or
    'w = 12.3 mg/kg, 95 % coverage interval [9.8, 14.8] mg/kg (Monte Carlo, JCGM 101)'."""
    from .reports.common import probability_text, result_line

    if result.method == "gum":
        assert result.expanded_uncertainty is not None and result.coverage_factor is not None
        return result_line(result.measurand, result.value, unit, result.expanded_uncertainty,
                           result.coverage_factor, result.probability, digits)
    assert result.interval is not None and result.probability is not None
    value, low, high = interval_texts(result.value, result.interval, digits)
    unit_part = f" {unit}" if unit else ""
    return (f"{result.measurand} = {value}{unit_part}, {probability_text(result.probability)} coverage interval "
            f"[{low}, {high}]{unit_part} (Monte Carlo, JCGM 101)")


def sentence(result: StatedResult, unit: str, digits: int = 2) -> str:
    """The statement for reports and batch rows: the GUM form of JCGM 100 7.2.6 or the Monte Carlo interval."""
    from .reports.common import probability_text, statement

    if result.method == "gum":
        assert result.expanded_uncertainty is not None and result.coverage_factor is not None
        return statement(result.measurand, result.value, unit, result.expanded_uncertainty,
                         result.coverage_factor, result.probability, digits)
    assert result.interval is not None and result.probability is not None
    value, low, high = interval_texts(result.value, result.interval, digits)
    unit_part = f" {unit}" if unit else ""
    return (f"{result.measurand} = {value}{unit_part}, probabilistically symmetric "
            f"{probability_text(result.probability)} coverage interval [{low}, {high}]{unit_part} by Monte Carlo "
            "propagation of distributions (JCGM 101)")
