"""Direct input: an estimate and its list of uncertainty components, as written in the budget.

The input's standard uncertainty is the root sum of squares of its components and its degrees of freedom follow
from Welch-Satterthwaite over them (JCGM 100 G.4.1). An input with no components is an exact value.
"""

from __future__ import annotations

from pydantic import BaseModel, ConfigDict, Field

from ..budget.definitions import Quantity
from ..errors import Location
from .base import Derived
from .components import ComponentSpec, build_component


class Spec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    value: float
    unit: str | None = Field(default=None, max_length=100)
    description: str | None = None
    components: list[ComponentSpec] = Field(default_factory=list, max_length=200)


def derive(name: str, spec: Spec, location: Location) -> Derived:
    unit = spec.unit or ""
    components = tuple(build_component(c, spec.value, unit) for c in spec.components)
    quantity = Quantity(
        name=name, value=spec.value, unit=unit, components=components,
        description=spec.description or "", model="direct", location=location,
    )
    return Derived((quantity,))
