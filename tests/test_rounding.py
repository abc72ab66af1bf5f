"""Result statements: U to two significant digits and y to the same decimal place (JCGM 100 7.2.6)."""

from __future__ import annotations

import pytest

from ucalc.reports.common import result_line
from ucalc.reports.rounding import round_pair

# (y, U, digits) -> (y text, U text); rounding half away from zero on the decimal value  # common practice
CASES = [
    (1002.6997, 1.6387, 2, "1002.7", "1.6"),
    (9.8421, 0.0995, 2, "9.84", "0.10"),     # 0.0995 -> 0.10: the rounded U gains a digit place
    (9.8421, 0.0994, 2, "9.842", "0.099"),
    (123.4, 9.96, 2, "123", "10"),           # 9.96 -> 10, not 10.0
    (123.4, 9.94, 2, "123.4", "9.9"),
    (0.00123456, 4.56e-5, 2, "0.001235", "0.000046"),
    (12345.6, 1234.0, 2, "12300", "1200"),
    (1.0, 0.05, 2, "1.000", "0.050"),
    (5.0, 0.25, 2, "5.00", "0.25"),
    (2.345, 0.125, 2, "2.35", "0.13"),        # halves round away from zero
    (-0.001, 0.0123, 2, "-0.001", "0.012"),
    (50.000838, 9.249e-5, 2, "50.000838", "0.000092"),
    (1002.7, 1.64, 1, "1003", "2"),
    (1002.7, 1.64, 3, "1002.70", "1.64"),
    (0.0004, 0.0123, 2, "0.000", "0.012"),
    (2.9968e200, 5.88e199, 2, "3.00E+200", "5.9E+199"),   # E-notation for extreme magnitudes
    (3.2e-200, 1.23e-201, 2, "3.20E-200", "1.2E-201"),
    (123456789.0, 1234567.0, 2, "123500000", "1200000"),
    (1234567890.0, 12345678.0, 2, "1.235E+9", "1.2E+7"),
]


@pytest.mark.parametrize(("y", "U", "digits", "y_text", "u_text"), CASES)
def test_rounding_table(y: float, U: float, digits: int, y_text: str, u_text: str) -> None:
    assert round_pair(y, U, digits) == (y_text, u_text)


def test_result_line_wording() -> None:
    line = result_line("c_std", 1002.6997, "mg/L", 1.6387, 1.9608, 0.95)
    assert line == "c_std = 1002.7 mg/L, U = 1.6 mg/L (k = 1.96, coverage probability about 95 %)"
    assert result_line("x", 1.5, "", 0.12, 2.0, None) == "x = 1.50, U = 0.12 (k = 2.00)"
