"""Trapezoidal and curvilinear trapezoidal distributions (JCGM 101 6.4.3, 6.4.4) against their exact laws."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from ucalc.budget.load import load_budget_text
from ucalc.distributions import Distribution
from ucalc.errors import BudgetErrors


def curvilinear_pdf(a: float, d: float):  # type: ignore[no-untyped-def]
    # JCGM 101 6.4.4.3: g(x) = ln((a + d)/max(|x|, a - d)) / (4d) for |x| <= a + d (centred at 0)
    def pdf(x: float) -> float:
        return math.log((a + d) / max(abs(x), a - d)) / (4 * d) if abs(x) < a + d else 0.0
    return pdf


def curvilinear_cdf(a: float, d: float):  # type: ignore[no-untyped-def]
    pdf = curvilinear_pdf(a, d)

    def cdf(x: float) -> float:  # by quadrature of the density (scipy.integrate), symmetric about 0
        part = integrate.quad(pdf, 0.0, min(abs(x), a + d), points=[a - d] if abs(x) > a - d else None)[0]
        return 0.5 + math.copysign(part, x)
    return np.vectorize(cdf)


@pytest.mark.parametrize("beta", [0.0, 0.4, 0.9])
def test_trapezoid_samples_and_u(beta: float) -> None:
    # scipy.stats.trapezoid on [-a, a] with the top over [-beta a, beta a]
    a = 2.0
    dist = Distribution("trapezoidal", a, param=beta)
    reference = stats.trapezoid(c=(1 - beta) / 2, d=(1 + beta) / 2, loc=-a, scale=2 * a)
    sample = dist.sample(200_000, np.random.default_rng(21))
    assert stats.kstest(sample, reference.cdf).pvalue > 0.001
    assert dist.standard_uncertainty == pytest.approx(reference.std(), rel=1e-12)  # JCGM 101 6.4.3.3


@pytest.mark.parametrize(("a", "d"), [(1.0, 0.3), (0.05, 0.025)])
def test_curvilinear_trapezoid_samples_and_u(a: float, d: float) -> None:
    dist = Distribution("curvilinear_trapezoid", a, param=d / a)
    sample = dist.sample(100_000, np.random.default_rng(22))
    assert stats.kstest(sample, curvilinear_cdf(a, d)).pvalue > 0.001
    pdf = curvilinear_pdf(a, d)
    variance = integrate.quad(lambda x: x * x * pdf(x), -(a + d), a + d, points=[-(a - d), a - d])[0]
    assert dist.standard_uncertainty == pytest.approx(math.sqrt(variance), rel=1e-9)  # a^2/3 + d^2/9 (6.4.4.3)


def test_block_split_draws_equal_one_long_draw() -> None:
    for dist in (Distribution("trapezoidal", 1.0, param=0.5), Distribution("curvilinear_trapezoid", 1.0, param=0.2)):
        whole = dist.sample(1001, np.random.default_rng(3))
        rng = np.random.default_rng(3)
        parts = np.concatenate([dist.sample(500, rng), dist.sample(501, rng)])
        assert np.array_equal(whole, parts)


def _budget(component: str) -> str:
    return ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: mL}\nmodel: 'y = V'\n"
            f"inputs:\n  V: {{value: 10, unit: mL, components: [{component}]}}\n")


def test_component_syntax() -> None:
    q = load_budget_text(_budget("{name: t, half_width: 0.05, distribution: rectangular, limit_spread: 0.025}"))
    c = q.quantities["V"].components[0]
    assert c.distribution.shape == "curvilinear_trapezoid"
    assert c.standard_uncertainty == pytest.approx(math.sqrt(0.05**2 / 3 + 0.025**2 / 9), rel=1e-12)
    q = load_budget_text(_budget("{name: t, half_width: 0.1, distribution: trapezoidal, beta: 0.5}"))
    assert q.quantities["V"].components[0].standard_uncertainty == pytest.approx(0.1 * math.sqrt(1.25 / 6))
    for bad, message in [
        ("{name: t, half_width: 0.1, distribution: trapezoidal}", "'beta'"),
        ("{name: t, half_width: 0.1, distribution: triangular, beta: 0.2}", "'beta'"),
        ("{name: t, half_width: 0.1, distribution: rectangular, limit_spread: 0.1}", "must be smaller"),
        ("{name: t, half_width: 0.1, distribution: curvilinear_trapezoid}", "needs 'limit_spread'"),
        ("{name: t, standard: 0.1, limit_spread: 0.01}", "'limit_spread' goes with"),
    ]:
        with pytest.raises(BudgetErrors) as info:
            load_budget_text(_budget(bad))
        assert message in str(info.value)


def test_glassware_temperature_span_with_inexact_limits() -> None:
    # 100 mL flask, ±4 K known to ±1 K: a = 100 * 2.1e-4 * 4, d = 100 * 2.1e-4 * 1 (CG4 A1.4 coefficient,
    # JCGM 101 6.4.4 shape)
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: mL}\nmodel: 'y = V'\ninputs:\n"
            "  V: {glassware: {item: flask, nominal: 100, class: A, temperature_span: 4, "
            "temperature_span_spread: 1}}\n")
    temp = next(c for c in load_budget_text(text).quantities["V"].components if c.name == "temperature")
    a, d = 100 * 2.1e-4 * 4, 100 * 2.1e-4 * 1
    assert temp.distribution.shape == "curvilinear_trapezoid"
    assert temp.standard_uncertainty == pytest.approx(math.sqrt(a * a / 3 + d * d / 9), rel=1e-12)
