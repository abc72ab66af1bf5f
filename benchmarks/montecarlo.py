"""Monte Carlo speed and memory, measured in one run.

A 10-input model with mixed distributions (Gaussian, rectangular, triangular, arcsine, t) is propagated with
10^6 trials; its time is divided by the time numpy's default generator takes to draw 10^7 standard normals in
the same process (target: at most 1.5). Peak memory of a 10^7-trial run is measured in a fresh process with
tracemalloc, which sees numpy's allocations (target: at most 200 MB).
"""

from __future__ import annotations

import subprocess
import sys
import time

BUDGET = """
ucalc: 1
title: benchmark, ten inputs, one component each
measurand: {symbol: y, unit: mg/kg}
model: |
  c = (c_inst - c_blank) * f1 * f2 / R
  y = c * V / m * (1 + d_drift) * cos(phi) + k_ie
coverage: {probability: 0.95}
inputs:
  c_inst: {value: 12.5, unit: ug/L, components: [{name: cal, standard: 0.2, dof: 8}]}
  c_blank: {value: 0.3, unit: ug/L, components: [{name: b, half_width: 0.1, distribution: rectangular}]}
  f1: {value: 10, components: [{name: d, half_width: 0.02, distribution: triangular}]}
  f2: {value: 5, components: [{name: d, standard: 0.01}]}
  R: {value: 0.97, components: [{name: r, expanded: 0.03, k: 2}]}
  V: {value: 50, unit: mL, components: [{name: v, standard: 0.03}]}
  m: {value: 0.25, unit: g, components: [{name: m, standard: 0.0002}]}
  d_drift: {value: 0, components: [{name: drift, half_width: 0.01, distribution: arcsine}]}
  phi: {value: 0.01, components: [{name: p, half_width: 0.005, distribution: rectangular}]}
  k_ie: {value: 0.002, unit: mg/kg, components: [{name: k, standard: 0.0005}]}
"""


def best_of(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def memory_child(trials: int) -> None:
    import tracemalloc

    from ucalc.budget.load import load_budget_text
    from ucalc.engines.montecarlo import simulate

    budget = load_budget_text(BUDGET)
    tracemalloc.start()
    simulate(budget, trials=trials, seed=1)
    _, peak = tracemalloc.get_traced_memory()
    print(peak)


def main() -> None:
    import numpy as np

    from ucalc.budget.load import load_budget_text
    from ucalc.engines.montecarlo import simulate

    budget = load_budget_text(BUDGET)
    assert len(budget.model.inputs) == 10
    rng = np.random.default_rng(0)
    t_normals = best_of(lambda: rng.standard_normal(10_000_000))
    t_mc = best_of(lambda: simulate(budget, trials=1_000_000, seed=1))
    ratio = t_mc / t_normals
    print(f"10^7 standard normals (numpy default generator): {t_normals:.3f} s")
    print(f"Monte Carlo, {len(budget.model.inputs)} inputs, 10^6 trials : {t_mc:.3f} s")
    print(f"ratio: {ratio:.2f} (target <= 1.5: {'met' if ratio <= 1.5 else 'NOT met'})")
    out = subprocess.run([sys.executable, __file__, "--memory", "10000000"], check=True, capture_output=True,
                         text=True).stdout
    peak_mb = int(out.strip().splitlines()[-1]) / 1e6
    print(f"peak traced memory at 10^7 trials: {peak_mb:.0f} MB (target <= 200 MB: "
          f"{'met' if peak_mb <= 200 else 'NOT met'})")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--memory":
        memory_child(int(sys.argv[2]))
    else:
        main()
