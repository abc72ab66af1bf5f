"""Limits of detection and quantification against ISO 11843-2 formulas, statsmodels and numpy simulations."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.errors import BudgetErrors
from ucalc.qc import limits

runner = CliRunner()
BLANKS = [0.021, 0.034, 0.012, 0.028, 0.019, 0.025, 0.031, 0.016, 0.022, 0.027]


def budget(limits_block: str, extra_inputs: str = "") -> str:
    return ("ucalc: 1\ntitle: t\nmeasurand: {symbol: c, unit: ug/L}\nmodel: 'c = x * F'\ninputs:\n"
            "  x: {value: 5.0, unit: ug/L}\n"
            "  F: {value: 1.0, components: [{name: r, standard: 0.05, relative: true}]}\n"
            f"{extra_inputs}limits:\n{limits_block}\n")


@pytest.mark.parametrize("nu", [4, 9, 20])
def test_delta_is_the_noncentrality_for_beta(nu) -> None:
    # numpy simulation of the noncentral t: P(T'(nu, delta) <= t(0.95, nu)) = 0.05 (ISO 11843-2 5.3)
    rng = np.random.default_rng(nu)
    d = limits.delta(nu)
    t = rng.normal(d, 1, 400_000) / np.sqrt(rng.chisquare(nu, 400_000) / nu)
    assert np.mean(t <= stats.t.ppf(0.95, nu)) == pytest.approx(0.05, abs=0.002)
    assert limits.delta(math.inf) == pytest.approx(2 * stats.norm.ppf(0.95))  # 3.29 for known sigma


def test_blank_limits_common_practice() -> None:
    lim = limits.from_blanks(BLANKS)  # LOD = 3 s, LOQ = 10 s  # common practice
    s = np.std(BLANKS, ddof=1)
    assert lim.lod == pytest.approx(3 * s) and lim.loq == pytest.approx(10 * s)


def test_blank_critical_value_has_the_stated_false_positive_rate() -> None:
    # numpy simulation of the whole experiment: 10 blanks give s_0 and the blank correction; a blank sample
    # measured once and corrected exceeds L_C in alpha = 5 % of runs; a sample at delta * sigma_net is detected
    # (its net/s_net exceeds t) in 1 - beta = 95 % of runs (ISO 11843-1 definitions).
    rng = np.random.default_rng(2)
    runs, n = 100_000, 10
    blanks = rng.normal(0.0, 1.0, size=(runs, n))
    s0 = blanks.std(axis=1, ddof=1)
    net = rng.normal(0.0, 1.0, runs) - blanks.mean(axis=1)
    eta = math.sqrt(1 + 1 / n)
    lim = limits.from_blanks(list(blanks[0]), "iso11843")
    t = lim.critical / (np.std(blanks[0], ddof=1) * eta)
    assert np.mean(net > t * s0 * eta) == pytest.approx(0.05, abs=0.003)
    d = limits.delta(n - 1)
    net_d = d * eta + net
    assert np.mean(net_d > t * s0 * eta) == pytest.approx(0.95, abs=0.003)


def test_calibration_limits_against_statsmodels() -> None:
    import statsmodels.api as sm

    x = np.array([0.0, 0.5, 1.0, 2.0, 5.0, 10.0])
    y = np.array([102.0, 598.0, 1093.0, 2121.0, 5030.0, 10012.0])
    ols = sm.OLS(y, sm.add_constant(x)).fit()  # statsmodels line
    a, b = ols.params
    s = math.sqrt(ols.scale)
    lim = limits.from_line(float(a), float(b), s, list(x), 4.0, readings=2)
    sigma = s / b * math.sqrt(1 / 2 + 1 / 6 + x.mean() ** 2 / np.sum((x - x.mean()) ** 2))  # ISO 11843-2 5.3
    assert lim.critical == pytest.approx(stats.t.ppf(0.95, 4) * sigma, rel=1e-9)
    assert lim.lod == pytest.approx(limits.delta(4) * sigma, rel=1e-9)
    assert lim.loq == pytest.approx(10 * sigma, rel=1e-9)
    text = budget("  calibration: cal\n  replicates: 2", extra_inputs=(
        "  cal:\n    unit: ug/L\n    calibration:\n      standards: [0.0, 0.5, 1.0, 2.0, 5.0, 10.0]\n"
        "      responses: [102.0, 598.0, 1093.0, 2121.0, 5030.0, 10012.0]\n      sample: [3000.0]\n"))
    b_ = load_budget_text(text)
    assert b_.limits is not None and b_.limits.lod == pytest.approx(lim.lod, rel=1e-9)


def test_limits_block_errors() -> None:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("  calibration: F"), "l.yaml")
    assert "limits: 'F' is not a calibration input of this budget" in str(info.value)
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("  lod: 0.5\n  blanks: [1.0, 2.0]"), "l.yaml")
    assert "give declared 'lod' and/or 'loq', or 'blanks', or 'calibration'" in str(info.value)
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("  lod: 0.5\n  loq: 0.1"), "l.yaml")
    assert "lod (0.5) is above loq (0.1)" in str(info.value)


def test_run_and_batch_use_the_budgets_limits(tmp_path) -> None:
    path = tmp_path / "b.yaml"
    path.write_text(budget("  lod: 0.1\n  loq: 0.3"))
    res = runner.invoke(app, ["run", str(path), "-f", "json"])
    assert res.exit_code == 0
    assert json.loads(res.stdout)["detection_limits"]["loq"] == 0.3
    assert "LOQ 0.3" in runner.invoke(app, ["run", str(path)]).output
    table = tmp_path / "s.csv"
    table.write_text("x\n0.05\n0.2\n4.0\n")
    out = tmp_path / "o.csv"
    res = runner.invoke(app, ["batch", str(path), str(table), "-o", str(out)])
    assert res.exit_code == 0, res.output
    import pandas as pd

    frame = pd.read_csv(out)
    assert "below the limit of detection" in frame["statement"][0]
    assert "below the limit of quantification" in frame["statement"][1]
    assert frame["statement"][2].startswith("c = (4.00 ± 0.")
    # --loq on the command line still wins over the budget's
    res = runner.invoke(app, ["batch", str(path), str(table), "-o", str(out), "--loq", "0.01", "--force"])
    assert "below the limit of quantification" not in pd.read_csv(out)["statement"][1]


def test_report_states_the_limits(tmp_path) -> None:
    out = tmp_path / "r.md"
    res = runner.invoke(app, ["report", "budgets/arsenic-top-down.yaml", "-o", str(out), "--method", "gum"])
    assert res.exit_code == 0, res.output
    s0 = np.std(BLANKS, ddof=1) * math.sqrt(1 + 1 / 10)  # ISO 11843-2 blank form, numpy recomputation
    assert f"LOD {limits.delta(9) * s0:.3g} µg/L" in out.read_text()
