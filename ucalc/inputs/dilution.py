"""A dilution factor from a chain of steps, each an aliquot made up to a final volume (or mass).

f = prod(final_i / aliquot_i). Each aliquot and final item is built by its own input model (glassware, balance,
certificate or direct components) and stays a quantity of its own, named ``D.s1_aliquot``, ``D.s1_final``...;
the factor enters the model as the line ``D = (D.s1_final / D.s1_aliquot) * ...`` so that the budget table
shows every item with its own sensitivity coefficient.
"""

from __future__ import annotations

from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field, ValidationError

from ..budget.definitions import Quantity
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec, model_for


class Step(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)

    aliquot: dict[str, Any]
    final: dict[str, Any]


class Spec(InputSpec):
    KEY: ClassVar[str] = "dilution"

    dilution: list[Step] = Field(min_length=1, max_length=20)


def part_name(name: str, step: int, role: str) -> str:
    """Name of the quantity for a step's aliquot or final (steps counted from 1): ``D.s1_aliquot``."""
    return f"{name}.s{step}_{role}"


def derive(name: str, spec: Spec, location: Location) -> Derived:
    from .. import units

    if spec.unit:
        raise ValueError("a dilution factor has no unit; give units on its aliquots and final volumes")
    quantities: list[Quantity] = []
    correlations: list[tuple[str, str, float]] = []
    warnings: list[str] = []
    factors = []
    for i, step in enumerate(spec.dilution, 1):
        item_units = []
        for role in ("aliquot", "final"):
            raw = getattr(step, role)
            model = model_for(raw)
            if model.key == Dilution.key:
                raise ValueError(f"step {i} {role}: a dilution cannot contain a dilution")
            try:
                item_spec = model.Spec.model_validate(raw)
            except ValidationError as exc:
                first = exc.errors()[0]
                where = ".".join(str(p) for p in first["loc"])
                raise ValueError(f"step {i} {role}: {where + ': ' if where else ''}"
                                 f"{str(first['msg']).removeprefix('Value error, ')}") from None
            derived = model.build(part_name(name, i, role), item_spec, location)
            quantities.extend(derived.quantities)
            correlations.extend(derived.correlations)
            warnings.extend(derived.warnings)
            item_units.append(units.parse_unit(getattr(item_spec, "unit", None)))
        if not units.same_dimension(item_units[0], item_units[1]):
            raise ValueError(f"step {i}: aliquot and final must both be volumes or both masses")
        factors.append(f"({name}.s{i}_final / {name}.s{i}_aliquot)")
    return Derived(tuple(quantities), tuple(correlations), expression=" * ".join(factors),
                   warnings=tuple(warnings))


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Per step: each item's own actions, and a larger aliquot with a proportionally larger final volume."""
    from ..scenarios import actions_for
    from .glassware import larger

    out = []
    steps = raw["dilution"]
    for i, step in enumerate(steps):
        for role in ("aliquot", "final"):
            for label, item in actions_for(step[role]):
                if role == "aliquot" and "balance" in item and "glassware" in step["final"]:
                    continue  # weighing an aliquot into a volumetric flask mixes mass and volume
                if role == "final" and "balance" in item and "glassware" in step["aliquot"]:
                    continue
                new_steps = [dict(s) for s in steps]
                new_steps[i][role] = item
                out.append((f"step {i + 1} {role}: {label}", {**raw, "dilution": new_steps}))
        both = [(larger(step["aliquot"], f), larger(step["final"], f)) for f in (2, 2.5, 5, 10)]
        pair = next(((a, b, f) for (a, b), f in zip(both, (2, 2.5, 5, 10), strict=True) if a and b), None)
        if pair:
            new_steps = [dict(s) for s in steps]
            new_steps[i] = {"aliquot": pair[0], "final": pair[1]}
            out.append((f"step {i + 1}: aliquot and final volume ×{pair[2]:g} (same factor)",
                        {**raw, "dilution": new_steps}))
    return out


class Dilution(InputModel):
    """A dilution factor from a chain of aliquots and final volumes."""

    key = "dilution"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
