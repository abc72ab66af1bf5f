"""Reading and writing sample tables (CSV or XLSX, by file extension).

Tables come from spreadsheets set up for many locales, so the separator and decimal mark of a CSV file are
detected (``,`` ``;`` or tab, decimal point or comma) or given with ``--sep``/``--decimal``, and detection that
could go two ways is refused rather than guessed. Cells are read as text, so that values are parsed by the
budget's rules. Output a client opens never carries a live formula: XLSX text cells are string cells, and CSV
text that a spreadsheet would take for a formula gets the prefix :data:`CSV_TEXT_PREFIX`. The guarantees are
listed in docs/untrusted-input.md.
"""

from __future__ import annotations

import csv
import io
import math
import re
import stat
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NoReturn

from .budget.yamlio import MAX_BYTES
from .errors import BudgetError, Location, UcalcError
from .outputs import write_atomic

FORMATS = {".csv": "csv", ".xlsx": "xlsx"}
MAX_TABLE_BYTES = 20 * MAX_BYTES
MAX_XLSX_CELLS = 20_000_000  # an XLSX file is compressed: its size says little about its cells
MAX_CELL = 32_767  # characters in one cell, the limit of XLSX (and of the spreadsheets that open CSV files)
SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab"}
DECIMALS = {".": "point", ",": "comma"}
CSV_TEXT_PREFIX = "'"  # before CSV text starting with = + - @ tab or CR, so that no spreadsheet runs it
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")  # tab, LF and CR are kept
_COMMA_NUMBER = re.compile(r"\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*")
_POINT_NUMBER = re.compile(r"\s*[+-]?(\d+\.\d*|\.\d+)([eE][+-]?\d+)?\s*")
_PLAIN_NUMBER = re.compile(r"-?(0|[1-9]\d{0,14})(\.\d{1,15})?([eE][+-]?\d{1,3})?")  # written back as a number
_SNIFF_LINES = 200


@dataclass(frozen=True)
class Dialect:
    """How a CSV table writes its cells: the separator and the decimal mark."""

    sep: str = ","
    decimal: str = "."


def table_format(path: str | Path) -> str:
    fmt = FORMATS.get(Path(path).suffix.lower())
    if fmt is None:
        raise BudgetError("a table must be a .csv or .xlsx file", location=Location(str(path)))
    return fmt


def _fail(path: str | Path, rule: str, line: int = 0, column: int = 0) -> NoReturn:
    raise BudgetError(rule, location=Location(str(path), line, column))


_MARK_NAMES = {"comma": ",", "semicolon": ";", "tab": "\t", "\\t": "\t", "point": ".", "dot": "."}


def _mark(value: str | None) -> str | None:
    return None if value is None else _MARK_NAMES.get(value, value)


def check_options(sep: str | None, decimal: str | None) -> None:
    """Refuse a ``--sep`` or ``--decimal`` value that is not one of the known marks."""
    if sep is not None and _mark(sep) not in SEPARATORS:
        raise UcalcError(f"--sep {sep!r}: the separator is ',' ';' or 'tab'")
    if decimal is not None and _mark(decimal) not in DECIMALS:
        raise UcalcError(f"--decimal {decimal!r}: the decimal mark is '.' or ','")


def read_table(path: str | Path, *, sep: str | None = None, decimal: str | None = None) -> Any:
    """A DataFrame of the table, every cell as text (decimal commas turned into points); its :class:`Dialect`
    is in ``frame.attrs["dialect"]`` (output CSV is written in the same one) and its path in ``attrs["source"]``.

    Only a regular file is read (not a FIFO or a device). Rows longer than the header, duplicate or missing
    column names, and over-long cells are refused with the file and line.
    """
    check_options(sep, decimal)
    p = Path(path)
    fmt = table_format(p)
    try:
        info = p.stat()
    except OSError as exc:
        return _fail(path, f"cannot read table ({exc.strerror})")
    if not stat.S_ISREG(info.st_mode):
        return _fail(path, "the table is not a regular file (a folder, device or pipe cannot be read as a table)")
    if info.st_size > MAX_TABLE_BYTES:
        return _fail(path, f"table is {info.st_size / 1e6:.0f} MB; the limit is {MAX_TABLE_BYTES / 1e6:.0f} MB")
    if fmt == "csv":
        header, rows, lines, dialect = _read_csv(p, _mark(sep), _mark(decimal))
    else:
        header, rows, lines = _read_xlsx(p)
        dialect = Dialect(_mark(sep) or ",", _mark(decimal) or ".")
    return _frame(p, header, rows, lines, dialect)


def _read_csv(path: Path, sep: str | None, decimal: str | None
              ) -> tuple[list[str], list[list[str]], list[int], Dialect]:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        return _fail(path, f"cannot read table ({exc.strerror})")
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        return _fail(path, f"table is not UTF-8 text (byte 0x{raw[exc.start]:02x}); export it as CSV UTF-8", line)
    if "\x00" in text:
        return _fail(path, "table holds a NUL byte; it is not a text table", text[: text.index("\x00")].count("\n") + 1)
    sep = sep or _detect_separator(path, text)
    rows: list[list[str]] = []
    lines: list[int] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep)
    try:
        for row in reader:
            rows.append(row)
            lines.append(reader.line_num)
    except csv.Error as exc:
        return _fail(path, f"cannot read table: {exc}", reader.line_num + 1)
    if not rows:
        return _fail(path, "the table is empty (no header line)")
    return rows[0], rows[1:], lines[1:], Dialect(sep, decimal or _detect_decimal(path, rows[1:], sep))


def _split(text: str, sep: str) -> list[list[str]]:
    head = "\n".join(text.splitlines()[:_SNIFF_LINES])
    try:
        return [row for row in csv.reader(io.StringIO(head, newline=""), delimiter=sep) if row]
    except csv.Error:
        return []


def _detect_separator(path: Path, text: str) -> str:
    """The one separator that splits the header into several columns and no row into more cells than it."""
    fits = []
    for sep in SEPARATORS:
        rows = _split(text, sep)
        if rows and len(rows[0]) > 1 and all(len(r) <= len(rows[0]) for r in rows[1:]):
            fits.append(sep)
    if len(fits) == 1:
        return fits[0]
    if not fits:
        return ","  # one column, or rows longer than the header: reported below with the line
    names = " and ".join(f"'{SEPARATORS[s]}'" for s in fits)
    return _fail(path, f"cannot tell the column separator: {names} both fit; give --sep "
                 + " or --sep ".join("tab" if s == "\t" else f"'{s}'" for s in fits), 1)


def _detect_decimal(path: Path, rows: list[list[str]], sep: str) -> str:
    """',' if numbers are written with a decimal comma, '.' otherwise; refused when both marks are seen."""
    comma = point = None
    for number, row in enumerate(rows, 2):
        for cell in row:
            if comma is None and _COMMA_NUMBER.fullmatch(cell):
                comma = (number, cell)
            elif point is None and _POINT_NUMBER.fullmatch(cell):
                point = (number, cell)
        if comma and point:
            break
    if comma is None:
        return "."
    if point is not None:
        return _fail(path, f"numbers are written with a decimal comma ('{comma[1].strip()}', row {comma[0]}) and "
                     f"with a decimal point ('{point[1].strip()}', row {point[0]}); give --decimal ',' or "
                     "--decimal '.'")
    if sep == ",":
        return _fail(path, f"'{comma[1].strip()}' (row {comma[0]}) may be a decimal comma or a thousands "
                     "separator; give --decimal ',' or --decimal '.'")
    return ","


def _read_xlsx(path: Path) -> tuple[list[str], list[list[str]], list[int]]:
    from openpyxl import load_workbook

    try:
        book = load_workbook(path, read_only=True, data_only=True)  # cached values, never formula text
    except Exception as exc:  # openpyxl and zipfile raise their own types for damaged workbooks
        return _fail(path, f"cannot read table ({type(exc).__name__}); is it an .xlsx workbook?")
    try:
        sheet = book.worksheets[0]
        rows: list[list[str]] = []
        lines: list[int] = []
        cells = 0
        for number, values in enumerate(sheet.iter_rows(values_only=True), 1):
            cells += len(values)
            if cells > MAX_XLSX_CELLS:
                return _fail(path, f"the workbook has more than {MAX_XLSX_CELLS:,} cells", number)
            rows.append([_xlsx_text(v) for v in values])
            lines.append(number)
    except UcalcError:
        raise
    except Exception as exc:
        return _fail(path, f"cannot read table ({type(exc).__name__})")
    finally:
        book.close()
    if not rows:
        return _fail(path, "the table is empty (no header row)")
    return rows[0], rows[1:], lines[1:]


def _xlsx_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if hasattr(value, "isoformat"):
        return str(value.isoformat())
    return str(value)


def _frame(path: Path, header: list[str], rows: list[list[str]], lines: list[int], dialect: Dialect) -> Any:
    import pandas as pd

    names = [h.strip() for h in header]
    width = len(names)
    while width and not names[width - 1] and all(len(r) < width or not r[width - 1].strip() for r in rows):
        width -= 1  # trailing columns without a name or a value (spreadsheet exports often have them)
    names = names[:width]
    kept: list[list[str]] = []
    for row, line in zip(rows, lines, strict=True):
        if not any(cell.strip() for cell in row):
            continue  # blank line
        if len(row) > width and any(cell.strip() for cell in row[width:]):
            return _fail(path, f"row has {len(row)} cells but the header names {width} columns (a separator or "
                         "decimal mark read wrongly? see --sep and --decimal)", line)
        for i, cell in enumerate(row[:width]):
            if len(cell) > MAX_CELL:
                return _fail(path, f"column '{names[i]}': a cell of {len(cell):,} characters; the limit is "
                             f"{MAX_CELL:,}", line)
        kept.append(row[:width] + [""] * (width - len(row)))
    for i, name in enumerate(names):
        if not name:
            return _fail(path, f"column {i + 1} has values but no name in the header", 1, i + 1)
        if len(name) > MAX_CELL:
            return _fail(path, f"column {i + 1}: a header of {len(name):,} characters", 1, i + 1)
        if names.index(name) != i:
            return _fail(path, f"column '{name}' appears twice in the header (columns {names.index(name) + 1} and "
                         f"{i + 1})", 1, i + 1)
    if not names:
        return _fail(path, "the header names no column", 1)
    columns = list(zip(*kept, strict=True)) if kept else [() for _ in names]
    frame = pd.DataFrame({name: pd.Series(list(col), dtype=object) for name, col in zip(names, columns,
                                                                                        strict=True)})
    if dialect.decimal == ",":
        for name in names:
            col = frame[name]
            hit = col.str.fullmatch(_COMMA_NUMBER.pattern)
            if hit.any():
                frame.loc[hit, name] = col[hit].str.replace(",", ".", regex=False)
    frame.attrs["source"] = str(path)
    frame.attrs["dialect"] = dialect
    return frame


def find_column(frame: Any, name: str) -> str | None:
    """The column for ``name``: the one named exactly so, else the only one equal to it ignoring case and
    surrounding spaces. Several such columns are refused (use --map)."""
    if name in frame.columns:
        return name
    folded = [c for c in frame.columns if str(c).strip().casefold() == name.casefold()]
    if len(folded) > 1:
        raise BudgetError(f"columns {', '.join(repr(c) for c in folded)} all match '{name}' when case is ignored; "
                          f"rename one or give --map {name}=COLUMN",
                          location=Location(frame.attrs.get("source", "table"), 1))
    return folded[0] if folded else None


# ---- writing ---------------------------------------------------------------------------------------------------


def _clean(text: str) -> str:
    """Control characters (other than tab, LF and CR) shown as \\xNN: XLSX cannot hold them, and they hide text."""
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group(0)):02x}", text) if _CONTROL.search(text) else text


def _cells(frame: Any) -> list[list[Any]]:
    """Columns of Python values: numbers (int/float), text, or None for an empty cell.

    A text column whose every non-empty cell is a plain number (no leading zeros, at most 15 digits, so that
    '007' stays text) is written as numbers, as the table had them.
    """
    import numpy as np

    out: list[list[Any]] = []
    for name in frame.columns:
        col = frame[name]
        if col.dtype.kind in "fiu":
            out.append([None if v is None or (isinstance(v, float) and math.isnan(v)) else v
                        for v in col.astype(object).tolist()])
            continue
        values = [None if v is None or (isinstance(v, float) and np.isnan(v)) else str(v) for v in col.tolist()]
        texts = [v.strip() for v in values if v is not None and v.strip()]
        if texts and all(_PLAIN_NUMBER.fullmatch(v) for v in texts):
            out.append([_number(v) if v is not None and v.strip() else None for v in values])
        else:
            out.append([v if v else None for v in values])
    return out


def _number(text: str) -> int | float:
    text = text.strip()
    return int(text) if re.fullmatch(r"-?\d+", text) else float(text)


def _check_length(name: str, column: list[Any]) -> None:
    for row, value in enumerate(column, 2):
        if isinstance(value, str) and len(value) > MAX_CELL:
            raise UcalcError(f"column '{name}', row {row}: a cell of {len(value):,} characters; the limit is "
                             f"{MAX_CELL:,}")


def write_table(frame: Any, path: str | Path, *, force: bool = False, inputs: list[str | Path] | None = None,
                dialect: Dialect | None = None) -> Path:
    """Write a DataFrame as CSV (in ``dialect``) or XLSX, atomically (see :func:`ucalc.outputs.write_atomic`).

    Numbers are written as numbers and empty cells stay empty. Text is never a formula: XLSX text cells are
    string cells; CSV text starting with = + - @ tab or CR gets :data:`CSV_TEXT_PREFIX`. Control characters
    are written as ``\\xNN``; a cell longer than the XLSX limit is refused.
    """
    fmt = table_format(path)
    header = [_clean(str(c)) for c in frame.columns]
    columns = [[_clean(v) if isinstance(v, str) else v for v in col] for col in _cells(frame)]
    for name, col in zip(header, columns, strict=True):
        _check_length(name, col)
    rows = list(zip(*columns, strict=True)) if columns else []
    if fmt == "csv":
        data: bytes = _csv_bytes(header, rows, dialect or Dialect()).encode("utf-8")
    else:
        data = _xlsx_bytes(header, rows)
    return write_atomic(path, data, force=force, inputs=inputs or [])


def _csv_text(value: Any, decimal: str) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        text = repr(value)
        return text.replace(".", ",") if decimal == "," else text
    text = str(value)
    return CSV_TEXT_PREFIX + text if text.startswith(_FORMULA_START) else text


def _csv_bytes(header: list[str], rows: list[tuple[Any, ...]], dialect: Dialect) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, delimiter=dialect.sep, lineterminator="\r\n")  # RFC 4180; a CR in a cell is quoted
    writer.writerow([_csv_text(h, dialect.decimal) for h in header])
    for row in rows:
        writer.writerow([_csv_text(v, dialect.decimal) for v in row])
    return buffer.getvalue()


def _xlsx_bytes(header: list[str], rows: list[tuple[Any, ...]]) -> bytes:
    from openpyxl import Workbook
    from openpyxl.cell import WriteOnlyCell

    book = Workbook(write_only=True)
    sheet = book.create_sheet("results")

    def text_cell(value: str) -> Any:
        cell = WriteOnlyCell(sheet, value=value)
        cell.data_type = "s"  # a string cell even when the text starts with '=' (never a formula)
        return cell

    def xlsx_value(value: Any) -> Any:
        if isinstance(value, str):
            return text_cell(value)  # openpyxl would make '=...' a formula and '#N/A' an error
        if isinstance(value, float) and not math.isfinite(value):
            return None if math.isnan(value) else text_cell(repr(value))
        return value

    sheet.append([text_cell(h) for h in header])
    for row in rows:
        sheet.append([xlsx_value(v) for v in row])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
