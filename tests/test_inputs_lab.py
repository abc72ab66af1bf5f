"""Glassware, balance, certificate, replicates, recovery, dilution and molar mass input models."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate
from ucalc.errors import BudgetErrors


def one_input(spec: str, unit: str = "") -> str:
    return (f"ucalc: 1\ntitle: t\nmeasurand: {{symbol: y, unit: '{unit}'}}\nmodel: 'y = x'\n"
            f"inputs:\n  x:\n{spec}\n")


def quantity(spec: str, unit: str = ""):
    return load_budget_text(one_input(spec, unit)).quantities["x"]


def errors(spec: str, unit: str = "") -> str:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(one_input(spec, unit), "g.yaml")
    return str(info.value)


# ---- glassware -------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("item", "nominal", "klass", "tolerance"),
    [
        # ISO 648 one-mark pipettes, class A and B (B = 2 x A)  # from memory
        ("pipette", 1, "A", 0.008), ("pipette", 10, "A", 0.020), ("pipette", 25, "A", 0.030),
        ("pipette", 10, "B", 0.040),
        # ISO 1042 one-mark flasks  # from memory
        ("flask", 10, "A", 0.025), ("flask", 100, "A", 0.10), ("flask", 1000, "A", 0.40), ("flask", 100, "B", 0.20),
        # ISO 385 burettes  # from memory
        ("burette", 50, "A", 0.05),
    ],
)
def test_tolerance_tables(item: str, nominal: float, klass: str, tolerance: float) -> None:
    q = quantity(f"    unit: mL\n    glassware: {{item: {item}, nominal: {nominal}, class: {klass}}}", "mL")
    # triangular by default (CG4 A1.4): u = tolerance / sqrt(6)
    assert q.standard_uncertainty == pytest.approx(tolerance / math.sqrt(6), rel=1e-12)
    assert q.value == nominal


def test_flask_as_in_cg4_a1() -> None:
    # CG4 A1.4: 100 mL flask ±0.1 mL triangular -> 0.04 mL; temperature 100 mL x 4 K x 2.1e-4 /K = ±0.084 mL,
    # rectangular -> 0.05 mL; repeatability 0.02 mL; combined 0.07 mL (0.066)  # from memory
    q = quantity("    glassware: {item: flask, nominal: 100, class: A, temperature_span: 4, repeatability: 0.02}",
                 "mL")
    parts = {c.name: c.standard_uncertainty for c in q.components}
    assert round(parts["tolerance"], 2) == 0.04
    assert round(parts["temperature"], 3) == 0.048
    assert round(q.standard_uncertainty, 3) == 0.066


def test_explicit_tolerance_and_other_units() -> None:
    q = quantity("    unit: L\n    glassware: {item: flask, nominal: 0.1, class: A}", "L")
    assert q.standard_uncertainty == pytest.approx(0.0001 / math.sqrt(6), rel=1e-12)  # 0.10 mL in L
    q = quantity("    glassware: {item: flask, nominal: 100, tolerance: 0.2, distribution: rectangular}", "mL")
    assert q.standard_uncertainty == pytest.approx(0.2 / math.sqrt(3), rel=1e-12)


def test_piston_pipette_systematic_and_random() -> None:
    # ISO 8655-2 at 1000 µL: systematic ±0.8 %, random 0.3 %  # from memory
    q = quantity("    unit: uL\n    glassware: {item: piston_pipette, nominal: 1000, class: A}", "uL")
    expected = math.hypot(8.0 / math.sqrt(3), 3.0)
    assert q.standard_uncertainty == pytest.approx(expected, rel=1e-12)


def test_glassware_errors() -> None:
    assert "no ISO 1042 tolerance for a 30 mL flask" in errors(
        "    glassware: {item: flask, nominal: 30, class: A}", "mL")
    assert "give either 'class' or 'tolerance'" in errors(
        "    glassware: {item: flask, nominal: 100, class: A, tolerance: 0.1}", "mL")
    assert "must be greater than 0" in errors("    glassware: {item: flask, nominal: -100, class: A}", "mL")


# ---- balance, certificate ----------------------------------------------------------------------------------


def test_balance_by_difference_counts_linearity_twice() -> None:
    # CG4 A1.4 counts the linearity contribution twice for a mass by difference  # from memory
    q = quantity("    unit: mg\n    balance: {by_difference: {tare: 1500.00, gross: 1600.28}, linearity: 0.05,"
                 " readability: 0.01, expanded: 0.04, k: 2}", "mg")
    assert q.value == pytest.approx(100.28, abs=1e-9)
    expected = math.sqrt(0.02**2 + 2 * (0.05 / math.sqrt(3)) ** 2 + 2 * (0.005 / math.sqrt(3)) ** 2)
    assert q.standard_uncertainty == pytest.approx(expected, rel=1e-12)


def test_balance_single_reading() -> None:
    q = quantity("    unit: g\n    balance: {reading: 0.2503, readability: 0.0001}", "g")
    assert q.standard_uncertainty == pytest.approx(0.00005 / math.sqrt(3), rel=1e-12)  # JCGM 100 F.2.2.1
    assert "give the 'reading'" in errors("    balance: {readability: 0.0001}")


def test_certificate_forms() -> None:
    q = quantity("    unit: mg/L\n    certificate: {value: 1000, expanded: 2, k: 2}", "mg/L")
    assert q.standard_uncertainty == 1.0
    q = quantity("    certificate: {value: 0.9999, half_width: 0.0001}")
    assert q.standard_uncertainty == pytest.approx(0.0001 / math.sqrt(3), rel=1e-12)  # CG4 A1: rectangular


# ---- replicates ------------------------------------------------------------------------------------------

VALUES = [10.12, 10.31, 10.05, 10.22, 10.18]


def test_replicates_type_a_against_numpy() -> None:
    q = quantity(f"    replicates: {{values: {VALUES}}}")
    assert q.value == pytest.approx(np.mean(VALUES), rel=1e-15)
    assert q.standard_uncertainty == pytest.approx(np.std(VALUES, ddof=1) / math.sqrt(5), rel=1e-12)
    assert q.dof == 4 and q.kind == "A"


def test_pooled_repeatability() -> None:
    q = quantity("    replicates: {mean: 10.2, pooled: {s: 0.15, dof: 24, n: 3}}")
    assert q.standard_uncertainty == pytest.approx(0.15 / math.sqrt(3), rel=1e-12)
    assert q.dof == 24
    q = quantity(f"    replicates: {{values: {VALUES}, pooled: {{s: 0.01, dof: 30, relative: true}}}}")
    assert q.standard_uncertainty == pytest.approx(0.01 * np.mean(VALUES) / math.sqrt(5), rel=1e-12)


def test_replicates_errors() -> None:
    assert "at least 2 replicate values" in errors("    replicates: {values: [1.0]}")
    assert "identical" in errors("    replicates: {values: [1.0, 1.0, 1.0]}")


# ---- recovery ----------------------------------------------------------------------------------------------

FOUND = [9.42, 9.51, 9.38, 9.47]


def test_recovery_hand_worked() -> None:
    # hand-worked: mean 9.445, s = 0.05686, n = 4; reference 10.0 ± 0.2 (k = 2) -> u_ref = 0.1
    # R = 0.9445; u(R) = R sqrt((s/2/9.445)^2 + (0.1/10)^2) = 0.00986; t = 0.0555/0.00986 = 5.63 > t_crit: significant
    text = f"    recovery: {{found: {FOUND}, reference: {{value: 10.0, expanded: 0.2, k: 2}}, correct: true}}"
    budget = load_budget_text(one_input(text))
    q = budget.quantities["x"]
    s = np.std(FOUND, ddof=1)
    u = 0.9445 * math.sqrt((s / 2 / 9.445) ** 2 + 0.01**2)
    assert q.value == pytest.approx(0.9445, rel=1e-12)
    assert q.standard_uncertainty == pytest.approx(u, rel=1e-10)
    assert round(u, 5) == 0.00986
    working = " ".join(q.working)
    assert "differs significantly from 1" in working
    dof = u**4 / ((0.9445 * s / 2 / 9.445) ** 4 / 3)  # Welch-Satterthwaite, reference term with infinite dof
    t_crit = stats.t.ppf(0.975, dof)
    assert f"t_crit = {t_crit:.3g}" in working


def test_recovery_not_corrected_adds_bias() -> None:
    text = f"    recovery: {{found: {FOUND}, reference: {{value: 10.0, expanded: 0.2, k: 2}}, correct: false}}"
    q = quantity(text)
    assert q.value == 1.0
    s = np.std(FOUND, ddof=1)
    u_r = 0.9445 * math.sqrt((s / 2 / 9.445) ** 2 + 0.01**2)
    assert q.standard_uncertainty == pytest.approx(math.hypot(u_r, (1 - 0.9445) / 2), rel=1e-10)


def test_recovery_not_significant() -> None:
    q = quantity("    recovery: {found: [9.9, 10.1, 10.05, 9.95], reference: {value: 10.0, expanded: 0.2, k: 2}}")
    assert "does not differ significantly" in " ".join(q.working)


# ---- dilution --------------------------------------------------------------------------------------------


def test_dilution_keeps_every_item_as_its_own_input() -> None:
    text = """\
ucalc: 1
title: dilution
measurand: {symbol: y}
model: 'y = D'
inputs:
  D:
    dilution:
      - aliquot: {glassware: {item: pipette, nominal: 10, class: A}}
        final: {glassware: {item: flask, nominal: 100, class: A}}
      - aliquot: {unit: g, balance: {reading: 1.0012, readability: 0.0001}}
        final: {unit: g, balance: {reading: 50.034, readability: 0.001}}
"""
    budget = load_budget_text(text)
    result = propagate(budget)
    names = {c.input for c in result.contributions}
    assert names == {"D.s1_aliquot", "D.s1_final", "D.s2_aliquot", "D.s2_final"}
    assert result.value == pytest.approx(100 / 10 * 50.034 / 1.0012, rel=1e-12)
    rel = [0.020 / math.sqrt(6) / 10, 0.10 / math.sqrt(6) / 100, 0.00005 / math.sqrt(3) / 1.0012,
           0.0005 / math.sqrt(3) / 50.034]
    # a product of ratios: relative uncertainties add in quadrature (JCGM 100 5.1.6)
    assert result.standard_uncertainty == pytest.approx(result.value * math.sqrt(sum(r * r for r in rel)), rel=1e-10)


def test_dilution_step_needs_same_kind() -> None:
    spec = ("    dilution:\n      - aliquot: {glassware: {item: pipette, nominal: 10, class: A}}\n"
            "        final: {unit: g, balance: {reading: 50.0, readability: 0.001}}")
    assert "both be volumes or both masses" in errors(spec)


# ---- molar mass --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("formula", ["KHC8H4O4", "Pb(NO3)2", "CdCl2", "K2Cr2O7", "NaCl", "CuSO4(H2O)5"])
def test_molar_mass_against_molmass(formula: str) -> None:
    # molmass (an independent registry library) uses its own atomic-weight table; the two must agree within
    # the interval our abridged standard atomic weights span
    from molmass import Formula

    budget = load_budget_text(one_input(f"    molar_mass: '{formula}'", "g/mol"))
    result = propagate(budget)
    span = sum(abs(c.sensitivity) * budget.quantities[c.input].components[0].distribution.scale
               for c in result.contributions if budget.quantities[c.input].components)
    assert abs(result.value - Formula(formula).mass) <= span
    assert all(budget.quantities[c.input].unit == "g/mol" for c in result.contributions)


def test_molar_mass_of_khp_as_in_cg4_a2() -> None:
    # CG4 A2.4: M(KHP) = 204.2212 g/mol, u = 0.0038 g/mol from C 12.0107(8), H 1.00794(7), O 15.9994(3),
    # K 39.0983(1), each a rectangular half-width  # from memory
    spec = """    molar_mass:
      formula: KHC8H4O4
      atomic_weights:
        C: {value: 12.0107, half_width: 0.0008}
        H: {value: 1.00794, half_width: 0.00007}
        O: {value: 15.9994, half_width: 0.0003}
        K: {value: 39.0983, half_width: 0.0001}"""
    result = propagate(load_budget_text(one_input(spec, "g/mol")))
    assert round(result.value, 4) == 204.2212
    assert round(result.standard_uncertainty, 4) == 0.0038


def test_shared_element_cancels_in_a_mass_fraction() -> None:
    # f = M(Pb)/M(Pb(NO3)2): the lead atomic weight appears in both; with A = Ar(Pb), B = 2 Ar(N) + 6 Ar(O),
    # df/dA = B / (A + B)^2 exactly (quotient rule), far smaller than treating the two masses as independent
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: f}\nmodel: |\n  f = M_Pb / M_salt\n"
            "inputs:\n  M_Pb: {molar_mass: Pb}\n  M_salt: {molar_mass: Pb(NO3)2}\n")
    budget = load_budget_text(text)
    result = propagate(budget)
    a, b = 207.2, 2 * 14.007 + 6 * 15.999  # periodictable's abridged values
    row = next(c for c in result.contributions if c.input == "Ar.Pb")
    assert row.sensitivity == pytest.approx(b / (a + b) ** 2, rel=1e-9)


def test_molar_mass_errors() -> None:
    assert "cannot be read" in errors("    molar_mass: 'Xx2O'", "g/mol")
