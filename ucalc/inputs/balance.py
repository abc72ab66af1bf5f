"""A mass from a balance: certificate, readability, linearity and repeatability.

Certificate: expanded uncertainty U with its k (u = U/k). Readability d of a digital display: rectangular with
half-width d/2 (JCGM 100 F.2.2.1). Linearity: the certificate's or manufacturer's limit, rectangular (CG4 A1.4).
By difference (tare and gross weighings), readability, linearity and repeatability enter once per weighing,
so twice, as CG4 counts linearity twice (A1.4); the certificate term is taken once, for the net mass.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec


class Weighings(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    tare: float = Field(ge=0)
    gross: float = Field(gt=0)


class BalanceSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    reading: float | None = Field(default=None, gt=0)
    unit: str | None = Field(default=None, max_length=100)
    expanded: float | None = Field(default=None, gt=0)
    k: float | None = Field(default=None, gt=0)
    readability: float | None = Field(default=None, gt=0)
    linearity: float | None = Field(default=None, gt=0)
    repeatability: float | None = Field(default=None, gt=0)
    by_difference: bool | Weighings = False

    @model_validator(mode="after")
    def _check(self) -> BalanceSpec:
        if (self.expanded is None) != (self.k is None):
            raise ValueError("the certificate needs both 'expanded' and 'k'")
        if isinstance(self.by_difference, Weighings):
            if self.reading is not None:
                raise ValueError("give 'reading' or 'by_difference: {tare, gross}', not both")
            if self.by_difference.gross <= self.by_difference.tare:
                raise ValueError("the gross reading must exceed the tare reading")
        elif self.reading is None:
            raise ValueError("give the 'reading' (or 'by_difference: {tare, gross}')")
        if not any(v is not None for v in (self.expanded, self.readability, self.linearity, self.repeatability)):
            raise ValueError("give at least one of 'expanded' (with 'k'), 'readability', 'linearity', 'repeatability'")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "balance"
    DEFAULT_UNIT: ClassVar[str | None] = "g"

    balance: BalanceSpec


def components(spec: BalanceSpec, unit: str) -> tuple[float, tuple[Component, ...], list[str]]:
    """Net mass, its components and the working."""
    weighings = 2 if spec.by_difference else 1
    if isinstance(spec.by_difference, Weighings):
        mass = spec.by_difference.gross - spec.by_difference.tare
        working = [f"by difference: {spec.by_difference.gross:g} - {spec.by_difference.tare:g} = {mass:.6g} {unit}"]
    else:
        assert spec.reading is not None
        mass = spec.reading
        working = [f"reading {mass:g} {unit}" + (" (net of tare; two weighings)" if weighings == 2 else "")]
    comps: list[Component] = []
    times = " ×2 weighings" if weighings == 2 else ""
    if spec.expanded is not None and spec.k is not None:
        comps.append(Component("balance certificate", Distribution("normal", spec.expanded / spec.k), "B",
                               f"expanded {spec.expanded:g} {unit}, k = {spec.k:g}, divisor {spec.k:g}"))
    for _ in range(weighings):
        if spec.readability is not None:
            comps.append(Component("readability" + (f" ({_ + 1})" if weighings == 2 else ""),
                                   Distribution("rectangular", spec.readability / 2.0), "B",
                                   f"digit {spec.readability:g} {unit}: half-width {spec.readability / 2:g}, "
                                   f"rectangular, divisor sqrt(3){times}", per_use=True))
        if spec.linearity is not None:
            comps.append(Component("linearity" + (f" ({_ + 1})" if weighings == 2 else ""),
                                   Distribution("rectangular", spec.linearity), "B",
                                   f"half-width {spec.linearity:g} {unit}, rectangular, divisor sqrt(3){times}",
                                   per_use=True))
        if spec.repeatability is not None:
            comps.append(Component("repeatability" + (f" ({_ + 1})" if weighings == 2 else ""),
                                   Distribution("normal", spec.repeatability), "B",
                                   f"standard deviation {spec.repeatability:g} {unit}{times}", per_use=True))
    u = math.sqrt(sum(c.standard_uncertainty**2 for c in comps))
    working.append(f"u(m) = {u:.4g} {unit} from {len(comps)} components")
    return mass, tuple(comps), working


def derive(name: str, spec: Spec, location: Location) -> Derived:
    unit = spec.unit or "g"
    mass, comps, working = components(spec.balance, unit)
    q = Quantity(name=name, value=mass, unit=unit, components=comps, description=spec.description or "",
                 working=tuple(working), location=location)
    return Derived((q,))


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """A finer balance: one more digit of readability and a tenth of the linearity limit."""
    block = dict(raw["balance"])
    changed = False
    for key in ("readability", "linearity"):
        if key in block:
            block[key] = float(block[key]) / 10
            changed = True
    return [("a balance with one more digit (readability and linearity / 10)", {**raw, "balance": block})] \
        if changed else []

class Balance(InputModel):
    """A mass from a balance: calibration, readability, repeatability, buoyancy."""

    key = "balance"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
