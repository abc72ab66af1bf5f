"""The Python interface (docs/python-api.md), checked against the `uncertainties` package and scipy."""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from uncertainties import ufloat

import ucalc

from .conftest import ROOT

U_REP = 0.04  # relative standard uncertainty of x's repeatability, 9 dof
U_CAL = 0.03  # absolute standard uncertainty of x's calibration (ug/L), infinite dof
HALF_F = 0.05  # half-width of the dilution factor's rectangular distribution


def diluted(x: float = 2.5) -> dict[str, Any]:
    return {
        "ucalc": 1, "title": "diluted sample", "measurand": {"symbol": "c", "unit": "ug/L"}, "model": "c = x * f",
        "inputs": {
            "x": {"value": x, "unit": "ug/L",
                  "components": [{"name": "rep", "standard": U_REP, "dof": 9, "relative": True},
                                 {"name": "cal", "standard": U_CAL}]},
            "f": {"value": 10, "components": [{"name": "dil", "half_width": HALF_F, "distribution": "rectangular"}]},
        },
    }


def oracle(x: float) -> tuple[Any, float]:
    """The same model with the `uncertainties` package, and nu_eff by Welch-Satterthwaite (JCGM 100 G.2b)."""
    u_rep, u_f = U_REP * x, HALF_F / math.sqrt(3)  # rectangular: a/sqrt(3) (JCGM 100 4.3.7)
    xs, fs = ufloat(x, math.hypot(u_rep, U_CAL)), ufloat(10, u_f)
    y = xs * fs
    nu = y.std_dev**4 / ((10 * u_rep) ** 4 / 9)  # only the repeatability term has finite dof
    return y, nu


def test_the_notebook_example_in_the_docs_runs(monkeypatch: pytest.MonkeyPatch, capsys: Any) -> None:
    text = (ROOT / "docs" / "python-api.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.+?)```", text, flags=re.S)
    assert len(blocks) >= 3
    monkeypatch.chdir(ROOT)
    for block in blocks:
        exec(compile(block, "docs/python-api.md", "exec"), {})  # noqa: S102 - the documentation's own example
    out = capsys.readouterr().out
    assert "1.250±0.052 ug" in out  # 0.05 L x (25.0 ± 1.05) ug/L, uncertainties' own formatting


def test_propagate_matches_the_uncertainties_package_and_the_t_quantile() -> None:
    result = ucalc.Budget.from_dict(diluted()).propagate()
    y, nu = oracle(2.5)
    assert result.value == pytest.approx(y.nominal_value, rel=1e-12)
    assert result.standard_uncertainty == pytest.approx(y.std_dev, rel=1e-12)
    assert result.effective_dof == pytest.approx(nu, rel=1e-9)
    k = stats.t.ppf(0.975, math.floor(nu))  # JCGM 100 G.3.4 with nu_eff truncated (G.6.4)
    assert result.expanded_uncertainty == pytest.approx(k * y.std_dev, rel=1e-9)


def test_as_ufloat_carries_u_c_into_further_calculations() -> None:
    result = ucalc.load(ROOT / "tests" / "reference" / "jcgm100_h1.yaml").propagate()
    number = result.as_ufloat()
    assert (number.nominal_value, number.std_dev) == (result.value, result.standard_uncertainty)
    doubled = 2 * number - number / 2  # 1.5 y, u = 1.5 u_c (rules of the uncertainties package)
    assert doubled.std_dev == pytest.approx(1.5 * result.standard_uncertainty, rel=1e-12)


def test_to_frame_gives_the_sensitivities_the_uncertainties_package_finds() -> None:
    frame = ucalc.Budget.from_dict(diluted()).propagate().to_frame()
    xs, fs = ufloat(2.5, 0.1, tag="x"), ufloat(10, 0.03, tag="f")
    y = xs * fs
    assert frame.loc["x", "sensitivity"] == pytest.approx(y.derivatives[xs], rel=1e-12)
    assert frame.loc["f", "sensitivity"] == pytest.approx(y.derivatives[fs], rel=1e-12)
    assert list(frame.index) == ["x", "f"]  # by decreasing contribution: 10 * 0.104 against 2.5 * 0.029


def test_simulate_agrees_with_the_gum_for_a_nearly_linear_model() -> None:
    mc = ucalc.Budget.from_dict(diluted()).simulate(trials=200_000, seed=3)
    # a Type A component with 9 dof is drawn from a scaled t distribution, variance 9/7 s^2 (JCGM 101 6.4.9.7)
    u_x = math.sqrt((U_REP * 2.5) ** 2 * 9 / 7 + U_CAL**2)
    u_f = HALF_F / math.sqrt(3)
    # u of a product of independent inputs: u^2 = f^2 u_x^2 + x^2 u_f^2 + u_x^2 u_f^2 (Goodman 1960, exact)
    u_exact = math.sqrt((10 * u_x) ** 2 + (2.5 * u_f) ** 2 + (u_x * u_f) ** 2)
    assert mc.standard_uncertainty == pytest.approx(u_exact, rel=0.01)  # 2e5 trials: about 0.3 % scatter
    assert mc.validation is not None and mc.validation.digits == 2
    row = mc.to_frame().iloc[0]
    assert (row["interval_low"], row["interval_high"]) == mc.interval


def test_batch_gives_each_row_the_uncertainties_package_result() -> None:
    samples = pd.DataFrame({"x": [1.2, 2.5, 4.8], "sample": ["S1", "S2", "S3"]}, index=[7, 8, 9])
    out = ucalc.batch(ucalc.Budget.from_dict(diluted()), samples, limit=40.0)
    assert list(out.index) == [7, 8, 9] and list(out["sample"]) == ["S1", "S2", "S3"]
    for x, (_, row) in zip([1.2, 2.5, 4.8], out.iterrows(), strict=True):
        y, nu = oracle(x)
        assert row["value"] == pytest.approx(y.nominal_value, rel=1e-12)
        assert row["u"] == pytest.approx(y.std_dev, rel=1e-12)
        if x == 2.5:  # the budget's own estimate: the row's dof are the budget's
            assert row["k"] == pytest.approx(stats.t.ppf(0.975, math.floor(nu)), rel=1e-9)
    # 48 ± 2.8 against an upper limit of 40: above, the simple rule says it does not conform  # common practice
    assert list(out["decision"]) == ["conforms", "conforms", "does not conform"]
    assert np.isfinite(out["p_conformance"]).all()


def test_results_display_as_tables_in_notebooks() -> None:
    result = ucalc.Budget.from_dict(diluted()).propagate()
    html = result._repr_html_()
    # U = 2.33 rounds to 2.3 and y to the same place (JCGM 100 7.2.6)
    assert html.startswith("<p>GUM (JCGM 100): c = 25.0 ug/L, U = 2.3 ug/L (k = 2.23, coverage probability about 95 %)")
    assert html.count("<tr>") == 1 + 2 + 1  # heading, two inputs, the result row


def test_a_bad_budget_given_as_data_names_the_input() -> None:
    data = diluted()
    data["inputs"]["f"]["components"][0]["half_width"] = -1
    with pytest.raises(ucalc.BudgetErrors) as info:
        ucalc.Budget.from_dict(data, source="notebook")
    assert str(info.value) == "notebook: input 'f': components[0].half_width: must be greater than 0 (got -1)"


def test_data_that_is_not_plain_is_refused() -> None:
    data = diluted()
    data["inputs"]["f"]["value"] = object()
    with pytest.raises(ucalc.BudgetErrors) as info:
        ucalc.Budget.from_dict(data)
    assert str(info.value) == ("<dict>: budget data must be mappings, lists, text and numbers "
                               "(Object of type object is not JSON serializable)")


def test_every_public_name_resolves() -> None:
    assert sorted(ucalc.__all__) == sorted(set(ucalc.__all__))
    for name in ucalc.__all__:
        assert getattr(ucalc, name) is not None
