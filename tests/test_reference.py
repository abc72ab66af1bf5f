"""Published worked examples, compared to the digits their sources print (cases in tests/reference/)."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

import pytest
from ruamel.yaml import YAML

from ucalc.budget.load import load_budget
from ucalc.engines.gum import propagate

from .conftest import REFERENCE

CASES = YAML(typ="safe").load((REFERENCE / "expected.yaml").read_text(encoding="utf-8"))


def _round_sig(x: float, sig: int) -> float:
    d = Decimal(repr(x))
    return float(d.quantize(Decimal(1).scaleb(d.adjusted() - sig + 1), rounding=ROUND_HALF_UP))


def _matches(ours: float, rule: dict[str, Any]) -> bool:
    printed = float(rule["printed"])
    if "decimals" in rule:
        return float(Decimal(repr(ours)).quantize(Decimal(1).scaleb(-rule["decimals"]), ROUND_HALF_UP)) == printed
    if "sig" in rule:
        return math.isclose(_round_sig(ours, rule["sig"]), printed, rel_tol=1e-12)
    if rule.get("floor"):
        return math.floor(ours) == printed
    return abs(ours - printed) <= float(rule["within"])


@pytest.mark.parametrize("case", CASES, ids=lambda c: f"{c['budget']}:{c['source'][:30]}")
def test_published_case(case: dict[str, Any]) -> None:
    budget = load_budget(REFERENCE / case["budget"])
    result = propagate(budget, second_order=case.get("second_order", False))
    rows = []
    for key, rule in case["expect"].items():
        if key.startswith("input_u_"):
            ours = budget.quantities[key.removeprefix("input_u_")].standard_uncertainty
        else:
            ours = getattr(result, key)
        rows.append((key, ours, rule, _matches(ours, rule)))
    table = "\n".join(f"  {'ok ' if ok else 'BAD'} {k:24} ours {o:<22.12g} printed {r['printed']} ({r})"
                      for k, o, r, ok in rows)
    assert all(ok for *_, ok in rows), f"{case['source']}\n{table}"
