"""Shared items: a flask, pipette, balance or certificate declared once under ``items`` and used in several places.

Each use (an input ``{use: ITEM}``, or a dilution step's aliquot or final) is built from the item's definition,
merged with any keys the use adds (a balance reading), and stays a quantity of its own. Two uses of one item
share its systematic error, so their errors are correlated (JCGM 100 5.2.4: the covariance of two quantities
that depend on a common effect is the product of their sensitivities to it times its variance). With every
component shared the correlation coefficient is 1; components marked ``per_use`` (a filling repeatability, a
balance's readability) are drawn anew at each use and do not correlate:

    r(use_i, use_j) = sum over shared components u_k(use_i) u_k(use_j) / (u(use_i) u(use_j)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from ..budget.definitions import Quantity

USE = "use"


@dataclass
class Uses:
    """Item name -> names of the quantities built from it; items that are declared but never used."""

    by_item: dict[str, list[str]] = field(default_factory=dict)
    unknown: list[tuple[tuple[Any, ...], str]] = field(default_factory=list)  # (path of the use, item name)


def merge(item: dict[str, Any], use: dict[str, Any]) -> dict[str, Any]:
    """The item's raw definition with the keys a use adds (one level deep into the model's block)."""
    out = dict(item)
    for key, value in use.items():
        if key == USE:
            continue
        if isinstance(value, dict) and isinstance(out.get(key), dict):
            out[key] = {**out[key], **value}
        else:
            out[key] = value
    return out


def resolve(items: dict[str, Any], inputs: dict[str, Any]) -> tuple[dict[str, Any], Uses]:
    """Inputs with every ``{use: ITEM}`` replaced by the item's definition, and where each item is used."""
    from .dilution import part_name

    uses = Uses({name: [] for name in items})
    out: dict[str, Any] = {}

    def replace(raw: Any, path: tuple[Any, ...], quantity: str) -> Any:
        if not isinstance(raw, dict) or USE not in raw:
            return raw
        item = raw[USE]
        if not isinstance(item, str) or item not in items or not isinstance(items[item], dict):
            uses.unknown.append((path, str(item)))
            return raw
        uses.by_item[item].append(quantity)
        return merge(items[item], raw)

    for name, raw in inputs.items():
        new = replace(raw, ("inputs", name), name)
        if isinstance(new, dict) and isinstance(new.get("dilution"), list):
            steps = []
            for i, step in enumerate(new["dilution"], 1):
                if isinstance(step, dict):
                    step = {role: replace(value, ("inputs", name, "dilution", i - 1, role), part_name(name, i, role))
                            if role in ("aliquot", "final") else value for role, value in step.items()}
                steps.append(step)
            new = {**new, "dilution": steps}
        out[name] = new
    return out, uses


def correlations(uses: Uses, quantities: dict[str, Quantity]) -> list[tuple[str, str, float, str]]:
    """(a, b, r, origin) between every two uses of an item, from the components they share."""
    out = []
    for item, names in uses.by_item.items():
        built = [quantities[n] for n in names if n in quantities]
        for i, a in enumerate(built):
            for b in built[i + 1:]:
                theirs = {c.name: c.standard_uncertainty for c in b.components if not c.per_use}
                common = math.fsum(c.standard_uncertainty * theirs[c.name] for c in a.components
                                   if not c.per_use and c.name in theirs)
                ua, ub = a.standard_uncertainty, b.standard_uncertainty
                if common > 0 and ua > 0 and ub > 0:
                    r = max(-1.0, min(1.0, common / (ua * ub)))
                    out.append((a.name, b.name, r, f"shared item '{item}'"))
    return out
