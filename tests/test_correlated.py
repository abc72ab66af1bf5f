"""Correlated inputs: JCGM 100:2008 example H.2 (simultaneous resistance and reactance measurement).

The five sets of observations of H.2 (Table H.2) give the means, their standard uncertainties and the
correlation coefficients (JCGM 100 5.2.3, C.3.6); the budget then propagates them with correlation terms.
"""

from __future__ import annotations

import numpy as np
import pytest

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate

# JCGM 100:2008 Table H.2  # from memory
V = [5.007, 4.994, 5.005, 4.990, 4.999]  # V
I_mA = [19.663, 19.639, 19.640, 19.685, 19.678]  # mA
PHI = [1.0456, 1.0438, 1.0468, 1.0428, 1.0433]  # rad

# JCGM 100:2008 Table H.3, approach 1: value and standard uncertainty in ohm  # from memory
EXPECTED = {
    "R": ("V / I * cos(phi)", 127.732, 0.071),
    "X": ("V / I * sin(phi)", 219.847, 0.295),
    "Z": ("V / I", 254.260, 0.236),
}


def _budget(symbol: str, expression: str) -> str:
    data = {"V": np.array(V), "I": np.array(I_mA), "phi": np.array(PHI)}
    units = {"V": "V", "I": "mA", "phi": ""}
    lines = [
        "ucalc: 1",
        f"title: JCGM 100 H.2, {symbol}",
        f"measurand: {{symbol: {symbol}, unit: ohm}}",
        f"model: '{symbol} = {expression}'",
        "coverage: {k: 2}",
        "inputs:",
    ]
    for name, x in data.items():
        u = x.std(ddof=1) / np.sqrt(len(x))
        lines.append(f"  {name}: {{value: {float(x.mean())!r}, unit: '{units[name]}', "
                     f"components: [{{name: mean of 5, standard: {float(u)!r}, dof: 4}}]}}")
    r = np.corrcoef([data["V"], data["I"], data["phi"]])
    lines.append("correlations:")
    for (a, b), (i, j) in zip([("V", "I"), ("V", "phi"), ("I", "phi")], [(0, 1), (0, 2), (1, 2)], strict=True):
        lines.append(f"  - {{between: [{a}, {b}], r: {float(r[i, j])!r}}}")
    return "\n".join(lines) + "\n"


def test_h2_correlation_coefficients() -> None:
    # JCGM 100:2008 H.2.3: r(V,I) = -0.36, r(V,phi) = 0.86, r(I,phi) = -0.65  # from memory
    r = np.corrcoef([V, I_mA, PHI])
    assert [round(r[0, 1], 2), round(r[0, 2], 2), round(r[1, 2], 2)] == [-0.36, 0.86, -0.65]


@pytest.mark.parametrize("symbol", list(EXPECTED))
def test_h2_values_and_uncertainties(symbol: str) -> None:
    expression, value, u = EXPECTED[symbol]
    result = propagate(load_budget_text(_budget(symbol, expression)))
    assert round(result.value, 3) == pytest.approx(value, abs=1e-9), "value to the printed 3 decimals"
    # within one unit of the last printed digit: H.3 prints u(X) = 0.295 where the exact value is 0.2956
    assert abs(result.standard_uncertainty - u) <= 1e-3
    assert result.correlation_variance != 0.0
