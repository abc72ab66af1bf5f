"""Result statements: U to two significant digits and y to the same decimal place (JCGM 100 7.2.6)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from ucalc.reports.common import probability_text, relative_text, relative_texts, result_line, statement, statements
from ucalc.reports.rounding import formatted, round_pair, round_pairs

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


def _random_pairs(seed: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Estimates and uncertainties over many decades, a quarter of them short decimals (ties at .5 abound)."""
    rng = np.random.default_rng(seed)
    y = rng.uniform(-1, 1, n) * 10.0 ** rng.integers(-12, 12, n)
    u = np.abs(y) * 10.0 ** rng.uniform(-6, 1, n)
    q = n // 4
    y[:q] = np.round(rng.uniform(0, 1000, q) * 1e4) / 10.0 ** rng.integers(0, 5, q)
    u[:q] = np.round(rng.uniform(0, 10, q) * 1e4) / 10.0 ** rng.integers(1, 7, q)
    edge = [0.0995, 9.96, 0.125, 1e-3, 0.1, 1.0, 10.0, 100.0, 0.095, 0.0, np.inf, np.nan, -0.5, 999999.5, 0.05]
    u[q:q + len(edge)] = edge
    y[q + len(edge):q + 2 * len(edge)] = 0.0
    return y, u


@pytest.mark.parametrize("digits", [1, 2, 3])
def test_rows_round_as_one_value(digits: int) -> None:
    # The array form must give round_pair's text (the Decimal rule above) for every row, ties and E-notation too.
    y, u = _random_pairs(digits, 20_000)
    y_text, u_text = round_pairs(y, u, digits)
    for i in range(len(y)):
        assert (y_text[i], u_text[i]) == round_pair(float(y[i]), float(u[i]), digits), (y[i], u[i])
    table = np.array([(c[0], c[1]) for c in CASES if c[2] == digits])
    if len(table):
        y_text, u_text = round_pairs(table[:, 0], table[:, 1], digits)
        assert list(zip(y_text.tolist(), u_text.tolist(), strict=True)) == [
            (c[3], c[4]) for c in CASES if c[2] == digits]


@pytest.mark.parametrize("spec", [".2f", ".2g", ".3g", "g"])
def test_rows_format_as_python(spec: str) -> None:
    # Python's own format() is the reference for the figures of batch statements and decision reasons.
    rng = np.random.default_rng(11)
    x = np.concatenate([rng.uniform(0, 1, 5000) * 10.0 ** rng.integers(-7, 5, 5000),
                        np.round(rng.uniform(0, 100, 5000) * 1e3) / 10.0 ** rng.integers(0, 4, 5000),
                        [0.0, -0.0, -1.5, np.inf, np.nan, 0.125, 0.005, 99.5, 9.95, 0.00995, 1e-5, 123.0,
                         -0.001, 999999.5, 123456.5]])
    text = formatted(x, spec)
    assert [str(t) for t in text] == [format(float(v), spec) for v in x]


def _one_statement(y: float, U: float, k: float, probability: float | None) -> str:
    """The statement wording written out for one row with round_pair and Python's format()."""
    y_text, u_text = round_pair(y, U, 2)
    if probability is not None:
        tail = f"k = {k:.2f}, coverage probability about {probability_text(probability)}"
    else:
        gaussian = probability_text(round(math.erf(k / math.sqrt(2.0)), 2))
        tail = f"k = {k:.2f} (about {gaussian} for a normal distribution)"
    relative = f"; relative U = {relative_text(U, y)}" if y and math.isfinite(U) and U > 0 else ""
    return f"c = ({y_text} ± {u_text}) µg/L, {tail}{relative}"


def test_statements_of_rows_match_single_statements() -> None:
    y, u = _random_pairs(5, 3000)
    k = np.random.default_rng(6).uniform(1.9, 13, len(y))
    k[:1000] = np.round(k[:1000], 1)
    for probability in (0.95, None):
        rows = statements("c", y, "µg/L", u, k, probability, 2)
        for i in range(len(y)):
            expected = _one_statement(float(y[i]), float(u[i]), float(k[i]), probability)
            assert rows[i] == expected
            if i < 200:
                assert statement("c", float(y[i]), "µg/L", float(u[i]), float(k[i]), probability, 2) == expected


def test_relative_u_of_rows_as_one_value() -> None:
    rng = np.random.default_rng(3)
    U = 10.0 ** rng.uniform(-8, 3, 20_000)
    y = rng.uniform(-1, 1, 20_000)
    U[:5000] = (np.round(rng.uniform(0, 1000, 5000)) + 1) / 10.0 ** rng.integers(0, 5, 5000)
    y[:5000] = 1.0
    text = relative_texts(U, y)
    assert [str(t) for t in text] == [relative_text(float(a), float(b)) for a, b in zip(U, y, strict=True)]
