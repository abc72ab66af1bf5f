"""Which step to improve: the expanded uncertainty after each change, and the fewest actions that reach a target.

For every input of the budget table: U if its standard uncertainty were zero, and if it were halved
(hypothetical bounds), and U after each concrete action its input model knows (more replicates, class A
glassware, a larger aliquot, weighing, more calibration data, a better certificate...). Every figure is a full
recomputation of the changed budget by the GUM, coverage factor included.

Target search: sets of concrete actions, at most one per input, are tried by increasing size, exhaustively while
the number of candidate sets stays within ``MAX_EXHAUSTIVE``; the first size at which any set reaches the target
wins, and among those the set with the smallest U. Beyond that limit, a greedy search adds at each step the
action that lowers U most.
"""

from __future__ import annotations

import copy
import dataclasses
import itertools
import math
from dataclasses import dataclass
from typing import Any

from .budget.definitions import Budget, Quantity
from .budget.yamlio import Document
from .engines.gum import GumResult, propagate
from .errors import OptionError, UcalcError

MAX_EXHAUSTIVE = 3000


@dataclass(frozen=True)
class Option:
    """One change and its effect; ``kind`` is 'zero', 'halved' (hypothetical) or 'action' (concrete)."""

    input: str
    action: str
    kind: str
    expanded_uncertainty: float
    reduction: float
    relative_reduction: float


@dataclass(frozen=True)
class TargetPlan:
    target: float
    reachable: bool
    actions: tuple[Option, ...]
    expanded_uncertainty: float
    floor: float
    searched: str
    evaluated: int


@dataclass(frozen=True)
class Improvement:
    measurand: str
    unit: str
    value: float
    expanded_uncertainty: float
    options: tuple[Option, ...]
    plan: TargetPlan | None = None
    skipped: tuple[str, ...] = ()


@dataclass(frozen=True)
class _Candidate:
    top: str  # top-level input whose raw data it replaces
    row: str  # budget-table input it improves
    label: str
    raw: dict[str, Any]


def _scaled(budget: Budget, name: str, factor: float) -> Budget:
    q = budget.quantities[name]
    comps = tuple(dataclasses.replace(c, distribution=dataclasses.replace(c.distribution,
                                                                          scale=c.distribution.scale * factor))
                  for c in q.components)
    quantities = dict(budget.quantities)
    quantities[name] = dataclasses.replace(q, components=comps)
    return dataclasses.replace(budget, quantities=quantities)


def _expanded(budget: Budget) -> float:
    return propagate(budget).expanded_uncertainty


def _top_input(name: str, tops: list[str]) -> str:
    head = name.split(".", 1)[0]
    return head if head in tops else name


def parse_target(text: str, value: float) -> float:
    """An expanded uncertainty in the measurand's unit, or relative to the value with a trailing '%'."""
    raw = text.strip()
    try:
        if raw.endswith("%"):
            target = float(raw[:-1]) / 100 * abs(value)
        else:
            target = float(raw)
    except ValueError:
        raise OptionError("target", f"'{text}' is not a number or a percentage such as 5%") from None
    if not math.isfinite(target) or target <= 0:
        raise OptionError("target", f"must be positive (got '{text}')")
    return target


def improve(doc: Document, budget: Budget, target: str | None = None) -> Improvement:
    """Options for every input of the budget table, and, with ``target``, the plan that reaches it."""
    from .budget.load import build_budget
    from .errors import BudgetErrors
    from .scenarios import actions_for

    base = propagate(budget)
    U0 = base.expanded_uncertainty
    tops = list(doc.data["inputs"])
    options: list[Option] = []

    def option(row: str, label: str, kind: str, U: float) -> Option:
        return Option(row, label, kind, U, U0 - U, (U0 - U) / U0 if U0 else 0.0)

    for row in base.contributions:
        q: Quantity = budget.quantities[row.input]
        if not q.components:
            continue
        options.append(option(row.input, "uncertainty zero (bound)", "zero", _expanded(_scaled(budget, row.input, 0))))
        options.append(option(row.input, "uncertainty halved", "halved", _expanded(_scaled(budget, row.input, 0.5))))

    candidates: list[_Candidate] = []
    skipped: list[str] = []
    rows = {c.input for c in base.contributions}
    for top in tops:
        raw = doc.data["inputs"][top]
        if not isinstance(raw, dict):
            continue
        for label, new_raw in actions_for(raw):
            target_row = top if top in rows else _row_of(label, top, rows)
            candidates.append(_Candidate(top, target_row, label, new_raw))

    def rebuilt(changes: list[_Candidate]) -> GumResult | None:
        data = copy.deepcopy(doc.data)
        for c in changes:
            data["inputs"][c.top] = c.raw
        try:
            return propagate(build_budget(dataclasses.replace(doc, data=data)))
        except (BudgetErrors, UcalcError, ArithmeticError, ValueError):
            return None

    usable: list[tuple[_Candidate, float]] = []
    for c in candidates:
        result = rebuilt([c])
        if result is None:
            skipped.append(f"{c.top}: {c.label} (the changed budget is not valid)")
            continue
        usable.append((c, result.expanded_uncertainty))
        options.append(option(c.row, c.label, "action", result.expanded_uncertainty))
    options.sort(key=lambda o: (-o.reduction, o.input, o.action))
    plan = None
    if target is not None:
        goal = parse_target(target, base.value)
        plan = _search(goal, U0, usable, rebuilt, option)
    return Improvement(base.measurand, base.unit, base.value, U0, tuple(options), plan, tuple(skipped))


def _row_of(label: str, top: str, rows: set[str]) -> str:
    """Budget-table row an action on a composite input (a dilution) concerns, from its label 'step 2 final'."""
    words = label.split()
    if len(words) > 1 and words[0] == "step" and words[1].endswith(":"):
        return f"{top} (step {words[1].rstrip(':')})"
    if len(words) > 2 and words[0] == "step":
        step = words[1].rstrip(":")
        role = words[2].rstrip(":")
        name = f"{top}.s{step}_{role}"
        if name in rows:
            return name
        return f"{top} step {step}"
    return top


def _search(goal: float, U0: float, usable: list[tuple[_Candidate, float]], rebuilt, option) -> TargetPlan:  # type: ignore[no-untyped-def]
    by_input: dict[str, list[_Candidate]] = {}
    for c, _ in usable:
        by_input.setdefault(c.top, []).append(c)
    groups = list(by_input.values())
    evaluated = 0

    def as_options(cands: tuple[_Candidate, ...], U: float) -> tuple[Option, ...]:
        return tuple(option(c.row, c.label, "action", U) for c in cands)

    # the floor: the best action of every input applied together
    single = {id(c): u for c, u in usable}
    best_each = [min(g, key=lambda c: single[id(c)]) for g in groups]
    floor_result = rebuilt(best_each) if best_each else None
    floor = floor_result.expanded_uncertainty if floor_result else U0
    if U0 <= goal:
        return TargetPlan(goal, True, (), U0, floor, "the budget already meets the target", 0)
    total = math.prod(len(g) + 1 for g in groups) - 1  # every set with at most one action per input
    if total <= MAX_EXHAUSTIVE:
        for size in range(1, len(groups) + 1):
            best: tuple[float, tuple[_Candidate, ...]] | None = None
            for chosen_groups in itertools.combinations(groups, size):
                for chosen in itertools.product(*chosen_groups):
                    result = rebuilt(list(chosen))
                    evaluated += 1
                    if result and result.expanded_uncertainty <= goal and (
                            best is None or result.expanded_uncertainty < best[0]):
                        best = (result.expanded_uncertainty, chosen)
            if best is not None:
                how = (f"exhaustive search by increasing number of actions (at most one per input); {evaluated} "
                       "sets evaluated")
                return TargetPlan(goal, True, as_options(best[1], best[0]), best[0], floor, how, evaluated)
        return TargetPlan(goal, False, (), floor, floor,
                          f"exhaustive search; {evaluated} sets evaluated; no set reaches the target", evaluated)
    chosen_list: list[_Candidate] = []
    current = U0
    remaining = [list(g) for g in groups]
    while remaining and current > goal:
        trial = [(rebuilt(chosen_list + [c]), gi, c) for gi, g in enumerate(remaining) for c in g]
        evaluated += len(trial)
        scored = [(r.expanded_uncertainty, gi, c) for r, gi, c in trial if r is not None]
        if not scored:
            break
        U, gi, c = min(scored, key=lambda t: t[0])
        if U >= current:
            break
        chosen_list.append(c)
        current = U
        remaining.pop(gi)
    how = f"greedy search (more than {MAX_EXHAUSTIVE} candidate sets); {evaluated} sets evaluated"
    if current <= goal:
        return TargetPlan(goal, True, as_options(tuple(chosen_list), current), current, floor, how, evaluated)
    return TargetPlan(goal, False, (), min(current, floor), min(current, floor), how, evaluated)

