"""Time against size for the main commands, with the fitted exponent (slope of log time on log size).

- GUM: ``ucalc run`` of a budget of 10 to 300 inputs;
- Monte Carlo: ``ucalc run --method mc`` of a 10-input model, 10^5 to 10^7 trials;
- batch: ``ucalc batch`` of 10^3 to 10^6 rows to CSV (the table of benchmarks/batch.py);
- planning: ``ucalc improve --target`` (U to 70 % of its value) of a budget of 10 to 100 inputs.

Each command runs through the CLI in this process after a warm-up, so start-up (benchmarks/startup.py) is not
counted; times are CPU times of this process (``--wall`` for wall time), best of ``--runs`` for runs under a
second. A series stops growing once one size takes longer than ``--max-seconds``; the sizes left out are
printed as such. An exponent near 1 means time proportional to size.

Usage: ``python benchmarks/scaling.py [--only gum,mc,batch,planning] [--runs R] [--max-seconds S] [--quick]``.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import math
import os
import platform
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import batch as batch_benchmark  # noqa: E402  (the table and budget of benchmarks/batch.py)
import montecarlo as mc_benchmark  # noqa: E402  (the 10-input model of benchmarks/montecarlo.py)

WALL = False
DISTRIBUTIONS = ["{standard: %g}", "{half_width: %g, distribution: rectangular}",
                 "{half_width: %g, distribution: triangular}", "{standard: %g, dof: 12}"]


def clock() -> float:
    return time.perf_counter() if WALL else time.process_time()


def budget_text(inputs: int) -> str:
    """A budget of ``inputs`` inputs: half of them factors near 1 with relative components, half additive
    corrections near 0; mixed distributions, some with finite dof. y = f1 * ... * fm * (1 + d1 + ... + dk), written
    as products and sums of at most 40 terms on lines of their own."""
    factors = inputs // 2
    corrections = inputs - factors
    f = [f"f{i}" for i in range(1, factors + 1)]
    d = [f"d{i}" for i in range(1, corrections + 1)]
    group = 40  # terms per model line, well inside the expression depth limit
    products = [f[i:i + group] for i in range(0, len(f), group)]
    sums = [d[i:i + group] for i in range(0, len(d), group)]
    model = [f"  p{j} = {' * '.join(g)}" for j, g in enumerate(products)]
    model += [f"  s{j} = {' + '.join(g)}" for j, g in enumerate(sums)]
    model.append(f"  y = {' * '.join(f'p{j}' for j in range(len(products)))} * "
                 f"(1 + {' + '.join(f's{j}' for j in range(len(sums)))})")
    lines = ["ucalc: 1", f"title: benchmark, {inputs} inputs", "measurand: {symbol: y, unit: mg/kg}",
             "model: |", *model, "coverage: {probability: 0.95}", "inputs:"]
    for i, name in enumerate(f):
        spec = DISTRIBUTIONS[i % 4] % (0.002 + 0.0001 * i)
        lines.append(f"  {name}: {{value: {1 + 0.001 * i:g}, components: [{{name: c, relative: true, "
                     f"{spec[1:-1]}}}]}}")
    for i, name in enumerate(d):
        spec = DISTRIBUTIONS[(i + 1) % 4] % (0.001 + 0.0002 * i)
        lines.append(f"  {name}: {{value: 0, components: [{{name: c, {spec[1:-1]}}}]}}")
    return "\n".join(lines) + "\n"


def cli(args: list[str]) -> float:
    from ucalc.cli import app

    sink = io.StringIO()
    start = clock()
    with contextlib.redirect_stdout(sink), contextlib.redirect_stderr(sink):
        code = app(args, prog_name="ucalc", standalone_mode=False)
    elapsed = clock() - start
    if code not in (None, 0):
        raise SystemExit(f"ucalc {' '.join(args)} failed ({code}): {sink.getvalue()[-500:]}")
    return elapsed


def measure(args: list[str], runs: int) -> float:
    first = cli(args)
    if first > 1.0:
        return first
    return min([first, *(cli(args) for _ in range(runs - 1))])


def slope(sizes: list[float], times: list[float]) -> float:
    """Least-squares slope of log(time) on log(size)."""
    if len(sizes) < 2:
        return math.nan
    xs, ys = [math.log(s) for s in sizes], [math.log(t) for t in times]
    mx, my = sum(xs) / len(xs), sum(ys) / len(ys)
    return sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / sum((x - mx) ** 2 for x in xs)


def series(name: str, unit: str, sizes: list[int], make_args, runs: int, limit: float) -> None:  # type: ignore[no-untyped-def]
    done: list[int] = []
    times: list[float] = []
    print(f"\n{name}\n")
    print(f"| {unit} | time (s) |")
    print("| ---: | ---: |")
    for size in sizes:
        if times and times[-1] > limit:
            print(f"| {size:,} | not run (the previous size took more than {limit:g} s) |")
            continue
        t = measure(make_args(size), runs)
        done.append(size)
        times.append(t)
        print(f"| {size:,} | {t:.3f} |", flush=True)
    print(f"\nfitted exponent (log-log slope): {slope(done, times):.2f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", default="gum,mc,batch,planning")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--max-seconds", type=float, default=120.0)
    parser.add_argument("--wall", action="store_true", help="wall time instead of CPU time")
    parser.add_argument("--quick", action="store_true", help="the smaller sizes only")
    args = parser.parse_args()
    global WALL
    WALL = args.wall
    only = set(args.only.split(","))
    print(f"machine: {platform.machine()}, {os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f}; "
          f"Python {platform.python_version()}; {'wall' if WALL else 'CPU'} time")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)

        def budget_file(inputs: int) -> Path:
            path = folder / f"b{inputs}.yaml"
            if not path.exists():
                path.write_text(budget_text(inputs), encoding="utf-8")
            return path

        cli(["run", str(budget_file(10))])  # warm-up: imports
        if "gum" in only:
            sizes = [10, 30, 100] if args.quick else [10, 30, 100, 300]
            series("GUM, `ucalc run`", "inputs", sizes, lambda n: ["run", str(budget_file(n))], args.runs,
                   args.max_seconds)
        if "mc" in only:
            model = folder / "mc10.yaml"
            model.write_text(mc_benchmark.BUDGET, encoding="utf-8")
            sizes = [100_000, 1_000_000] if args.quick else [100_000, 1_000_000, 10_000_000]
            series("Monte Carlo, `ucalc run --method mc` (10 inputs)", "trials", sizes,
                   lambda n: ["run", str(model), "--method", "mc", "--trials", str(n), "--seed", "1"], args.runs,
                   args.max_seconds)
        if "batch" in only:
            budget = folder / "batch.yaml"
            budget.write_text(batch_benchmark.BUDGET, encoding="utf-8")
            sizes = [1_000, 10_000, 100_000] if args.quick else [1_000, 10_000, 100_000, 1_000_000]

            def batch_args(n: int) -> list[str]:
                table = folder / f"t{n}.csv"
                if not table.exists():
                    batch_benchmark.make_table(table, n)
                return ["batch", str(budget), str(table), "-o", str(folder / "out.csv"), *batch_benchmark.OPTIONS,
                        "--force"]

            series("Batch, `ucalc batch` to CSV", "rows", sizes, batch_args, args.runs, args.max_seconds)
        if "planning" in only:
            from ucalc.api import load, propagate

            sizes = [10, 30] if args.quick else [10, 30, 100]

            def plan_args(n: int) -> list[str]:
                path = budget_file(n)
                target = 0.7 * propagate(load(path)).expanded_uncertainty
                return ["improve", str(path), "--target", f"{target:.6g}"]

            series("Planning, `ucalc improve --target` (U to 70 %)", "inputs", sizes, plan_args, args.runs,
                   args.max_seconds)


if __name__ == "__main__":
    main()
