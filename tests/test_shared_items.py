"""Shared items: one pipette, flask or certificate used in several places, against a hand-written GUM with r = 1.

Reference: JCGM 100 5.2.2 written out by hand for the model with the correlation coefficient between the uses
(r = 1 where every component is shared; r = u_shared^2 / (u_i u_j) where a filling repeatability is drawn anew
at each use).
"""

from __future__ import annotations

import math

import pytest

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.errors import BudgetErrors
from ucalc.reports.jsonout import gum_json

# ISO 648 class A 10 mL one-mark pipette: ±0.020 mL; ISO 1042 class A 100 mL flask: ±0.10 mL  # common practice
U_PIP = 0.020 / math.sqrt(6)  # triangular, as CG4 A1.4
U_FLASK = 0.10 / math.sqrt(6)


def two_step(pipette: str, uses: bool = True) -> str:
    aliquot = "{use: pip10}" if uses else "{glassware: " + pipette + "}"
    return f"""\
ucalc: 1
title: two steps with one pipette
measurand: {{symbol: D}}
model: 'D = F'
items:
  pip10: {{glassware: {pipette}}}
  flask100: {{glassware: {{item: flask, nominal: 100, class: A}}}}
inputs:
  F:
    dilution:
      - aliquot: {aliquot}
        final: {{use: flask100}}
      - aliquot: {aliquot}
        final: {{use: flask100}}
"""


def hand_gum(u_pip: float, u_flask: float, r_pip: float, r_flask: float) -> float:
    """D = (F1/A1)(F2/A2) at A = 10, F = 100: relative u^2 with the uses' correlation written out."""
    ra, rf = u_pip / 10, u_flask / 100
    return 100 * math.sqrt(2 * ra**2 + 2 * rf**2 + 2 * r_pip * ra**2 + 2 * r_flask * rf**2)


def test_one_pipette_used_twice_has_r_one() -> None:
    budget = load_budget_text(two_step("{item: pipette, nominal: 10, class: A}"))
    assert budget.correlation("F.s1_aliquot", "F.s2_aliquot") == pytest.approx(1.0)
    assert budget.correlation("F.s1_final", "F.s2_final") == pytest.approx(1.0)
    assert budget.correlation("F.s1_aliquot", "F.s1_final") == 0.0
    result = propagate(budget)
    assert result.value == pytest.approx(100.0)
    assert result.standard_uncertainty == pytest.approx(hand_gum(U_PIP, U_FLASK, 1.0, 1.0), rel=1e-10)
    before = propagate(load_budget_text(two_step("{item: pipette, nominal: 10, class: A}", uses=False)
                                        .replace("{use: flask100}", "{glassware: {item: flask, nominal: 100, "
                                                 "class: A}}")))
    assert before.standard_uncertainty == pytest.approx(hand_gum(U_PIP, U_FLASK, 0.0, 0.0), rel=1e-10)
    origins = {tuple(c["between"]): c["origin"] for c in gum_json(budget, result)["correlations"]}
    assert origins[("F.s1_aliquot", "F.s2_aliquot")] == "shared item 'pip10'"


def test_filling_repeatability_is_not_shared() -> None:
    budget = load_budget_text(two_step("{item: pipette, nominal: 10, class: A, repeatability: 0.004}"))
    u_use = math.hypot(U_PIP, 0.004)
    r = U_PIP**2 / u_use**2
    assert budget.correlation("F.s1_aliquot", "F.s2_aliquot") == pytest.approx(r, rel=1e-12)
    assert propagate(budget).standard_uncertainty == pytest.approx(hand_gum(u_use, U_FLASK, r, 1.0), rel=1e-10)


def test_one_certificate_entered_twice_cancels_in_a_ratio() -> None:
    # K = R_cert / R_obs and R_b = K * R_blend with R_x = R_cert: y = R_x / R_cert has u = 0 with r = 1
    text = """\
ucalc: 1
title: one certificate, two inputs
measurand: {symbol: y}
model: 'y = R_x / R_cert * R_obs'
items:
  R_nat: {certificate: {value: 3.1258, expanded: 0.0070, k: 2}}
inputs:
  R_x: {use: R_nat, description: ratio of the natural material}
  R_cert: {use: R_nat}
  R_obs: {value: 1.0, components: [{name: reading, standard: 0.001}]}
"""
    result = propagate(load_budget_text(text))
    assert result.standard_uncertainty == pytest.approx(0.001, rel=1e-9)  # only R_obs remains (hand GUM)


def test_a_balance_item_takes_the_reading_at_each_use() -> None:
    text = """\
ucalc: 1
title: one balance, two weighings
measurand: {symbol: m, unit: g}
model: 'm = m1 + m2'
items:
  bal: {unit: g, balance: {expanded: 0.0002, k: 2, readability: 0.0001}}
inputs:
  m1: {use: bal, balance: {reading: 1.2}}
  m2: {use: bal, balance: {reading: 2.5}}
"""
    budget = load_budget_text(text)
    u_cal, u_read = 0.0001, 0.00005 / math.sqrt(3)
    u = math.hypot(u_cal, u_read)
    assert budget.correlation("m1", "m2") == pytest.approx(u_cal**2 / u**2, rel=1e-12)
    expected = math.sqrt(2 * u**2 + 2 * u_cal**2)  # hand GUM: the certificate term counts with r = 1
    assert propagate(budget).standard_uncertainty == pytest.approx(expected, rel=1e-10)


def test_unknown_and_unused_items() -> None:
    text = two_step("{item: pipette, nominal: 10, class: A}").replace("{use: pip10}", "{use: pip5}", 1)
    with pytest.raises(BudgetErrors, match="unknown item 'pip5'"):
        load_budget_text(text)
    unused = two_step("{item: pipette, nominal: 10, class: A}").replace(
        "items:\n", "items:\n  spare: {certificate: {value: 1.0, half_width: 0.1}}\n")
    assert "item 'spare' is declared but not used" in load_budget_text(unused).warnings
