"""First-order GUM against an independent implementation: the ``uncertainties`` package.

Random smooth models over positive inputs with random (valid) correlation matrices: our u_c from exact
symbolic derivatives must equal the one ``uncertainties`` obtains by automatic differentiation.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from ucalc.budget.load import load_budget_text
from ucalc.engines.gum import propagate

NAMES = ["a", "b", "c", "d"]


@st.composite
def expressions(draw: st.DrawFn, depth: int = 3) -> str:
    if depth == 0 or draw(st.booleans()):
        if draw(st.integers(0, 4)) == 0:
            return repr(draw(st.floats(0.5, 3.0)))
        return draw(st.sampled_from(NAMES))
    kind = draw(st.sampled_from(["+", "-", "*", "/", "**", "sqrt", "exp", "log", "sin", "cos"]))
    left = draw(expressions(depth - 1))
    if kind in ("sqrt", "log"):
        return f"{kind}({left} * {left} + 1)"
    if kind in ("exp", "sin", "cos"):
        return f"{kind}({left} / 10)"
    if kind == "**":
        return f"({left}) ** {draw(st.sampled_from(['2', '0.5', '3', '-1']))}" if "-" not in left else f"({left})**2"
    right = draw(expressions(depth - 1))
    if kind == "/":
        return f"({left}) / ({right} * {right} + 1)"
    return f"({left} {kind} {right})"


@settings(max_examples=150, deadline=None)
@given(
    text=expressions(),
    values=st.lists(st.floats(1.0, 5.0), min_size=4, max_size=4),
    rel=st.lists(st.floats(0.001, 0.05), min_size=4, max_size=4),
    seed=st.integers(0, 2**32 - 1),
)
def test_first_order_matches_uncertainties(text: str, values: list[float], rel: list[float], seed: int) -> None:
    from uncertainties import correlated_values

    rng = np.random.default_rng(seed)
    a = rng.normal(size=(4, 4))
    cov = a @ a.T + 0.1 * np.eye(4)
    d = np.sqrt(np.diag(cov))
    r = cov / np.outer(d, d)
    u = [v * s for v, s in zip(values, rel, strict=True)]
    inputs = "\n".join(
        f"  {n}: {{value: {v!r}, components: [{{name: s, standard: {ui!r}}}]}}"
        for n, v, ui in zip(NAMES, values, u, strict=True)
    )
    corr = "\n".join(f"  - {{between: [{NAMES[i]}, {NAMES[j]}], r: {float(r[i, j])!r}}}"
                     for i in range(4) for j in range(i + 1, 4))
    budget_text = (f"ucalc: 1\ntitle: oracle\nmeasurand: {{symbol: y}}\nmodel: 'y = {text} + a*0'\n"
                   f"inputs:\n{inputs}\ncorrelations:\n{corr}\n")
    budget = load_budget_text(budget_text)
    ours = propagate(budget)

    covariance = np.outer(u, u) * r
    uvals = correlated_values(values, covariance)
    env = dict(zip(NAMES, uvals, strict=True))
    reference = budget.model.function("uncertainties")(env)
    assert math.isclose(ours.value, reference.nominal_value, rel_tol=1e-12, abs_tol=1e-12)
    assert math.isclose(ours.standard_uncertainty, reference.std_dev, rel_tol=1e-9, abs_tol=1e-12)
