"""Start-up time of the ucalc command, as ratios measured in this run.

Targets:
- ``ucalc check`` and ``ucalc run`` (GUM) on each shipped budget: at most 1.5x
  ``python -c "import numpy, scipy.special, pint"`` (the libraries any propagation needs);
- ``ucalc --help``: at most 5x ``python -c pass``.

Each time is the best of ``--runs`` runs (default 3), so that other load on the machine counts as little as
possible. Usage: ``python benchmarks/startup.py [--runs N] [--cpu] [budget.yaml ...]``.
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
CHECK_RUN_TARGET = 1.5
HELP_TARGET = 5.0
CPU = False


def best_time(cmd: list[str], runs: int) -> float:
    """Best wall time of ``runs`` runs; with ``CPU`` set, best CPU time (user + system) of the child instead,
    which other load on a shared machine disturbs less."""
    times = []
    for _ in range(runs):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        wall = time.perf_counter() - start
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
        times.append(cpu if CPU else wall)
    return min(times)


def ucalc_command(module: bool = False) -> list[str]:
    script = Path(sys.executable).with_name("ucalc")
    return [str(script)] if script.exists() and not module else [sys.executable, "-m", "ucalc.cli"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--cpu", action="store_true", help="compare CPU time (user + system) instead of wall time")
    parser.add_argument("--module", action="store_true",
                        help="run `python -m ucalc.cli` from the current folder (e.g. an older checkout)")
    parser.add_argument("budgets", nargs="*", type=Path)
    args = parser.parse_args()
    global CPU
    CPU = args.cpu
    budgets = args.budgets or sorted((ROOT / "budgets").glob("*.yaml"))
    ucalc = ucalc_command(args.module)

    base = best_time([sys.executable, "-c", "pass"], args.runs)
    libs = best_time([sys.executable, "-c", "import numpy, scipy.special, pint"], args.runs)
    help_time = best_time([*ucalc, "--help"], args.runs)
    print(f"machine: {platform.machine()}, {os.cpu_count()} CPUs, Python {platform.python_version()}; "
          f"best of {args.runs} runs, {'CPU' if CPU else 'wall'} time")
    print(f"python -c pass                           : {base * 1000:6.0f} ms")
    print(f"python -c 'import numpy, scipy.special, pint': {libs * 1000:6.0f} ms")
    ratio = help_time / base
    print(f"ucalc --help                             : {help_time * 1000:6.0f} ms  "
          f"{ratio:4.1f}x python -c pass (target {HELP_TARGET:g}x: {'met' if ratio <= HELP_TARGET else 'NOT met'})")
    print()
    print(f"{'budget':36} {'check':>8} {'ratio':>6} {'run':>8} {'ratio':>6}   (ratio to the import line; "
          f"target {CHECK_RUN_TARGET:g}x)")
    worst = 0.0
    for path in budgets:
        check = best_time([*ucalc, "check", str(path)], args.runs)
        run = best_time([*ucalc, "run", str(path)], args.runs)
        worst = max(worst, check / libs, run / libs)
        print(f"{path.name:36} {check * 1000:6.0f}ms {check / libs:5.2f}x {run * 1000:6.0f}ms {run / libs:5.2f}x")
    print()
    print(f"worst check/run ratio: {worst:.2f}x (target {CHECK_RUN_TARGET:g}x: "
          f"{'met' if worst <= CHECK_RUN_TARGET else 'NOT met'})")


if __name__ == "__main__":
    main()
