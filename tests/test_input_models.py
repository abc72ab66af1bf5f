"""The input-model interface: every registered model is one class with its key, in the module of that name."""

from __future__ import annotations

import inspect

import pytest

from ucalc.budget.load import load_budget_text
from ucalc.inputs.base import REGISTRY, InputModel, get_model

HOOKS = {name for name, _ in inspect.getmembers(InputModel, inspect.isfunction) if not name.startswith("_")}


@pytest.mark.parametrize("key", sorted(REGISTRY))
def test_each_model_is_registered_under_its_key_in_its_own_module(key: str) -> None:
    model = get_model(key)
    assert isinstance(model, InputModel)
    assert model.key == key
    assert type(model).__module__ == f"ucalc.inputs.{key}"
    assert getattr(model.Spec, "KEY", key) in (key, "")


@pytest.mark.parametrize("key", sorted(REGISTRY))
def test_no_model_defines_a_method_the_interface_does_not_know(key: str) -> None:
    cls = type(get_model(key))
    own = {name for name, value in vars(cls).items() if inspect.isfunction(value) and not name.startswith("_")}
    assert own - HOOKS == set()  # a misspelt hook would otherwise never be called
    assert "build" not in own  # the loader's own step, where the model is recorded


def test_the_loader_records_which_model_made_each_quantity() -> None:
    text = """\
ucalc: 1
title: t
measurand: {symbol: c, unit: mg/L}
model: |
  c = m / V * D
inputs:
  m: {value: 10, unit: mg, components: [{name: b, standard: 0.01}]}
  V: {unit: mL, glassware: {item: flask, nominal: 100, class: A}}
  D:
    dilution:
      - aliquot: {unit: mL, certificate: {value: 1, half_width: 0.01}}
        final: {unit: mL, glassware: {item: flask, nominal: 10, class: A}}
"""
    budget = load_budget_text(text, "b.yaml")
    made = {name: q.model for name, q in budget.quantities.items()}
    assert made == {"m": "components", "V": "glassware", "D.s1_aliquot": "certificate", "D.s1_final": "glassware"}
