"""Which step to improve: the expanded uncertainty after each change, and the fewest actions that reach a target.

For every input of the budget table: U if its standard uncertainty were zero, and if it were halved
(hypothetical bounds), and U after each concrete action its input model knows (more replicates, class A
glassware, a larger aliquot, weighing, more calibration data, a better certificate...).

Every figure comes from the budget's terms by the GUM kernel (:func:`ucalc.engines.gum.evaluate_rows`), coverage
factor included: a change re-derives only the changed input (its estimate, standard uncertainty, degrees of
freedom and the correlations among its own quantities); the other inputs' terms stay, and many candidate sets
are evaluated at once as the columns of one array. The budget is not rebuilt, except for a change whose input
becomes a different model line or a budget with shared items, which is rebuilt and propagated.

Target search: sets of concrete actions, at most one per input, are tried by increasing size, exhaustively while
the number of candidate sets stays within ``MAX_EXHAUSTIVE``; the first size at which any set reaches the target
wins, and among those the set with the smallest U. Beyond that limit, a greedy search adds at each step the
action that lowers U most. The plan says which search it used.
"""

from __future__ import annotations

import copy
import dataclasses
import itertools
import math
from dataclasses import dataclass
from typing import Any

from .budget.definitions import Budget
from .budget.yamlio import Document
from .engines.gum import GumResult, propagate
from .errors import OptionError, UcalcError

MAX_EXHAUSTIVE = 20_000


@dataclass(frozen=True)
class Option:
    """One change and its effect; ``kind`` is 'zero', 'halved' (hypothetical) or 'action' (concrete)."""

    input: str
    action: str
    kind: str
    expanded_uncertainty: float
    reduction: float
    relative_reduction: float
    note: str = ""


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
class _Change:
    """New (estimate, u, dof) of some quantities, and correlation coefficients among them (pairs sorted)."""

    quantities: dict[str, tuple[float, float, float]]
    correlations: dict[tuple[str, str], float]


@dataclass(frozen=True)
class _Candidate:
    top: str  # top-level input whose raw data it replaces
    row: str  # budget-table input it improves
    label: str
    raw: dict[str, Any]
    change: _Change | None  # None: the budget must be rebuilt to evaluate it


class _Terms:
    """The budget's terms, and U for many changed sets at once by the GUM kernel (one set per column)."""

    def __init__(self, budget: Budget) -> None:
        self.budget = budget
        self.names = budget.model.inputs
        self.index = {n: i for i, n in enumerate(self.names)}
        q = budget.quantities
        self.base = {n: (q[n].value, q[n].standard_uncertainty, q[n].dof) for n in self.names}
        self.corr = {tuple(sorted(pair)): r for pair, r in budget.correlations.items()}

    def evaluate(self, columns: list[list[_Change]]) -> tuple[Any, Any, Any]:
        """(U, u_c, k) for each column's set of changes; NaN where the kernel gives no result."""
        import numpy as np

        from .engines.gum import evaluate_rows

        n = len(columns)
        value: dict[str, Any] = {name: np.full(n, v[0]) for name, v in self.base.items()}
        u: dict[str, Any] = {name: np.full(n, v[1]) for name, v in self.base.items()}
        dof: dict[str, Any] = {name: np.full(n, v[2]) for name, v in self.base.items()}
        corr: dict[Any, Any] = {pair: np.full(n, r) for pair, r in self.corr.items()}
        for col, changes in enumerate(columns):
            for change in changes:
                for name, (v, uu, d) in change.quantities.items():
                    if name in value:
                        value[name][col], u[name][col], dof[name][col] = v, uu, d
                for pair, r in change.correlations.items():
                    corr.setdefault(pair, np.zeros(n))[col] = r
        pairs: list[tuple[int, int, Any]] = []
        for (a, b), r in corr.items():
            if a in self.index and b in self.index and np.any(r != 0):
                i, j = sorted((self.index[a], self.index[b]))
                pairs.append((i, j, r))
        rows = evaluate_rows(self.budget, value, u, dof, n, pairs=sorted(pairs, key=lambda p: (p[0], p[1])))
        bad = np.fromiter(rows.errors, dtype=np.intp, count=len(rows.errors))
        out = [np.array(a, dtype=float) for a in (rows.expanded_uncertainty, rows.standard_uncertainty,
                                                  rows.coverage_factor)]
        for a in out:
            a[bad] = np.nan
        return out[0], out[1], out[2]


def _uses_items(node: Any) -> bool:
    """Whether a raw input refers to a shared item (``{use: ITEM}`` anywhere inside it)."""
    if isinstance(node, dict):
        return "use" in node or any(_uses_items(v) for v in node.values())
    if isinstance(node, list):
        return any(_uses_items(v) for v in node)
    return False


def _change_of(doc: Document, budget: Budget, top: str, raw: dict[str, Any]) -> _Change | None:
    """The changed input derived alone (no rebuild); None where only a rebuild can tell (a different model line,
    new quantities, shared items)."""
    from .budget.load import derive_input

    if _uses_items(raw):  # shared items correlate inputs through their components: rebuild
        return None
    quantities, correlations, line = derive_input(doc, top, raw)
    old_line = next((x.text for x in budget.model.lines if x.name == top), None)
    if (line or None) != (old_line or None) and (line or "").strip() != (old_line or "").strip():
        return None
    if any(name not in budget.quantities for name in quantities):
        return None
    return _Change({name: (q.value, q.standard_uncertainty, q.dof) for name, q in quantities.items()},
                   {tuple(sorted(pair)): r for pair, r in correlations.items()})  # type: ignore[misc]


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
    import numpy as np

    from .budget.load import build_budget
    from .errors import BudgetErrors
    from .scenarios import actions_for

    base = propagate(budget)
    U0 = base.expanded_uncertainty
    terms = _Terms(budget)
    tops = list(doc.data["inputs"])
    options: list[Option] = []

    def option(row: str, label: str, kind: str, U: float, note: str = "") -> Option:
        return Option(row, label, kind, U, U0 - U, (U0 - U) / U0 if U0 else 0.0, note)

    bounded = [row.input for row in base.contributions if budget.quantities[row.input].components]
    hypothetical = [[_Change({name: (v, f * uu, d)}, {})] for name in bounded
                    for v, uu, d in [terms.base[name]] for f in (0.0, 0.5)]
    if hypothetical:
        U_h, uc_h, k_h = terms.evaluate(hypothetical)
        for i, name in enumerate(bounded):
            zero, half = float(U_h[2 * i]), float(U_h[2 * i + 1])
            note = _why_higher(budget, name, base, float(uc_h[2 * i]), float(k_h[2 * i])) if zero > U0 else ""
            options.append(option(name, "uncertainty zero (bound)", "zero", zero, note))
            options.append(option(name, "uncertainty halved", "halved", half))

    candidates: list[_Candidate] = []
    skipped: list[str] = []
    rows = {c.input for c in base.contributions}
    for top in tops:
        raw = doc.data["inputs"][top]
        if not isinstance(raw, dict):
            continue
        for label, new_raw in actions_for(raw):
            target_row = top if top in rows else _row_of(label, top, rows)
            try:
                change = _change_of(doc, budget, top, new_raw)
            except (BudgetErrors, UcalcError, ArithmeticError, ValueError):
                skipped.append(f"{top}: {label} (the changed budget is not valid)")
                continue
            candidates.append(_Candidate(top, target_row, label, new_raw, change))

    def rebuilt(changes: list[_Candidate]) -> float:
        data = copy.deepcopy(doc.data)
        for c in changes:
            data["inputs"][c.top] = c.raw
        try:
            return propagate(build_budget(dataclasses.replace(doc, data=data))).expanded_uncertainty
        except (BudgetErrors, UcalcError, ArithmeticError, ValueError):
            return math.nan

    def expanded(sets: list[list[_Candidate]]) -> Any:
        """U of each set of candidates: from the terms, or by a rebuild where a candidate needs one."""
        out = np.full(len(sets), np.nan)
        fast = [i for i, chosen in enumerate(sets) if all(c.change is not None for c in chosen)]
        for start in range(0, len(fast), 4096):
            part = fast[start:start + 4096]
            out[part] = terms.evaluate([[c.change for c in sets[i] if c.change is not None] for i in part])[0]
        for i, chosen in enumerate(sets):
            if any(c.change is None for c in chosen):
                out[i] = rebuilt(chosen)
        return out

    usable: list[tuple[_Candidate, float]] = []
    for c, U in zip(candidates, expanded([[c] for c in candidates]), strict=True):
        if not math.isfinite(U):
            skipped.append(f"{c.top}: {c.label} (the changed budget is not valid)")
            continue
        usable.append((c, float(U)))
        options.append(option(c.row, c.label, "action", float(U)))
    options.sort(key=lambda o: (-o.reduction, o.input, o.action))
    plan = None
    if target is not None:
        goal = parse_target(target, base.value)
        plan = _search(goal, U0, usable, expanded, option)
    return Improvement(base.measurand, base.unit, base.value, U0, tuple(options), plan, tuple(skipped))


def _why_higher(budget: Budget, name: str, base: GumResult, uc: float, k: float) -> str:
    """Why U rises when an input's uncertainty is set to zero."""
    if uc > base.standard_uncertainty:
        partners = [(b if a == name else a, r) for (a, b), r in budget.correlations.items()
                    if r and name in (a, b) and (b if a == name else a) in budget.model.inputs]
        listed = ", ".join(f"'{other}' (r = {r:g})" for other, r in partners)
        return (f"U rises: the correlation of '{name}' with {listed} cancels part of the variance (JCGM 100 5.2.2); "
                "with its uncertainty zero that cancelling term goes too")
    return (f"U rises: without '{name}' the remaining terms have fewer effective degrees of freedom, so k rises from "
            f"{base.coverage_factor:.3g} to {k:.3g} (JCGM 100 G.4.1)")


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


def _search(goal: float, U0: float, usable: list[tuple[_Candidate, float]], expanded: Any,
            option: Any) -> TargetPlan:
    import numpy as np

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
    floor_U = float(expanded([best_each])[0]) if best_each else U0
    floor = floor_U if math.isfinite(floor_U) else U0
    if U0 <= goal:
        return TargetPlan(goal, True, (), U0, floor, "the budget already meets the target", 0)
    total = math.prod(len(g) + 1 for g in groups) - 1  # every set with at most one action per input
    if total <= MAX_EXHAUSTIVE:
        for size in range(1, len(groups) + 1):
            sets = [chosen for chosen_groups in itertools.combinations(groups, size)
                    for chosen in itertools.product(*chosen_groups)]
            U = expanded([list(c) for c in sets])
            evaluated += len(sets)
            ok = np.flatnonzero(np.isfinite(U) & (U <= goal))
            if ok.size:
                best = int(ok[np.argmin(U[ok])])
                how = (f"exhaustive search by increasing number of actions (at most one per input); {evaluated} "
                       "sets evaluated")
                return TargetPlan(goal, True, as_options(sets[best], float(U[best])), float(U[best]), floor, how,
                                  evaluated)
        return TargetPlan(goal, False, (), floor, floor,
                          f"exhaustive search; {evaluated} sets evaluated; no set reaches the target", evaluated)
    chosen_list: list[_Candidate] = []
    current = U0
    remaining = [list(g) for g in groups]
    while remaining and current > goal:
        trial = [(gi, c) for gi, g in enumerate(remaining) for c in g]
        U = expanded([chosen_list + [c] for _, c in trial])
        evaluated += len(trial)
        if not np.any(np.isfinite(U)):
            break
        best = int(np.nanargmin(U))
        if U[best] >= current:
            break
        gi, c = trial[best]
        chosen_list.append(c)
        current = float(U[best])
        remaining.pop(gi)
    how = (f"greedy search, the exhaustive one being too large ({total} candidate sets, more than "
           f"{MAX_EXHAUSTIVE}); {evaluated} sets evaluated; the plan may use more actions than the fewest possible")
    if current <= goal:
        return TargetPlan(goal, True, as_options(tuple(chosen_list), current), current, floor, how, evaluated)
    return TargetPlan(goal, False, (), min(current, floor), min(current, floor), how, evaluated)
