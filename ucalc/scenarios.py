"""Changing a budget without editing its file: ``--set INPUT.FIELD=VALUE`` and the improvement actions.

Both work on the budget's data before validation, so a changed budget is checked and built exactly like one
read from a file. A field is a key of the input (``V.value``), of its input-model block (``V_flask.class``
finds ``glassware.class``), a dotted path (``m.components.0.standard``), or a field an input model offers
itself (``rep.n``: the number of replicates averaged).
"""

from __future__ import annotations

import copy
import difflib
from typing import TYPE_CHECKING, Any

from .errors import BudgetError, BudgetErrors

if TYPE_CHECKING:
    from .inputs.base import InputModel

Action = tuple[str, dict[str, Any]]  # (what it does, the new raw input mapping)


def parse_value(text: str) -> Any:
    """A scalar as YAML would read it: 6 -> int, 0.02 -> float, A -> 'A', true -> True, [1, 2] -> list."""
    import io

    from ruamel.yaml import YAML

    try:
        value = YAML(typ="safe", pure=True).load(io.StringIO(text))
    except Exception:
        return text
    return text if value is None else value


def _model(raw: dict[str, Any]) -> InputModel:
    from .inputs.base import model_for

    return model_for(raw)


def _leaves(node: Any, prefix: str = "") -> list[str]:
    if isinstance(node, dict):
        out = []
        for key, value in node.items():
            out.extend(_leaves(value, f"{prefix}{key}."))
        return out
    if isinstance(node, list) and node and all(isinstance(v, dict) for v in node):
        out = []
        for i, value in enumerate(node):
            out.extend(_leaves(value, f"{prefix}{i}."))
        return out
    return [prefix[:-1]]


def set_field(raw: dict[str, Any], field: str, value: Any) -> dict[str, Any]:
    """A copy of one input's raw mapping with ``field`` set to ``value``; ValueError lists valid fields."""
    new = copy.deepcopy(raw)
    model = _model(new)
    changed = model.set_field(new, field, value)
    if changed is not None:
        return changed
    parts = field.split(".")
    candidates = [parts] + [[key, *parts] for key, v in new.items() if isinstance(v, dict)]
    for path in candidates:
        node: Any = new
        for part in path[:-1]:
            if isinstance(node, dict) and part in node:
                node = node[part]
            elif isinstance(node, list) and part.isdigit() and int(part) < len(node):
                node = node[int(part)]
            else:
                node = None
                break
        last = path[-1]
        if isinstance(node, dict) and (last in node or (len(path) > 1 and _allowed_new_key(model, path))):
            node[last] = value
            return new
        if isinstance(node, list) and last.isdigit() and int(last) < len(node):
            node[int(last)] = value
            return new
    valid = sorted(set(_leaves(new)) | set(model.settable))
    close = difflib.get_close_matches(field, valid, n=1)
    hint = f"did you mean '{close[0]}'? " if close else ""
    raise ValueError(f"unknown field '{field}'; {hint}valid fields: {', '.join(valid)}")


def _allowed_new_key(model: InputModel, path: list[str]) -> bool:
    """Whether ``path`` names an optional key of the input model's block that the budget left out."""
    if len(path) != 2:
        return False
    block = model.Spec.model_fields.get(path[0])
    inner = getattr(block, "annotation", None)
    fields = getattr(inner, "model_fields", {})
    aliases = {f.alias for f in fields.values() if f.alias}
    return path[1] in fields or path[1] in aliases


def apply_settings(data: dict[str, Any], settings: list[str]) -> dict[str, Any]:
    """Apply ``INPUT.FIELD=VALUE`` settings to a budget's data; raise BudgetErrors naming each bad one."""
    new = copy.deepcopy(data)
    errors: list[BudgetError] = []
    inputs = new.get("inputs") if isinstance(new, dict) else None
    for setting in settings:
        subject = f"--set {setting}"
        if "=" not in setting or "." not in setting.split("=", 1)[0]:
            errors.append(BudgetError("write INPUT.FIELD=VALUE, e.g. rep.n=6 or V_flask.class=A", subject=subject))
            continue
        target, text = setting.split("=", 1)
        name, field = target.split(".", 1)
        if not isinstance(inputs, dict) or name not in inputs or not isinstance(inputs[name], dict):
            valid = ", ".join(inputs) if isinstance(inputs, dict) else ""
            errors.append(BudgetError(f"unknown input '{name}'; inputs are {valid}", subject=subject))
            continue
        try:
            inputs[name] = set_field(inputs[name], field, parse_value(text))
        except ValueError as exc:
            errors.append(BudgetError(f"input '{name}': {exc}", subject=subject))
    if errors:
        raise BudgetErrors(errors)
    return new


def actions_for(raw: dict[str, Any]) -> list[Action]:
    """Concrete improvement actions an input model knows for one input (may be none; none for a shared item's
    use, which changes with the item)."""
    if "use" in raw:
        return []
    return list(_model(raw).actions(copy.deepcopy(raw)))
