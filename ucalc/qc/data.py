"""Columns of numbers from a QC or validation data file (CSV or XLSX), read with the sample-table reader.

Every cell that is not a number is refused with the file, the line (header = line 1) and the column named.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..errors import BudgetError, Location


@dataclass(frozen=True)
class Columns:
    """Numbers of the requested columns, row by row (rows with an empty value cell are dropped), and labels."""

    file: str
    numbers: dict[str, tuple[float, ...]]
    labels: dict[str, tuple[str, ...]]
    lines: tuple[int, ...]


def read_columns(path: str | Path, numeric: list[str], text: list[str] | None = None,
                 required: list[str] | None = None, optional: list[str] | None = None) -> Columns:
    """Read ``numeric`` columns as floats and ``text`` columns as labels; ``optional`` numeric columns if present.

    Rows whose ``required`` numeric cells (default: the first numeric column) are empty are skipped.
    """
    import math

    from ..tables import read_table

    frame = read_table(path)
    file = str(path)
    numeric = [*numeric, *(c for c in optional or [] if c in frame.columns)]
    wanted = [*numeric, *(text or [])]
    for name in wanted:
        if name not in frame.columns:
            raise BudgetError(f"no column '{name}' (columns: {', '.join(map(str, frame.columns))})",
                              location=Location(file, 1, 1))
    must = required if required is not None else numeric[:1]
    numbers: dict[str, list[float]] = {c: [] for c in numeric}
    labels: dict[str, list[str]] = {c: [] for c in text or []}
    lines: list[int] = []
    for row, record in enumerate(frame[wanted].itertuples(index=False), start=2):
        cells = dict(zip(wanted, (str(v).strip() for v in record), strict=True))
        if any(not cells[c] for c in must):
            continue
        for c in numeric:
            cell = cells[c]
            try:
                value = float(cell) if cell else math.nan
            except ValueError:
                raise BudgetError(f"column '{c}': '{cell[:40]}' is not a number",
                                  location=Location(file, row, 1)) from None
            if cell and not math.isfinite(value):
                raise BudgetError(f"column '{c}': '{cell[:40]}' is not a finite number",
                                  location=Location(file, row, 1))
            numbers[c].append(value)
        for c in text or []:
            labels[c].append(cells[c])
        lines.append(row)
    if not lines:
        raise BudgetError(f"no rows with a value in column '{must[0] if must else numeric[0]}'",
                          location=Location(file))
    return Columns(file, {k: tuple(v) for k, v in numbers.items()}, {k: tuple(v) for k, v in labels.items()},
                   tuple(lines))


def budget_relative(budget_file: str, name: str) -> Path:
    """A data file named in a budget: relative to the budget's folder, never absolute or above it."""
    p = Path(name)
    folder = Path(budget_file).parent
    inside = not p.is_absolute() and ".." not in p.parts
    if inside:
        try:
            inside = (folder / p).resolve().is_relative_to(folder.resolve())  # a link may not lead outside
        except (OSError, RuntimeError):
            inside = False
    if not inside:
        raise ValueError(f"data file '{name}' must be a path inside the budget's folder (no absolute path, no '..')")
    return folder / p
