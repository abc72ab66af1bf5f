"""u(c) = sqrt(u0^2 + (b c)^2) across the working range: the fit against exact data and a numpy simulation of
the whole QC experiment, the input model through the GUM kernel and batch, and the CLI."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from ucalc.budget.load import load_budget
from ucalc.cli import app
from ucalc.engines.gum import propagate
from ucalc.qc.range_fit import Level, fit

runner = CliRunner()


def test_exact_precision_profile_is_recovered() -> None:
    c = [0.5, 2.0, 5.0, 10.0, 20.0]
    levels = [Level(str(x), x, math.hypot(0.02, 0.03 * x), 19.0, 20) for x in c]
    f = fit(levels)
    assert f.u0 == pytest.approx(0.02, rel=1e-6) and f.b == pytest.approx(0.03, rel=1e-6)


def test_fit_in_a_simulation_of_the_qc_experiment() -> None:
    # numpy simulation: 20 control results at each of 5 levels, true u0 = 0.02, b = 0.03. The estimates are
    # close to unbiased and their reported standard uncertainties match their scatter over repeated experiments.
    rng = np.random.default_rng(4)
    c = np.array([0.5, 2.0, 5.0, 10.0, 20.0])
    sd = np.hypot(0.02, 0.03 * c)
    u0s, bs, ub = [], [], []
    for _ in range(400):
        s = np.std(rng.normal(c, sd, size=(20, 5)), axis=0, ddof=1)
        f = fit([Level(str(x), float(x), float(v), 19.0, 20) for x, v in zip(c, s, strict=True)])
        u0s.append(f.u0)
        bs.append(f.b)
        ub.append(f.u_b)
    assert np.mean(bs) == pytest.approx(0.03, rel=0.03)
    assert np.mean(u0s) == pytest.approx(0.02, rel=0.12)
    assert np.mean(ub) == pytest.approx(np.std(bs), rel=0.25)


def test_budget_and_batch_rows_follow_the_profile(tmp_path) -> None:
    # The law of propagation on c = x F + e, e = e.u0 + x e.b: u^2 = u0^2 + (b x)^2 + (x u_F)^2 (JCGM 100 5.1.2)
    b = load_budget("budgets/arsenic-working-range.yaml")
    u0 = b.quantities["e_Rw.u0"].standard_uncertainty
    rel = b.quantities["e_Rw.b"].standard_uncertainty
    uf = b.quantities["F_bias"].standard_uncertainty
    g = propagate(b)
    assert g.standard_uncertainty == pytest.approx(math.sqrt(u0**2 + (rel * 4.2) ** 2 + (4.2 * uf) ** 2), rel=1e-12)
    table = tmp_path / "s.csv"
    table.write_text("x\n0.5\n2.0\n15.0\n")
    out = tmp_path / "o.csv"
    res = runner.invoke(app, ["batch", "budgets/arsenic-working-range.yaml", str(table), "-o", str(out)])
    assert res.exit_code == 0, res.output
    import pandas as pd

    frame = pd.read_csv(out)
    x = np.array([0.5, 2.0, 15.0])
    assert np.allclose(frame["u"], np.sqrt(u0**2 + (rel * x) ** 2 + (x * uf) ** 2), rtol=1e-10)


def test_working_range_cli(tmp_path) -> None:
    chart = tmp_path / "r.svg"
    res = runner.invoke(app, ["working-range", "budgets/qc/arsenic-levels.csv", "--column", "As", "--level-column",
                              "level", "-f", "json", "--chart", str(chart)])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert len(data["levels"]) == 5 and data["u0"] > 0 and data["b"] > 0
    assert chart.read_text().startswith("<svg")
    res = runner.invoke(app, ["working-range", "budgets/qc/arsenic-levels.csv", "--column", "Pb", "--level-column",
                              "level"])
    assert res.exit_code == 2 and "no column 'Pb'" in res.output


def test_fit_agrees_with_a_statsmodels_wls_of_the_variances() -> None:
    # An independent estimator: statsmodels WLS of s_i^2 on (1, c_i^2) with weights nu_i / s_i^4
    # (var(s^2) = 2 sigma^4 / nu). On the example's QC data both give u0 and b of the same size.
    import statsmodels.api as sm

    from ucalc.qc.range_fit import levels_from_data

    levels = levels_from_data("budgets/qc/arsenic-levels.csv", "As", "level")
    f = fit(levels)
    c = np.array([lv.level for lv in levels])
    s = np.array([lv.s for lv in levels])
    nu = np.array([lv.dof for lv in levels])
    wls = sm.WLS(s**2, np.column_stack([np.ones_like(c), c**2]), weights=nu / s**4).fit()
    u0_wls, b_wls = math.sqrt(max(wls.params[0], 0.0)), math.sqrt(wls.params[1])
    assert f.b == pytest.approx(b_wls, rel=0.15)
    assert f.u0 == pytest.approx(u0_wls, abs=3 * f.u_u0)
