"""Units: dimensional checks and conversion to the measurand's unit (pint as the reference for factors)."""

from __future__ import annotations

import pytest

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.errors import BudgetErrors


def budget(model: str, unit: str, inputs: str) -> str:
    return f"ucalc: 1\ntitle: t\nmeasurand: {{symbol: y, unit: '{unit}'}}\nmodel: |\n  {model}\ninputs:\n{inputs}\n"


MASS_VOLUME = ("  m: {value: 100.28, unit: mg, components: [{name: a, standard: 0.05}]}\n"
               "  V: {value: 100, unit: mL, components: [{name: b, standard: 0.07}]}")


def test_mg_per_ml_is_converted_to_mg_per_l() -> None:
    # 1 mg/mL = 1000 mg/L (SI definition of the litre)  # common practice
    r = propagate(load_budget_text(budget("y = m / V", "mg/L", MASS_VOLUME)))
    assert r.value == pytest.approx(1002.8, rel=1e-12)
    assert r.contributions[0].sensitivity == pytest.approx(-10.028, rel=1e-12) or \
        r.contributions[1].sensitivity == pytest.approx(-10.028, rel=1e-12)


def test_compatible_units_are_scaled_inside_sums() -> None:
    inputs = ("  a: {value: 1, unit: g, components: [{name: s, standard: 0.001}]}\n"
              "  b: {value: 250, unit: mg, components: [{name: s, standard: 0.1}]}")
    r = propagate(load_budget_text(budget("y = a + b", "g", inputs)))
    assert r.value == pytest.approx(1.25, rel=1e-12)
    assert r.standard_uncertainty == pytest.approx((0.001**2 + 0.0001**2) ** 0.5, rel=1e-12)


def test_unit_mismatch_names_the_model_line() -> None:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("y = m + V", "mg", MASS_VOLUME), "b.yaml")
    assert str(info.value) == "b.yaml:5:7: model line 'y': unit mismatch: cannot add 'mL' to 'mg'"


def test_result_unit_must_match_measurand() -> None:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("y = m / V", "mg", MASS_VOLUME), "b.yaml")
    assert "cannot be expressed in the measurand's unit 'mg'" in str(info.value)
    assert str(info.value).startswith("b.yaml:5:3: model line 'y'")


def test_function_arguments_must_be_dimensionless() -> None:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget("y = log(m)", "", MASS_VOLUME))
    assert "the argument of log() must be dimensionless" in str(info.value)


def test_percent_is_a_dimensionless_fraction() -> None:
    inputs = ("  w: {value: 99.5, unit: '%', components: [{name: s, standard: 0.1}]}\n"
              "  m: {value: 10, unit: mg, components: [{name: s, standard: 0.01}]}")
    r = propagate(load_budget_text(budget("y = w * m", "mg", inputs)))
    assert r.value == pytest.approx(9.95, rel=1e-12)


def test_celsius_is_a_temperature_difference() -> None:
    # V(t) = V20 (1 + gamma (t - t20)) with t in °C and gamma in 1/°C: the expansion of a volume (CG4 A1.4)
    inputs = ("  V20: {value: 100, unit: mL, components: [{name: s, standard: 0.04}]}\n"
              "  gamma: {value: 2.1e-4, unit: 1/°C}\n"
              "  t: {value: 24, unit: °C, components: [{name: s, half_width: 1, distribution: rectangular}]}\n"
              "  t20: {value: 20, unit: degC}")
    r = propagate(load_budget_text(budget("y = V20 * (1 + gamma * (t - t20))", "mL", inputs)))
    assert r.value == pytest.approx(100 * (1 + 2.1e-4 * 4), rel=1e-12)
    t_row = next(c for c in r.contributions if c.input == "t")
    assert t_row.sensitivity == pytest.approx(100 * 2.1e-4, rel=1e-12)  # mL per K (= per °C difference)


T_INPUTS = ("  T_c: {value: 25, unit: degC, components: [{name: s, standard: 0.1}]}\n"
            "  T_c0: {value: 20, unit: degC}\n"
            "  T_k: {value: 293.15, unit: K, components: [{name: s, standard: 0.1}]}\n"
            "  T_f: {value: 68, unit: degF}\n"
            "  d_k: {value: 0.05, unit: K}")


@pytest.mark.parametrize("model", ["y = T_c - T_k", "y = T_k + T_c", "y = T_c - T_f", "y = T_f - T_k",
                                   "y = 2 * (T_c - T_k)"])
def test_mixed_temperature_scales_are_refused(model: str) -> None:
    # 25 °C - 293.15 K is 5 K, not -268.15: the Celsius zero is 273.15 K (SI Brochure 2.3.1)  # common practice
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(budget(model, "K", T_INPUTS))
    message = str(info.value)
    assert "model line 'y'" in message and "temperature in" in message and "one scale" in message


def test_differences_within_one_scale_stay_allowed() -> None:
    # a difference of two Celsius temperatures is a temperature difference, equal in °C and K (SI Brochure 2.3.1)
    r = propagate(load_budget_text(budget("y = T_c - T_c0 + d_k", "K", T_INPUTS)))
    assert r.value == pytest.approx(5.05, rel=1e-12)
