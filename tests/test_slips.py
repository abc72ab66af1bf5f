"""Warnings for likely slips: negative amounts from input models, relative components given in percent, a model
evaluated at the kink of abs()."""

from __future__ import annotations

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate

CALIBRATION = """ucalc: 1
title: t
measurand: {symbol: c, unit: ug/L}
model: 'c = c_meas'
inputs:
  c_meas:
    unit: ug/L
    calibration:
      standards: [0, 1, 2, 5, 10]
      responses: [0.101, 1.098, 2.103, 5.097, 10.102]
      sample: [0.05, 0.06]
"""


def test_negative_concentration_from_an_input_model_is_named() -> None:
    # a sample reading below the intercept predicts x0 = (y0 - a)/b < 0 (ISO 8466-1): a concentration cannot be
    # negative, so the input is named in a warning  # common practice
    budget = load_budget_text(CALIBRATION)
    assert budget.quantities["c_meas"].value < 0
    assert any("input 'c_meas'" in w and "negative concentration" in w for w in budget.warnings)


def test_relative_component_above_one_half_is_flagged() -> None:
    # relative components are fractions: 0.6 written for 0.6 % is a likely slip  # common practice
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: mg}\nmodel: 'y = m'\ninputs:\n"
            "  m: {value: 12, unit: mg, components: [{name: purity, standard: 0.6, relative: true}]}\n")
    budget = load_budget_text(text)
    assert any("relative component 'purity'" in w and "0.005" in w for w in budget.warnings)
    small = load_budget_text(text.replace("0.6", "0.006"))
    assert not any("relative component" in w for w in small.warnings)


def test_kink_of_abs_points_to_monte_carlo() -> None:
    # d|x|/dx does not exist at x = 0; the first-order GUM (JCGM 100 5.1.2) does not apply there, JCGM 101 does
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = abs(d)'\ninputs:\n"
            "  d: {value: 0, components: [{name: noise, standard: 0.1}]}\n")
    result = propagate(load_budget_text(text))
    assert any("kink" in n and "--method mc" in n for n in result.notes)
    assert not any("every input is exact" in n for n in result.notes)
    away = propagate(load_budget_text(text.replace("value: 0", "value: 1")))
    assert not any("kink" in n for n in away.notes)


def test_negative_value_written_by_the_user_is_not_flagged() -> None:
    # a blank correction stated directly may be negative; only values an input model derived are checked
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y, unit: ug/L}\nmodel: 'y = 5 * b'\ninputs:\n"
            "  b: {value: -0.02, unit: ug/L, components: [{name: s, standard: 0.01}]}\n")
    assert not any("negative" in w for w in load_budget_text(text).warnings)
