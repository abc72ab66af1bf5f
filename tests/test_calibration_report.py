"""Calibration diagnostics and correlations in JSON and reports; residuals against statsmodels OLS."""

from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm
from typer.testing import CliRunner

from ucalc.cli import app

from .conftest import BUDGETS

runner = CliRunner()
NICKEL = BUDGETS / "nickel-in-drinking-water.yaml"


def test_json_residuals_and_line_against_statsmodels() -> None:
    data = json.loads(runner.invoke(app, ["run", str(NICKEL), "-f", "json"]).stdout)
    cal = data["input_models"]["c_meas"]
    x = np.array([r["x"] for r in cal["diagnostics"]["residuals"]])
    y = np.array([r["y"] for r in cal["diagnostics"]["residuals"]])
    fit = sm.OLS(y, sm.add_constant(x)).fit()
    assert np.allclose([r["residual"] for r in cal["diagnostics"]["residuals"]], fit.resid, rtol=1e-8, atol=1e-12)
    assert cal["slope"] == pytest.approx(fit.params[1], rel=1e-10)
    assert cal["u_intercept"] == pytest.approx(fit.bse[0], rel=1e-9)
    assert cal["cov_slope_intercept"] == pytest.approx(fit.cov_params()[0, 1], rel=1e-9)
    assert cal["residual_sd"] == pytest.approx(np.sqrt(fit.mse_resid), rel=1e-10)
    assert cal["dof"] == fit.df_resid and cal["range"] == [0.0, 10.0]
    origins = {tuple(c["between"]): c["origin"] for c in data["correlations"]}
    assert origins[("D.s1_aliquot", "D.s2_aliquot")] == "shared item 'pipette_10'"


def test_reports_show_correlations_and_diagnostics(tmp_path) -> None:
    md, html = tmp_path / "r.md", tmp_path / "r.html"
    assert runner.invoke(app, ["report", str(NICKEL), "-o", str(md)]).exit_code == 0
    assert runner.invoke(app, ["report", str(NICKEL), "-o", str(html)]).exit_code == 0
    text = md.read_text(encoding="utf-8")
    assert "| D.s1_aliquot and D.s2_aliquot | 1.0000 | shared item 'pipette_10' |" in text
    assert "## Calibration diagnostics: c_meas (ISO 8466-1)" in text and "Mandel test: PG = 1.07" in text
    page = html.read_text(encoding="utf-8")
    assert "Calibration diagnostics: c_meas" in page and "dashed lines at ±2 s" in page
