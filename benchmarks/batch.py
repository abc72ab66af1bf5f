"""Batch speed, end to end, as ratios measured in this run (best of ``--runs``).

Targets (docs/performance.md):

- CSV: ``ucalc batch`` of 10^6 rows to CSV within 2x the time pandas needs to read the input table
  (``read_csv``) and write a table of the same output shape (``to_csv`` of ucalc's own output, read back);
- XLSX: 10^5 rows to XLSX within 1.5x ``DataFrame.to_excel`` of the same frame with the fastest writer pandas
  has here (openpyxl or xlsxwriter);
- memory: peak RSS of the ``ucalc batch`` process (10^6 rows to CSV) at most 3x the output table held in memory
  (``DataFrame.memory_usage(deep=True)`` of the output read back).

The command runs in this process through the CLI (imports warmed up first, so the ratio compares the work, not
the start-up that benchmarks/startup.py measures); times are CPU times of this process (``--wall`` for wall
time), which other load on a shared machine disturbs less. The memory run is a separate process. Agreement: the numbers
of every row equal the GUM kernel's (``propagate_rows``) to the last bit, statements equal the per-row statement
of the previous code path (``round_pair`` and the statement wording, row by row) for a sample of rows, and
u_c agrees with a per-row loop over the ``uncertainties`` package to 1e-9 relative.

Usage: ``python benchmarks/batch.py [--csv-rows N] [--xlsx-rows N] [--runs R]``; ``--quick`` is 10^5 / 10^4.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import math
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

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
OPTIONS = ["--limit", "50", "--rule", "guarded-acceptance", "--loq", "2"]
LOQ = 2.0
CSV_TARGET, XLSX_TARGET, MEMORY_TARGET = 2.0, 1.5, 3.0
WALL = False
NOTES = ["", "duplicate", "=1+2", "-5 % spike", "@check", "re-run\x07", "ok"]  # formula-like and control text


def make_table(path: Path, rows: int) -> None:
    """An input table of ``rows`` samples: name, three per-row inputs as text, a note column."""
    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(1)
    frame = pd.DataFrame({
        "sample": np.char.add("S", np.arange(rows).astype(str)),
        "c_inst": np.round(rng.uniform(0.2, 50, rows), 4),
        "m": np.round(rng.uniform(0.2, 0.3, rows), 4),
        "f_dil": rng.choice([1, 2, 5, 10], rows),
        "note": np.array(NOTES, dtype=object)[rng.integers(0, len(NOTES), rows)],
    })
    frame.to_csv(path, index=False)


def clock() -> float:
    """CPU time of this process (``--wall``: wall time); other load on a shared machine disturbs it less."""
    return time.perf_counter() if WALL else time.process_time()


def ucalc_batch(args: list[str]) -> float:
    """Time of ``ucalc batch ARGS`` run through the CLI in this process."""
    from ucalc.cli import app

    sink = io.StringIO()
    start = clock()
    with contextlib.redirect_stdout(sink), contextlib.redirect_stderr(sink):
        code = app(["batch", *args], prog_name="ucalc", standalone_mode=False)
    elapsed = clock() - start
    if code not in (None, 0):
        raise SystemExit(f"ucalc batch failed ({code}): {sink.getvalue()}")
    return elapsed


def best(fn, runs: int) -> float:  # type: ignore[no-untyped-def]
    return min(fn() for _ in range(runs))


def timed(fn) -> float:  # type: ignore[no-untyped-def]
    start = clock()
    fn()
    return clock() - start


def excel_engines() -> list[str]:
    import importlib.util

    return [e for e in ("openpyxl", "xlsxwriter") if importlib.util.find_spec(e) is not None]


def peak_rss(args: list[str]) -> tuple[float, int]:
    """Wall time and peak RSS (bytes) of ``ucalc batch ARGS`` as its own process."""
    script = Path(sys.executable).with_name("ucalc")
    cmd = [str(script)] if script.exists() else [sys.executable, "-m", "ucalc.cli"]
    start = time.perf_counter()
    proc = subprocess.Popen([*cmd, "batch", *args], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - start
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"ucalc batch exited with {os.waitstatus_to_exitcode(status)}")
    return elapsed, usage.ru_maxrss * 1024


def agreement(budget_path: Path, table: Path, output: Path, sample: int) -> tuple[int, int, int, float]:
    """Rows checked, numeric cells differing from the kernel, statements differing from the per-row path, and
    the largest relative difference in u_c from a per-row loop over ``uncertainties``."""
    import numpy as np
    import pandas as pd
    from uncertainties import ufloat

    from ucalc.budget.load import load_budget
    from ucalc.engines.batch import propagate_rows, row_input
    from ucalc.reports.common import probability_text, relative_text
    from ucalc.reports.rounding import round_pair

    budget = load_budget(budget_path)
    inp = pd.read_csv(table)
    out = pd.read_csv(output, dtype=str, keep_default_na=False)
    n = len(inp)
    columns = {name: inp[name].to_numpy(float) for name in ("c_inst", "m", "f_dil")}
    rows = [row_input(budget, name, None, values) for name, values in columns.items()]
    res = propagate_rows(budget, rows, n)
    loq = LOQ
    below = res.value < loq
    differ = 0
    for name, ref in (("u", res.standard_uncertainty), ("nu_eff", res.effective_dof),
                      ("k", res.coverage_factor)):
        got = out[name].replace("", "nan").to_numpy().astype(float)
        differ += int(np.sum(~((got == ref) | (np.isnan(got) & np.isnan(ref)))))
    for name, ref in (("value", res.value), ("U", res.expanded_uncertainty)):
        ref = np.where(below, np.nan, ref)
        got = out[name].replace("", "nan").to_numpy().astype(float)
        differ += int(np.sum(~((got == ref) | (np.isnan(got) & np.isnan(ref)))))

    def previous_statement(i: int) -> str:  # the per-row statement of the previous code path
        y, U, k = float(res.value[i]), float(res.expanded_uncertainty[i]), float(res.coverage_factor[i])
        if y < loq:
            return f"c < {loq:g} mg/kg (below the limit of quantification)"
        y_text, u_text = round_pair(y, U, 2)
        tail = f"k = {k:.2f}, coverage probability about {probability_text(0.95)}"
        relative = f"; relative U = {relative_text(U, y)}" if y and math.isfinite(U) and U > 0 else ""
        return f"c = ({y_text} ± {u_text}) mg/kg, {tail}{relative}"

    rng = np.random.default_rng(2)
    picked = rng.choice(n, min(sample, n), replace=False)
    wrong = sum(out["statement"].iat[i] != previous_statement(i) for i in picked)

    f = budget.model.function("uncertainties")
    fixed = {q: ufloat(budget.quantities[q].value, budget.quantities[q].standard_uncertainty)
             for q in budget.model.inputs if q not in columns}
    u_row = {r.name: r.u for r in rows}
    loop = picked[:20_000]
    worst = 0.0
    for i in loop:
        env = dict(fixed)
        for name, values in columns.items():
            env[name] = ufloat(values[i], u_row[name][i])
        ref_u = f(env).std_dev
        worst = max(worst, abs(res.standard_uncertainty[i] - ref_u) / ref_u)
    return len(picked), differ, wrong, worst


def main() -> None:
    import pandas as pd

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--csv-rows", type=int, default=1_000_000)
    parser.add_argument("--xlsx-rows", type=int, default=100_000)
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--quick", action="store_true", help="10^5 rows to CSV, 10^4 to XLSX")
    parser.add_argument("--wall", action="store_true", help="compare wall time instead of CPU time")
    args = parser.parse_args()
    global WALL
    WALL = args.wall
    if args.quick:
        args.csv_rows, args.xlsx_rows = 100_000, 10_000
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        budget = folder / "budget.yaml"
        budget.write_text(BUDGET, encoding="utf-8")
        big, small = folder / "big.csv", folder / "small.csv"
        make_table(big, args.csv_rows)
        make_table(small, args.xlsx_rows)
        out_csv, out_xlsx, out_small = folder / "out.csv", folder / "out.xlsx", folder / "out-small.csv"
        ucalc_batch([str(budget), str(small), "-o", str(out_small), *OPTIONS, "--force"])  # warm-up: imports
        small_frame = pd.read_csv(out_small)

        t_csv = [ucalc_batch([str(budget), str(big), "-o", str(out_csv), *OPTIONS, "--force"])]
        big_frame = pd.read_csv(out_csv)
        t_ref_csv = []
        for run in range(args.runs):
            if run:
                t_csv.append(ucalc_batch([str(budget), str(big), "-o", str(out_csv), *OPTIONS, "--force"]))
            t_ref_csv.append(timed(lambda: pd.read_csv(big)) + timed(
                lambda: big_frame.to_csv(folder / "ref.csv", index=False)))

        engines = excel_engines()
        t_xlsx, t_ref_xlsx = [], {e: [] for e in engines}
        for _ in range(args.runs):
            t_xlsx.append(ucalc_batch([str(budget), str(small), "-o", str(out_xlsx), *OPTIONS, "--force"]))
            for engine in engines:
                t_ref_xlsx[engine].append(timed(lambda e=engine: small_frame.to_excel(  # type: ignore[misc]
                    folder / "ref.xlsx", index=False, engine=e)))
        fastest = min(engines, key=lambda e: min(t_ref_xlsx[e]))

        wall, rss = peak_rss([str(budget), str(big), "-o", str(out_csv), *OPTIONS, "--force"])
        table_bytes = int(big_frame.memory_usage(deep=True).sum())
        checked, differ, wrong, worst = agreement(budget, big, out_csv, 100_000)

    import platform

    print(f"machine: {platform.machine()}, {os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f}; "
          f"Python {platform.python_version()}, pandas {pd.__version__}; {'wall' if WALL else 'CPU'} time, best of "
          f"{args.runs}")
    ratio = min(t_csv) / min(t_ref_csv)
    print(f"CSV  {args.csv_rows:>9,} rows: ucalc batch {min(t_csv):7.2f} s; pandas read_csv + to_csv "
          f"{min(t_ref_csv):6.2f} s; ratio {ratio:5.2f} (target <= {CSV_TARGET}: "
          f"{'met' if ratio <= CSV_TARGET else 'NOT met'})")
    ratio = min(t_xlsx) / min(t_ref_xlsx[fastest])
    refs = ", ".join(f"{e} {min(t):.2f} s" for e, t in t_ref_xlsx.items())
    print(f"XLSX {args.xlsx_rows:>9,} rows: ucalc batch {min(t_xlsx):7.2f} s; to_excel {refs}; ratio to {fastest} "
          f"{ratio:5.2f} (target <= {XLSX_TARGET}: {'met' if ratio <= XLSX_TARGET else 'NOT met'})")
    ratio = rss / table_bytes
    print(f"memory {args.csv_rows:,} rows to CSV (own process, {wall:.1f} s): peak RSS {rss / 1e6:.0f} MB; output "
          f"table in memory {table_bytes / 1e6:.0f} MB; ratio {ratio:4.2f} (target <= {MEMORY_TARGET}: "
          f"{'met' if ratio <= MEMORY_TARGET else 'NOT met'})")
    print(f"agreement: numbers of all {args.csv_rows:,} rows equal the GUM kernel's: "
          f"{'yes' if differ == 0 else f'NO ({differ} cells differ)'}; statements of {checked:,} sampled rows equal "
          f"the per-row statement: {'yes' if wrong == 0 else f'NO ({wrong} differ)'}; largest relative difference "
          f"in u_c from a per-row loop over uncertainties: {worst:.1e} ({'ok' if worst <= 1e-9 else 'FAIL'})")


if __name__ == "__main__":
    main()
