"""The one GUM kernel: batch rows equal single runs, per-row dof, dof with correlations, shares, second order,
coverage factors from scipy.special. Each check names its independent reference."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import linalg, stats
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.engines.gum import coverage_factors, propagate
from ucalc.errors import ComputationError
from ucalc.samples.table import BatchOptions, run_batch
from ucalc.workflow import load_with_settings

runner = CliRunner()

MIXED = """ucalc: 1
title: mixed relative and absolute components
measurand: {symbol: c, unit: ug/L}
model: |
  c = c_raw * f
coverage: {probability: 0.95}
inputs:
  c_raw:
    unit: ug/L
    value: 10.0
    components:
      - {name: repeatability, standard: 0.03, relative: true, dof: 4}
      - {name: blank, standard: 0.05, dof: 9}
  f:
    value: 1.0
    components:
      - {name: dilution, standard: 0.005}
"""

TWICE = """ucalc: 1
title: the same mean used twice
measurand: {symbol: y, unit: mg/L}
model: |
  y = x1 + x2
coverage: {probability: 0.95}
inputs:
  x1:
    unit: mg/L
    replicates: {values: %s}
  x2:
    unit: mg/L
    replicates: {values: %s}
correlations:
  - {between: [x1, x2], r: 1.0}
"""


def _batch(path, column: str, values: list[float]) -> pd.DataFrame:
    frame = pd.DataFrame({"sample": [f"s{i}" for i in range(len(values))], column: [repr(v) for v in values]})
    out, _ = run_batch(path, frame, BatchOptions())
    return out


def test_per_row_dof_by_hand(write_budget) -> None:
    # JCGM 100 G.4.1 (eq. G.2b) by hand at c_raw = 0.1: components 0.03 * 0.1 (dof 4) and 0.05 (dof 9) give
    # u(c_raw) and nu(c_raw); then f (u = 0.005 * 0.1, infinite dof) joins in u_c.
    out = _batch(write_budget(MIXED), "c_raw", [0.1])
    a, b, f = 0.03 * 0.1, 0.05, 0.1 * 0.005
    u2 = a**2 + b**2
    nu_x = u2**2 / (a**4 / 4 + b**4 / 9)
    uc2 = u2 + f**2
    nu = uc2**2 / (u2**2 / nu_x)
    assert out["u"][0] == pytest.approx(math.sqrt(uc2), rel=1e-12)
    assert out["nu_eff"][0] == pytest.approx(nu, rel=1e-10)  # 9.07: the row's own dof, not the budget's 4.46
    assert out["k"][0] == pytest.approx(stats.t.ppf(0.975, math.floor(nu)), rel=1e-12)  # G.6.4: dof truncated


_MODELS = ["x1 * x2 + x3", "x1 / x2 - x3", "x1 * x2 / x3", "log(x1) * x2 + x3", "sqrt(x1) * x3 - x2"]


@st.composite
def _budgets(draw):  # type: ignore[no-untyped-def]
    model = draw(st.sampled_from(_MODELS))
    lines = []
    for name in ("x1", "x2", "x3"):
        value = draw(st.floats(0.5, 50.0))
        comps = []
        for j in range(draw(st.integers(1, 3))):
            u = draw(st.floats(0.001, 0.2))
            relative = draw(st.booleans())
            dof = draw(st.sampled_from([".inf", 2, 3, 5, 10, 30]))
            comps.append(f"{{name: c{j}, standard: {u!r}, relative: {str(relative).lower()}, dof: {dof}}}")
        lines.append(f"  {name}:\n    value: {value!r}\n    components: [{', '.join(comps)}]\n")
    r = draw(st.sampled_from([0.0, 0.5, -0.3]))
    corr = f"correlations:\n  - {{between: [x2, x3], r: {r}}}\n" if r else ""
    rows = draw(st.lists(st.floats(0.5, 50.0), min_size=1, max_size=4))
    text = (f"ucalc: 1\ntitle: generated\nmeasurand: {{symbol: y}}\nmodel: 'y = {model}'\n"
            f"coverage: {{probability: 0.95}}\ninputs:\n{''.join(lines)}{corr}")
    return text, rows


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(_budgets())
def test_batch_row_equals_run_with_set(write_budget, case) -> None:  # type: ignore[no-untyped-def]
    # reference: `ucalc run --set x1.value=v` (the budget rebuilt from its text with the row's value) for each row
    text, rows = case
    path = write_budget(text)
    out = _batch(path, "x1", rows)
    for i, v in enumerate(rows):
        try:
            ref = propagate(load_with_settings(path, [f"x1.value={v!r}"])[1])
        except ComputationError:
            assert out["error"][i]
            continue
        assert out["value"][i] == pytest.approx(ref.value, rel=1e-12)
        assert out["u"][i] == pytest.approx(ref.standard_uncertainty, rel=1e-11)
        assert out["nu_eff"][i] == pytest.approx(ref.effective_dof, rel=1e-9)
        assert out["U"][i] == pytest.approx(ref.expanded_uncertainty, rel=1e-11)


def test_same_type_a_estimate_twice_has_its_dof(write_budget) -> None:
    # y = x1 + x2 with both the same mean of five results and r = 1 is y = 2 xbar, a scaled t with 4 dof
    # (Student's t; JCGM 100 G.3.2), so nu_eff = 4 and k = t_0.975(4)
    values = "[10.1, 9.8, 10.3, 9.9, 10.0]"
    result = propagate(load_budget_text(TWICE % (values, values)))
    assert result.effective_dof == pytest.approx(4.0, rel=1e-12)
    assert result.coverage_factor == pytest.approx(stats.t.ppf(0.975, 4), rel=1e-12)
    assert sum(c.variance_share for c in result.contributions) == pytest.approx(1.0, abs=1e-12)


def test_coverage_of_the_same_mean_used_twice_by_simulation() -> None:
    # numpy simulation of the whole experiment: five results drawn from N(mu, sigma), their mean entered twice with
    # r = 1, ucalc's U computed for each data set; the interval y +- U must cover 2 mu in 95 % of experiments
    rng = np.random.default_rng(20261202)
    mu, sigma = 10.0, 0.2
    ks = set()
    for _ in range(20):  # ucalc's nu_eff and k do not depend on the data here; checked on 20 data sets
        data = rng.normal(mu, sigma, 5).round(6).tolist()
        result = propagate(load_budget_text(TWICE % (data, data)))
        ks.add(round(result.coverage_factor, 12))
    assert len(ks) == 1
    k = ks.pop()
    draws = rng.normal(mu, sigma, (400_000, 5))
    mean, s = draws.mean(axis=1), draws.std(axis=1, ddof=1)
    covered = np.abs(2 * mean - 2 * mu) <= k * 2 * s / math.sqrt(5)
    assert covered.mean() == pytest.approx(0.95, abs=0.002)  # binomial sd 0.00034 at 4e5 experiments


def test_difference_of_paired_means_has_the_sample_dof(write_budget) -> None:
    # y = a - b with a, b the means of the same 11 paired results, r between them taken from the data: the paired
    # difference is a t with n - 1 = 10 dof exactly (Student's paired t; JCGM 100 G.3), so nu_eff = 10 although
    # the correlation cancels variance
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = a - b'\ninputs:\n"
            "  a: {value: 2, components: [{name: a, standard: 1, dof: 10}]}\n"
            "  b: {value: 1, components: [{name: b, standard: 1, dof: 10}]}\n"
            "correlations:\n  - {between: [a, b], r: 0.6}\n")
    result = propagate(load_budget_text(text))
    assert result.effective_dof == pytest.approx(10.0, rel=1e-12)
    assert any("correlation terms lower u_c^2" in n for n in result.notes)
    # numpy simulation of the whole experiment: 11 paired results with true correlation 0.6; the lab states
    # u(a), u(b) = s/sqrt(11) and r = the sample correlation, then k = t_0.975(nu_eff) from the kernel
    rng = np.random.default_rng(7)
    n, runs = 11, 100_000
    cov = np.array([[1.0, 0.6], [0.6, 1.0]])
    data = rng.multivariate_normal([0.0, 0.0], cov, size=(runs, n))
    means = data.mean(axis=1)
    c = np.einsum("rki,rkj->rij", data - means[:, None, :], data - means[:, None, :]) / (n - 1)
    uc = np.sqrt(c[:, 0, 0] + c[:, 1, 1] - 2 * c[:, 0, 1]) / math.sqrt(n)
    covered = np.abs(means[:, 0] - means[:, 1]) <= result.coverage_factor * uc
    assert covered.mean() == pytest.approx(0.95, abs=0.003)  # binomial sd 0.0007 at 1e5 experiments


def test_one_type_a_estimate_used_with_other_coefficients_keeps_its_dof(write_budget) -> None:
    # y = 2 x1 - x2 with x1, x2 the same mean of five results (r = 1) is y = xbar: a scaled t with 4 dof
    # (JCGM 100 G.3); before, the budget was refused with nu_eff = 0.235
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = 2*x1 - x2'\ninputs:\n"
            "  x1: {value: 2, components: [{name: s, standard: 0.1, dof: 4}]}\n"
            "  x2: {value: 1, components: [{name: s, standard: 0.1, dof: 4}]}\n"
            "correlations:\n  - {between: [x1, x2], r: 1}\n")
    result = propagate(load_budget_text(text))
    assert result.standard_uncertainty == pytest.approx(0.1, rel=1e-12)
    assert result.effective_dof == pytest.approx(4.0, rel=1e-12)
    assert result.coverage_factor == pytest.approx(stats.t.ppf(0.975, 4), rel=1e-12)  # scipy.stats reference


def test_variance_shares_add_up_and_stay_below_one() -> None:
    # reference: the symmetric square root of the correlation matrix by scipy.linalg.sqrtm; a = R^(1/2) t gives
    # u_c^2 = sum a_i^2 (JCGM 100 5.2.2); shares a_i^2 / u_c^2
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: R}\nmodel: 'R = a / b * k'\ninputs:\n"
            "  a: {value: 100, components: [{name: a, standard: 2}]}\n"
            "  b: {value: 50, components: [{name: b, standard: 1}]}\n"
            "  k: {value: 1, components: [{name: k, standard: 0.001}]}\n"
            "correlations:\n  - {between: [a, b], r: 0.9}\n")
    budget = load_budget_text(text)
    result = propagate(budget)
    by_name = {c.input: c for c in result.contributions}
    names = list(budget.model.inputs)
    t = np.array([by_name[n].sensitivity * by_name[n].standard_uncertainty for n in names])
    r = np.eye(3)
    i, j = names.index("a"), names.index("b")
    r[i, j] = r[j, i] = 0.9
    a = np.real(linalg.sqrtm(r)) @ t
    assert float(np.sum(a**2)) == pytest.approx(result.standard_uncertainty**2, rel=1e-10)
    for n in names:
        assert by_name[n].variance_share == pytest.approx(a[names.index(n)] ** 2 / np.sum(a**2), abs=1e-10)
        assert 0.0 <= by_name[n].variance_share <= 1.0
    assert sum(c.variance_share for c in result.contributions) == pytest.approx(1.0, abs=1e-12)


def test_shares_without_correlation_are_the_gum_index() -> None:
    # JCGM 100 5.1.2: c_i^2 u_i^2 / u_c^2 when the inputs are uncorrelated
    result = propagate(load_budget_text(MIXED))
    for c in result.contributions:
        assert c.variance_share == pytest.approx(c.contribution**2 / result.standard_uncertainty**2, rel=1e-12)


@pytest.mark.parametrize("nu", [1, 1.5, 2, 3, 4.2, 9, 30, 100, 1e6, math.inf])
@pytest.mark.parametrize("p", [0.6827, 0.90, 0.95, 0.9545, 0.99])
def test_coverage_factors_match_scipy_stats(nu: float, p: float) -> None:
    # reference: scipy.stats.t.ppf / scipy.stats.norm.ppf (JCGM 100 G.3.4, Table G.2)
    expected = stats.norm.ppf(0.5 + p / 2) if math.isinf(nu) else stats.t.ppf(0.5 + p / 2, nu)
    assert float(coverage_factors(p, [nu])[0]) == pytest.approx(expected, rel=1e-12)


def test_run_does_not_import_scipy_stats(tmp_path) -> None:
    # the coverage factor comes from scipy.special; scipy.stats takes about a second to import
    from .conftest import BUDGETS

    for budget in sorted(BUDGETS.glob("*.yaml")):
        code = ("import sys\nfrom ucalc.cli import app\nsys.argv = ['ucalc', 'run', sys.argv[1]]\n"
                "try:\n    app()\nexcept SystemExit:\n    pass\n"
                "print('STATS' if 'scipy.stats' in sys.modules else 'NO')")
        done = subprocess.run([sys.executable, "-c", code, str(budget)], capture_output=True, text=True, check=False)
        assert done.stdout.strip().splitlines()[-1] == "NO", (budget.name, done.stderr[-500:])


RECT = """ucalc: 1
title: square of a rectangular input
measurand: {symbol: y}
model: 'y = x**2'
inputs:
  x:
    value: 0.0
    components:
      - {name: tolerance, half_width: 1.0, distribution: %s}
"""


def test_second_order_uses_the_stated_distribution() -> None:
    # y = x^2, x uniform on [-1, 1]: var(y) = E[x^4] - E[x^2]^2 = 1/5 - 1/9 = 4/45 (moments of the uniform law);
    # the 5.1.2 note's Gaussian formula would give 2 u^4 = 2/9, 2.5 times too much
    result = propagate(load_budget_text(RECT % "rectangular"), second_order=True)
    assert result.standard_uncertainty**2 == pytest.approx(4 / 45, rel=1e-12)
    rng = np.random.default_rng(7)
    x = rng.uniform(-1, 1, 2_000_000)
    assert result.standard_uncertainty == pytest.approx(float(np.std(x**2)), rel=2e-3)  # numpy simulation


@pytest.mark.parametrize("component, draw", [
    ("{name: t, half_width: 1.0, distribution: trapezoidal, beta: 0.5}",
     # JCGM 101 6.4.3.4: a trapezoid is the sum of two rectangular variates of half-widths (1 + b)/2, (1 - b)/2
     lambda rng, m: rng.uniform(-0.75, 0.75, m) + rng.uniform(-0.25, 0.25, m)),
    ("{name: t, half_width: 1.0, distribution: curvilinear_trapezoid, limit_spread: 0.2}",
     # JCGM 101 6.4.4: a rectangular variate whose half-width is itself rectangular on [a - d, a + d]
     lambda rng, m: rng.uniform(0.8, 1.2, m) * rng.uniform(-1, 1, m)),
])
def test_second_order_with_trapezoids_matches_a_simulation(component: str, draw) -> None:
    # y = x^2 at x = 0: var(y) = E[x^4] - E[x^2]^2, checked against a numpy simulation of the stated distribution;
    # before, --second-order with these shapes stopped with a KeyError traceback
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = x**2'\n"
            f"inputs:\n  x: {{value: 0, components: [{component}]}}\n")
    result = propagate(load_budget_text(text), second_order=True)
    x = draw(np.random.default_rng(11), 2_000_000)
    assert result.standard_uncertainty == pytest.approx(float(np.std(x**2)), rel=3e-3)


def test_second_order_gaussian_is_the_gum_note() -> None:
    # JCGM 100 5.1.2 note: y = x^2 at x = 0 with Gaussian x gives u_c^2 = (1/2) (d2f/dx2)^2 u^4 = 2 u^4
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = x**2'\n"
            "inputs:\n  x: {value: 0, components: [{name: n, standard: 0.3}]}\n")
    result = propagate(load_budget_text(text), second_order=True)
    assert result.standard_uncertainty**2 == pytest.approx(2 * 0.3**4, rel=1e-12)


def test_second_order_overflow_is_a_message(write_budget) -> None:
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = a * b * b'\ninputs:\n"
            "  a: {value: 1, components: [{name: n, standard: 1e160}]}\n"
            "  b: {value: 1, components: [{name: n, standard: 1e160}]}\n")
    result = runner.invoke(app, ["run", str(write_budget(text)), "--second-order"])
    assert result.exit_code == 2
    assert "second-order terms" in result.stderr and "--method mc" in result.stderr
    assert "Traceback" not in result.output
