"""The interface every input model implements, and the registry that picks one for an input.

An input model turns the facts a lab has (a flask's class, calibration readings, replicate results...) into one
or more :class:`~ucalc.budget.definitions.Quantity` objects and, where it applies, correlations between them.
Each model lives in its own module of this package and is found by the key that marks it in a budget.
"""

from __future__ import annotations

import dataclasses
import importlib
from dataclasses import dataclass, field
from functools import cache
from typing import Any, ClassVar

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


Action = tuple[str, dict[str, Any]]  # (what it does, the input's new mapping)
RowValues = tuple[Any, Any, Any, dict[int, str]]  # per-row estimates, u, dof (arrays) and errors by row


class InputModel:
    """Base class of every input model: its key, its ``Spec``, ``derive`` and optional hooks with defaults.

    A subclass sets ``key`` (the key that marks it in a budget, also the name of its module), ``Spec`` (the
    pydantic model of the input's mapping) and overrides ``derive``; it overrides a hook only where it has
    something to offer. The loader calls :meth:`build`, which records the model on every quantity it makes.
    """

    key: ClassVar[str] = ""
    Spec: ClassVar[type[BaseModel]]
    settable: ClassVar[tuple[str, ...]] = ()  # fields ``--set`` may change that are not keys of the mapping

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        """The input's quantities (the input itself first, named ``name``), correlations among them, warnings."""
        raise NotImplementedError

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        """Concrete improvement actions on the input's mapping, for ``ucalc improve`` (none by default)."""
        return []

    def set_field(self, raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
        """The mapping with one of :attr:`settable` set, or None when ``field`` is a plain key (the default)."""
        return None

    def rows(self, name: str, raw: dict[str, Any], values: Any) -> RowValues | None:
        """Per-row (estimates, u, dof, errors by row) of the input for a column of values from a table of samples
        (a calibration takes sample responses), or None for the default: the row's value is the estimate and
        the components are rescaled (see :mod:`ucalc.engines.batch`)."""
        return None

    def row_correlations(self, name: str, raw: dict[str, Any], values: Any) -> dict[str, Any]:
        """Per-row correlation coefficients of the rows' values (from :meth:`rows`) with other quantities of the
        budget, by quantity name (none by default)."""
        return {}

    def build(self, name: str, spec: Any, location: Location) -> Derived:
        """:meth:`derive`, with each quantity that no other model made marked as made by this one."""
        derived = self.derive(name, spec, location)
        marked = tuple(q if q.model else dataclasses.replace(q, model=self.key) for q in derived.quantities)
        return dataclasses.replace(derived, quantities=marked)


# key that marks an input model in a budget -> its class, in the module of the same name in this package
REGISTRY: dict[str, str] = {
    "components": "Components",
    "glassware": "Glassware",
    "balance": "Balance",
    "certificate": "Certificate",
    "replicates": "Replicates",
    "recovery": "Recovery",
    "calibration": "Calibration",
    "dilution": "Dilution",
    "molar_mass": "MolarMass",
    "reproducibility": "Reproducibility",
    "bias": "Bias",
    "working_range": "WorkingRange",
}


def model_key(raw: dict[str, Any]) -> str:
    """Which input model a raw input mapping uses: the first registry key present, else 'components'."""
    present = [key for key in REGISTRY if key != "components" and key in raw]
    return present[0] if present else "components"


@cache
def get_model(key: str) -> InputModel:
    """The input model registered under ``key``."""
    cls = getattr(importlib.import_module(f"{__package__}.{key}"), REGISTRY[key])
    model = cls()
    assert isinstance(model, InputModel) and model.key == key, key
    return model


def model_for(raw: dict[str, Any]) -> InputModel:
    """The input model of a raw input mapping."""
    return get_model(model_key(raw))
