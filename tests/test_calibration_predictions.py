"""One calibration line predicting several readings: covariance against statsmodels and a simulation of the run.

References: statsmodels OLS (``cov_params``, ``get_prediction``) for the covariance of the fitted line at the
predicted concentrations; a numpy simulation of the whole experiment (standards, sample and blank read again,
the line refitted each time) for the standard deviation of c_s - c_b and c_s + c_b.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.reports.jsonout import gum_json

# invented demo data: Ni/Rh ratio, three readings per standard, as in budgets/nickel-in-drinking-water.yaml
STANDARDS = [0.0, 0.5, 1.0, 2.0, 5.0, 10.0]
RESPONSES = [[0.00041, 0.00044, 0.00039], [0.01162, 0.01188, 0.01171], [0.02315, 0.02342, 0.02298],
             [0.04671, 0.04620, 0.04655], [0.11540, 0.11632, 0.11587], [0.23105, 0.23290, 0.23188]]
SAMPLE = [0.07012, 0.07075, 0.06991]
BLANK = [0.00072, 0.00081, 0.00069]
QC = [0.11490, 0.11612, 0.11555]


def line_block(readings: dict[str, list[float]], indent: str = "    ") -> str:
    lines = [f"{indent}unit: ug/L", f"{indent}calibration:", f"{indent}  standards: {STANDARDS}",
             f"{indent}  responses: {RESPONSES}"]
    if readings:
        lines.append(f"{indent}  readings:")
        lines += [f"{indent}    {k}: {v}" for k, v in readings.items()]
    return "\n".join(lines)


def one_line_budget(model: str) -> str:
    return f"""\
ucalc: 1
title: one line, several readings
measurand: {{symbol: c, unit: ug/L}}
model: 'c = {model}'
inputs:
  cal:
{line_block({"sample": SAMPLE, "blank": BLANK, "qc": QC})}
"""


def independent_budget(model: str) -> str:
    """The treatment before: sample and blank each from a calibration input of their own (uncorrelated)."""
    return f"""\
ucalc: 1
title: two independent lines
measurand: {{symbol: c, unit: ug/L}}
model: 'c = {model}'
inputs:
  cs:
{line_block({})}
      sample: {SAMPLE}
  cb:
{line_block({})}
      sample: {BLANK}
"""


def statsmodels_covariance(readings: list[list[float]]) -> tuple[np.ndarray, np.ndarray]:
    """x0 and Cov(x0) by first order from statsmodels' OLS: [G Cov(theta) G' + diag(s^2/p)] / b^2."""
    x = np.repeat(STANDARDS, 3).astype(float)
    y = np.concatenate(RESPONSES)
    fit = sm.OLS(y, sm.add_constant(x)).fit()
    a, b = fit.params
    y0 = np.array([np.mean(r) for r in readings])
    x0 = (y0 - a) / b
    exog = sm.add_constant(x0, has_constant="add")
    cov_mean = exog @ fit.cov_params() @ exog.T
    se_mean = fit.get_prediction(exog).se_mean
    assert np.allclose(np.sqrt(np.diag(cov_mean)), se_mean, rtol=1e-12)  # statsmodels agrees with itself
    own = np.diag([fit.mse_resid / len(r) for r in readings])
    return x0, (cov_mean + own) / b**2


def test_covariance_of_predictions_against_statsmodels() -> None:
    budget = load_budget_text(one_line_budget("cal.sample - cal.blank"))
    names = ["cal.sample", "cal.blank", "cal.qc"]
    x0, cov = statsmodels_covariance([SAMPLE, BLANK, QC])
    for i, a in enumerate(names):
        q = budget.quantities[a]
        assert q.value == pytest.approx(x0[i], rel=1e-10)
        assert q.standard_uncertainty == pytest.approx(math.sqrt(cov[i, i]), rel=1e-9)
        for j, b in enumerate(names[:i]):
            r = cov[i, j] / math.sqrt(cov[i, i] * cov[j, j])
            assert budget.correlation(a, b) == pytest.approx(r, rel=1e-9)
    data = gum_json(budget, propagate(budget))
    matrix = np.array(data["input_models"]["cal"]["prediction_covariance"]["matrix"])
    assert np.allclose(matrix, cov, rtol=1e-9, atol=0)
    origins = {tuple(c["between"]): c["origin"] for c in data["correlations"]}
    assert origins[("cal.blank", "cal.sample")] == "calibration 'cal': predictions from one line"


def simulate(n: int = 200_000, seed: int = 11) -> dict[str, float]:
    """Simulation of the whole experiment: standards, sample and blank read again and the line refitted.

    The true line is the fitted one, the reading scatter its residual s, the true concentrations the predicted
    ones; each trial refits the line by least squares and predicts the sample and the blank."""
    rng = np.random.default_rng(seed)
    x = np.repeat(STANDARDS, 3).astype(float)
    y = np.concatenate(RESPONSES)
    b, a = np.polyfit(x, y, 1)
    s = math.sqrt(np.sum((y - a - b * x) ** 2) / (len(x) - 2))
    xs, xb = (np.mean(SAMPLE) - a) / b, (np.mean(BLANK) - a) / b
    X = np.column_stack([np.ones_like(x), x])
    hat = np.linalg.solve(X.T @ X, X.T)  # (2, n): coefficients = hat @ y
    ys = a + b * x + s * rng.standard_normal((n, len(x)))
    coef = ys @ hat.T
    ys0 = a + b * xs + s * rng.standard_normal((n, 3)).mean(axis=1)
    yb0 = a + b * xb + s * rng.standard_normal((n, 3)).mean(axis=1)
    cs = (ys0 - coef[:, 0]) / coef[:, 1]
    cb = (yb0 - coef[:, 0]) / coef[:, 1]
    return {"difference": float(np.std(cs - cb, ddof=1)), "sum": float(np.std(cs + cb, ddof=1))}


@pytest.mark.parametrize("model,key", [("cal.sample - cal.blank", "difference"), ("cal.sample + cal.blank", "sum")])
def test_blank_correction_and_sum_against_simulation(model: str, key: str) -> None:
    sim = simulate()
    after = propagate(load_budget_text(one_line_budget(model))).standard_uncertainty
    before = propagate(load_budget_text(independent_budget(model.replace("cal.sample", "cs")
                                                           .replace("cal.blank", "cb")))).standard_uncertainty
    # the simulated SD has a relative standard error of about 1/sqrt(2n) = 0.16 %; first order adds little more
    assert after == pytest.approx(sim[key], rel=0.01)
    # the independent treatment misses the shared slope and intercept by more than the tolerance above
    assert abs(before / sim[key] - 1) > 0.03


def test_blank_level_readings_give_results() -> None:
    # a reading below the lowest standard and a net response below the intercept: results, no warning
    text = one_line_budget("cal.low").replace(f"blank: {BLANK}", "low: [0.00005, 0.00002, 0.00001]")
    budget = load_budget_text(text)
    q = budget.quantities["cal.low"]
    x = np.repeat(STANDARDS, 3).astype(float)
    b, a = np.polyfit(x, np.concatenate(RESPONSES), 1)
    assert q.value == pytest.approx((np.mean([0.00005, 0.00002, 0.00001]) - a) / b, rel=1e-9)
    assert q.value < 0
    assert not any("outside" in w for w in budget.warnings)
    assert any("below the lowest standard" in line for line in q.working)
    assert math.isfinite(propagate(budget).standard_uncertainty)


def test_reading_above_range_warns_or_is_refused_when_strict() -> None:
    text = one_line_budget("cal.qc").replace(f"qc: {QC}", "qc: [0.26, 0.27]")
    assert any("outside the calibrated range" in w for w in load_budget_text(text).warnings)
    from ucalc.errors import BudgetErrors

    with pytest.raises(BudgetErrors, match="outside the calibrated range"):
        load_budget_text(text.replace("      readings:", "      strict: true\n      readings:"))


def test_batch_rows_below_the_lowest_standard_are_results() -> None:
    from ucalc.inputs.calibration import CalibrationSpec, predict_many

    spec = CalibrationSpec.model_validate({"standards": STANDARDS, "responses": RESPONSES, "sample": SAMPLE})
    x0, u, dof, above = predict_many(spec, [0.0, -0.0002, 0.07026, 0.3])
    assert list(above) == [False, False, False, True]
    assert x0[1] < x0[0] < 0 and np.all(np.isfinite(u))
    single = load_budget_text(one_line_budget("cal.sample")).quantities["cal.sample"]
    assert u[2] == pytest.approx(single.standard_uncertainty, rel=1e-6)  # same mean response, same p = 3
