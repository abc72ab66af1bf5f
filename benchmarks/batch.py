"""Batch speed: the vectorised per-row GUM against a per-row loop with the `uncertainties` package.

10^5 rows of a 6-input budget (three inputs vary per row, one with a relative component). Prints both times
and the speed-up measured in this run (target: at least 100x), and checks that the two agree to 1e-9 relative.
"""

from __future__ import annotations

import time

BUDGET = """
ucalc: 1
title: benchmark, six inputs
measurand: {symbol: c, unit: mg/kg}
model: |
  c = (c_inst - c_blank) * V / m * f_dil / R
coverage: {probability: 0.95}
inputs:
  c_inst: {value: 12.5, unit: ug/L, components: [{name: cal, standard: 0.02, relative: true, dof: 8},
                                                 {name: noise, standard: 0.05}]}
  c_blank: {value: 0.3, unit: ug/L, components: [{name: b, standard: 0.04, dof: 9}]}
  V: {value: 50, unit: mL, components: [{name: v, half_width: 0.06, distribution: triangular}]}
  m: {value: 0.25, unit: g, components: [{name: m, standard: 0.0002}]}
  f_dil: {value: 10, components: [{name: d, standard: 0.003, relative: true}]}
  R: {value: 0.97, components: [{name: r, expanded: 0.03, k: 2}]}
"""
ROWS = 100_000


def main() -> None:
    import numpy as np
    from uncertainties import ufloat

    from ucalc.budget.load import load_budget_text
    from ucalc.engines.batch import propagate_rows, row_input

    budget = load_budget_text(BUDGET)
    rng = np.random.default_rng(1)
    columns = {"c_inst": rng.uniform(1, 50, ROWS), "m": rng.uniform(0.2, 0.3, ROWS),
               "f_dil": rng.choice([1.0, 2.0, 5.0, 10.0], ROWS)}

    def vectorised():  # type: ignore[no-untyped-def]
        rows = [row_input(budget, name, None, values) for name, values in columns.items()]
        return rows, propagate_rows(budget, rows, ROWS)

    vectorised()  # first call imports scipy.stats; time the steady state, best of three
    times = []
    for _ in range(3):
        start = time.perf_counter()
        rows, result = vectorised()
        times.append(time.perf_counter() - start)
    t_vector = min(times)

    f = budget.model.function("uncertainties")
    fixed = {n: ufloat(q.value, q.standard_uncertainty) for n, q in budget.quantities.items() if n not in columns}
    u_row = {r.name: r.u for r in rows}
    start = time.perf_counter()
    reference = np.empty(ROWS)
    for i in range(ROWS):
        env = dict(fixed)
        for name, values in columns.items():
            env[name] = ufloat(values[i], u_row[name][i])
        reference[i] = f(env).std_dev
    t_loop = time.perf_counter() - start

    worst = float(np.max(np.abs(result.standard_uncertainty - reference) / reference))
    print(f"{ROWS} rows, {len(budget.model.inputs)} inputs")
    print(f"vectorised ucalc batch      : {t_vector:.3f} s")
    print(f"per-row loop, uncertainties : {t_loop:.3f} s")
    print(f"speed-up: {t_loop / t_vector:.0f}x (target >= 100x: {'met' if t_loop / t_vector >= 100 else 'NOT met'})")
    print(f"largest relative difference in u_c: {worst:.2e} (must be <= 1e-9: {'ok' if worst <= 1e-9 else 'FAIL'})")


if __name__ == "__main__":
    main()
