"""Reading and writing sample tables (CSV or XLSX, by file extension) with pandas, imported on first use."""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

from .budget.yamlio import MAX_BYTES
from .errors import BudgetError, Location
from .outputs import write_atomic

FORMATS = {".csv": "csv", ".xlsx": "xlsx"}
MAX_TABLE_BYTES = 20 * MAX_BYTES


def table_format(path: str | Path) -> str:
    fmt = FORMATS.get(Path(path).suffix.lower())
    if fmt is None:
        raise BudgetError("a table must be a .csv or .xlsx file", location=Location(str(path)))
    return fmt


def read_table(path: str | Path) -> Any:
    """A DataFrame of the table, every column kept as text so that values are parsed by the budget's rules."""
    import pandas as pd

    p = Path(path)
    fmt = table_format(p)
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise BudgetError(f"cannot read table ({exc.strerror})", location=Location(str(path))) from None
    if size > MAX_TABLE_BYTES:
        raise BudgetError(f"table is {size / 1e6:.0f} MB; the limit is {MAX_TABLE_BYTES / 1e6:.0f} MB",
                          location=Location(str(path)))
    try:
        if fmt == "csv":
            frame = pd.read_csv(p, dtype=str, keep_default_na=False, encoding="utf-8-sig")
        else:
            frame = pd.read_excel(p, dtype=str, keep_default_na=False, engine="openpyxl")
    except (ValueError, OSError, UnicodeDecodeError, pd.errors.ParserError) as exc:
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise BudgetError(f"cannot read table: {first}", location=Location(str(path))) from None
    except Exception as exc:  # openpyxl raises its own types for damaged workbooks
        raise BudgetError(f"cannot read table ({type(exc).__name__})", location=Location(str(path))) from None
    frame.columns = [str(c).strip() for c in frame.columns]
    duplicated = sorted({c for c in frame.columns if list(frame.columns).count(c) > 1})
    if duplicated:
        raise BudgetError(f"column '{duplicated[0]}' appears twice", location=Location(str(path), 1, 1))
    return frame


def write_table(frame: Any, path: str | Path, *, force: bool = False, inputs: list[str | Path] | None = None) -> Path:
    """Write a DataFrame as CSV or XLSX, atomically (see :func:`ucalc.outputs.write_atomic`)."""
    fmt = table_format(path)
    if fmt == "csv":
        data: bytes = frame.to_csv(index=False).encode("utf-8")
    else:
        buffer = io.BytesIO()
        frame.to_excel(buffer, index=False, engine="openpyxl")
        data = buffer.getvalue()
    return write_atomic(path, data, force=force, inputs=inputs or [])
