"""The interface every input model implements, and the registry that picks one for an input.

An input model turns the facts a lab has (a flask's class, calibration readings, replicate results...) into one
or more :class:`~ucalc.budget.definitions.Quantity` objects and, where it applies, correlations between them.
Each model lives in its own module of this package and is found by the key that marks it in a budget.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import Any, Protocol

from pydantic import BaseModel

from ..budget.definitions import Quantity
from ..errors import Location


@dataclass(frozen=True)
class Derived:
    """What an input model yields.

    ``quantities``: the input itself (named as the input) and any auxiliary quantities (named ``input.field``);
    ``correlations``: (a, b, r) among them; ``expression``: when set, the input is not a quantity but this
    expression over auxiliary quantities, inserted as a model line (so each item stays its own row in the
    budget table); ``warnings``: text for the user.
    """

    quantities: tuple[Quantity, ...]
    correlations: tuple[tuple[str, str, float], ...] = ()
    expression: str | None = None
    warnings: tuple[str, ...] = field(default=())


class InputModel(Protocol):
    """A module implementing an input model has a pydantic ``Spec`` and a ``derive`` function."""

    Spec: type[BaseModel]

    def derive(self, name: str, spec: Any, location: Location) -> Derived: ...


# key that marks the model in a budget -> module in this package
REGISTRY: dict[str, str] = {
    "components": "direct",
}


def model_key(raw: dict[str, Any]) -> str:
    """Which input model a raw input mapping uses: the first registry key present, else 'components'."""
    present = [key for key in REGISTRY if key != "components" and key in raw]
    return present[0] if present else "components"


def get_model(key: str) -> InputModel:
    module = importlib.import_module(f"{__package__}.{REGISTRY[key]}")
    return module  # type: ignore[return-value]
