"""Batch results: per-row values against single-budget runs, decision rules, tables in and out."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.engines.gum import propagate
from ucalc.samples.decisions import decide, decide_below_loq, probability_of_conformance
from ucalc.workflow import load_with_settings

from .conftest import BUDGETS
from .test_kernel import MIXED as LOQ_BUDGET

runner = CliRunner()
NICKEL = BUDGETS / "nickel-in-drinking-water.yaml"
LEAD = BUDGETS / "lead-in-drinking-water.yaml"


def run_batch(*args: str):
    result = runner.invoke(app, ["batch", *args])
    return result


def single_run(budget_path, settings: list[str]):
    """The single-budget result with the row's values set as `ucalc run --set` would."""
    return propagate(load_with_settings(budget_path, settings)[1])


def test_rows_match_single_budget_runs(tmp_path) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,c_inst,f_dil\nA,2.184,5\nB,0.912,10\nC,7.5,2\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    assert run_batch(str(LEAD), str(table), "-o", str(out)).exit_code == 0
    rows = pd.read_csv(out)
    for _, row in rows.iterrows():
        ref = single_run(LEAD, [f"c_inst.value={row['c_inst']}", f"f_dil.value={row['f_dil']}"])
        assert row["value"] == pytest.approx(ref.value, rel=1e-12)
        assert row["u"] == pytest.approx(ref.standard_uncertainty, rel=1e-12)  # relative f_dil term rescaled
        assert row["nu_eff"] == pytest.approx(ref.effective_dof, rel=1e-9)
        assert row["U"] == pytest.approx(ref.expanded_uncertainty, rel=1e-12)


def test_calibration_rows_match_single_runs(tmp_path) -> None:
    table = tmp_path / "s.csv"
    # C and D are blank-level rows (below the lowest standard, D below the intercept): results under the LOD
    table.write_text("sample,c_meas\nA,0.07026\nB,0.0312\nC,0.0008\nD,0.0001\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    assert run_batch(str(NICKEL), str(table), "-o", str(out)).exit_code == 0
    rows = pd.read_csv(out)
    for _, row in rows.iterrows():
        y0 = row["c_meas"]
        # the row's value is the sample's mean Ni/Rh ratio; the same mean of p = 3 readings as raw signals; the
        # row's covariance with the blank read on the same line changes with y0 and must follow it
        sample = f"{{analyte: [{y0 * 1e5}, {y0 * 1e5}, {y0 * 1e5}], internal_standard: [1e5, 1e5, 1e5]}}"
        ref = single_run(NICKEL, [f"c_meas.calibration.sample={sample}"])
        assert pd.isna(row["error"])
        assert row["u"] == pytest.approx(ref.standard_uncertainty, rel=1e-10)
        if row["sample"] in ("C", "D"):
            assert "below the limit of detection" in row["statement"] and pd.isna(row["value"])
        else:
            assert row["value"] == pytest.approx(ref.value, rel=1e-12)
            assert row["U"] == pytest.approx(ref.expanded_uncertainty, rel=1e-10)


def test_failing_rows_are_kept_with_a_reason(tmp_path) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,c_meas\nA,0.07\nB,\nC,0.9\nD,abc\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    result = run_batch(str(NICKEL), str(table), "-o", str(out))
    assert result.exit_code == 2
    assert "4 rows, 3 failed" in result.stdout
    rows = pd.read_csv(out, keep_default_na=False)
    assert list(rows["sample"]) == ["A", "B", "C", "D"]
    assert rows["error"][0] == ""
    assert rows["error"][1] == "no value for 'c_meas'" and rows["error"][3] == "no value for 'c_meas'"
    assert "outside the calibrated range" in rows["error"][2]


def test_xlsx_round_trip(tmp_path) -> None:
    table = tmp_path / "s.xlsx"
    pd.DataFrame({"sample": ["A", "B"], "c_inst": ["2.184", "0.912"]}).to_excel(table, index=False)
    out = tmp_path / "o.xlsx"
    assert run_batch(str(LEAD), str(table), "-o", str(out)).exit_code == 0
    rows = pd.read_excel(out)
    ref = single_run(LEAD, ["c_inst.value=2.184"])
    assert rows["U"][0] == pytest.approx(ref.expanded_uncertainty, rel=1e-12)
    assert list(rows["sample"]) == ["A", "B"]


def test_folder_of_budgets_by_analyte(tmp_path) -> None:
    folder = tmp_path / "budgets"
    folder.mkdir()
    (folder / "Pb.yaml").write_bytes(LEAD.read_bytes())
    (folder / "Ni.yaml").write_bytes(NICKEL.read_bytes())
    table = tmp_path / "s.csv"
    table.write_text("sample,analyte,c_inst,c_meas\nA,Pb,2.184,\nB,ni,,0.07026\nC,Cd,1,1\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    result = run_batch(str(folder), str(table), "-o", str(out))
    assert result.exit_code == 2  # row C has no budget
    rows = pd.read_csv(out, keep_default_na=False)
    assert float(rows["value"][0]) == pytest.approx(single_run(LEAD, ["c_inst.value=2.184"]).value, rel=1e-12)
    assert rows["unit"][1] == "µg/L" and rows["error"][1] == ""
    assert rows["error"][2].startswith("no budget for analyte 'Cd'")


@pytest.mark.parametrize(
    ("rule", "values", "expected"),
    [
        # limit L = 10, U = 1 for every row; values at, just under and just over L and L -/+ U  # JCGM 106 8.2, 8.3
        ("simple", [9.999, 10.0, 10.001], ["conforms", "conforms", "does not conform"]),
        ("guarded_acceptance", [8.999, 9.0, 9.001, 10.0, 10.001],
         ["conforms", "conforms", "inconclusive", "inconclusive", "does not conform"]),
        ("guarded_rejection", [9.999, 10.0, 10.001, 11.0, 11.001],
         ["conforms", "conforms", "inconclusive", "inconclusive", "does not conform"]),
    ],
)
def test_decision_rules_at_the_limit(rule: str, values: list[float], expected: list[str]) -> None:
    assert list(decide(values, [1.0] * len(values), 10.0, rule)) == expected  # type: ignore[arg-type]


def test_lower_limit_mirrors() -> None:
    decisions = decide([9.0, 11.0], [0.5, 0.5], 10.0, "guarded_acceptance", "lower")
    assert list(decisions) == ["does not conform", "conforms"]


def test_probability_of_conformance_against_scipy() -> None:
    y, u, L = np.array([9.0, 9.8, 10.5]), np.array([0.4, 0.4, 0.4]), 10.0
    assert probability_of_conformance(y, u, np.inf, L) == pytest.approx(stats.norm.cdf((L - y) / u), rel=1e-12)
    assert probability_of_conformance(y, u, 7.0, L) == pytest.approx(stats.t.cdf((L - y) / u, 7), rel=1e-12)
    assert probability_of_conformance(y, u, 7.0, L, "lower") == pytest.approx(stats.t.sf((L - y) / u, 7), rel=1e-12)


def test_limit_decisions_and_loq_in_the_output(tmp_path) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,c_inst\nlow,0.1\nmid,0.95\nhigh,3.0\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    result = run_batch(str(LEAD), str(table), "-o", str(out), "--limit", "10", "--loq", "1.0",
                       "--rule", "guarded-acceptance")
    assert result.exit_code == 0, result.output
    assert "guarded acceptance" in result.stdout and "1 below the LOQ" in result.stdout
    rows = pd.read_csv(out, keep_default_na=False)
    assert rows["statement"][0] == "c_Pb < 1 µg/L (below the limit of quantification)"
    assert rows["value"][0] == "" and rows["U"][0] == ""
    assert rows["decision"][1] == "conforms"
    ref = single_run(LEAD, ["c_inst.value=3.0"])
    assert rows["decision"][2] == ("does not conform" if ref.value > 10 else
                                   "conforms" if ref.value <= 10 - ref.expanded_uncertainty else "inconclusive")
    p = stats.t.cdf((10 - ref.value) / ref.standard_uncertainty, ref.effective_dof)
    assert float(rows["p_conformance"][2]) == pytest.approx(p, rel=1e-9)
    assert "guarded acceptance" in rows["decision_rule"][0]


def test_batch_error_paths(tmp_path) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,c_inst\nA,1\n", encoding="utf-8")
    r = run_batch(str(LEAD), str(table), "-o", str(tmp_path / "o.txt"))
    assert r.exit_code == 2 and "must be a .csv or .xlsx file" in r.stderr
    r = run_batch(str(LEAD), str(table), "-o", str(tmp_path / "o.csv"), "--map", "nothing=c_inst")
    assert r.exit_code == 2 and "'nothing' is not an input of the budget" in r.stderr
    r = run_batch(str(LEAD), str(table), "-o", str(table))
    assert r.exit_code == 2 and "exists already" in r.stderr
    r = run_batch(str(LEAD), str(table), "-o", str(table), "--force")
    assert r.exit_code == 2 and "is an input of this command" in r.stderr
    assert table.read_text(encoding="utf-8") == "sample,c_inst\nA,1\n"


def test_map_renames_columns(tmp_path) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,reading\nA,2.184\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    assert run_batch(str(LEAD), str(table), "-o", str(out), "--map", "c_inst=reading").exit_code == 0
    assert pd.read_csv(out)["value"][0] == pytest.approx(single_run(LEAD, ["c_inst.value=2.184"]).value)
    assert math.isfinite(pd.read_csv(out)["U"][0])


def test_unit_budget_loads() -> None:
    assert load_budget_text(LEAD.read_text(encoding="utf-8")).measurand.unit == "µg/L"




@pytest.mark.parametrize(("side", "limit", "rule", "expected"), [
    ("upper", "5", "simple", "conforms"),  # LOQ 0.5 conforms: every value below it does
    ("upper", "0.2", "simple", "cannot be decided"),  # limit below the LOQ: y may lie either side
    ("upper", "0.55", "guarded-acceptance", "cannot be decided"),  # LOQ + U at the LOQ is above the limit
    ("lower", "0.2", "simple", "cannot be decided"),  # y < 0.5 may lie above or below 0.2
    ("lower", "5", "simple", "does not conform"),  # y < 0.5 < 5
])
def test_below_loq_is_decided_from_what_is_known(tmp_path, side: str, limit: str, rule: str, expected: str) -> None:
    # rule of docs/batch.md: a "< LOQ" result is decided as the LOQ itself would be (its U computed at the LOQ,
    # JCGM 100 G.4.1 by hand below); JCGM 106 does not treat censored results (common practice for the rest)
    budget = tmp_path / "b.yaml"
    budget.write_text(LOQ_BUDGET, encoding="utf-8")
    table = tmp_path / "s.csv"
    table.write_text("sample,c_raw\nA,0.1\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    result = run_batch(str(budget), str(table), "-o", str(out), "--limit", limit, "--loq", "0.5", "--side", side,
                       "--rule", rule)
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out, keep_default_na=False)
    assert rows["decision"][0] == expected
    assert "LOQ 0.5" in rows["decision_reason"][0]
    if side == "upper":
        # U at c = 0.5 by hand: u(c_raw) from 0.015 (dof 4) and 0.05 (dof 9), u(f) term 0.0025; k = t(0.975, 10)
        a, b, f = 0.015, 0.05, 0.0025
        nu = (a**2 + b**2) ** 2 / (a**4 / 4 + b**4 / 9)
        uc = math.sqrt(a**2 + b**2 + f**2)
        nu_eff = uc**4 / ((a**2 + b**2) ** 2 / nu)
        U = stats.t.ppf(0.975, math.floor(nu_eff)) * uc
        assert f"U = {U:.3g} at the LOQ" in rows["decision_reason"][0]


def _below_loq_one_row(q: float, U: float, L: float, rule: str, side: str) -> tuple[str, str]:
    """The "< LOQ" decision and reason of one row, written out with Python's format()."""
    if not (math.isfinite(q) and math.isfinite(L)):
        return "", ""
    d = str(decide([q], [U], [L], rule, side)[0])  # type: ignore[arg-type]
    known = "" if math.isfinite(U) else "; the expanded uncertainty at the LOQ is not known"
    if side == "upper" and d == "conforms":
        at = f" (U = {U:.3g} at the LOQ)" if math.isfinite(U) else ""
        return d, f"result < LOQ {q:g}, and the LOQ itself conforms{at}"
    if side == "lower" and d == "does not conform":
        return d, f"result < LOQ {q:g}, and the LOQ itself does not conform to the lower limit {L:g}"
    return "cannot be decided", (f"result < LOQ {q:g}: at the LOQ the decision would be '{d or 'unknown'}' "
                                 f"(U = {U:.3g} at the LOQ{known}), so a value below the LOQ may or may not conform "
                                 f"to the {side} limit {L:g}")


@pytest.mark.parametrize("side", ["upper", "lower"])
@pytest.mark.parametrize("rule", ["simple", "guarded_acceptance", "guarded_rejection"])
def test_below_loq_rows_decided_as_single_rows(rule: str, side: str) -> None:
    rng = np.random.default_rng(4)
    q = np.round(rng.uniform(0.1, 5, 3000), rng.integers(1, 4))
    U = rng.uniform(0.01, 2, 3000)
    L = np.round(rng.uniform(0.1, 6, 3000), 2)
    U[::50], q[::97], L[::89] = np.nan, np.nan, np.inf
    decisions, reasons = decide_below_loq(q, U, L, rule, side)  # type: ignore[arg-type]
    expected = [_below_loq_one_row(float(a), float(b), float(c), rule, side) for a, b, c in zip(q, U, L, strict=True)]
    assert list(zip(decisions.tolist(), reasons.tolist(), strict=True)) == expected
