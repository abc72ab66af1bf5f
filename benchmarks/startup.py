"""Start-up time of `ucalc --help` against `python -c pass`, measured in this run (target: under 0.5 s).

Prints the median wall time of each over several runs and their ratio.
"""

from __future__ import annotations

import shutil
import statistics
import subprocess
import sys
import time


def median_time(cmd: list[str], runs: int = 7) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    exe = shutil.which("ucalc")
    ucalc = [exe, "--help"] if exe else [sys.executable, "-m", "ucalc.cli", "--help"]
    base = median_time([sys.executable, "-c", "pass"])
    help_time = median_time(ucalc)
    print(f"python -c pass : {base * 1000:.0f} ms")
    print(f"ucalc --help   : {help_time * 1000:.0f} ms (target < 500 ms: {'met' if help_time < 0.5 else 'NOT met'})")
    print(f"ratio          : {help_time / base:.1f}")


if __name__ == "__main__":
    main()
