"""Monte Carlo speed and memory, as ratios measured in one run.

For a 10-input model with mixed distributions (Gaussian, rectangular, triangular, arcsine, t) and for the shipped
internal-standard budget (correlated Type A count rates), at 10^6 and 10^7 trials:

- (time of evaluating the budget with ``method="mc"``) - (time with ``method="gum"``), in-process, over the time
  of a hand-written numpy Monte Carlo of the same model: the same distributions drawn in blocks of the same size,
  the model evaluated, mean and standard deviation, and both coverage intervals found by partition (no full
  sort). Target: at most 1.1.
- the same Monte Carlo time over the time numpy's default generator takes to draw trials x inputs standard
  normals (the floor); target: down toward 1.5.
- peak resident memory of a 10^7-trial run of the 10-input model in a fresh process (ru_maxrss, includes the
  interpreter and libraries); target at most 200 MB.

Each time is the best of ``--runs`` runs (default 3; 10^7 trials use 2). Usage:
``python benchmarks/montecarlo.py [--runs N] [--quick]`` (``--quick``: 10^6 trials only).
"""

from __future__ import annotations

import argparse
import math
import platform
import resource
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
BLOCK = 131072
RATIO_TARGET = 1.1
FLOOR_TARGET = 1.5
RSS_TARGET_MB = 200.0

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
CORRELATED = ROOT / "budgets" / "internal-standard-ratio.yaml"


def best_of(fn: Callable[[], Any], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def intervals(y: Any, p: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """JCGM 101 7.7 intervals by partition: only the two tails of M - q values are sorted."""
    import numpy as np

    m = len(y)
    q = int(p * m + 0.5)
    r = (m - q + 1) // 2
    tail = m - q
    y.partition([tail - 1, q])
    y[:tail].sort()
    y[q:].sort()
    i = int(np.argmin(y[q:] - y[:tail]))
    return (float(y[r - 1]), float(y[r + q - 1])), (float(y[i]), float(y[i + q]))


def mixed_reference(trials: int, seed: int = 1) -> None:
    """The 10-input model by hand: each input drawn from its own generator, y = model, moments, intervals."""
    import numpy as np

    gens = [np.random.default_rng([seed, i]) for i in range(10)]
    y = np.empty(trials)
    for start in range(0, trials, BLOCK):
        n = min(BLOCK, trials - start)
        c_inst = 12.5 + 0.2 * gens[0].standard_t(8, n)
        c_blank = 0.3 + 0.1 * (2 * gens[1].random(n) - 1)
        pair = gens[2].random((n, 2))
        f1 = 10 + 0.02 * (pair[:, 0] - pair[:, 1])
        f2 = 5 + 0.01 * gens[3].standard_normal(n)
        rr = 0.97 + 0.015 * gens[4].standard_normal(n)
        v = 50 + 0.03 * gens[5].standard_normal(n)
        m = 0.25 + 0.0002 * gens[6].standard_normal(n)
        drift = 0.01 * np.sin(2 * np.pi * gens[7].random(n))
        phi = 0.01 + 0.005 * (2 * gens[8].random(n) - 1)
        k_ie = 0.002 + 0.0005 * gens[9].standard_normal(n)
        c = (c_inst - c_blank) * f1 * f2 / rr
        y[start:start + n] = c * v / m * 1e-3 * (1 + drift) * np.cos(phi) + k_ie
    float(np.mean(y)), float(np.std(y, ddof=1))
    intervals(y, 0.95)


def correlated_reference(trials: int, seed: int = 1) -> None:
    """The internal-standard ratio by hand: two correlated pairs as multivariate t (29 dof), c_std Gaussian."""
    import numpy as np

    rel = {"As": 0.011, "Ge": 0.009, "As_std": 0.010, "Ge_std": 0.009}
    value = {"As": 18250.0, "Ge": 402100.0, "As_std": 21480.0, "Ge_std": 409800.0}
    chol = np.linalg.cholesky(np.array([[1.0, 0.75], [0.75, 1.0]]))
    gens = [np.random.default_rng([seed, i]) for i in range(5)]
    y = np.empty(trials)
    for start in range(0, trials, BLOCK):
        n = min(BLOCK, trials - start)
        c_std = 5.0 * (1 + 0.004 * gens[0].standard_normal(n))
        out = {}
        for k, (a, b) in enumerate((("As", "Ge"), ("As_std", "Ge_std"))):
            z = gens[1 + 2 * k].standard_normal((n, 2))
            s = np.sqrt(29.0 / gens[2 + 2 * k].chisquare(29.0, n))
            za = z[:, 0] * chol[0, 0]
            zb = z[:, 0] * chol[1, 0] + z[:, 1] * chol[1, 1]
            out[a] = value[a] * (1 + rel[a] * za * s)
            out[b] = value[b] * (1 + rel[b] * zb * s)
        y[start:start + n] = c_std * (out["As"] / out["Ge"]) / (out["As_std"] / out["Ge_std"])
    float(np.mean(y)), float(np.std(y, ddof=1))
    intervals(y, 0.95)


def floor(trials: int, inputs: int) -> None:
    import numpy as np

    rng = np.random.default_rng(0)
    total = trials * inputs
    for start in range(0, total, BLOCK * inputs):
        rng.standard_normal(min(BLOCK * inputs, total - start))


def memory_child(trials: int) -> None:
    from ucalc.budget.load import load_budget_text
    from ucalc.engines.montecarlo import simulate

    simulate(load_budget_text(BUDGET), trials=trials, seed=1)
    print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)  # kB on Linux


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()

    from ucalc.budget.load import load_budget, load_budget_text
    from ucalc.workflow import MonteCarloOptions, evaluate_budget

    cases = [("10-input mixed", load_budget_text(BUDGET), mixed_reference),
             ("internal-standard-ratio (correlated)", load_budget(CORRELATED), correlated_reference)]
    print(f"machine: {platform.machine()}, {platform.system()} {platform.release()}, Python "
          f"{platform.python_version()}; best of {args.runs} (10^7: of {min(args.runs, 2)})")
    print("| model | trials | mc - gum | reference | ratio (target <= 1.1) | floor | ratio to floor |")
    print("| --- | --- | --- | --- | --- | --- | --- |")
    for name, budget, reference in cases:
        for trials in (10**6,) if args.quick else (10**6, 10**7):
            runs = args.runs if trials <= 10**6 else min(args.runs, 2)
            options = MonteCarloOptions(trials=trials, seed=1)
            t_gum = best_of(lambda b=budget: evaluate_budget(b, method="gum"), runs)
            t_mc = best_of(lambda b=budget, o=options: evaluate_budget(b, method="mc", mc=o), runs) - t_gum
            t_ref = best_of(lambda r=reference, n=trials: r(n), runs)
            k = len(budget.model.inputs)
            t_floor = best_of(lambda n=trials, k=k: floor(n, k), runs)
            print(f"| {name} | 10^{round(math.log10(trials))} | {t_mc:.3f} s | {t_ref:.3f} s | "
                  f"{t_mc / t_ref:.2f} | {t_floor:.3f} s ({k} x trials normals) | {t_mc / t_floor:.2f} |")
    if not args.quick:
        out = subprocess.run([sys.executable, __file__, "--memory", "10000000"], check=True, capture_output=True,
                             text=True).stdout
        rss = int(out.strip().splitlines()[-1]) / 1024
        print(f"peak RSS of a 10^7-trial run (10-input model, fresh process): {rss:.0f} MB "
              f"(target <= {RSS_TARGET_MB:.0f} MB: {'met' if rss <= RSS_TARGET_MB else 'NOT met'})")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--memory":
        memory_child(int(sys.argv[2]))
    else:
        main()
