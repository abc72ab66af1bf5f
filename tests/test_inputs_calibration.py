"""The calibration input model against JCGM 100 H.3, statsmodels regression and the ISO 8466-1 formula."""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.errors import BudgetErrors

# JCGM 100:2008 H.3, Table H.6: thermometer readings t_k (°C) and corrections b_k (°C)  # from memory
H3_T = [21.521, 22.012, 22.512, 23.003, 23.507, 23.999, 24.513, 25.002, 25.503, 26.010, 26.511]
H3_B = [-0.171, -0.169, -0.166, -0.159, -0.164, -0.165, -0.156, -0.157, -0.159, -0.161, -0.160]


def h3_budget() -> str:
    x = ", ".join(f"{t - 20:.3f}" for t in H3_T)  # t - t0 with t0 = 20 °C, as in H.3
    y = ", ".join(repr(b) for b in H3_B)
    return f"""\
ucalc: 1
title: JCGM 100 H.3
measurand: {{symbol: b30, unit: K}}
model: |
  b30 = cal.intercept + cal.slope * dt
coverage: {{k: 2}}
inputs:
  dt: {{value: 10, unit: K}}
  cal:
    unit: K
    calibration: {{standards: [{x}], responses: [{y}], response_unit: K}}
"""


def test_jcgm100_h3_thermometer_calibration() -> None:
    # JCGM 100 H.3.3-H.3.4: y1 = -0.1712(29) °C, y2 = 0.00218(67), r(y1, y2) = -0.930, s = 0.0035 °C;
    # H.3.4: b(30 °C) = -0.1494 °C, u = 0.0041 °C  # from memory
    budget = load_budget_text(h3_budget())
    a, b = budget.quantities["cal.intercept"], budget.quantities["cal.slope"]
    assert round(a.value, 4) == -0.1712 and round(a.standard_uncertainty, 4) == 0.0029
    assert round(b.value, 5) == 0.00218 and round(b.standard_uncertainty, 5) == 0.00067
    assert round(budget.correlation("cal.intercept", "cal.slope"), 3) == -0.930
    assert a.dof == 9  # n - 2
    result = propagate(budget)
    assert round(result.value, 4) == -0.1494
    assert round(result.standard_uncertainty, 4) == 0.0041


STANDARDS = [0.0, 1.0, 2.0, 5.0, 10.0, 20.0]
REPLICATES = [[0.11, 0.13, 0.12], [2.08, 2.15, 2.11], [4.02, 4.19, 4.10], [10.31, 10.02, 10.22],
              [20.4, 19.9, 20.6], [40.1, 41.3, 40.6]]
SAMPLE = [8.41, 8.55, 8.47]


def cal_budget(weighting: str = "none", through_origin: bool = False, standards=STANDARDS, responses=REPLICATES,
               sample=SAMPLE, extra: str = "") -> str:
    return f"""\
ucalc: 1
title: calibration
measurand: {{symbol: c, unit: ug/L}}
model: 'c = x0'
inputs:
  x0:
    unit: ug/L
    calibration:
      standards: {list(standards)}
      responses: {[list(r) if isinstance(r, list) else r for r in responses]}
      sample: {list(sample)}
      weighting: {weighting}
      through_origin: {str(through_origin).lower()}{extra}
"""


def statsmodels_prediction(weighting: str, through_origin: bool, standards=STANDARDS, responses=REPLICATES,
                           sample=SAMPLE) -> tuple[float, float]:
    """Inverse prediction with statsmodels: u^2(x0) = (s^2/(p w0) + se_mean(x0)^2) / b^2 (first order)."""
    x = np.repeat(standards, [len(r) for r in responses]).astype(float)
    y = np.concatenate([np.asarray(r, dtype=float) for r in responses])
    if weighting == "none":
        w = np.ones_like(x)
    elif weighting == "inverse_x":
        w = 1 / x
    elif weighting == "inverse_x2":
        w = 1 / x**2
    else:
        var = {s: np.var(r, ddof=1) for s, r in zip(standards, responses, strict=True)}
        w = np.array([1 / var[v] for v in x])
    design = x[:, None] if through_origin else sm.add_constant(x)
    fit = sm.WLS(y, design, weights=w).fit()
    a, b = (0.0, fit.params[0]) if through_origin else fit.params
    y0 = float(np.mean(sample))
    x0 = (y0 - a) / b
    if weighting == "none":
        w0 = 1.0
    elif weighting == "inverse_x":
        w0 = 1 / x0
    elif weighting == "inverse_x2":
        w0 = 1 / x0**2
    else:
        w0 = 1 / np.interp(x0, standards, [np.var(r, ddof=1) for r in responses])
    exog = np.array([[x0]]) if through_origin else np.array([[1.0, x0]])
    se_mean = fit.get_prediction(exog).se_mean[0]
    return x0, math.sqrt(fit.mse_resid / (len(sample) * w0) + se_mean**2) / abs(b)


@pytest.mark.parametrize("through_origin", [False, True])
@pytest.mark.parametrize("weighting", ["none", "inverse_x", "inverse_x2", "inverse_variance"])
def test_prediction_against_statsmodels(weighting: str, through_origin: bool) -> None:
    standards = STANDARDS if weighting == "none" else STANDARDS[1:]
    responses = REPLICATES if weighting == "none" else REPLICATES[1:]
    budget = load_budget_text(cal_budget(weighting, through_origin, standards, responses))
    q = budget.quantities["x0"]
    x0, u = statsmodels_prediction(weighting, through_origin, standards, responses)
    assert q.value == pytest.approx(x0, rel=1e-10)
    assert q.standard_uncertainty == pytest.approx(u, rel=1e-8)
    assert q.dof == 3 * len(standards) - (1 if through_origin else 2)


def test_iso8466_formula_for_unweighted_line() -> None:
    # ISO 8466-1 / CG4 A5.4: u(x0) = s/b sqrt(1/p + 1/n + (y0 - ybar)^2 / (b^2 Sxx))  # common practice
    x = np.repeat(STANDARDS, 3)
    y = np.concatenate(REPLICATES)
    b, a = np.polyfit(x, y, 1)
    s = math.sqrt(np.sum((y - a - b * x) ** 2) / (len(x) - 2))
    y0 = np.mean(SAMPLE)
    sxx = np.sum((x - x.mean()) ** 2)
    u = s / b * math.sqrt(1 / 3 + 1 / len(x) + (y0 - y.mean()) ** 2 / (b**2 * sxx))
    q = load_budget_text(cal_budget()).quantities["x0"]
    assert q.value == pytest.approx((y0 - a) / b, rel=1e-10)
    assert q.standard_uncertainty == pytest.approx(u, rel=1e-10)


def test_standard_additions_x_intercept() -> None:
    # x_E = a/b with u^2 = (var a + x_E^2 var b - 2 x_E cov ab)/b^2, from statsmodels' covariance (first order)
    added = [0.0, 2.0, 4.0, 6.0, 8.0]
    resp = [3.21, 5.28, 7.12, 9.30, 11.18]
    text = f"""\
ucalc: 1
title: additions
measurand: {{symbol: c, unit: ug/L}}
model: 'c = xs'
inputs:
  xs:
    unit: ug/L
    calibration: {{standards: {added}, responses: {resp}, method: standard_additions}}
"""
    q = load_budget_text(text).quantities["xs"]
    fit = sm.OLS(resp, sm.add_constant(added)).fit()
    a, b = fit.params
    cov = fit.cov_params()
    xe = a / b
    u = math.sqrt(cov[0, 0] + xe**2 * cov[1, 1] - 2 * xe * cov[0, 1]) / b
    assert q.value == pytest.approx(xe, rel=1e-10)
    assert q.standard_uncertainty == pytest.approx(u, rel=1e-8)
    # the same from the closed form s/b sqrt(1/n + ybar^2/(b^2 Sxx))  # common practice
    x = np.array(added)
    s = math.sqrt(fit.mse_resid)
    closed = s / b * math.sqrt(1 / 5 + np.mean(resp) ** 2 / (b**2 * np.sum((x - x.mean()) ** 2)))
    assert q.standard_uncertainty == pytest.approx(closed, rel=1e-10)


def errors(text: str) -> str:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(text, "c.yaml")
    return str(info.value)


def test_refuses_fewer_than_three_standards() -> None:
    text = cal_budget(standards=[1.0, 2.0], responses=[[2.0, 2.1], [4.0, 4.1]])
    assert "at least 3 distinct standards (got 2)" in errors(text)


def test_refuses_zero_slope() -> None:
    text = cal_budget(standards=[1.0, 2.0, 3.0], responses=[5.0, 5.0, 5.0], sample=[5.0])
    assert "slope is zero" in errors(text)


def test_refuses_negative_standards() -> None:
    text = cal_budget(standards=[-1.0, 2.0, 3.0], responses=[1.0, 2.0, 3.1], sample=[2.0])
    assert "must not be negative" in errors(text)


def test_refuses_mismatched_lengths() -> None:
    assert "4 standards but 3 responses" in errors(cal_budget(standards=[0, 1, 2, 3], responses=[1.0, 2.0, 3.0]))


def test_refuses_zero_standard_with_inverse_x_weights() -> None:
    assert "needs every standard above zero" in errors(cal_budget("inverse_x"))


def test_sample_outside_range_warns_or_fails_when_strict() -> None:
    budget = load_budget_text(cal_budget(sample=[60.0, 61.0]))
    assert any("outside the calibrated range" in w for w in budget.warnings)
    assert "outside the calibrated range" in errors(cal_budget(sample=[60.0, 61.0], extra="\n      strict: true"))


def test_sample_prediction_is_correlated_with_line_parameters() -> None:
    budget = load_budget_text(cal_budget())
    r = budget.correlation("x0", "x0.slope")
    assert -1 <= r <= 1 and r != 0
