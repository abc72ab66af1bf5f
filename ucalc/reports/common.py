"""Shared wording and number formats for the human-readable outputs."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal
from typing import TYPE_CHECKING, Any

from .rounding import round_pair, round_uncertainty

if TYPE_CHECKING:
    from ..engines.gum import GumResult

CAUTION = (
    "Where a result supports a compliance, health or safety decision, apply the decision rule and reporting "
    "practice required by local regulation and by the laboratory's accredited procedures."
)


def num(x: float, digits: int = 4) -> str:
    """Compact number with ``digits`` significant digits; '∞' for infinity."""
    if math.isinf(x):
        return "∞"
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


SHARE_LABEL = "share of u_c²"  # each input's (u_i(y)/u_c)² in per cent; correlation terms have rows of their own


def kind_text(kind: str, shape: str) -> str:
    """'type A, t', 'type B, rectangular', 'type A+B, combined' (evaluation type per JCGM 100 4.2, 4.3)."""
    if kind == "exact":
        return "exact"
    return f"type {kind}, {shape}"


DOF_SHOWN_UP_TO = 1000  # above this, degrees of freedom change no coverage factor at the digits shown


def dof_text(nu: float) -> str:
    """Degrees of freedom for people: '6.5', '27', '> 1000', '∞' (JSON keeps the exact value)."""
    if math.isinf(nu):
        return "∞"
    if nu > DOF_SHOWN_UP_TO:
        return f"> {DOF_SHOWN_UP_TO}"
    if nu >= 100 or float(nu).is_integer():
        return f"{nu:.0f}"
    return f"{nu:.1f}"


def _plain(d: Decimal) -> str:
    exponent = d.as_tuple().exponent
    assert isinstance(exponent, int)
    return f"{d:.0f}" if exponent > 0 else f"{d:f}"


def fig(x: float, digits: int = 3) -> str:
    """A table figure: ``digits`` significant digits, E-notation only for very large or very small magnitudes.

    '0.0665', '9.99', '10.0', '1003' (whole numbers up to 99999 keep their integer digits), '1.53e-5', '3.88e5'.
    """
    if math.isnan(x):
        return "n/a"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0"
    size = abs(x)
    if size >= 1e5 or size < 1e-3:
        mantissa, exponent = f"{x:.{digits - 1}e}".split("e")
        return f"{mantissa}e{int(exponent)}"
    if size >= 10 ** (digits - 1):
        return f"{x:.0f}"
    return ("-" if x < 0 else "") + _plain(round_uncertainty(abs(x), digits))


def estimate_text(value: float, u: float) -> str:
    """An estimate as given, or rounded to the second significant digit of its uncertainty if it has more digits
    (JCGM 100 7.2.6): 100.28 stays, 0.025666667 with u = 0.0024 becomes 0.0257. Exact values: 6 digits."""
    if not math.isfinite(value):
        return fig(value)
    d = Decimal(repr(float(value)))
    if float(value).is_integer() and abs(value) < 1e15:
        d = Decimal(int(value))  # 100.0 as written: 100
    if math.isfinite(u) and u > 0:
        ru = round_uncertainty(u, 2)
        place = ru.as_tuple().exponent
        assert isinstance(place, int)
        exponent = d.as_tuple().exponent
        assert isinstance(exponent, int)
        if exponent < place:
            d = d.quantize(Decimal(1).scaleb(place), rounding=ROUND_HALF_UP)
    else:
        d = Decimal(f"{value:.6g}")
    if value != 0 and (abs(value) >= 1e7 or abs(value) < 1e-4):
        digits = len(d.normalize().as_tuple().digits)
        mantissa, exponent_text = f"{float(d):.{max(digits - 1, 0)}e}".split("e")
        return f"{mantissa}e{int(exponent_text)}"
    return _plain(d)


def dof_equation(symbol: str, nu: float) -> str:
    """'ν = 9', 'ν > 1000', 'ν = ∞'."""
    text = dof_text(nu)
    return f"{symbol} {text}" if text.startswith(">") else f"{symbol} = {text}"


def expanded_text(U: float, digits: int = 2) -> str:
    """An expanded uncertainty on its own, rounded as in the result line (JCGM 100 7.2.6)."""
    if not (math.isfinite(U) and U > 0):
        return fig(U)
    return round_pair(U, U, digits)[1]


def at_place_of(x: float, u: float, digits: int = 2) -> str:
    """``x`` rounded to the decimal place of ``u`` at ``digits`` significant digits (JCGM 100 7.2.6)."""
    if not (math.isfinite(u) and u > 0):
        return fig(x, 6)
    return round_pair(x, u, digits)[0]


def share_text(share: float) -> str:
    """A share of u_c² in per cent with one decimal ('< 0.1' for a small positive share)."""
    pct = 100 * share
    if 0 < pct < 0.05:
        return "< 0.1"
    return f"{pct:.1f}"


def relative_text(U: float, value: float) -> str:
    """Relative expanded uncertainty in per cent, two significant digits, never in E-notation ('6.3 %', '220 %')."""
    pct = 100 * U / abs(value)
    if pct >= 10:
        return f"{round(pct, 2 - len(str(int(pct)))):.0f} %"
    return f"{fig(pct, 2)} %"


def probability_text(p: float) -> str:
    pct = p * 100
    return f"{pct:.0f} %" if abs(pct - round(pct)) < 1e-9 else f"{pct:.2f} %".replace(".00", "")


def result_line(symbol: str, value: float, unit: str, U: float, k: float, probability: float | None,
                digits: int = 2) -> str:
    """'c = 1002.7 mg/L, U = 1.7 mg/L (k = 2.00, coverage probability about 95 %)' with JCGM 100 7.2.6 rounding."""
    y_text, u_text = round_pair(value, U, digits)
    unit_part = f" {unit}" if unit else ""
    tail = f"k = {k:.2f}" + (f", coverage probability about {probability_text(probability)}" if probability else "")
    return f"{symbol} = {y_text}{unit_part}, U = {u_text}{unit_part} ({tail})"


def statement(symbol: str, value: float, unit: str, U: float, k: float, probability: float | None,
              digits: int = 2) -> str:
    """A result statement in the manner of JCGM 100 7.2.6: 'c = (9.84 ± 0.62) µg/L, k = 2.00, ...'.

    U is rounded to ``digits`` significant digits and y to the same decimal place; the relative expanded
    uncertainty follows. With a fixed k the Gaussian probability it corresponds to is stated as approximate.
    """
    return str(statements(symbol, [value], unit, [U], [k], probability, digits)[0])


def statements(symbol: str, values: Any, unit: str, U: Any, k: Any, probability: float | None,
               digits: int = 2) -> Any:
    """:func:`statement` for arrays of rows (y, U and k per row), built with array operations; a StringDType array."""
    import numpy as np

    from .rounding import formatted, round_pairs

    values, U, k = (np.asarray(a, dtype=float) for a in (values, U, k))
    y_text, u_text = round_pairs(values, U, digits)
    unit_part = f" {unit}" if unit else ""
    k_text = formatted(k, ".2f")
    if probability is not None:
        tail = "k = " + k_text + f", coverage probability about {probability_text(probability)}"
    else:
        distinct, where = np.unique(k, return_inverse=True)
        about = np.array([f" (about {probability_text(round(math.erf(x / math.sqrt(2.0)), 2))} for a normal "
                          "distribution)" for x in distinct.tolist()], dtype=np.dtypes.StringDType())
        tail = "k = " + k_text + about[where.reshape(k.shape)]
    with np.errstate(invalid="ignore"):
        shown = (values != 0) & np.isfinite(U) & (U > 0)
    relative = np.full(values.shape, "", dtype=np.dtypes.StringDType())
    relative[shown] = "; relative U = " + relative_texts(U[shown], values[shown])
    return f"{symbol} = (" + y_text + " ± " + u_text + ")" + unit_part + ", " + tail + relative


def relative_texts(U: Any, values: Any) -> Any:
    """:func:`relative_text` for arrays, by array operations where the float settles the rounding."""
    import numpy as np

    from .rounding import _half_up, _scale, round_pairs

    U, values = np.asarray(U, dtype=float), np.asarray(values, dtype=float)
    text = np.full(U.shape, "", dtype=np.dtypes.StringDType())
    with np.errstate(all="ignore"):
        pct = 100 * U / np.abs(values)
        fine = np.isfinite(pct) & (pct >= 1e-3)
        big = fine & (pct >= 10)  # two significant digits of the integer part: 123.4 -> 120
        log = np.log10(np.where(big, pct, 10.0))
        places = np.floor(log).astype(np.int64) - 1
        n, unsure = _half_up(_scale(np.where(big, pct, 10.0), places))
        unsure |= np.abs(log - np.round(log)) <= 1e-9
        fine &= ~(big & (unsure | (places > 13)))
    rows = big & fine
    zeros = np.strings.multiply(np.array("0", dtype=text.dtype), places[rows])
    text[rows] = n[rows].astype(text.dtype) + zeros
    small = fine & ~big
    text[small] = round_pairs(pct[small], pct[small], 2)[1]
    text = text + " %"
    for i in np.flatnonzero(~fine):
        text[i] = relative_text(float(U.flat[i]), float(values.flat[i]))
    return text


def budget_table(result: GumResult) -> tuple[list[str], list[list[str]]]:
    """The budget table as plain text cells, in the order of the GUM's worked examples (JCGM 100 H.1, table
    H.2): input, estimate, unit, u(x_i), ν_i, c_i, u_i(y) = |c_i|·u(x_i) in the measurand's unit, share of u_c²."""
    from .. import units

    mu = units.display(result.unit)
    head = ["input", "estimate", "unit", "u(x_i)", "ν_i", "c_i", f"u_i(y)\n{mu}".rstrip(),
            SHARE_LABEL.replace(" u_c", "\nu_c") + " %"]
    rows = [[r.input, estimate_text(r.value, r.standard_uncertainty), units.display(r.unit),
             fig(r.standard_uncertainty), dof_text(r.dof), fig(r.sensitivity), fig(r.contribution),
             share_text(r.variance_share)] for r in result.contributions]
    return head, rows
