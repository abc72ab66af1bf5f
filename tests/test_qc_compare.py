"""The reality check of a budget against QC data: F-test against scipy and a numpy simulation of the experiment."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats
from typer.testing import CliRunner

from ucalc.cli import app
from ucalc.qc.compare import check_level

runner = CliRunner()

BUDGET = """ucalc: 1
title: t
measurand: {symbol: c, unit: ug/L}
model: 'c = x * F'
inputs:
  x: {value: 5.0, unit: ug/L}
  F: {value: 1.0, components: [{name: steps, standard: 0.02, relative: true, dof: 20}]}
"""


def test_f_test_against_scipy() -> None:
    c = check_level("L1", 5.0, 21, 0.15, 20.0, 0.10, 12.0)
    f = 0.15**2 / 0.10**2
    p = 2 * min(stats.f.cdf(f, 20, 12), stats.f.sf(f, 20, 12))  # scipy.stats.f, two-sided
    assert c.f == pytest.approx(f) and c.p_value == pytest.approx(p, rel=1e-10)
    assert c.ratio == pytest.approx(0.10 / 0.15) and c.share_explained == pytest.approx((0.10 / 0.15) ** 2)
    assert c.verdict == ("consistent" if p >= 0.05 else "misses sources")
    assert check_level("L", 5.0, 41, 0.30, 40.0, 0.10, 30.0).verdict == "misses sources"
    assert check_level("L", 5.0, 41, 0.05, 40.0, 0.10, 30.0).verdict == "pessimistic"


def test_consistent_rate_in_a_simulation() -> None:
    # numpy simulation: 30 QC results with sigma equal to the budget's u (itself estimated with 15 dof). The
    # verdict should say "consistent" in about 95 % of experiments (two-sided 5 % test).
    rng = np.random.default_rng(8)
    ok = 0
    trials = 3000
    for _ in range(trials):
        s = np.std(rng.normal(0, 1.0, 30), ddof=1)
        u = math.sqrt(rng.chisquare(15) / 15)  # the budget's u as an estimate with 15 dof
        ok += check_level("", 0.0, 30, float(s), 29.0, u, 15.0).verdict == "consistent"
    assert ok / trials == pytest.approx(0.95, abs=0.015)


def test_cli_compare(tmp_path) -> None:
    budget = tmp_path / "b.yaml"
    budget.write_text(BUDGET)
    rng = np.random.default_rng(1)
    rows = ["run,level,c"] + [f"r{i},low,{v:.4f}" for i, v in enumerate(rng.normal(2.0, 0.2, 25))] + [
        f"r{i},high,{v:.4f}" for i, v in enumerate(rng.normal(5.0, 0.1, 25))]
    data = tmp_path / "qc.csv"
    data.write_text("\n".join(rows) + "\n")
    res = runner.invoke(app, ["compare", str(budget), str(data), "--level-column", "level", "-f", "json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    levels = {c["level"]: c for c in out["levels"]}
    low = [float(r.split(",")[2]) for r in rows[1:26]]
    assert levels["low"]["s_rw"] == pytest.approx(np.std(low, ddof=1), rel=1e-9)
    assert levels["low"]["u_budget"] == pytest.approx(0.02 * np.mean(low), rel=1e-9)
    assert levels["low"]["verdict"] == "misses sources"  # 10 % scatter against a 2 % budget
    text = runner.invoke(app, ["compare", str(budget), str(data), "--level-column", "level"])
    assert text.exit_code == 0 and "misses sources" in text.output


def test_cli_compare_errors(tmp_path) -> None:
    budget = tmp_path / "b.yaml"
    budget.write_text(BUDGET)
    data = tmp_path / "qc.csv"
    data.write_text("run,result\na,5.0\nb,x\n")
    res = runner.invoke(app, ["compare", str(budget), str(data)])
    assert res.exit_code == 2 and res.output.strip() == f"{data}:3:1: column 'result': 'x' is not a number"
    res = runner.invoke(app, ["compare", str(budget), str(data), "--column", "nope"])
    assert res.exit_code == 2 and "no column 'nope'" in res.output
