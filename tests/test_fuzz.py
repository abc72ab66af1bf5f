"""Property-based fuzzing of the expression parser and the budget loader (more than 10^4 generated inputs).

The only allowed outcomes are a result or ucalc's own error with a location; anything else (a crash, a
traceback, a hang) fails. Examples are drawn deterministically under CI so that the run is repeatable.
"""

from __future__ import annotations

import copy
import io
import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.database import DirectoryBasedExampleDatabase
from ruamel.yaml import YAML

from ucalc import expr
from ucalc.budget.load import load_budget_text
from ucalc.errors import BudgetErrors, ExpressionError, UcalcError
from ucalc.workflow import MonteCarloOptions, evaluate_budget

from .conftest import BUDGETS

pytestmark = pytest.mark.slow  # about a minute or more; `pytest -m "not slow"` skips it locally, CI runs it

SCALE = int(os.environ.get("UCALC_FUZZ_SCALE", "1"))  # more examples for a longer local fuzzing session
# outside CI a failing example is saved here and tried first on the next run (CI draws deterministically)
REPLAY = DirectoryBasedExampleDatabase(Path(__file__).resolve().parent.parent / ".hypothesis" / "examples")


def fuzz(examples: int) -> settings:
    return settings(max_examples=examples * SCALE, deadline=None, derandomize=bool(os.environ.get("CI")),
                    database=None if os.environ.get("CI") else REPLAY,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                           HealthCheck.function_scoped_fixture])
FILE = "fuzz.yaml"


def _located(exc: UcalcError) -> None:
    """Every error names the budget file (and, for budget problems, a line)."""
    if isinstance(exc, BudgetErrors):
        assert exc.errors
        for e in exc.errors:
            assert e.location is not None and e.location.file == FILE, e.message
    else:
        assert FILE in str(exc), str(exc)


def _outcome(text: str, mc: bool = False) -> None:
    try:
        budget = load_budget_text(text, FILE)
    except BudgetErrors as exc:
        _located(exc)
        return
    try:
        evaluate_budget(budget, method="both" if mc else "gum",
                        mc=MonteCarloOptions(trials=200, seed=1, block_size=64))
    except UcalcError as exc:
        _located(exc)


# ---- the expression parser ----------------------------------------------------------------------------------

EXPR_CHARS = "xyab0123456789.+-*/()e_ ,[]{}:;'\"=<>!&|^%@~`#\\\t\n" + "sqrtlogexpincoab"


@fuzz(4000)
@given(st.text(alphabet=EXPR_CHARS, max_size=60) | st.text(max_size=40))
def test_parser_returns_a_tree_or_a_located_error(text: str) -> None:
    try:
        tree = expr.parse(text)
    except ExpressionError as exc:
        assert exc.column >= 0 and exc.rule
        return
    assert isinstance(tree, expr.Node)


# ---- generated expressions inside a budget ----------------------------------------------------------------

ATOMS = st.sampled_from(["x", "y", "z", "w", "cal.slope", "2", "0", "1e308", "1e-308", "0.5", "-1", "3"])
FUNCS = st.sampled_from(["sqrt", "exp", "log", "log10", "sin", "cos", "tan", "abs", "open", "__import__"])
OPS = st.sampled_from(["+", "-", "*", "/", "**", "^", "//", "%", " and ", " if 1 else "])


@st.composite
def expressions(draw: st.DrawFn, depth: int = 4) -> str:
    if depth == 0 or draw(st.integers(0, 3)) == 0:
        return draw(ATOMS)
    kind = draw(st.integers(0, 3))
    if kind == 0:
        return f"{draw(FUNCS)}({draw(expressions(depth - 1))})"
    if kind == 1:
        return f"-({draw(expressions(depth - 1))})"
    return f"({draw(expressions(depth - 1))}{draw(OPS)}{draw(expressions(depth - 1))})"


INPUTS = """\
  x: {value: 2.5, unit: mg, components: [{name: a, standard: 0.1}]}
  y: {value: 0.4, unit: mL, components: [{name: b, half_width: 0.01, distribution: rectangular}]}
  z: {value: 1.2, components: [{name: c, standard: 0.02, dof: 4}]}
  w: {value: 0, components: [{name: d, half_width: 0.3, distribution: arcsine}]}
"""


@fuzz(2500)
@given(expressions(), st.sampled_from(["", "mg", "mg/mL", "1/mL"]))
def test_generated_models_give_results_or_located_errors(text: str, unit: str) -> None:
    budget = (f"ucalc: 1\ntitle: fuzz\nmeasurand: {{symbol: q, unit: '{unit}'}}\nmodel: |\n  q = {text}\n"
              f"inputs:\n{INPUTS}")
    _outcome(budget, mc=True)


# ---- mutated example budgets -------------------------------------------------------------------------------

def _load(path) -> object:
    return YAML(typ="safe", pure=True).load(path.read_text(encoding="utf-8"))


EXAMPLES = [_load(p) for p in sorted(BUDGETS.glob("*.yaml"))]
SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=False),
                    st.text(max_size=12), st.just("-1"), st.just(0), st.just(1e308), st.just("x y"))
VALUES = st.recursive(SCALARS, lambda inner: st.lists(inner, max_size=4) | st.dictionaries(
    st.text(min_size=1, max_size=8), inner, max_size=4), max_leaves=8)


def _paths(node: object, prefix: tuple = ()) -> list[tuple]:
    out = [prefix] if prefix else []
    if isinstance(node, dict):
        for k, v in node.items():
            out.extend(_paths(v, (*prefix, k)))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out.extend(_paths(v, (*prefix, i)))
    return out


@st.composite
def mutated(draw: st.DrawFn) -> str:
    data = copy.deepcopy(draw(st.sampled_from(EXAMPLES)))
    for _ in range(draw(st.integers(1, 3))):
        paths = _paths(data)
        path = draw(st.sampled_from(paths))
        parent = data
        for part in path[:-1]:
            parent = parent[part]
        last = path[-1]
        action = draw(st.integers(0, 3))
        if action == 0 and isinstance(parent, dict):
            del parent[last]
        elif action == 1 and isinstance(parent, dict):
            parent[draw(st.text(min_size=1, max_size=10))] = parent.pop(last)
        elif action == 2 and isinstance(parent[last], (int, float)) and not isinstance(parent[last], bool):
            parent[last] = draw(st.sampled_from([-parent[last], 0, parent[last] * 1e6, parent[last] * 1e-9]))
        else:
            parent[last] = draw(VALUES)
    stream = io.StringIO()
    YAML(typ="safe", pure=True).dump(data, stream)
    return stream.getvalue()


@fuzz(2000)
@given(mutated())
def test_mutated_budgets_give_results_or_located_errors(text: str) -> None:
    _outcome(text)


# ---- random YAML -------------------------------------------------------------------------------------------

@fuzz(1500)
@given(st.one_of(VALUES, st.dictionaries(st.sampled_from(["ucalc", "title", "measurand", "model", "inputs",
                                                          "coverage", "correlations"]), VALUES)))
def test_random_yaml_gives_located_errors(data: object) -> None:
    stream = io.StringIO()
    YAML(typ="safe", pure=True).dump(data, stream)
    _outcome(stream.getvalue())


@fuzz(1000)
@given(st.binary(max_size=200) | st.text(max_size=200).map(lambda s: s.encode("utf-8", "surrogatepass")))
def test_random_bytes_give_located_errors(tmp_path_factory: pytest.TempPathFactory, raw: bytes) -> None:
    from ucalc.budget.load import load_budget

    path = tmp_path_factory.getbasetemp() / FILE
    path.write_bytes(raw)
    try:
        load_budget(path)
    except BudgetErrors as exc:
        for e in exc.errors:
            assert e.location is not None and e.location.file == str(path)
