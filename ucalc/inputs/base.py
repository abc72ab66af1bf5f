"""The interface every input model implements, and the registry that picks one for an input.

An input model turns the facts a lab has (a flask's class, calibration readings, replicate results...) into one
or more :class:`~ucalc.budget.definitions.Quantity` objects and, where it applies, correlations between them.
Each model lives in its own module of this package and is found by the key that marks it in a budget.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import Any, ClassVar, Protocol

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Quantity
from ..errors import Location


@dataclass(frozen=True)
class Derived:
    """What an input model yields.

    ``quantities``: the input itself (named as the input) and any auxiliary quantities (named ``input.field``);
    ``correlations``: (a, b, r) among them; ``expression``: when set, the input is not a quantity but this
    expression over auxiliary quantities, inserted as a model line (so each item stays its own row in the
    budget table); ``warnings``: text for the user; ``working``: how an expression input was
    obtained (a quantity carries its own); ``origins``: why each correlation exists (parallel to
    ``correlations``); ``details``: the model's numbers as plain data for the JSON output.
    """

    quantities: tuple[Quantity, ...]
    correlations: tuple[tuple[str, str, float], ...] = ()
    expression: str | None = None
    warnings: tuple[str, ...] = field(default=())
    working: tuple[str, ...] = ()
    origins: tuple[str, ...] = ()
    details: dict[str, Any] = field(default_factory=dict)


class InputSpec(BaseModel):
    """Base of an input model's spec: the model's own block under ``KEY``, plus ``unit`` and ``description``.

    The unit may be written at the input's level or inside the block (not both, differently).
    """

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True, populate_by_name=True)
    KEY: ClassVar[str] = ""
    DEFAULT_UNIT: ClassVar[str | None] = None

    unit: str | None = Field(default=None, max_length=100)
    description: str | None = None

    @model_validator(mode="after")
    def _resolve_unit(self) -> InputSpec:
        inner = getattr(getattr(self, self.KEY, None), "unit", None)
        if inner and self.unit and inner != self.unit:
            raise ValueError(f"unit given twice: '{self.unit}' and '{inner}' inside '{self.KEY}'")
        self.unit = inner or self.unit or self.DEFAULT_UNIT
        return self


class InputModel(Protocol):
    """A module implementing an input model has a pydantic ``Spec`` and a ``derive`` function."""

    Spec: type[BaseModel]

    def derive(self, name: str, spec: Any, location: Location) -> Derived: ...


# key that marks the model in a budget -> module in this package
REGISTRY: dict[str, str] = {
    "components": "direct",
    "glassware": "glassware",
    "balance": "balance",
    "certificate": "certificate",
    "replicates": "replicates",
    "recovery": "recovery",
    "calibration": "calibration",
    "dilution": "dilution",
    "molar_mass": "molar_mass",
    "reproducibility": "reproducibility",
    "bias": "bias",
    "working_range": "working_range",
}


def model_key(raw: dict[str, Any]) -> str:
    """Which input model a raw input mapping uses: the first registry key present, else 'components'."""
    present = [key for key in REGISTRY if key != "components" and key in raw]
    return present[0] if present else "components"


def get_model(key: str) -> InputModel:
    module = importlib.import_module(f"{__package__}.{REGISTRY[key]}")
    return module  # type: ignore[return-value]
