"""Units of inputs and measurand, checked and converted with pint.

Each model tree is walked once with the units of its names: sums and differences must share a dimension,
function arguments must be dimensionless, exponents of dimensioned bases must be constants. Where operands carry
different but compatible units (mg + g) a scale factor is written into the tree, so the compiled model is plain
arithmetic on the numbers as the budget gives them, and the result is scaled to the measurand's unit.
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Any

from . import expr
from .errors import ExpressionError, UnitError

_TRANSCENDENTAL = ("exp", "log", "log10", "sin", "cos", "tan")


@lru_cache(maxsize=1)
def registry() -> Any:
    """The one pint registry, created on first use.

    Parsing pint's unit definitions takes longer than importing numpy, so pint's own disk cache of the parsed
    definitions is used (in the user's cache folder); an unwritable or half-written cache falls back to parsing.
    """
    import pint

    reg: Any
    try:
        reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=False, cache_folder=":auto:")
    except Exception:  # a damaged cache file raises one of several unrelated types
        reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=False)
    reg.define("ppb = 1e-9 = ppb")  # parts per billion, beside pint's own ppm
    return reg


MAX_UNIT_LENGTH = 100
MAX_UNIT_EXPONENT = 12
_SUPERSCRIPT_RUN = re.compile("[⁻⁺]?[⁰¹²³⁴⁵⁶⁷⁸⁹]+")
_SUPERSCRIPT_DIGITS = str.maketrans("⁻⁺⁰¹²³⁴⁵⁶⁷⁸⁹", "-+0123456789")
_UNIT_TOKEN = re.compile(r"\s*(?:(?P<name>(?:[^\W\d]|[°%‰])+)|(?P<number>\d+(?:\.\d+)?)|(?P<op>\*\*|[*/^·()+-]))")


def parse_unit(text: str | None) -> Any:
    """Parse a unit string ('' or None is dimensionless). Raises ExpressionError for unknown units.

    The grammar is ours, not pint's expression evaluator: unit names joined by ``*``, ``·``, a space or ``/``,
    parentheses, and small constant exponents (``**2``, ``^-1``); the only number allowed elsewhere is a ``1``
    as in ``1/K``. So a unit string does no arithmetic, and its parse is linear in its length.
    """
    reg = registry()
    if text is None or not str(text).strip():
        return reg.dimensionless
    cleaned = str(text).strip().replace("µ", "u").replace("μ", "u")
    if "__" in cleaned or len(cleaned) > MAX_UNIT_LENGTH:
        raise ExpressionError(f"unit '{text}' is not a valid unit")
    cleaned = _SUPERSCRIPT_RUN.sub(lambda m: "**" + m.group(0).translate(_SUPERSCRIPT_DIGITS), cleaned)
    return _UnitParser(cleaned, str(text)).parse()


class _UnitParser:
    """Recursive descent over the tokens of a unit string (nesting is bounded by the string's length)."""

    def __init__(self, text: str, shown: str) -> None:
        self.shown = shown
        self.tokens: list[tuple[str, str, int]] = []
        pos = 0
        while pos < len(text):
            m = _UNIT_TOKEN.match(text, pos)
            if m is None or m.end() == pos:
                if not text[pos:].strip():
                    break
                self.fail(f"'{text[pos]}' cannot appear in a unit", pos)
            assert m is not None
            kind = m.lastgroup or ""
            self.tokens.append((kind, m.group(kind), m.start(kind)))
            pos = m.end()
        self.i = 0

    def fail(self, why: str, pos: int) -> None:
        raise ExpressionError(f"unit '{self.shown}' is not a valid unit: {why} (character {pos + 1})")

    def peek(self) -> tuple[str, str, int]:
        return self.tokens[self.i] if self.i < len(self.tokens) else ("end", "", len(self.shown))

    def take(self) -> tuple[str, str, int]:
        token = self.peek()
        self.i += 1
        return token

    def parse(self) -> Any:
        unit = self.product()
        kind, value, pos = self.peek()
        if kind != "end":
            self.fail(f"unexpected '{value}'", pos)
        return unit

    def product(self) -> Any:
        unit = self.power()
        while True:
            kind, value, _ = self.peek()
            if value in ("*", "·"):
                self.take()
                unit = unit * self.power()
            elif value == "/":
                self.take()
                unit = unit / self.power()
            elif kind == "name" or value == "(":
                unit = unit * self.power()  # a space between names multiplies
            else:
                return unit

    def power(self) -> Any:
        unit = self.atom()
        if self.peek()[1] in ("**", "^"):
            self.take()
            unit = unit ** self.exponent()
        return unit

    def atom(self) -> Any:
        kind, value, pos = self.take()
        if kind == "name":
            try:
                unit = registry().parse_units(value)
            except Exception as exc:  # pint raises several unrelated types for unknown names
                raise ExpressionError(f"unit '{self.shown}' is not known ({type(exc).__name__})") from None
            if is_offset(unit):
                # °C and °F in a measurement model are temperature differences or values on one scale; as delta
                # units they multiply and subtract as arithmetic needs (converting absolute °C to K is not done)
                delta = {"degree_Celsius": "delta_degC", "degree_Fahrenheit": "delta_degF"}.get(str(unit))
                if delta is None:
                    raise ExpressionError(f"unit '{self.shown}' has an offset zero and cannot enter a product; "
                                          "give temperature differences in K")
                unit = registry().parse_units(delta)
            return unit
        if kind == "number" and value == "1":
            return registry().dimensionless
        if value == "(":
            unit = self.product()
            if self.take()[1] != ")":
                self.fail("a '(' is not closed", pos)
            return unit
        if kind == "number":
            self.fail("a number may appear only as an exponent or as the 1 of '1/unit'", pos)
        self.fail(f"unexpected '{value}'" if value else "a unit name is missing", pos)

    def exponent(self) -> float:
        kind, value, pos = self.take()
        parenthesised = value == "("
        if parenthesised:
            kind, value, pos = self.take()
        sign = 1.0
        if value in ("+", "-"):
            sign = -1.0 if value == "-" else 1.0
            kind, value, pos = self.take()
        if kind != "number":
            self.fail("an exponent must be a number", pos)
        number = float(value)
        if parenthesised and self.peek()[1] == "/":
            self.take()
            kind, below, pos = self.take()
            if kind != "number" or float(below) == 0:
                self.fail("an exponent must be a number", pos)
            number /= float(below)
        if parenthesised and self.take()[1] != ")":
            self.fail("a '(' is not closed", pos)
        if number > MAX_UNIT_EXPONENT:
            self.fail(f"exponents are limited to {MAX_UNIT_EXPONENT}", pos)
        return sign * number


def is_offset(unit: Any) -> bool:
    """True for units such as degC whose zero is offset (they cannot be multiplied)."""
    q = 1 * unit
    return not q._is_multiplicative


def factor(source: Any, target: Any) -> float:
    """Number by which a magnitude in ``source`` is multiplied to express it in ``target``."""
    reg = registry()
    return float(reg.Quantity(1.0, source).to(target).magnitude)


def same_dimension(a: Any, b: Any) -> bool:
    reg = registry()
    return bool(reg.Quantity(1.0, a).dimensionality == reg.Quantity(1.0, b).dimensionality)


_SUPERSCRIPT = str.maketrans("0123456789-.", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻·")


def pretty(unit: Any) -> str:
    """Short human form of a unit from pint's symbols: 'mg/L', 'µg/L', 'count·L/(µg·s)', 'm²' ('' if dimensionless)."""
    reg = registry()
    if unit == reg.dimensionless:
        return ""

    def power(name: str, exponent: float) -> str:
        symbol = reg.get_symbol(name)
        symbol = re.sub(r"^([munpkdcµ]?)l$", r"\1L", symbol)  # litre as L, the lab habit
        symbol = re.sub(r"^u(?=[a-zA-Z])", "µ", symbol).removeprefix("Δ")  # a °C difference reads as °C
        e = abs(exponent)
        if e == 1:
            return symbol
        text = f"{e:g}"
        return symbol + text.translate(_SUPERSCRIPT)

    items = list(unit._units.items())
    above = [power(n, e) for n, e in items if e > 0]
    below = [power(n, e) for n, e in items if e < 0]
    top = "·".join(above) or "1"
    if not below:
        return top
    bottom = below[0] if len(below) == 1 else "(" + "·".join(below) + ")"
    return f"{top}/{bottom}"


def display(text: str | None) -> str:
    """A unit as the budget wrote it, in the human form of :func:`pretty` (text kept if pint cannot read it)."""
    if not text:
        return ""
    try:
        return pretty(parse_unit(text))
    except ExpressionError:
        return text


def per(numerator: str | None, denominator: str | None) -> str:
    """Unit of a sensitivity coefficient, written as the ratio it is: '(mg/L)/mL', 'µg/L', '1/mL' ('' if none)."""
    top, bottom = display(numerator), display(denominator)
    if top == bottom:
        return ""
    if not bottom:
        return top

    def group(text: str) -> str:
        return f"({text})" if any(c in text for c in "/·") else text

    return f"{group(top) if top else '1'}/{group(bottom)}"


def normalise(node: expr.Node, units: dict[str, Any]) -> tuple[expr.Node, Any]:
    """Check a tree's dimensions; return (tree with conversion factors, unit of its value)."""
    reg = registry()
    dimensionless = reg.dimensionless

    def scaled(n: expr.Node, f: float) -> expr.Node:
        return n if f == 1.0 else expr.mul(expr.Num(f), n)

    def to_plain(n: expr.Node, u: Any, what: str, col: int) -> expr.Node:
        if not same_dimension(u, dimensionless):
            raise UnitError(f"{what} must be dimensionless (got '{pretty(u) or u}')", col)
        return scaled(n, factor(u, dimensionless))

    def walk(n: expr.Node) -> tuple[expr.Node, Any]:
        if isinstance(n, expr.Num):
            return n, dimensionless
        if isinstance(n, expr.Var):
            return n, units[n.name]
        if isinstance(n, expr.Neg):
            a, u = walk(n.arg)
            return expr.Neg(a), u
        if isinstance(n, expr.Call):
            a, u = walk(n.arg)
            if n.fn in _TRANSCENDENTAL:
                return expr.Call(n.fn, to_plain(a, u, f"the argument of {n.fn}()", n.column), n.column), dimensionless
            if n.fn == "sqrt":
                return expr.Call("sqrt", a, n.column), u**0.5
            return expr.Call(n.fn, a, n.column), u
        if isinstance(n, expr.Bin):
            a, ua = walk(n.left)
            b, ub = walk(n.right)
            if n.op in "+-":
                if not same_dimension(ua, ub):
                    raise UnitError(
                        f"cannot {'add' if n.op == '+' else 'subtract'} '{pretty(ub) or 'dimensionless'}' "
                        f"{'to' if n.op == '+' else 'from'} '{pretty(ua) or 'dimensionless'}'",
                        n.column,
                    )
                return expr.Bin(n.op, a, scaled(b, factor(ub, ua)), n.column), ua
            if n.op == "*":
                return expr.Bin("*", a, b, n.column), ua * ub
            if n.op == "/":
                return expr.Bin("/", a, b, n.column), ua / ub
            # power
            b = to_plain(b, ub, "an exponent", n.column)
            if same_dimension(ua, dimensionless):
                return expr.Bin("**", to_plain(a, ua, "a base", n.column), b, n.column), dimensionless
            exponent = expr.constant(b)
            if exponent is None:
                raise UnitError("a quantity with a unit may only be raised to a constant number", n.column)
            return expr.Bin("**", a, b, n.column), ua**exponent
        raise TypeError(n)  # pragma: no cover

    try:
        return walk(node)
    except RecursionError:
        raise ExpressionError("expression nested too deeply") from None
    except OverflowError:
        raise UnitError("unit exponent out of range") from None


# units whose values are temperatures on a scale (°C and °F are read as delta units, see parse_unit)
_SCALES = {"delta_degree_Celsius": "°C", "delta_degree_Fahrenheit": "°F", "kelvin": "K", "degree_Rankine": "°R"}


def temperature_scale(unit: Any) -> str | None:
    """'°C', '°F', 'K' or '°R' for a unit that is a temperature on that scale; None for any other unit."""
    return _SCALES.get(str(unit))


def check_temperature_scales(node: expr.Node, scales: dict[str, str | None]) -> str | None:
    """The scale of a tree's value if it is a temperature on one scale (None for a difference or any other value).

    ``scales`` gives the scale of each name. A sum or difference of a temperature on one scale and a temperature
    on another (°C and K, °F and K, °C and °F) raises UnitError: the numbers do not share a zero, so no factor
    makes them comparable (°C − K is off by 273.15). A difference of two temperatures on one scale is a
    temperature difference and may then be combined with any temperature difference (JCGM 200 1.20 note on
    quantities of the same kind; common practice).
    """

    def walk(n: expr.Node) -> str | None:
        if isinstance(n, expr.Var):
            return scales.get(n.name)
        if isinstance(n, expr.Neg):
            return walk(n.arg)
        if isinstance(n, expr.Call):
            walk(n.arg)
            return None
        if isinstance(n, expr.Bin):
            a, b = walk(n.left), walk(n.right)
            if n.op in "+-":
                if a and b and a != b:
                    verb, prep = ("add", "to") if n.op == "+" else ("subtract", "from")
                    raise UnitError(f"cannot {verb} a temperature in {b} {prep} a temperature in {a}: the two scales "
                                    "have different zeros; give both on one scale (e.g. both in K), or give the "
                                    "difference as a difference on one scale", n.column)
                if n.op == "-" and a and a == b:
                    return None
                return a or b
            return None
        return None

    return walk(node)


def physical_kind(unit: Any) -> str | None:
    """'mass', 'volume', 'count' or 'concentration' for a unit of that kind (amount or mass per volume), else None:
    the kinds whose negative values are likely slips."""
    if "count" in str(unit):
        return "count"
    reg = registry()
    dims = reg.Quantity(1.0, unit).dimensionality
    kinds = {"mass": {"[mass]": 1}, "volume": {"[length]": 3}}
    for name, want in kinds.items():
        if dict(dims) == want:
            return name
    if dict(dims) in ({"[mass]": 1, "[length]": -3}, {"[substance]": 1, "[length]": -3}):
        return "concentration"
    return None
