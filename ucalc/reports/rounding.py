"""Rounding of a result and its uncertainty for statements (JCGM 100 7.2.6).

The uncertainty is rounded to a number of significant digits (two by default) and the estimate to the same
decimal place. Rounding is half away from zero on the decimal text of the float, so 0.0995 becomes 0.10 (and the
estimate then carries two decimals) and 9.96 becomes 10. Very large or very small numbers are written in
E-notation with the same digits. Where U is zero or not finite the estimate is shown with six significant digits.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal, localcontext
from typing import Any

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
    with localcontext() as context:
        context.prec = 1000  # enough digits for any double at any place (U far below y, 1e-300 to 1e300)
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


# ---- the same rules on arrays (batch rows) ----------------------------------------------------------------------
# Float arithmetic settles a row when the scaled number is not within _TIE of a rounding boundary and the
# decimal exponent is not in doubt; every other row goes through the Decimal functions above, so the text is the
# same as theirs to the character (tests/test_rounding.py checks it on random and boundary values).
_TIE = 1e-6


def _half_up(scaled: Any) -> tuple[Any, Any]:
    """``floor(|x| + 0.5)`` with the sign of x, and where the float cannot decide between the two neighbours."""
    import numpy as np

    magnitude = np.abs(scaled)
    frac = magnitude - np.floor(magnitude)
    unsure = (np.abs(frac - 0.5) < _TIE + magnitude * 1e-13) | ~(magnitude < 2.0**50)
    with np.errstate(invalid="ignore"):
        n = np.where(unsure, 0, np.copysign(np.floor(magnitude + 0.5), scaled))
    return n.astype(np.int64), unsure


def _scale(x: Any, exponent: Any) -> Any:
    """x / 10^exponent with one rounding (powers of ten up to 10^22 are exact doubles)."""
    import numpy as np

    e = np.clip(exponent, -22, 22)
    return np.where(e <= 0, x * 10.0 ** np.abs(e), x / 10.0 ** np.abs(e))


def decimal_text(n: Any, places: Any) -> Any:
    """Text of the integers ``n`` times 10^-places: exactly ``places`` decimals, or trailing zeros for
    ``places`` < 0 (as :func:`_plain` writes a quantized Decimal). A numpy StringDType array."""
    import numpy as np

    text_type = np.dtypes.StringDType()
    digits = np.abs(n).astype(text_type)
    after = np.maximum(places, 0)
    digits = np.strings.zfill(digits, after + 1)
    length = np.strings.str_len(digits)
    head = np.strings.slice(digits, 0, length - after)
    tail = np.strings.slice(digits, length - after, None)
    text = np.where(after > 0, head + "." + tail, head)
    zeros = np.where(np.asarray(n) != 0, np.maximum(-np.asarray(places), 0), 0)  # 0E+2 is written '0'
    text = text + np.strings.multiply(np.array("0", dtype=text_type), zeros)
    return np.where(np.asarray(n) < 0, "-" + text, text)


def round_pairs(values: Any, us: Any, digits: int = 2) -> tuple[Any, Any]:
    """:func:`round_pair` for arrays: (estimates, uncertainties) as StringDType arrays, the same text per row."""
    import numpy as np

    if digits < 1:
        raise ValueError("digits must be at least 1")
    values = np.asarray(values, dtype=float)
    signed = np.asarray(us, dtype=float)
    u = np.abs(signed)
    fine = np.isfinite(u) & (u > 0) & np.isfinite(values)
    with np.errstate(all="ignore"):
        log = np.log10(np.where(fine, u, 1.0))
        magnitude = np.floor(log)
        fine &= np.abs(log - np.round(log)) > 1e-9  # near a power of ten the decimal exponent is in doubt
        exponent = magnitude.astype(np.int64) - digits + 1
        n_u, unsure = _half_up(_scale(u, exponent))
        fine &= ~unsure
        grew = n_u == 10**digits  # 9.96 -> 10: one digit more than asked; drop it
        exponent = np.where(grew, exponent + 1, exponent)
        n_u = np.where(grew, 10 ** (digits - 1), n_u)
        n_y, unsure = _half_up(_scale(values, exponent))
    fine &= ~unsure & (exponent > SCIENTIFIC_BELOW) & (exponent < SCIENTIFIC_ABOVE)
    n_y = np.where(fine, n_y, 0)
    text_type = np.dtypes.StringDType()
    y_text = decimal_text(n_y, -exponent).astype(text_type)
    u_text = decimal_text(np.where(fine, n_u, 0), -exponent).astype(text_type)
    for i in np.flatnonzero(~fine):
        y_text[i], u_text[i] = round_pair(float(values[i]), float(signed[i]), digits)
    return y_text, u_text


def formatted(x: Any, spec: str) -> Any:
    """``format(v, spec)`` for every v of ``x``, for ``spec`` '.Nf' or '.Ng'/'g' (Python's rules: round half to
    even on the binary value; 'g' drops trailing zeros and turns to E-notation outside 1e-4..1e{N}). Integer
    arithmetic where the float settles the rounding, ``format`` itself for the other rows. A StringDType array."""
    import numpy as np

    x = np.asarray(x, dtype=float)
    kind = spec[-1]
    precision = int(spec[1:-1]) if len(spec) > 1 else 6
    magnitude = np.abs(x)
    with np.errstate(all="ignore"):
        fine = np.isfinite(x) & (x != 0)
        if kind == "f":
            n, unsure = _half_up(np.where(fine, _scale(magnitude, np.full(x.shape, -precision)), 0.0))
            places = np.full(x.shape, precision)
            fine &= ~unsure & (n != 0)  # '-0.00' keeps its sign in Python: left to format()
        else:
            precision = max(precision, 1)
            log = np.log10(np.where(fine, magnitude, 1.0))
            exponent = np.floor(log).astype(np.int64)
            fine &= np.abs(log - np.round(log)) > 1e-9  # near a power of ten the exponent is in doubt
            n, unsure = _half_up(_scale(np.where(fine, magnitude, 1.0), exponent - precision + 1))
            fine &= ~unsure
            grew = n == 10**precision
            exponent = np.where(grew, exponent + 1, exponent)
            n = np.where(grew, 10 ** (precision - 1), n)
            fine &= (exponent >= -4) & (exponent < precision)  # E-notation: left to format()
            places = precision - 1 - exponent
            for _ in range(precision - 1):  # trailing zeros of the fraction dropped
                trailing = (n % 10 == 0) & (places > 0)
                n = np.where(trailing, n // 10, n)
                places = np.where(trailing, places - 1, places)
    text = decimal_text(np.where(fine, np.copysign(n, x).astype(np.int64), 0), places)
    for i in np.flatnonzero(~fine):
        text[i] = format(float(x.flat[i]), spec)
    return text
