"""Coverage factors t_p(nu) against JCGM 100:2008 Table G.2."""

from __future__ import annotations

import math

import pytest

from ucalc.engines.gum import coverage_factor

INF = math.inf
# JCGM 100:2008 Table G.2, t_p(nu) for p = 68.27 %, 95 %, 95.45 %, 99 %  # from memory
TABLE_G2 = {
    1: (1.84, 12.71, 13.97, 63.66),
    2: (1.32, 4.30, 4.53, 9.92),
    3: (1.20, 3.18, 3.31, 5.84),
    4: (1.14, 2.78, 2.87, 4.60),
    5: (1.11, 2.57, 2.65, 4.03),
    6: (1.09, 2.45, 2.52, 3.71),
    8: (1.07, 2.31, 2.37, 3.36),
    10: (1.05, 2.23, 2.28, 3.17),
    16: (1.03, 2.12, 2.17, 2.92),
    20: (1.03, 2.09, 2.13, 2.85),
    50: (1.01, 2.01, 2.05, 2.68),
    100: (1.005, 1.984, 2.025, 2.626),
    INF: (1.000, 1.960, 2.000, 2.576),
}
PROBABILITIES = (0.6827, 0.95, 0.9545, 0.99)


@pytest.mark.parametrize("nu", list(TABLE_G2))
@pytest.mark.parametrize("column", range(4))
def test_table_g2(nu: float, column: int) -> None:
    printed = TABLE_G2[nu][column]
    decimals = 3 if nu in (100, INF) else 2  # the table prints three decimals for nu = 100 and infinity
    ours = coverage_factor(PROBABILITIES[column], nu)
    assert round(ours, decimals) == pytest.approx(printed, abs=1e-9), (nu, PROBABILITIES[column], ours)
