"""Molar mass of a compound from its formula and the standard atomic weights.

M = sum n_e A_r(e) g/mol. Each element's standard atomic weight and its uncertainty come from the
``periodictable`` package (abridged standard atomic weights); the budget may override them for a particular
source. As EURACHEM/CITAC CG4 does (A2.4), each tabulated uncertainty is the half-width of a rectangular
distribution. Every element's atomic weight is one quantity, ``Ar.Pb``, shared by all molar masses of the
budget, and the molar mass enters the model as the line ``M = 1 * Ar.Pb + 2 * Ar.N + 6 * Ar.O``: the ratio of
two molar masses with an element in common (the lead fraction of a lead salt) is then computed correctly.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field

from ..budget.definitions import Component, Quantity, welch_satterthwaite
from ..distributions import Distribution
from ..errors import Location
from .base import Derived, InputModel, InputSpec


class AtomicWeight(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    value: float = Field(gt=0)
    half_width: float = Field(ge=0)


class MolarMassSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    formula: str = Field(min_length=1, max_length=200)
    atomic_weights: dict[str, AtomicWeight] = Field(default_factory=dict)


class Spec(InputSpec):
    KEY: ClassVar[str] = "molar_mass"
    DEFAULT_UNIT: ClassVar[str | None] = "g/mol"

    molar_mass: MolarMassSpec | str


def composition(formula: str) -> dict[str, int]:
    """Element symbol -> number of atoms, parsed by periodictable (hydrates as 'CuSO4(H2O)5')."""
    import periodictable

    if any(c in formula for c in "_;\\") or "__" in formula:
        raise ValueError(f"formula '{formula}' is not a chemical formula")
    try:
        parsed = periodictable.formula(formula)
    except Exception as exc:  # the parser raises assorted errors for bad text
        raise ValueError(f"formula '{formula}' cannot be read ({type(exc).__name__})") from None
    atoms: dict[str, int] = {}
    for element, count in parsed.atoms.items():
        if getattr(element, "isotope", None) is not None or element.symbol in ("n", "D", "T"):
            raise ValueError(f"formula '{formula}': give elements, not isotopes")
        if count != int(count) or count <= 0:
            raise ValueError(f"formula '{formula}': {element.symbol} count {count} is not a whole number")
        atoms[element.symbol] = atoms.get(element.symbol, 0) + int(count)
    if not atoms:
        raise ValueError(f"formula '{formula}' names no element")
    return atoms


def standard_atomic_weight(symbol: str) -> tuple[float, float]:
    """(value, half-width) of an element's standard atomic weight from periodictable."""
    import periodictable

    element = getattr(periodictable, symbol)
    value = float(element.mass)
    half = float(getattr(element, "_mass_unc", None) or 0.0)
    if not value:
        raise ValueError(f"element {symbol} has no standard atomic weight; give it under 'atomic_weights'")
    return value, half


def derive(name: str, spec: Spec, location: Location) -> Derived:
    mm = spec.molar_mass if isinstance(spec.molar_mass, MolarMassSpec) else MolarMassSpec(formula=spec.molar_mass)
    if spec.unit not in (None, "g/mol"):
        raise ValueError(f"a molar mass is in g/mol (got unit '{spec.unit}')")
    atoms = composition(mm.formula)
    unknown = set(mm.atomic_weights) - set(atoms)
    if unknown:
        raise ValueError(f"atomic_weights gives {', '.join(sorted(unknown))}, not in formula '{mm.formula}'")
    quantities = []
    terms = []
    total = 0.0
    working = []
    for symbol, n in atoms.items():
        if symbol in mm.atomic_weights:
            value, half, source = mm.atomic_weights[symbol].value, mm.atomic_weights[symbol].half_width, "budget"
        else:
            value, half = standard_atomic_weight(symbol)
            source = "standard atomic weight"
        comps = (Component(f"atomic weight of {symbol}", Distribution("rectangular", half), "B",
                           f"±{half:g} g/mol ({source}), rectangular, divisor sqrt(3)"),) if half > 0 else ()
        quantities.append(Quantity(f"Ar.{symbol}", value, "g/mol", comps, description=f"atomic weight of {symbol}",
                                   location=location))
        terms.append(f"{n} * Ar.{symbol}")
        total += n * value
        working.append(f"{symbol} × {n}: {value:g} ± {half:g} g/mol ({source})")
    working.append(f"M({mm.formula}) = {total:.6f} g/mol")
    u = math.sqrt(math.fsum((n * q.standard_uncertainty) ** 2 for n, q in zip(atoms.values(), quantities,
                                                                                strict=True)))
    # JCGM 100 5.1.2 for a sum with sensitivities n; Welch-Satterthwaite (G.4.1) over the atomic weights
    dof = welch_satterthwaite([(n * q.standard_uncertainty, q.dof) for n, q in zip(atoms.values(), quantities,
                                                                                     strict=True)])
    details = {"model": "molar_mass", "formula": mm.formula, "unit": "g/mol", "value": total,
               "standard_uncertainty": u, "dof": None if math.isinf(dof) else dof,
               "atoms": {symbol: {"count": n, "atomic_weight": q.value, "standard_uncertainty": q.standard_uncertainty}
                         for (symbol, n), q in zip(atoms.items(), quantities, strict=True)}}
    return Derived(tuple(quantities), expression=" + ".join(terms), working=tuple(working), details=details)

class MolarMass(InputModel):
    """A molar mass from a chemical formula and standard atomic weights."""

    key = "molar_mass"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)
