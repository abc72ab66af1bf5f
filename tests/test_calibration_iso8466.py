"""ISO 8466-1 diagnostics and the ISO 8466-2 second-order calibration function against independent references.

References: the ISO 8466-1 Mandel and homoscedasticity formulas computed by hand with numpy.polyfit; F quantiles
from scipy.stats and printed F tables; statsmodels OLS with an x^2 column; the ISO 8466-2 formula for s_x0; a
numpy simulation of the whole experiment (responses drawn again and the function refitted).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.inputs.calibration_checks import homoscedasticity, mandel

# invented demo data with a bend at the top of the range
CURVED_X = [0.0, 1.0, 2.0, 4.0, 6.0, 8.0, 10.0]
CURVED_Y = [0.002, 0.101, 0.197, 0.381, 0.552, 0.708, 0.851]
READINGS = [0.455, 0.462]


def budget(function: str, standards=CURVED_X, responses=CURVED_Y, readings=READINGS, extra: str = "") -> str:
    return f"""\
ucalc: 1
title: ISO 8466
measurand: {{symbol: c, unit: mg/L}}
model: 'c = cal.s'
inputs:
  cal:
    unit: mg/L
    calibration:
      function: {function}
      standards: {list(standards)}
      responses: {list(responses)}
      readings: {{s: {list(readings)}}}{extra}
"""


def test_f_quantiles_against_printed_table() -> None:
    # F(0.99; 1, 7) = 12.25 and F(0.99; 9, 9) = 5.35 in the usual 99 % F tables  # from memory
    assert stats.f.ppf(0.99, 1, 7) == pytest.approx(12.25, abs=0.01)
    assert stats.f.ppf(0.99, 9, 9) == pytest.approx(5.35, abs=0.01)


def test_mandel_against_hand_computation() -> None:
    # ISO 8466-1: DS^2 = (N - 2) s_y1^2 - (N - 3) s_y2^2, PG = DS^2 / s_y2^2, F(1, N - 3; 99 %)  # from memory
    x, y = np.array(CURVED_X), np.array(CURVED_Y)
    n = len(x)
    r1 = y - np.polyval(np.polyfit(x, y, 1), x)
    r2 = y - np.polyval(np.polyfit(x, y, 2), x)
    s1, s2 = np.sum(r1**2) / (n - 2), np.sum(r2**2) / (n - 3)
    pg = ((n - 2) * s1 - (n - 3) * s2) / s2
    m = mandel(x, y, np.ones_like(x))
    assert m["pg"] == pytest.approx(pg, rel=1e-9)
    assert m["s_y1"] == pytest.approx(math.sqrt(s1), rel=1e-9)
    assert m["f_critical"] == pytest.approx(stats.f.ppf(0.99, 1, n - 3), rel=1e-12)
    assert not m["passed"]
    warnings = load_budget_text(budget("linear")).warnings
    assert any("Mandel" in w and "quadratic" in w for w in warnings)
    assert not any("Mandel" in w for w in load_budget_text(budget("quadratic")).warnings)


def test_homoscedasticity_against_hand_computation() -> None:
    # ISO 8466-1: PG = s_10^2 / s_1^2 (the larger over the smaller), F(f_10, f_1; 99 %)  # from memory
    low = [0.0101, 0.0098, 0.0103, 0.0099, 0.0100, 0.0102, 0.0097, 0.0101, 0.0100, 0.0099]
    high = [0.981, 1.012, 0.994, 1.021, 0.976, 1.003, 0.989, 1.015, 0.998, 1.007]
    h = homoscedasticity(low, high)
    pg = np.var(high, ddof=1) / np.var(low, ddof=1)
    assert h["pg"] == pytest.approx(pg, rel=1e-12)
    assert h["f_critical"] == pytest.approx(5.35, abs=0.01)  # F(0.99; 9, 9) from the printed table  # from memory
    assert not h["passed"]
    standards = [0.1, 0.3, 0.5, 0.7, 1.0]
    responses = [low, [0.30, 0.31], [0.50, 0.49], [0.70, 0.71], high]
    text = budget("linear", standards, responses, [0.5, 0.5])
    assert any("homoscedasticity" in w and "weight" in w for w in load_budget_text(text).warnings)
    weighted = text.replace("function: linear", "function: linear\n      weighting: inverse_variance")
    assert not any("homoscedasticity" in w for w in load_budget_text(weighted).warnings)


def iso8466_2_sx0(x: np.ndarray, y: np.ndarray, y0: float, p: int) -> tuple[float, float]:
    """ISO 8466-2 by hand: x0 from the quadratic formula, s_x0 from the centred sums Qxx, Qx3, Qx4."""
    c, b, a = np.polyfit(x, y, 2)
    n = len(x)
    s = math.sqrt(np.sum((y - np.polyval([c, b, a], x)) ** 2) / (n - 3))
    x0 = (-b + math.sqrt(b * b - 4 * c * (a - y0))) / (2 * c)
    if not min(x) <= x0 <= max(x):
        x0 = (-b - math.sqrt(b * b - 4 * c * (a - y0))) / (2 * c)
    e = b + 2 * c * x0
    qxx = np.sum(x**2) - np.sum(x) ** 2 / n
    qx3 = np.sum(x**3) - np.sum(x) * np.sum(x**2) / n
    qx4 = np.sum(x**4) - np.sum(x**2) ** 2 / n
    # ISO 8466-2: s_x0 = s_y/E sqrt(1/N + 1/N^ + [(x0 - xbar)^2 Qx4 + (x0^2 - sum x^2/N)^2 Qxx
    #                    - 2 (x0 - xbar)(x0^2 - sum x^2/N) Qx3] / (Qx4 Qxx - Qx3^2))  # from memory
    d1, d2 = x0 - np.mean(x), x0**2 - np.sum(x**2) / n
    inner = 1 / n + 1 / p + (d1**2 * qx4 + d2**2 * qxx - 2 * d1 * d2 * qx3) / (qx4 * qxx - qx3**2)
    return x0, s / abs(e) * math.sqrt(inner)


def test_second_order_against_statsmodels_and_the_iso_formula() -> None:
    x, y = np.array(CURVED_X), np.array(CURVED_Y)
    built = load_budget_text(budget("quadratic"))
    fit = sm.OLS(y, np.column_stack([np.ones_like(x), x, x**2])).fit()
    for i, name in enumerate(("intercept", "slope", "quadratic")):
        q = built.quantities[f"cal.{name}"]
        assert q.value == pytest.approx(fit.params[i], rel=1e-9)
        assert q.standard_uncertainty == pytest.approx(fit.bse[i], rel=1e-9)
    cov = fit.cov_params()
    assert built.correlation("cal.slope", "cal.quadratic") == pytest.approx(
        cov[1, 2] / math.sqrt(cov[1, 1] * cov[2, 2]), rel=1e-9)
    x0, u = iso8466_2_sx0(x, y, float(np.mean(READINGS)), len(READINGS))
    q = built.quantities["cal.s"]
    assert q.value == pytest.approx(x0, rel=1e-10)
    assert q.standard_uncertainty == pytest.approx(u, rel=1e-9)
    assert q.dof == len(x) - 3
    data = built.details["cal"]
    assert np.allclose(data["covariance"]["matrix"], cov, rtol=1e-9)


def test_second_order_against_simulation() -> None:
    """Simulation of the experiment: responses drawn about the fitted function with its residual s, the function
    refitted and the mean of two readings inverted each time; SD of x0 against u(x0)."""
    x, y = np.array(CURVED_X), np.array(CURVED_Y)
    c, b, a = np.polyfit(x, y, 2)
    s = math.sqrt(np.sum((y - np.polyval([c, b, a], x)) ** 2) / (len(x) - 3))
    q = load_budget_text(budget("quadratic")).quantities["cal.s"]
    rng = np.random.default_rng(5)
    n = 200_000
    X = np.column_stack([np.ones_like(x), x, x**2])
    hat = np.linalg.solve(X.T @ X, X.T)
    truth = a + b * x + c * x**2
    coef = (truth + s * rng.standard_normal((n, len(x)))) @ hat.T
    y0 = a + b * q.value + c * q.value**2 + s * rng.standard_normal((n, 2)).mean(axis=1)
    aa, bb, cc = coef[:, 0], coef[:, 1], coef[:, 2]
    x0 = (-bb + np.sqrt(bb * bb - 4 * cc * (aa - y0))) / (2 * cc)
    assert np.std(x0, ddof=1) == pytest.approx(q.standard_uncertainty, rel=0.02)
    assert propagate(load_budget_text(budget("quadratic"))).value == pytest.approx(q.value)


def test_second_order_refusals() -> None:
    from ucalc.errors import BudgetErrors

    with pytest.raises(BudgetErrors, match="at least 4 distinct standards"):
        load_budget_text(budget("quadratic", [0.0, 1.0, 2.0], [0.0, 0.1, 0.19], [0.1]))
    with pytest.raises(BudgetErrors, match="beyond the turning point"):
        load_budget_text(budget("quadratic", readings=[5.0]))
