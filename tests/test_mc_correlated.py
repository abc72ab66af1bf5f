"""Correlated inputs in Monte Carlo keep their own distributions and the stated correlation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from ucalc.budget.load import load_budget_text
from ucalc.engines import montecarlo

N = 200_000

COPULA = """ucalc: 1
title: t
measurand: {symbol: Y}
model: 'Y = X1 + X2'
inputs:
  X1: {value: 1, components: [{name: r, half_width: 1, distribution: rectangular}]}
  X2: {value: 2, components: [{name: t, half_width: 0.5, distribution: triangular}, {name: g, standard: 0.2}]}
correlations:
  - {between: [X1, X2], r: 0.6}
"""

TYPE_A = """ucalc: 1
title: t
measurand: {symbol: Y}
model: 'Y = A / B'
inputs:
  A: {value: 10, components: [{name: a, standard: 0.2, dof: 5}]}
  B: {value: 4, components: [{name: b, standard: 0.1, dof: 5}]}
correlations:
  - {between: [A, B], r: -0.4}
"""


def _draw(text: str) -> tuple[montecarlo.Sampler, dict[str, np.ndarray]]:
    sampler = montecarlo.Sampler(load_budget_text(text), seed=17)
    return sampler, sampler.block(N)


def test_gaussian_copula_keeps_marginals_and_correlation() -> None:
    sampler, env = _draw(COPULA)
    # X1: uniform on [0, 2] (scipy.stats.uniform)
    assert stats.kstest(env["X1"], stats.uniform(loc=0, scale=2).cdf).pvalue > 0.001
    # X2: triangular on [1.5, 2.5] plus N(0, 0.2): CDF E_T[Phi((x - 2 - T)/0.2)] by Gauss-Legendre quadrature on
    # each linear piece of the triangular density (numpy.polynomial.legendre), against scipy.stats.norm
    tri = stats.triang(c=0.5, loc=-0.5, scale=1.0)
    nodes, weights = np.polynomial.legendre.leggauss(64)
    t = np.concatenate([-0.25 + 0.25 * nodes, 0.25 + 0.25 * nodes])
    w = np.concatenate([0.25 * weights, 0.25 * weights]) * tri.pdf(t)

    def cdf(x: np.ndarray) -> np.ndarray:
        return stats.norm.cdf((np.asarray(x)[:, None] - 2 - t) / 0.2) @ w

    assert stats.kstest(env["X2"][:50_000], cdf).pvalue > 0.001
    (pair,) = sampler.correlations
    assert pair.method == "gaussian copula" and pair.stated == 0.6
    assert pair.achieved == pytest.approx(0.6, abs=1e-6)  # NORTA: the score correlation is solved for r
    sample_r = float(np.corrcoef(env["X1"], env["X2"])[0, 1])
    assert sample_r == pytest.approx(0.6, abs=4 / math.sqrt(N))  # sampling error of r about (1 - r^2)/sqrt(N)


def test_correlated_type_a_means_are_multivariate_t() -> None:
    sampler, env = _draw(TYPE_A)
    # each marginal is the scaled and shifted t of JCGM 101 6.4.9 (scipy.stats.t)
    assert stats.kstest(env["A"], stats.t(df=5, loc=10, scale=0.2).cdf).pvalue > 0.001
    assert stats.kstest(env["B"], stats.t(df=5, loc=4, scale=0.1).cdf).pvalue > 0.001
    (pair,) = sampler.correlations
    assert pair.method == "multivariate t" and pair.achieved == pytest.approx(-0.4, abs=1e-12)
    # the t with 5 dof has kurtosis 9: the sampling error of r is larger than for Gaussian pairs
    assert float(np.corrcoef(env["A"], env["B"])[0, 1]) == pytest.approx(-0.4, abs=8 / math.sqrt(N))
    # one chi-square per trial: |A - 10|/0.2 and |B - 4|/0.1 share their scale, unlike independent t's
    za, zb = (env["A"] - 10) / 0.2, (env["B"] - 4) / 0.1
    assert float(np.corrcoef(za**2, zb**2)[0, 1]) > 0.2


def test_gaussian_group_matches_covariance() -> None:
    # Var(X1 - X2) = u1^2 + u2^2 - 2 r u1 u2 (JCGM 100 5.2.2) with r = 0.8, u = 1 and 2: 1 + 4 - 3.2 = 1.8
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: Y}\nmodel: 'Y = X1 - X2'\ninputs:\n"
            "  X1: {value: 0, components: [{name: g, standard: 1}]}\n"
            "  X2: {value: 0, components: [{name: g, standard: 2}]}\n"
            "correlations:\n  - {between: [X1, X2], r: 0.8}\n")
    r = montecarlo.simulate(load_budget_text(text), trials=400_000, seed=2)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(1.8), rel=5e-3)
    assert r.correlations[0].method == "gaussian" and r.correlations[0].achieved == pytest.approx(0.8)
