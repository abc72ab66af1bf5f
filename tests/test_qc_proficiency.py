"""Proficiency-testing scores (ISO 13528:2015 clause 9) against the standard's formulas, scipy and a simulation."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats
from typer.testing import CliRunner

from ucalc.cli import app
from ucalc.qc import proficiency

runner = CliRunner()


def test_scores_follow_iso_13528() -> None:
    # ISO 13528 9.4 z = d/sigma_pt; 9.6 zeta = d/sqrt(u_x^2 + u_pt^2); 9.7 E_n = d/sqrt(U_x^2 + U_pt^2)
    r = proficiency.score_round("a", 5.12, 0.075, 5.31, 0.30, 2.0, 0.46)
    d = 5.31 - 5.12
    assert r.z == pytest.approx(d / 0.46)
    assert r.zeta == pytest.approx(d / math.sqrt(0.15**2 + 0.075**2))
    assert r.en == pytest.approx(d / math.sqrt(0.30**2 + 0.15**2))
    assert proficiency.verdict(2.0) == "satisfactory" and proficiency.verdict(-2.5) == "questionable"
    assert proficiency.verdict(3.0) == "unsatisfactory" and proficiency.verdict(1.01, 1.0) == "unsatisfactory"


def test_probability_outside_two_matches_scipy() -> None:
    assert proficiency.P_OUTSIDE_2 == pytest.approx(2 * stats.norm.sf(2.0), rel=1e-12)


def test_binomial_and_chi_square_checks_against_scipy() -> None:
    rounds = [proficiency.score_round(str(i), 10.0, 0.1, 10.0 + d, 0.4) for i, d in
              enumerate([0.5, -0.6, 0.1, 0.55, -0.05, 0.2, 0.7, 0.0])]
    res = proficiency.assess(rounds)
    zetas = np.array([r.zeta for r in rounds])
    m = int(np.sum(np.abs(zetas) > 2))
    assert res.outside == m
    assert res.p_outside == pytest.approx(stats.binomtest(m, len(rounds), 2 * stats.norm.sf(2),
                                                          alternative="greater").pvalue, rel=1e-9)
    assert res.chi2 == pytest.approx(np.sum(zetas**2))
    assert res.chi2_limit == pytest.approx(stats.chi2.ppf(0.95, len(rounds)))
    assert res.u_too_small


def test_flag_rates_in_a_simulation() -> None:
    # numpy simulation of PT rounds: a lab whose stated u is right is flagged rarely (two 5 % tests: <= 10 %);
    # a lab stating half its real u is flagged most of the time.
    rng = np.random.default_rng(3)

    def rate(stated_factor: float) -> float:
        flags = 0
        for _ in range(2000):
            dev = rng.normal(0, math.hypot(0.2, 0.05), size=8)
            rounds = [proficiency.score_round("r", 10.0, 0.05, 10.0 + x, 2 * 0.2 * stated_factor) for x in dev]
            flags += proficiency.assess(rounds).u_too_small
        return flags / 2000

    assert rate(1.0) < 0.10
    assert rate(0.5) > 0.8


def test_cli_table_json_and_chart(tmp_path) -> None:
    table = tmp_path / "pt.csv"
    table.write_text("round,assigned,u_assigned,result,U,sigma_pt\nA,5.12,0.075,5.31,0.30,0.46\n"
                     "B,9.80,0.126,9.55,0.50,0.81\nC,3.90,0.05,4.31,0.20,0.35\n")
    chart = tmp_path / "pt.svg"
    res = runner.invoke(app, ["proficiency", str(table), "-f", "json", "--chart", str(chart)])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert [r["name"] for r in data["rounds"]] == ["A", "B", "C"]
    assert data["rounds"][2]["zeta"] == pytest.approx(0.41 / math.hypot(0.1, 0.05))
    assert chart.read_text().startswith("<svg")
    text = runner.invoke(app, ["proficiency", str(table)])
    assert text.exit_code == 0 and "zeta" in text.output


def test_cli_bad_cell_is_located(tmp_path) -> None:
    table = tmp_path / "pt.csv"
    table.write_text("round,assigned,u_assigned,result,U\nA,5.12,0.075,5.31,0.30\nB,9.80,abc,9.55,0.50\n")
    res = runner.invoke(app, ["proficiency", str(table)])
    assert res.exit_code == 2
    assert res.output.strip() == f"{table}:3:1: column 'u_assigned': 'abc' is not a number"
