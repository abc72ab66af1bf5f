"""Internal standardisation from raw count rates: ratios per reading, the line on ratios, IS recovery.

References: the ratio of each reading computed by hand and fitted with statsmodels OLS (the same line as
responses given as ratios); the recovery computed by hand; the 70-130 % window is common practice.
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate

# invented demo data: analyte and internal-standard count rates, two readings per standard
STANDARDS = [0.0, 1.0, 2.0, 5.0, 10.0]
ANALYTE = [[52.0, 48.0], [10480.0, 10390.0], [20770.0, 21020.0], [51900.0, 52600.0], [104100.0, 103200.0]]
IS = [[401200.0, 398900.0], [399500.0, 402300.0], [397800.0, 400100.0], [402000.0, 399000.0],
      [398400.0, 400900.0]]
SAMPLE = {"analyte": [30310.0, 30650.0, 30120.0], "internal_standard": [352100.0, 355300.0, 351000.0]}
BLANK = {"analyte": [61.0, 75.0, 58.0], "internal_standard": [398000.0, 401500.0, 399200.0]}


def text(window: str = "") -> str:
    return f"""\
ucalc: 1
title: internal standard
measurand: {{symbol: c, unit: ug/L}}
model: 'c = cal.sample - cal.blank'
inputs:
  cal:
    unit: ug/L
    calibration:
      standards: {STANDARDS}
      signals: {{analyte: {ANALYTE}, internal_standard: {IS}}}
      readings:
        sample: {SAMPLE}
        blank: {BLANK}{window}
"""


def test_line_on_per_reading_ratios_against_statsmodels() -> None:
    x = np.repeat(STANDARDS, 2)
    y = np.concatenate([np.array(a) / np.array(i) for a, i in zip(ANALYTE, IS, strict=True)])
    fit = sm.OLS(y, sm.add_constant(x)).fit()
    budget = load_budget_text(text())
    assert budget.quantities["cal.slope"].value == pytest.approx(fit.params[1], rel=1e-10)
    assert budget.quantities["cal.intercept"].standard_uncertainty == pytest.approx(fit.bse[0], rel=1e-9)
    ratio = np.mean(np.array(SAMPLE["analyte"]) / np.array(SAMPLE["internal_standard"]))  # mean of ratios
    assert budget.quantities["cal.sample"].value == pytest.approx((ratio - fit.params[0]) / fit.params[1], rel=1e-10)
    assert propagate(budget).value > 0


def test_recovery_against_the_standards_mean_and_its_window() -> None:
    reference = np.mean(np.concatenate(IS))
    expected = 100 * np.mean(SAMPLE["internal_standard"]) / reference
    budget = load_budget_text(text())
    details = budget.details["cal"]["predictions"]
    assert details["sample"]["is_recovery_percent"] == pytest.approx(expected, rel=1e-12)
    assert 70 <= expected <= 130  # inside the default window: no warning
    assert not any("recovery" in w for w in budget.warnings)
    narrow = load_budget_text(text("\n      is_recovery: [90, 110]"))
    assert any("recovery of reading 'sample'" in w and "88.2 %" in w for w in narrow.warnings)
    assert not any("reading 'blank'" in w for w in narrow.warnings)


def test_raw_signals_and_responses_are_not_mixed() -> None:
    from ucalc.errors import BudgetErrors

    with pytest.raises(BudgetErrors, match="readings must be given like the standards"):
        load_budget_text(text().replace(f"blank: {BLANK}", "blank: [0.0002]"))
