"""The Python interface for notebooks and scripts (docs/python-api.md).

Load a budget from a file or from Python data, propagate it by the GUM (JCGM 100) or by Monte Carlo (JCGM 101),
and apply it to a table of samples. The command line is built on these functions. Errors are the exceptions of
:mod:`ucalc.errors`; nothing here prints, and no file is written.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

from .budget.definitions import Budget
from .errors import ComputationError

if TYPE_CHECKING:
    from .engines.gum import GumResult
    from .engines.montecarlo import MonteCarloResult, Progress
    from .samples.decisions import Rule, Side


def load(path: str | Path) -> Budget:
    """Read, validate and build a budget file; raise :class:`~ucalc.errors.BudgetErrors` listing every problem."""
    from .budget.load import load_budget

    return load_budget(path)


def from_dict(data: Any, source: str = "<dict>") -> Budget:
    """Validate and build a budget given as Python data with the keys of a budget file (docs/budget-format.md)."""
    from .budget.load import load_data

    return load_data(data, source)


def propagate(budget: Budget, *, second_order: bool = False) -> GumResult:
    """The GUM result of a budget (JCGM 100 clauses 5 and 6, annex G)."""
    from .engines.gum import propagate as gum

    try:
        return gum(budget, second_order=second_order)
    except ComputationError as exc:
        raise exc.located(budget.source) from None


def simulate(budget: Budget, trials: int = 1_000_000, seed: int | None = None, *, adaptive: bool = False,
             digits: int = 2, block_size: int | None = None, progress: Progress | None = None,
             gum: GumResult | None = None) -> MonteCarloResult:
    """The Monte Carlo result of a budget (JCGM 101 clause 7), validated against the GUM result (clause 8).

    ``adaptive`` stops when the results are stable to ``digits`` significant digits (JCGM 101 7.9) instead of
    after ``trials`` trials; ``gum`` is the GUM result to validate against when it is at hand already.
    """
    from .engines import montecarlo

    reference = gum if gum is not None else propagate(budget)
    block = {"block_size": block_size} if block_size else {}
    try:
        if adaptive:
            result = montecarlo.simulate_adaptive(budget, digits=digits, seed=seed, progress=progress, **block)
        else:
            result = montecarlo.simulate(budget, trials=trials, seed=seed, progress=progress, **block)
    except ComputationError as exc:
        raise exc.located(budget.source) from None
    return montecarlo.with_validation(result, montecarlo.validate(reference, result, digits, budget))


def batch(budget: Budget, frame: Any, *, maps: dict[str, str] | None = None, limit: float | None = None,
          limit_column: str | None = None, rule: Rule = "simple", side: Side = "upper", loq: float | None = None,
          loq_column: str | None = None, digits: int = 2) -> Any:
    """Results for every row of a pandas DataFrame of samples (docs/batch.md), as a new DataFrame.

    Columns named like an input (or mapped by ``maps``, input -> column) give that input's value per row; the
    result adds value, unit, u, nu_eff, k, U, U_rel, statement and error, and with a limit decision,
    p_conformance and decision_rule. The frame's own columns are kept as they are.
    """
    from .samples.table import BatchOptions, run_batch

    options = BatchOptions(maps=dict(maps or {}), limit=limit, limit_column=limit_column, rule=rule, side=side,
                           loq=loq, loq_column=loq_column, digits=digits)
    out, _ = run_batch(budget, frame.reset_index(drop=True), options)
    out.index = frame.index
    return out
