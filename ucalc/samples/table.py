"""Results for many samples: a budget (or a folder of budgets, one per analyte) applied to every row of a table.

Columns named like an input (or mapped with ``--map INPUT=COLUMN``) supply that input's per-sample value; a
calibration input takes the sample's mean response. Every row gets value, u, nu_eff, k, U, relative U and a
result statement, and, against a limit, a decision and the probability of conformance. Rows that cannot be
computed are kept with the reason in the ``error`` column. Rules for budgets, limits and the limit of
quantification are documented in docs/batch.md.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..budget.definitions import Budget
from ..errors import BudgetError, BudgetErrors, ComputationError, Location, OptionError, UcalcError
from .decisions import RULE_TEXT, Rule, Side, decide, decide_below_loq, probability_of_conformance

CHUNK = 20_000
OUTPUT_COLUMNS = ("value", "unit", "u", "nu_eff", "k", "U", "U_rel", "statement")


@dataclass(frozen=True)
class BatchOptions:
    maps: dict[str, str] = field(default_factory=dict)
    limit: float | None = None
    limit_column: str | None = None
    rule: Rule = "simple"
    side: Side = "upper"
    loq: float | None = None
    loq_column: str | None = None
    analyte_column: str = "analyte"
    digits: int = 2
    sep: str | None = None
    decimal: str | None = None
    prefix: str = ""


@dataclass(frozen=True)
class BatchSummary:
    rows: int
    failed: int
    decisions: dict[str, int]
    below_loq: int
    rule: str | None
    output: Path | None = None


def parse_maps(items: list[str]) -> dict[str, str]:
    maps: dict[str, str] = {}
    for item in items:
        if "=" not in item:
            raise OptionError("maps", f"'{item}': write INPUT=COLUMN")
        name, column = (part.strip() for part in item.split("=", 1))
        if not name or not column:
            raise OptionError("maps", f"'{item}': write INPUT=COLUMN")
        maps[name] = column
    return maps


def _budget_files(folder: Path) -> list[Path]:
    return sorted(p for p in folder.iterdir() if p.suffix.lower() in (".yaml", ".yml") and p.is_file())


def choose_budgets(source: Path | Budget, frame: Any,
                   options: BatchOptions) -> dict[str, tuple[Path | Budget | None, Any]]:
    """Group rows by budget. A budget or a file serves every row; for a folder the analyte column picks, per row,
    the budget whose file name (without extension) or measurand symbol equals the analyte, ignoring case."""
    if isinstance(source, Budget) or source.is_file():
        return {"": (source, frame.index)}
    if not source.is_dir():
        raise BudgetError("budget path is neither a file nor a folder", location=Location(str(source)))
    column = options.analyte_column
    if column not in frame.columns:
        raise OptionError("analyte_column", f"a folder of budgets needs the table's analyte column '{column}'")
    from ..budget.load import load_budget

    files = _budget_files(source)
    by_name = {p.stem.lower(): p for p in files}
    groups: dict[str, tuple[Path | Budget | None, Any]] = {}
    symbols: dict[str, Path] | None = None
    for analyte, index in frame.groupby(frame[column].str.strip(), sort=False).groups.items():
        path = by_name.get(str(analyte).lower())
        if path is None:
            if symbols is None:
                symbols = {}
                for p in files:
                    try:
                        symbols.setdefault(load_budget(p).measurand.symbol.lower(), p)
                    except UcalcError:
                        continue
            path = symbols.get(str(analyte).lower())
        groups[str(analyte)] = (path, index)
    return groups


def _numbers(frame: Any, column: str) -> Any:
    import pandas as pd

    values = frame[column]
    if values.dtype == object or pd.api.types.is_string_dtype(values):  # tables are read as text
        values = values.astype(str).str.strip()
    return pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)


def _per_row(frame: Any, option: str, column: str | None, value: float | None) -> Any:
    """A number per row from a column, or the same number for every row, or NaN when neither is given."""
    import numpy as np

    if column:
        from ..tables import find_column

        found = find_column(frame, column)
        if found is None:
            raise OptionError(option, f"the table has no column '{column}'")
        return _numbers(frame, found)
    return np.full(len(frame), np.nan if value is None else value)


def _per_row_names(budget: Budget, raw_inputs: dict[str, Any], frame: Any, maps: dict[str, str]) -> dict[str, str]:
    """Input name -> column, for inputs of the model that the table supplies."""
    names = {n for n in budget.model.inputs} | {n for n in raw_inputs if n in budget.quantities}
    unknown = [n for n in maps if n not in names]
    if unknown:
        raise OptionError("maps", f"'{unknown[0]}' is not an input of the budget; inputs are "
                                  f"{', '.join(sorted(names))}")
    from ..tables import find_column

    missing = [(n, c) for n, c in maps.items() if find_column(frame, c) is None]
    if missing:
        raise OptionError("maps", f"'{missing[0][0]}={missing[0][1]}': the table has no column '{missing[0][1]}'")
    out = {n: find_column(frame, c) for n, c in maps.items()}
    taken = set(out.values()) | {n for n in names if n in frame.columns}
    for n in sorted(set(names) - set(out)):
        # exact names first; a column named exactly after another input (or mapped) is not taken by case folding
        column = n if n in frame.columns else find_column(frame[[c for c in frame.columns if c not in taken]], n)
        if column is not None:
            out[n] = column
    return {n: c for n, c in sorted(out.items()) if c is not None and n in budget.model.inputs}


def _budget_limits(budget: Budget, options: BatchOptions, positions: Any, loq: Any) -> float:
    """This budget's LOD (NaN without one), and its LOQ written into ``loq`` for its rows unless --loq or
    --loq-column gave one."""
    if budget.limits is None:
        return math.nan
    if options.loq is None and not options.loq_column and math.isfinite(budget.limits.loq):
        loq[positions] = budget.limits.loq
    return budget.limits.lod


def _below_text(symbol: str, limits: Any, unit: str, why: str) -> Any:
    """'c < 0.5 µg/L (why)' for each row's limit (formatted once per distinct limit)."""
    import numpy as np

    distinct, where = np.unique(limits, return_inverse=True)
    unit_part = f" {unit}" if unit else ""
    texts = np.array([f"{symbol} < {x:g}{unit_part} ({why})" for x in distinct.tolist()],
                     dtype=np.dtypes.StringDType())
    return texts[where]


def _own_rows(budget: Budget, name: str, values: Any) -> tuple[Any, Any]:
    """(what the input's model makes of a column of values, or None; the values) for :func:`row_input`."""
    from ..inputs.base import model_for

    raw = budget.raw_inputs.get(name)
    if not isinstance(raw, dict):
        return None, values
    model = model_for(raw)
    own = model.rows(name, raw, values)
    if own is None:
        return None, values
    return (*own, model.row_correlations(name, raw, values)), values


def run_batch(source: Path | Budget, frame: Any, options: BatchOptions,
              progress: Callable[[int, int], None] | None = None) -> tuple[Any, BatchSummary]:
    """The output table (input columns plus results) and a summary; ``source`` is a budget, a budget file or a
    folder of budgets."""
    import numpy as np
    import pandas as pd

    from ..budget.load import load_budget
    from ..engines.batch import expanded_at, propagate_rows, row_input
    from ..reports.common import statements
    from ..reports.document import pretty_unit

    n = len(frame)
    out = pd.DataFrame(index=frame.index)
    results: dict[str, Any] = {c: np.full(n, np.nan) for c in ("value", "u", "nu_eff", "k", "U", "U_rel")}
    text_type = np.dtypes.StringDType()
    text: dict[str, Any] = {c: np.full(n, "", dtype=text_type) for c in ("unit", "statement", "error")}
    u_at_loq = np.full(n, np.nan)  # U at the LOQ, for rows reported as "< LOQ" and decided against a limit
    limits = _per_row(frame, "limit_column", options.limit_column, options.limit)
    loq = _per_row(frame, "loq_column", options.loq_column, options.loq)
    done = 0
    for analyte, (path, index) in choose_budgets(source, frame, options).items():
        positions = frame.index.get_indexer(index)
        if path is None:
            text["error"][positions] = f"no budget for analyte '{analyte}' in {source}"
            continue
        budget = path if isinstance(path, Budget) else load_budget(path)
        if budget.reporting is not None and budget.reporting.method == "monte-carlo":
            raise UcalcError(f"{budget.source}: the budget fixes Monte Carlo as its reporting method "
                             f"({budget.reporting.reason}); batch states GUM results per row, so it cannot follow "
                             "that budget")
        columns = _per_row_names(budget, budget.raw_inputs, frame, options.maps)
        if not columns:
            raise BudgetError(f"no column is named after an input of {budget.source} "
                              f"({', '.join(budget.model.inputs)}); name a column after an input or give "
                              "--map INPUT=COLUMN", location=Location(frame.attrs.get("source", "table"), 1))
        lod = _budget_limits(budget, options, positions, loq)
        unit = pretty_unit(budget.measurand.unit)
        symbol = budget.measurand.symbol
        for start in range(0, len(positions), CHUNK):
            rows = positions[start:start + CHUNK]
            sub = frame.iloc[rows]
            inputs = [row_input(budget, name, *_own_rows(budget, name, _numbers(sub, col)))
                      for name, col in columns.items()]
            res = propagate_rows(budget, inputs, len(rows))
            low = np.flatnonzero(np.isfinite(loq[rows]) & (res.value < loq[rows]))
            if low.size and columns and (options.limit is not None or options.limit_column):
                name0, col0 = next(iter(columns.items()))
                low_sub = sub.iloc[low]

                def make(v: Any, low_sub: Any = low_sub, name0: str = name0, budget: Budget = budget,
                         columns: dict[str, str] = columns) -> list[Any]:
                    return [row_input(budget, name, *_own_rows(budget, name,
                                                               v if name == name0 else _numbers(low_sub, col)))
                            for name, col in columns.items()]

                u_at_loq[rows[low]] = expanded_at(budget, make, _numbers(low_sub, col0), loq[rows[low]])
            results["value"][rows] = res.value
            results["u"][rows] = res.standard_uncertainty
            results["nu_eff"][rows] = res.effective_dof
            results["k"][rows] = res.coverage_factor
            results["U"][rows] = res.expanded_uncertainty
            with np.errstate(all="ignore"):
                results["U_rel"][rows] = res.expanded_uncertainty / np.abs(res.value)
            text["unit"][rows] = unit
            failed = np.zeros(len(rows), dtype=bool)
            failed[list(res.errors)] = True
            for j, reason in res.errors.items():
                text["error"][rows[j]] = reason
            y = res.value
            with np.errstate(invalid="ignore"):
                not_detected = ~failed & (y < lod)
                unquantified = ~failed & ~not_detected & (y < loq[rows])
            stated = ~(failed | not_detected | unquantified)
            if not_detected.any():
                text["statement"][rows[not_detected]] = _below_text(
                    symbol, np.full(int(not_detected.sum()), lod), unit,
                    "not detected: below the limit of detection")
            if unquantified.any():
                text["statement"][rows[unquantified]] = _below_text(
                    symbol, loq[rows[unquantified]], unit, "below the limit of quantification")
            text["statement"][rows[stated]] = statements(
                symbol, y[stated], unit, res.expanded_uncertainty[stated], res.coverage_factor[stated],
                res.coverage_probability, options.digits)
            done += len(rows)
            if progress:
                progress(done, n)
    below = np.isfinite(loq) & (results["value"] < loq)
    for column in ("value", "u", "nu_eff", "k", "U", "U_rel"):
        out[column] = results[column]
    out["unit"] = text["unit"].astype(object)
    out["statement"] = text["statement"].astype(object)
    decisions: dict[str, int] = {}
    rule_text = None
    if options.limit is not None or options.limit_column:
        rule_text = RULE_TEXT[options.rule] + f", {options.side} limit"
        decision = decide(results["value"], results["U"], limits, options.rule, options.side)
        reasons = np.full(n, "", dtype=text_type)
        low_rows = np.flatnonzero(below)
        if low_rows.size:
            decision[low_rows], reasons[low_rows] = decide_below_loq(
                loq[low_rows], u_at_loq[low_rows], limits[low_rows], options.rule, options.side)
        prob = probability_of_conformance(results["value"], results["u"], results["nu_eff"], limits, options.side)
        prob = np.where(below, np.nan, prob)
        if not options.limit_column:
            out["limit"] = limits
        out["decision"] = decision.astype(object)
        out["p_conformance"] = prob
        out["decision_rule"] = rule_text
        if low_rows.size and (reasons != "").any():
            out["decision_reason"] = reasons.astype(object)
        names, counts = np.unique(decision[decision != ""], return_counts=True)
        decisions = {str(d): int(c) for d, c in zip(names, counts, strict=True)}
    for column in ("value", "U", "U_rel"):
        out.loc[below, column] = np.nan  # below the LOQ a result is not reported as a number
    out["error"] = text["error"].astype(object)
    failed_rows = int(np.count_nonzero(text["error"] != ""))
    return _assemble(frame, out, options.prefix), BatchSummary(n, failed_rows, decisions, int(below.sum()), rule_text)


def _assemble(frame: Any, results: Any, prefix: str) -> Any:
    """The table's own columns, unchanged and first, then the result columns (named with ``prefix``).

    A result column never replaces a column of the table: a clash is refused, with the option that avoids it.
    """
    import pandas as pd

    results = results.rename(columns=lambda c: f"{prefix}{c}")
    for column in results.columns:
        results[column] = results[column].where(results[column] != "", None)  # empty text is an empty cell
    clash = [c for c in results.columns if c in frame.columns]
    if clash:
        raise BudgetError(f"the table already has a column '{clash[0]}', which ucalc writes results to; rename "
                          f"it, or give --prefix (--prefix ucalc_ writes ucalc_{clash[0].removeprefix(prefix)} ...)",
                          location=Location(frame.attrs.get("source", "table"), 1))
    return pd.concat([frame, results], axis=1)


def batch(budget: str | Path, table: str | Path, output: str | Path, options: BatchOptions, *,
          force: bool = False, progress: Callable[[int, int], None] | None = None) -> BatchSummary:
    """Read the table, compute every row, write the output table atomically; return the summary."""
    import dataclasses

    from ..outputs import OutputError
    from ..tables import read_table, table_format, write_table

    table_format(output)
    if Path(output).exists() and not force:
        raise OutputError(output, "exists already; use --force to replace it")
    frame = read_table(table, sep=options.sep, decimal=options.decimal)
    if len(frame) == 0:
        raise BudgetErrors([BudgetError("the table has no rows", location=Location(str(table)))])
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # rows that overflow are reported in 'error'
            result, summary = run_batch(Path(budget), frame, options, progress)
    except ComputationError as exc:
        raise exc.located(str(budget)) from None
    inputs = [table, budget] if Path(budget).is_file() else [table, *_budget_files(Path(budget))]
    written = write_table(result, output, force=force, inputs=inputs, dialect=frame.attrs.get("dialect"))
    return dataclasses.replace(summary, output=written)
