"""Shared wording and number formats for the human-readable outputs."""

from __future__ import annotations

import math

from .rounding import round_pair

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


def dof_text(nu: float) -> str:
    if math.isinf(nu):
        return "∞"
    return f"{nu:.1f}" if nu < 100 else f"{nu:.0f}"


def probability_text(p: float) -> str:
    pct = p * 100
    return f"{pct:.0f} %" if abs(pct - round(pct)) < 1e-9 else f"{pct:.2f} %".replace(".00", "")


def result_line(symbol: str, value: float, unit: str, U: float, k: float, probability: float | None,
                digits: int = 2) -> str:
    """'c = 1002.7 mg/L, U = 1.7 mg/L (k = 2.00, coverage probability 95 %)' with JCGM 100 7.2.6 rounding."""
    y_text, u_text = round_pair(value, U, digits)
    unit_part = f" {unit}" if unit else ""
    tail = f"k = {k:.2f}" + (f", coverage probability {probability_text(probability)}" if probability else "")
    return f"{symbol} = {y_text}{unit_part}, U = {u_text}{unit_part} ({tail})"


def statement(symbol: str, value: float, unit: str, U: float, k: float, probability: float | None,
              digits: int = 2) -> str:
    """A result statement in the manner of JCGM 100 7.2.6: 'c = (9.84 ± 0.62) µg/L, k = 2.00, ...'.

    U is rounded to ``digits`` significant digits and y to the same decimal place; the relative expanded
    uncertainty follows. With a fixed k the Gaussian probability it corresponds to is stated as approximate.
    """
    y_text, u_text = round_pair(value, U, digits)
    unit_part = f" {unit}" if unit else ""
    if probability is not None:
        tail = f"k = {k:.2f}, coverage probability about {probability_text(probability)}"
    else:
        gaussian = math.erf(k / math.sqrt(2.0))
        tail = f"k = {k:.2f} (about {probability_text(round(gaussian, 2))} for a normal distribution)"
    relative = f"; relative U = {100 * U / abs(value):.2g} %" if value and math.isfinite(U) and U > 0 else ""
    return f"{symbol} = ({y_text} ± {u_text}){unit_part}, {tail}{relative}"
