"""Rounding of a result and its uncertainty for statements (JCGM 100 7.2.6).

The uncertainty is rounded to a number of significant digits (two by default) and the estimate to the same
decimal place. Rounding is half away from zero on the decimal text of the float, so 0.0995 becomes 0.10 (and the
estimate then carries two decimals) and 9.96 becomes 10. Very large or very small numbers are written in
E-notation with the same digits. Where U is zero or not finite the estimate is shown with six significant digits.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

SCIENTIFIC_ABOVE = 6  # last significant digit at 10^6 or above: E-notation (no long runs of zeros)
SCIENTIFIC_BELOW = -10  # last significant digit at 10^-10 or below: E-notation


def round_uncertainty(u: float, digits: int = 2) -> Decimal:
    """``u`` rounded to ``digits`` significant digits, as a Decimal whose exponent gives the decimal place."""
    if digits < 1:
        raise ValueError("digits must be at least 1")
    d = Decimal(repr(float(abs(u))))
    exponent = d.adjusted() - digits + 1
    rounded = d.quantize(Decimal(1).scaleb(exponent), rounding=ROUND_HALF_UP)
    if rounded.adjusted() > d.adjusted():  # 9.96 -> 10.0: one more digit than asked; drop it
        rounded = rounded.quantize(Decimal(1).scaleb(exponent + 1), rounding=ROUND_HALF_UP)
    return rounded


def round_pair(value: float, u: float, digits: int = 2) -> tuple[str, str]:
    """(estimate, uncertainty) as text, the estimate rounded to the uncertainty's last decimal place."""
    if not math.isfinite(u) or u == 0.0:
        return f"{value:.6g}", f"{u:g}"
    ru = round_uncertainty(u, digits)
    exponent = ru.as_tuple().exponent
    assert isinstance(exponent, int)
    place = Decimal(1).scaleb(exponent)
    rv = Decimal(repr(float(value))).quantize(place, rounding=ROUND_HALF_UP)
    if rv == 0:
        rv = abs(rv)
    if exponent >= SCIENTIFIC_ABOVE or exponent <= SCIENTIFIC_BELOW:
        return _scientific(rv, exponent), _scientific(ru, exponent)
    return _plain(rv), _plain(ru)


def _scientific(d: Decimal, place: int) -> str:
    """Decimal in E-notation keeping every digit down to ``place`` (2.9968E+200 -> '3.00E+200')."""
    if d == 0:
        return f"0E{place:+d}"
    digits = d.adjusted() - place + 1
    return f"{d:.{max(digits - 1, 0)}E}"


def _plain(d: Decimal) -> str:
    """Decimal without exponent notation (1E+1 -> 10)."""
    exponent = d.as_tuple().exponent
    assert isinstance(exponent, int)
    if exponent > 0:
        return f"{d:.0f}"
    return f"{d:f}"
