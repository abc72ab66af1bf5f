"""Reproducibility and bias input models (top-down uncertainty) against independent references."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from ucalc.budget.load import load_budget, load_budget_text
from ucalc.engines.gum import propagate
from ucalc.errors import BudgetErrors
from ucalc.inputs import bias, reproducibility


def budget_with(spec: str) -> str:
    return ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: 'ug/L'}\nmodel: 'y = x * F'\n"
            f"inputs:\n  x: {{value: 5.0, unit: ug/L}}\n  F:\n{spec}\n")


# ---- reproducibility ---------------------------------------------------------------------------------------


def test_control_series_is_the_sample_standard_deviation() -> None:
    # numpy recomputation: s with ddof = 1, dof n - 1 (TR 537 4.2; ISO 11352 8.2)
    values = [5.01, 4.87, 5.12, 4.95, 5.20, 4.91, 5.06, 4.99]
    p = reproducibility.series(values, relative=True)
    assert p.s == pytest.approx(np.std(values, ddof=1) / np.mean(values), rel=1e-12)
    assert p.dof == len(values) - 1


def test_duplicates_d2_is_the_mean_range_of_two_normal_values() -> None:
    # E|x1 - x2| = 2 sigma / sqrt(pi) for independent normal values (ISO 11352 / TR 537 use d2 = 1.128)
    assert reproducibility.D2_PAIRS == pytest.approx(2 / math.sqrt(math.pi), abs=5e-4)


def test_duplicates_squares_and_range_against_numpy() -> None:
    pairs = [(4.12, 4.31), (7.85, 7.62), (2.21, 2.30), (11.4, 11.1), (5.05, 4.88)]
    d = np.array([a - b for a, b in pairs])
    sq = reproducibility.duplicates(pairs, "squares")
    assert sq.s == pytest.approx(math.sqrt(np.sum(d**2) / (2 * len(d))), rel=1e-12)
    assert sq.dof == len(pairs)
    rg = reproducibility.duplicates(pairs, "range")
    assert rg.s == pytest.approx(np.mean(np.abs(d)) / 1.128, rel=1e-12)
    rel = reproducibility.duplicates(pairs, "range", relative=True)
    m = np.array([(a + b) / 2 for a, b in pairs])
    assert rel.s == pytest.approx(np.mean(np.abs(d / m)) / 1.128, rel=1e-12)


def test_range_method_dof_matches_a_simulation() -> None:
    # numpy simulation of the whole experiment: n duplicate pairs, sigma = 1. The dof of an estimate s is
    # 1 / (2 Var(s)/sigma^2) (JCGM 100 G.4.2 relation u(s)/s = 1/sqrt(2 nu)); the module uses n / (pi - 2).
    rng = np.random.default_rng(11)
    n = 12
    x = rng.normal(size=(40_000, n, 2))
    s = np.mean(np.abs(x[..., 0] - x[..., 1]), axis=1) / (2 / math.sqrt(math.pi))
    simulated = 1 / (2 * np.var(s))
    assert reproducibility.duplicates([(1.0, 0.0)] * n, "range").dof == pytest.approx(simulated, rel=0.04)


def _study() -> list[list[float]]:
    return [[5.02, 5.10, 4.98], [5.21, 5.15], [4.90, 4.95, 4.88, 4.99], [5.08, 5.12, 5.04]]


def test_anova_mean_squares_against_statsmodels_and_scipy() -> None:
    import pandas as pd
    import statsmodels.api as sm
    from statsmodels.formula.api import ols

    groups = _study()
    frame = pd.DataFrame([(f"r{i}", x) for i, g in enumerate(groups) for x in g], columns=["run", "y"])
    table = sm.stats.anova_lm(ols("y ~ C(run)", data=frame).fit())  # statsmodels one-way ANOVA
    ms_b, ms_w = table["mean_sq"].iloc[0], table["mean_sq"].iloc[1]
    f_scipy = stats.f_oneway(*groups).statistic  # scipy F = MS_between / MS_within
    assert ms_b / ms_w == pytest.approx(f_scipy, rel=1e-10)
    p = reproducibility.runs_anova(groups)
    sizes = np.array([len(g) for g in groups])
    N = sizes.sum()
    n0 = (N - np.sum(sizes**2) / N) / (len(groups) - 1)  # ISO 5725-2 7.4.4
    assert p.repeatability == pytest.approx(math.sqrt(ms_w), rel=1e-10)
    assert p.between == pytest.approx(math.sqrt((ms_b - ms_w) / n0), rel=1e-10)
    assert p.s == pytest.approx(math.sqrt(ms_w + (ms_b - ms_w) / n0), rel=1e-10)


def test_anova_between_run_component_is_unbiased_in_a_simulation() -> None:
    # numpy simulation of unequal runs: E[(MS_b - MS_w)/n0] = sigma_b^2 (ISO 5725-2 7.4), sigma_b = 0.5, sigma_r = 1
    rng = np.random.default_rng(5)
    sizes = [2, 3, 5, 4, 3, 2]
    estimates = []
    for _ in range(4000):
        groups = [list(rng.normal(rng.normal(0, 0.5), 1.0, size=k)) for k in sizes]
        p = reproducibility.runs_anova(groups)
        estimates.append(p.s**2)  # s_Rw^2 with the between part truncated at 0: biased up a little
    assert np.mean(estimates) == pytest.approx(1.25, rel=0.05)


def test_runs_in_a_control_series_make_a_one_way_layout() -> None:
    values = [5.0, 5.1, 4.9, 5.2, 5.0, 5.3]
    runs = ["a", "a", "b", "b", "c", "c"]
    assert reproducibility.from_series(values, runs, False).s == pytest.approx(
        reproducibility.runs_anova([[5.0, 5.1], [4.9, 5.2], [5.0, 5.3]]).s)
    assert reproducibility.from_series(values, list("abcdef"), False).s == pytest.approx(np.std(values, ddof=1))


def test_reproducibility_input_combines_sources_in_quadrature() -> None:
    text = budget_with("    reproducibility:\n      relative: true\n      control: {values: [5.01, 4.87, 5.12, 4.95]}"
                       "\n      duplicates: {pairs: [[4.1, 4.3], [7.8, 7.6], [2.2, 2.3]], method: squares}")
    q = load_budget_text(text).quantities["F"]
    s1 = np.std([5.01, 4.87, 5.12, 4.95], ddof=1) / np.mean([5.01, 4.87, 5.12, 4.95])
    d = np.array([-0.2 / 4.2, 0.2 / 7.7, -0.1 / 2.25])
    s2 = math.sqrt(np.sum(d**2) / 6)
    assert q.value == 1.0
    assert q.standard_uncertainty == pytest.approx(math.hypot(s1, s2), rel=1e-9)  # TR 537 4.4


def test_reproducibility_errors_are_located() -> None:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget_with("    reproducibility: {relative: true}"), "r.yaml")
    assert ("r.yaml:8:22: input 'F': reproducibility: give at least one of 'control', 'duplicates' or 'study'"
            in str(info.value))
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget_with("    reproducibility: {control: {file: /etc/passwd, column: a}}"), "r.yaml")
    assert "must be a path inside the budget's folder" in str(info.value)


# ---- bias ------------------------------------------------------------------------------------------------


def test_single_material_bias_formula() -> None:
    # TR 537 5.1 / ISO 11352 9.2: u(bias) = sqrt(b^2 + s^2/n + u(Cref)^2); numpy recomputation
    results = [10.31, 10.18, 10.42, 10.25, 10.36]
    est = bias.single_material(results, None, None, None, 10.0, 0.1)
    b = np.mean(results) - 10.0
    s = np.std(results, ddof=1)
    assert est.bias == pytest.approx(b)
    assert est.u_bias == pytest.approx(math.sqrt(b**2 + s**2 / 5 + 0.01), rel=1e-12)
    assert est.significant == (abs(b) > 2 * math.sqrt(s**2 / 5 + 0.01))  # common practice, k = 2
    assert est.significant


def test_several_rounds_rms_and_su_reference() -> None:
    # TR 537 5.2: u(Cref) of a round = s_R / sqrt(labs), averaged over rounds; RMS of relative biases
    assigned = np.array([5.12, 9.80, 2.45, 7.30])
    result = np.array([5.31, 9.55, 2.58, 7.41])
    sR, labs = np.array([0.46, 0.81, 0.27, 0.62]), np.array([38, 41, 35, 40])
    est = bias.several(list(assigned), list(result), list(sR / np.sqrt(labs)), relative=True)
    b = (result - assigned) / assigned
    rms = math.sqrt(np.mean(b**2))
    u_ref = np.mean(sR / np.sqrt(labs) / assigned)
    assert est.u_bias == pytest.approx(math.hypot(rms, u_ref), rel=1e-12)
    t = abs(b.mean()) / (b.std(ddof=1) / 2)
    assert est.significant == (t > stats.t.ppf(0.975, 3))  # scipy t quantile


def test_tr537_style_combination_from_memory() -> None:
    # TR 537 worked example for ammonium in water (values recalled from memory: u(Rw) 1.67 %, RMS_bias 2.26 %,
    # u(Cref) 1.18 %, U = 6.1 %)  # from memory
    u_rw, rms, u_ref = 0.0167, 0.0226, 0.0118
    est = bias._several([rms, -rms], [u_ref, u_ref], "rounds", "", True)
    assert est.u_bias == pytest.approx(0.0255, abs=5e-5)  # from memory: 2.55 %
    assert 2 * math.hypot(u_rw, est.u_bias) == pytest.approx(0.061, abs=5e-4)  # from memory: U = 6.1 %


def test_spikes() -> None:
    # TR 537 5.3: b_i = R_i - 1, u(Cref) = sqrt(u_conc^2 + u_vol^2); numpy recomputation
    rec = [0.95, 1.03, 0.98, 0.97, 1.01]
    est = bias.spikes(rec, 0.012, 0.005)
    rms = math.sqrt(np.mean((np.array(rec) - 1) ** 2))
    assert est.u_bias == pytest.approx(math.sqrt(rms**2 + 0.012**2 + 0.005**2), rel=1e-12)


def test_correction_choice() -> None:
    block = ("    bias:\n      relative: true\n      correct: {c}\n      material:\n"
             "        certified: {{value: 10.0, expanded: 0.2, k: 2}}\n        results: [10.31, 10.18, 10.42, 10.25]")
    included = load_budget_text(budget_with(block.format(c="false")))
    corrected = load_budget_text(budget_with(block.format(c="true")))
    b = np.mean([10.31, 10.18, 10.42, 10.25]) / 10.0 - 1
    assert included.quantities["F"].value == 1.0
    assert any("significant" in w for w in included.warnings)
    assert corrected.quantities["F"].value == pytest.approx(1 / (1 + b))
    s = np.std([10.31, 10.18, 10.42, 10.25], ddof=1) / 10.0
    u_rel = math.sqrt(s**2 / 4 + 0.01**2)
    assert corrected.quantities["F"].standard_uncertainty == pytest.approx(u_rel / (1 + b), rel=1e-9)
    assert included.quantities["F"].standard_uncertainty == pytest.approx(math.sqrt(u_rel**2 + b**2), rel=1e-9)


def test_example_budget_combines_rw_and_bias() -> None:
    # u_c = sqrt(u(Rw)^2 + u(bias)^2) relative (TR 537 section 3; ISO 11352 clause 10)
    b = load_budget("budgets/arsenic-top-down.yaml")
    g = propagate(b)
    rw, bi = b.quantities["F_Rw"].standard_uncertainty, b.quantities["F_bias"].standard_uncertainty
    assert g.standard_uncertainty / g.value == pytest.approx(math.hypot(rw, bi), rel=1e-12)


def test_improve_offers_correction_only_for_a_significant_bias() -> None:
    block = {"relative": True, "material": {"certified": {"value": 10.0, "expanded": 0.2, "k": 2.0},
                                            "results": [10.31, 10.18, 10.42, 10.25]}}
    assert [label for label, _ in bias.actions({"bias": block})] == [
        "correct the results for the bias (correct: true)"]
    close = {**block, "material": {**block["material"], "results": [10.01, 9.98, 10.03, 9.99]}}
    assert bias.actions({"bias": close}) == []


def test_control_series_from_an_xlsx_column(tmp_path) -> None:
    import pandas as pd

    values = [5.01, 4.87, 5.12, 4.95, 5.20, 4.91]
    pd.DataFrame({"run": [f"r{i}" for i in range(6)], "As": values}).to_excel(tmp_path / "qc.xlsx", index=False)
    text = budget_with("    reproducibility:\n      control: {file: qc.xlsx, column: As, run_column: run}\n"
                       "      unit: ug/L")
    path = tmp_path / "b.yaml"
    path.write_text(text.replace("model: 'y = x * F'", "model: 'y = x + F'"))
    q = load_budget(path).quantities["F"]
    assert q.standard_uncertainty == pytest.approx(np.std(values, ddof=1), rel=1e-12)  # numpy recomputation
    assert q.dof == 5


def test_data_file_links_may_not_leave_the_budget_folder(tmp_path) -> None:
    outside = tmp_path / "outside.csv"
    outside.write_text("As\n1.0\n2.0\n")
    folder = tmp_path / "budgets"
    folder.mkdir()
    (folder / "qc.csv").symlink_to(outside)
    path = folder / "b.yaml"
    path.write_text(budget_with("    reproducibility:\n      control: {file: qc.csv, column: As}"))
    with pytest.raises(BudgetErrors) as info:
        load_budget(path)
    assert "data file 'qc.csv' must be a path inside the budget's folder" in str(info.value)


def test_json_carries_the_models_numbers() -> None:
    import json

    from typer.testing import CliRunner

    from ucalc.cli import app

    res = CliRunner().invoke(app, ["run", "budgets/arsenic-top-down.yaml", "-f", "json"])
    assert res.exit_code == 0, res.output
    models = json.loads(res.stdout)["input_models"]
    assigned = np.array([5.12, 9.80, 2.45, 7.30, 12.6, 10.0])
    result = np.array([5.31, 9.55, 2.58, 7.41, 12.2, 10.21])
    rms = math.sqrt(np.mean(((result - assigned) / assigned) ** 2))  # TR 537 5.2, numpy recomputation
    assert models["F_bias"]["parts"][0][1] == pytest.approx(rms, rel=1e-12)
    assert models["F_bias"]["significant"] is False
    assert [s["dof"] for s in models["F_Rw"]["sources"]][0] == 39.0


def test_absolute_correction_is_negative_without_a_slip_warning() -> None:
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: 'ug/L'}\nmodel: 'y = x + d'\n"
            "inputs:\n  x: {value: 5.0, unit: ug/L}\n  d:\n    unit: ug/L\n    bias:\n      correct: true\n"
            "      material:\n        certified: {value: 10.0, expanded: 0.2, k: 2}\n"
            "        results: [10.31, 10.18, 10.42, 10.25]\n")
    b = load_budget_text(text)
    assert b.quantities["d"].value == pytest.approx(-(np.mean([10.31, 10.18, 10.42, 10.25]) - 10.0))
    assert not any("negative" in w for w in b.warnings)
