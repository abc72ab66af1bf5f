"""A certified value: a reference material, a purity, a stock standard's concentration from its certificate.

Either ``expanded`` with ``k`` (u = U/k, JCGM 100 4.3.3, Gaussian; with ``dof`` a t) or ``half_width`` with a
distribution, rectangular by default, as CG4 treats a purity stated as a bare interval (A1.4).
"""

from __future__ import annotations

import math
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec


class CertificateSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    value: float
    unit: str | None = Field(default=None, max_length=100)
    expanded: float | None = Field(default=None, gt=0)
    k: float | None = Field(default=None, gt=0)
    half_width: float | None = Field(default=None, gt=0)
    distribution: Literal["rectangular", "triangular"] = "rectangular"
    dof: float | None = Field(default=None, ge=1, allow_inf_nan=True)  # .inf: infinitely many
    relative: bool = False

    @model_validator(mode="after")
    def _one(self) -> CertificateSpec:
        if (self.expanded is None) == (self.half_width is None):
            raise ValueError("give either 'expanded' (with 'k') or 'half_width'")
        if (self.expanded is None) != (self.k is None):
            raise ValueError("'expanded' and 'k' go together")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "certificate"

    certificate: CertificateSpec


def component(spec: CertificateSpec, unit: str, name: str = "certificate") -> Component:
    unit = f" {unit}" if unit else ""
    scale = abs(spec.value) if spec.relative else 1.0
    dof = math.inf if spec.dof is None else spec.dof
    if spec.expanded is not None and spec.k is not None:
        u = spec.expanded * scale / spec.k
        dist = Distribution("normal" if math.isinf(dof) else "t", u, dof)
        return Component(name, dist, "B", f"certified U = {spec.expanded:g}{' (relative)' if spec.relative else ''}"
                                          f"{unit}, k = {spec.k:g}", relative=spec.relative)
    assert spec.half_width is not None
    a = spec.half_width * scale
    return Component(name, Distribution(spec.distribution, a, dof), "B",
                     f"certified ±{spec.half_width:g}{' (relative)' if spec.relative else ''}{unit}, "
                     f"{spec.distribution}", relative=spec.relative)


def derive(name: str, spec: Spec, location: Location) -> Derived:
    unit = spec.unit or ""
    comp = component(spec.certificate, unit)
    q = Quantity(name=name, value=spec.certificate.value, unit=unit, components=(comp,),
                 description=spec.description or "",
                 working=(f"certified value {spec.certificate.value:g}{' ' + unit if unit else ''}; {comp.origin}",),
                 location=location)
    return Derived((q,))


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """A better certificate: half the stated uncertainty."""
    block = dict(raw["certificate"])
    key = "expanded" if "expanded" in block else "half_width"
    block[key] = float(block[key]) / 2
    return [("a certificate with half the uncertainty", {**raw, "certificate": block})]

class Certificate(InputModel):
    """A value and its uncertainty from a certificate."""

    key = "certificate"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
