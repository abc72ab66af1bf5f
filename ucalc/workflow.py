"""One call per CLI command: load a budget and run the requested engines, returning plain results."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .budget.definitions import Budget
from .engines.gum import GumResult


@dataclass(frozen=True)
class Evaluation:
    """A budget with the results of the engines that were run on it."""

    budget: Budget
    gum: GumResult


def check_budget(path: str | Path) -> Budget:
    """Load and validate a budget (raises BudgetErrors listing every problem)."""
    from .budget.load import load_budget

    return load_budget(path)


def evaluate(path: str | Path, *, second_order: bool = False) -> Evaluation:
    """Load a budget and propagate it by the GUM."""
    from .engines.gum import propagate

    budget = check_budget(path)
    return Evaluation(budget, propagate(budget, second_order=second_order))
