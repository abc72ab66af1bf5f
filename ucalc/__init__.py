"""ucalc: measurement-uncertainty budgets for analytical-chemistry laboratories.

Budgets are YAML files; ucalc validates them, propagates them by the law of propagation of uncertainty
(JCGM 100:2008) and by Monte Carlo (JCGM 101:2008), and reports the expanded uncertainty. From Python::

    import ucalc
    budget = ucalc.load("budget.yaml")
    result = budget.propagate()
    result.expanded_uncertainty

The names below are imported on first use, so that ``import ucalc`` (and the command line) start fast.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

__all__ = [
    "Budget",
    "BudgetError",
    "BudgetErrors",
    "ComputationError",
    "GumResult",
    "MonteCarloResult",
    "UcalcError",
    "__version__",
    "batch",
    "from_dict",
    "load",
    "propagate",
    "simulate",
]

_WHERE = {
    "Budget": "ucalc.budget.definitions",
    "BudgetError": "ucalc.errors",
    "BudgetErrors": "ucalc.errors",
    "ComputationError": "ucalc.errors",
    "UcalcError": "ucalc.errors",
    "GumResult": "ucalc.engines.gum",
    "MonteCarloResult": "ucalc.engines.montecarlo",
    "batch": "ucalc.api",
    "from_dict": "ucalc.api",
    "load": "ucalc.api",
    "propagate": "ucalc.api",
    "simulate": "ucalc.api",
}

if TYPE_CHECKING:
    from .api import batch, from_dict, load, propagate, simulate
    from .budget.definitions import Budget
    from .engines.gum import GumResult
    from .engines.montecarlo import MonteCarloResult
    from .errors import BudgetError, BudgetErrors, ComputationError, UcalcError


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        value = getattr(import_module(_WHERE[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'ucalc' has no attribute '{name}'")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
