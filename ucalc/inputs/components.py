"""The basic input: an estimate and its uncertainty components, as the budget states them.

The input's standard uncertainty is the root sum of squares of its components and its degrees of freedom follow
from Welch-Satterthwaite over them (JCGM 100 G.4.1); an input with no components is an exact value. Other input
models build their components with :func:`build_component`. A component gives exactly one of ``standard``
(u itself), ``expanded`` with ``k`` (u = U/k, JCGM 100 4.3.3), or ``half_width`` with a distribution
(u = a/divisor, JCGM 100 4.3.7 and 4.3.9), optionally with ``dof`` and with ``relative: true`` (the number is a
fraction of the quantity's value). A trapezoid takes ``beta`` (JCGM 101 6.4.3); rectangular limits that are
themselves inexact, each known to within ±``limit_spread``, give a curvilinear trapezoid (6.4.4).
"""

from __future__ import annotations

import math
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import HALF_WIDTH_SHAPES, Distribution
from ..errors import Location
from .base import Derived, InputModel


class ComponentSpec(BaseModel):
    """One uncertainty component of an input."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    name: str = Field(min_length=1, max_length=200)
    standard: float | None = Field(default=None, gt=0)
    expanded: float | None = Field(default=None, gt=0)
    k: float | None = Field(default=None, gt=0)
    half_width: float | None = Field(default=None, gt=0)
    distribution: Literal["normal", "rectangular", "triangular", "arcsine", "trapezoidal",
                          "curvilinear_trapezoid"] | None = None
    beta: float | None = Field(default=None, ge=0, le=1)
    limit_spread: float | None = Field(default=None, gt=0)
    dof: float | None = Field(default=None, ge=1, allow_inf_nan=True)  # .inf: infinitely many
    relative: bool = False
    type: Literal["A", "B"] | None = None
    note: str | None = None

    @model_validator(mode="after")
    def _one_form(self) -> ComponentSpec:
        given = [k for k in ("standard", "expanded", "half_width") if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError(
                "give exactly one of 'standard', 'expanded' (with 'k') or 'half_width' (with 'distribution')"
                + (f"; got {', '.join(given)}" if given else "")
            )
        if self.expanded is not None and self.k is None:
            raise ValueError("'expanded' needs its coverage factor 'k'")
        if self.k is not None and self.expanded is None:
            raise ValueError("'k' belongs with 'expanded'")
        if self.half_width is not None and self.distribution not in HALF_WIDTH_SHAPES:
            raise ValueError("'half_width' needs 'distribution': rectangular, triangular, arcsine, trapezoidal or "
                             "curvilinear_trapezoid")
        if (self.beta is None) != (self.distribution != "trapezoidal"):
            raise ValueError("'beta' (top half-width over base half-width, 0 to 1) goes with, and only with, "
                             "distribution 'trapezoidal'")
        if self.distribution == "curvilinear_trapezoid" and self.limit_spread is None:
            raise ValueError("distribution 'curvilinear_trapezoid' needs 'limit_spread', the half-width of the "
                             "interval in which each limit lies")
        if self.limit_spread is not None:
            if self.distribution not in ("rectangular", "curvilinear_trapezoid"):
                raise ValueError("'limit_spread' goes with a rectangular (or curvilinear_trapezoid) 'half_width'")
            assert self.half_width is not None
            if self.limit_spread >= self.half_width:
                raise ValueError(f"'limit_spread' ({self.limit_spread:g}) must be smaller than 'half_width' "
                                 f"({self.half_width:g})")
        if self.half_width is None and self.distribution not in (None, "normal"):
            raise ValueError(f"distribution '{self.distribution}' goes with 'half_width'")
        return self


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def build_component(spec: ComponentSpec, value: float, unit: str) -> Component:
    """Turn a component spec into a :class:`Component` for a quantity of the given value and unit."""
    dof = math.inf if spec.dof is None else float(spec.dof)
    scale = abs(value) if spec.relative else 1.0
    where = f" (relative, x {_fmt(abs(value))})" if spec.relative else ""
    unit_text = "" if spec.relative or not unit else f" {unit}"
    if spec.standard is not None:
        u = spec.standard * scale
        dist = Distribution("normal" if math.isinf(dof) else "t", u, dof)
        origin = f"standard uncertainty {_fmt(spec.standard)}{unit_text}{where}"
        kind = spec.type or ("A" if not math.isinf(dof) else "B")
    elif spec.expanded is not None:
        assert spec.k is not None
        u = spec.expanded * scale / spec.k
        dist = Distribution("normal" if math.isinf(dof) else "t", u, dof)
        origin = f"expanded {_fmt(spec.expanded)}{unit_text}{where}, k = {_fmt(spec.k)}, divisor {_fmt(spec.k)}"
        kind = spec.type or "B"
    else:
        assert spec.half_width is not None and spec.distribution is not None
        a = spec.half_width * scale
        if spec.limit_spread is not None:
            ratio = spec.limit_spread / spec.half_width
            dist = Distribution("curvilinear_trapezoid", a, dof, ratio)
            shape = f"curvilinear trapezoid, limits inexact by ±{_fmt(spec.limit_spread)}{unit_text}"
        else:
            dist = Distribution(spec.distribution, a, dof, spec.beta or 0.0)
            shape = spec.distribution + (f", beta {_fmt(spec.beta)}" if spec.beta is not None else "")
        divisor = {"rectangular": "sqrt(3)", "triangular": "sqrt(6)", "arcsine": "sqrt(2)"}.get(
            dist.shape, _fmt(dist.divisor))
        origin = f"half-width {_fmt(spec.half_width)}{unit_text}{where}, {shape}, divisor {divisor}"
        kind = spec.type or "B"
    if spec.note:
        origin += f"; {spec.note}"
    return Component(spec.name, dist, kind, origin, relative=spec.relative)


class Spec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    value: float
    unit: str | None = Field(default=None, max_length=100)
    description: str | None = None
    components: list[ComponentSpec] = Field(default_factory=list, max_length=200)


def derive(name: str, spec: Spec, location: Location) -> Derived:
    unit = spec.unit or ""
    components = tuple(build_component(c, spec.value, unit) for c in spec.components)
    quantity = Quantity(name=name, value=spec.value, unit=unit, components=components,
                        description=spec.description or "", location=location)
    return Derived((quantity,))


class Components(InputModel):
    """An estimate with its uncertainty components (the input of a budget without another model's key)."""

    key = "components"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)
