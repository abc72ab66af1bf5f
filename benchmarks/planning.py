"""Planning speed: `ucalc improve --target` against a plain `ucalc run` of the same budget, as ratios in one run.

Target: on a 100-input budget, `improve --target` takes at most 2x `ucalc run` (GUM). The budgets are generated
(invented demo data): a product of N factors near 1, a third of them means of replicate results, a third
certificate values, a third plain components, so that every input offers concrete actions or bounds; the target
is 80 % of the budget's expanded uncertainty U, which needs several actions. Each time is the best of
``--runs`` runs (default 3).
Usage: ``python benchmarks/planning.py [--runs N] [--sizes 10 30 100]``; it prints time against size and the
exponent of a power law fitted to the improve times.
"""

from __future__ import annotations

import argparse
import math
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

TARGET = 2.0


def budget_text(n: int) -> str:
    """A budget of ``n`` inputs (invented numbers, deterministic)."""
    lines = ["ucalc: 1", f"title: planning benchmark, {n} inputs", "measurand: {symbol: y}",
             "model: |", "  y = " + " * ".join(f"x{i}" for i in range(n)), "coverage: {probability: 0.95}",
             "inputs:"]
    for i in range(n):
        kind = i % 3
        if kind == 0:
            values = [round(1.0 + 0.002 * math.sin(7 * i + j), 6) for j in range(4)]
            lines.append(f"  x{i}: {{replicates: {{values: {values}}}}}")
        elif kind == 1:
            lines.append(f"  x{i}: {{certificate: {{value: 1.0, expanded: {0.001 + 0.0002 * (i % 5):.4f}, k: 2}}}}")
        else:
            u = 0.0005 + 0.0001 * (i % 7)
            lines.append(f"  x{i}: {{value: 1.0, components: [{{name: c, standard: {u:.4f}}}]}}")
    return "\n".join(lines) + "\n"


def ucalc_command() -> list[str]:
    script = Path(sys.executable).with_name("ucalc")
    return [str(script)] if script.exists() else [sys.executable, "-m", "ucalc.cli"]


def best_time(cmd: list[str], runs: int) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - start)
    return min(times)


def searched(cmd: list[str]) -> str:
    import json

    out = subprocess.run(cmd + ["--format", "json"], check=True, capture_output=True, text=True).stdout
    plan = json.loads(out).get("target") or {}
    return str(plan.get("searched", ""))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--sizes", type=int, nargs="+", default=[10, 30, 100])
    args = parser.parse_args()
    ucalc = ucalc_command()
    print(f"machine: {platform.machine()}, {platform.system()} {platform.release()}, "
          f"Python {platform.python_version()}")
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            path = Path(tmp) / f"b{n}.yaml"
            path.write_text(budget_text(n), encoding="utf-8")
            run = best_time([*ucalc, "run", str(path)], args.runs)
            import json

            done = subprocess.run([*ucalc, "run", str(path), "--format", "json"], check=True, capture_output=True,
                                  text=True)
            goal = 0.8 * json.loads(done.stdout)["expanded_uncertainty"]
            improve_cmd = [*ucalc, "improve", str(path), "--target", repr(goal)]
            plan = best_time(improve_cmd, args.runs)
            rows.append((n, run, plan))
            print(f"{n:4d} inputs: run {run:.2f} s, improve --target {plan:.2f} s, ratio {plan / run:.2f} "
                  f"(target <= {TARGET:g} at 100 inputs); search: {searched(improve_cmd)}")
    if len(rows) > 1:
        xs = [math.log(n) for n, _, _ in rows]
        ys = [math.log(p) for _, _, p in rows]
        mx, my = sum(xs) / len(xs), sum(ys) / len(ys)
        slope = sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / sum((x - mx) ** 2 for x in xs)
        print(f"improve --target time ~ inputs^{slope:.2f} over {rows[0][0]}-{rows[-1][0]} inputs")


if __name__ == "__main__":
    main()
