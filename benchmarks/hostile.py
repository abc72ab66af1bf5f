"""How long each hostile budget of tests/hostile_cases.py takes to be refused, measured in this run.

Each case is written to a temporary file and loaded (after one warm-up load, so imports are not counted); the
script prints every time, the slowest, and its ratio to the one-second target.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from tests.hostile_cases import BASE, CASES  # noqa: E402
from ucalc.errors import UcalcError  # noqa: E402
from ucalc.workflow import evaluate  # noqa: E402


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        warm = Path(folder) / "warm.yaml"
        warm.write_text(BASE % "x", encoding="utf-8")
        evaluate(warm)
        times = {}
        for name, (raw, _) in CASES.items():
            path = Path(folder) / "case.yaml"
            path.write_bytes(raw)
            start = time.perf_counter()
            try:
                evaluate(path)
                outcome = "ACCEPTED"
            except UcalcError:
                outcome = "refused"
            times[name] = time.perf_counter() - start
            print(f"{name:28} {outcome:8} {times[name] * 1000:8.1f} ms")
    slowest = max(times, key=times.__getitem__)
    print(f"slowest: {slowest}, {times[slowest]:.3f} s = {times[slowest]:.2f} of the 1 s target "
          f"({'met' if times[slowest] < 1.0 else 'NOT met'})")


if __name__ == "__main__":
    main()
