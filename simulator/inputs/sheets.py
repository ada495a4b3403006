"""Reading the tables planners keep: CSV as office suites and portals export it, Excel, Parquet.

A CSV's separator (comma, semicolon or tab), decimal mark (point or comma) and encoding (UTF-8 with
or without a byte-order mark, UTF-16 with one, else the Western single-byte code page cp1252 of
office exports) are found from the file unless ``[history] separator``, ``decimal`` or
``encoding`` say them; an Excel workbook (``.xlsx``) is read from its first sheet unless
``[history] sheet`` names one. Every cell of a CSV or a workbook comes back as text, numbers with a
decimal point (and a CSV's percentages, "35%", as the numbers they stand for, "0.35"), so that :mod:`simulator.inputs.history` parses one kind of frame whatever the file was;
what was found is returned beside it (:class:`Dialect`) for ``gonogo init`` and ``check`` to show.

Only a regular file is read, and at most :data:`MAX_BYTES` of it and :data:`MAX_ROWS` rows.
"""

from __future__ import annotations

import codecs
import csv
import hashlib
import io
import re
from dataclasses import dataclass
from datetime import datetime, time
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import InputError, read_input_file

__all__ = ["Dialect", "Table", "read_table", "MAX_BYTES", "MAX_ROWS", "SEPARATORS"]

MAX_BYTES = 256 * 2**20
"""The most bytes read from a history file (a larger one is refused, naming the limit)."""
MAX_ROWS = 2_000_000
"""The most rows read from a history (ten years of daily forecasts at 500 sites is 1.8 million)."""
SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab"}
_CSV_SUFFIXES = (".csv", ".txt", ".tsv", "")
_EXCEL_SUFFIXES = (".xlsx", ".xlsm")
_COMMA_NUMBER = re.compile(r"^\s*[+-]?\d*,\d+\s*$")
_POINT_NUMBER = re.compile(r"^\s*[+-]?\d*\.\d+\s*$")
_PERCENT = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+))\s*%\s*$")
_NUMBER_CHARS = 40  # a longer cell is no number of a spreadsheet's; patterns are not tried on it  # "35%", "12.5 %": cells formatted as percentages


@dataclass(frozen=True)
class Dialect:
    """How a history file was read, and which of it was found rather than set."""

    kind: str  # "csv", "xlsx" or "parquet"
    encoding: str | None = None  # Python's codec name
    separator: str | None = None
    decimal: str | None = None
    sheet: str | None = None
    found: tuple[str, ...] = ()  # the keys found from the file: "encoding", "separator", ...

    def describe(self) -> str:
        """One phrase for people: 'CSV, semicolon-separated, decimal comma, cp1252'."""
        if self.kind == "parquet":
            return "Parquet"
        if self.kind == "xlsx":
            return f'Excel workbook, sheet "{self.sheet}"'
        mark = "decimal comma" if self.decimal == "," else "decimal point"
        return f"CSV, {SEPARATORS[self.separator]}-separated, {mark}, encoding {self.encoding}"


@dataclass(frozen=True)
class Table:
    frame: pd.DataFrame
    first_row: int  # the number a spreadsheet shows for the frame's first row
    sha256: str
    dialect: Dialect


def read_table(path: Path, *, sheet: str | None = None, separator: str | None = None,
               decimal: str | None = None, encoding: str | None = None) -> Table:
    """Read a history file as a frame of text cells; an :class:`InputError` for anything unreadable."""
    label = str(path)
    raw = read_input_file(path, "history", "the history's CSV, Excel or Parquet file", limit=MAX_BYTES)
    sha256 = hashlib.sha256(raw).hexdigest()
    if not raw.strip():
        raise InputError(f"{label}: the file is empty; it needs a header row and one row per occasion")
    suffix = path.suffix.lower()
    if suffix in (".parquet", ".pq"):
        frame = _read_parquet(raw, label)
        return Table(_capped(frame, label, 1), 1, sha256, Dialect("parquet"))
    if suffix in _EXCEL_SUFFIXES:
        frame, name = _read_excel(raw, label, sheet)
        found = ("sheet",) if sheet is None else ()
        return Table(_capped(frame, label, 2), 2, sha256, Dialect("xlsx", sheet=name, found=found))
    if suffix in (".xls", ".ods", ".numbers"):
        raise InputError(f"{label}: {suffix} workbooks are not read; save it as .xlsx (Excel workbook) "
                         "or as CSV")
    if suffix not in _CSV_SUFFIXES:
        raise InputError(f"{label}: unknown format {suffix!r}; give a .csv, .xlsx or .parquet file")
    if raw.startswith(b"PK\x03\x04"):
        raise InputError(f"{label}: is a workbook or zip archive, not CSV text; name it .xlsx if it is an "
                         "Excel workbook, or save it as CSV")
    if b"\x00" in raw[:65536] and not raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)) and (
            encoding is None or not encoding.lower().startswith("utf-16")):
        raise InputError(f"{label}: cannot be read as CSV text (it holds binary data); save it as CSV with a "
                         "header row, or give an .xlsx or Parquet file")
    found = []
    text, used = _decode(raw, label, encoding)
    if encoding is None:
        found.append("encoding")
    if separator is None:
        separator = _sniff_separator(text)
        found.append("separator")
    try:
        frame = pd.read_csv(io.StringIO(text), sep=separator, dtype=str, keep_default_na=False,
                            skipinitialspace=True, skip_blank_lines=False, nrows=MAX_ROWS + 1)
    except Exception as exc:  # pandas says many things; the user needs one line
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{label}: cannot be read as CSV ({reason}); save it as CSV with a header row "
                         "and one row per occasion") from None
    frame = _without_blank_tail(frame)
    _check_one_column(frame, label, separator, "separator" in found)
    if decimal is None:
        decimal = _sniff_decimal(frame, label, separator)
        found.append("decimal")
    if decimal == ",":
        frame = frame.apply(_with_decimal_points)
    frame = frame.apply(_without_percent_signs)
    dialect = Dialect("csv", encoding=used, separator=separator, decimal=decimal, found=tuple(found))
    return Table(_capped(frame, label, 2), 2, sha256, dialect)


def _without_blank_tail(frame: pd.DataFrame) -> pd.DataFrame:
    """Blank rows are kept so that row numbers match the spreadsheet's; only those at the end go."""
    filled = frame.apply(lambda column: column.str.strip().ne("")).any(axis=1).to_numpy()
    return frame.iloc[: int(np.flatnonzero(filled)[-1]) + 1 if filled.any() else 0]


def _capped(frame: pd.DataFrame, label: str, first_row: int) -> pd.DataFrame:
    if len(frame) > MAX_ROWS:
        raise InputError(f"{label}: has more than {MAX_ROWS:,} rows, the most gonogo reads from a history; "
                         "keep only the rows that matter (for example fewer years or sites)")
    return frame


# ------------------------------------------------------------------------------------------------
# text: encoding, separator, decimal mark


def _decode(raw: bytes, label: str, encoding: str | None) -> tuple[str, str]:
    """The text of a CSV file and the codec that read it.

    Without ``encoding``: a byte-order mark decides (UTF-8 or UTF-16, as office suites write
    "Unicode text"); else UTF-8 if the bytes are valid UTF-8, else cp1252, the Western code page of
    office exports, which reads Latin-1 text alike except in its rarely used range 0x80-0x9f
    (common practice, no single source).
    """
    if encoding is not None:
        try:
            return _text(raw.decode(encoding), label), codecs.lookup(encoding).name
        except UnicodeDecodeError as exc:
            raise InputError(_undecodable(raw, exc, label, encoding)) from None
    if raw.startswith(codecs.BOM_UTF8):
        return _text(raw[3:].decode("utf-8", errors="strict"), label), "utf-8-sig"
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return _text(raw.decode("utf-16"), label), "utf-16"
        except UnicodeDecodeError as exc:
            raise InputError(_undecodable(raw, exc, label, "utf-16")) from None
    try:
        return _text(raw.decode("utf-8"), label), "utf-8"
    except UnicodeDecodeError as first:
        try:
            return _text(raw.decode("cp1252"), label), "cp1252"
        except UnicodeDecodeError:
            raise InputError(_undecodable(raw, first, label, "utf-8", tried_cp1252=True)) from None


def _text(text: str, label: str) -> str:
    if "\x00" in text:
        raise InputError(f"{label}: cannot be read as CSV text (it holds binary data); save it as CSV with a "
                         "header row, or give an .xlsx or Parquet file")
    return text


def _undecodable(raw: bytes, exc: UnicodeDecodeError, label: str, encoding: str,
                 tried_cp1252: bool = False) -> str:
    """Where in the file the bytes stop being text in ``encoding``: row and, when it can tell, column."""
    start = raw.rfind(b"\n", 0, exc.start) + 1
    row = raw.count(b"\n", 0, exc.start) + 1
    header = raw.split(b"\n", 1)[0].decode("latin-1")
    before = raw[start:exc.start].decode("latin-1")
    where = f"{label} row {row}"
    separator = _sniff_separator(header)
    try:
        names = next(csv.reader([header[:10_000]], delimiter=separator), [])
        index = len(next(csv.reader([before + "x"], delimiter=separator), [""])) - 1 if len(before) < 10_000 else -1
    except csv.Error:
        names, index = [], -1
    if 0 <= index < len(names) and len(names) > 1:
        where += f', column "{names[index].strip()}"'
    also = " nor as cp1252" if tried_cp1252 else ""
    fix = ('set [history] encoding (for example "cp1252" for Western office exports)' if not tried_cp1252
           else "set [history] encoding to the one it was saved in")
    return (f"{where}: byte 0x{raw[exc.start]:02x} cannot be read as {encoding}{also}; save the file as "
            f"UTF-8, or {fix}")


def _sniff_separator(text: str) -> str:
    """The separator that splits the first lines into the same number of fields, most of them."""
    # the first lines, each cut short (a huge cell would pass the csv module's field limit)
    lines = [line[:10_000] for line in text[:200_000].splitlines()[:50] if line.strip()]
    best, best_score = ",", (0, 0)
    for sep in SEPARATORS:
        counts = [len(row) for row in csv.reader(lines, delimiter=sep)]
        if not counts or counts[0] < 2:
            continue
        score = (sum(c == counts[0] for c in counts), counts[0])
        if score > best_score:
            best, best_score = sep, score
    return best


def _check_one_column(frame: pd.DataFrame, label: str, separator: str, found: bool) -> None:
    """A header that reads as one column but would split on another separator: say which."""
    if frame.shape[1] != 1:
        return
    header = str(frame.columns[0])
    other = next((s for s in SEPARATORS if s != separator and s in header), None)
    if other is None:
        return
    if found:
        raise InputError(f"{label}: the header {header[:60]!r} splits on {SEPARATORS[other]}s but the rows do "
                         "not split alike; check that every row has the same number of fields")
    raise InputError(f"{label}: reads as one column {header[:60]!r}; the file seems to use "
                     f"{SEPARATORS[other]}s ({other!r}) between columns; set [history] separator = "
                     f"{_toml_string(other)} or leave the key out to have it found")


def _toml_string(text: str) -> str:
    return '"\\t"' if text == "\t" else f'"{text}"'


def _distinct(column: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Each row's code and the column's distinct cells in order of first appearance: patterns are
    looked for once per distinct cell (a file of many sites repeats its dates and numbers)."""
    codes, uniques = pd.factorize(column)
    return codes, np.asarray(uniques, dtype=object)


def _with_decimal_points(column: pd.Series) -> pd.Series:
    codes, cells = _distinct(column)
    text = pd.Series(cells, dtype=object)
    comma = text.where(text.str.len() <= _NUMBER_CHARS, "").str.match(_COMMA_NUMBER).to_numpy(dtype=bool)
    if not comma.any():
        return column
    cells[comma] = [cell.replace(",", ".") for cell in cells[comma]]
    return pd.Series(cells[codes], index=column.index, name=column.name, dtype=column.dtype)


def _without_percent_signs(column: pd.Series) -> pd.Series:
    """Cells formatted as percentages in the spreadsheet ("35%") as the numbers they stand for
    ("0.35"), as the spreadsheet itself computes with them."""
    codes, cells = _distinct(column)
    text = pd.Series(cells, dtype=object)
    found = text.where(text.str.len() <= _NUMBER_CHARS, "").str.extract(_PERCENT)[0]
    given = found.notna().to_numpy()
    if not given.any():
        return column
    cells[given] = [f"{float(number) / 100:.12g}" for number in found[given]]
    return pd.Series(cells[codes], index=column.index, name=column.name, dtype=column.dtype)


def _sniff_decimal(frame: pd.DataFrame, label: str, separator: str) -> str:
    """"," when numbers are written with a decimal comma and none with a decimal point, else "."."""
    if separator == "," or frame.empty:
        return "."
    comma_at = point_at = None  # (row index, column) of the first cell of each kind
    for name in frame.columns:
        codes, cells = _distinct(frame[name])
        text = pd.Series(cells, dtype=object)
        text = text.where(text.str.len() <= _NUMBER_CHARS, "")
        first = np.unique(codes, return_index=True)[1]
        for pattern, kind in ((_COMMA_NUMBER, "comma"), (_POINT_NUMBER, "point")):
            hits = np.flatnonzero(text.str.match(pattern).to_numpy(dtype=bool))
            if hits.size:
                at = (int(first[hits].min()), name)
                if kind == "comma" and (comma_at is None or at[0] < comma_at[0]):
                    comma_at = at
                if kind == "point" and (point_at is None or at[0] < point_at[0]):
                    point_at = at
    if comma_at is None:
        return "."
    if point_at is not None:
        (i, a), (j, b) = comma_at, point_at
        raise InputError(f'{label}: numbers are written both with a decimal comma (row {i + 2}, column '
                         f'"{a}": {frame[a].iloc[i]!r}) and with a decimal point (row {j + 2}, column '
                         f'"{b}": {frame[b].iloc[j]!r}); set [history] decimal = "," or "."')
    return ","


# ------------------------------------------------------------------------------------------------
# binary formats


def _read_parquet(raw: bytes, label: str) -> pd.DataFrame:
    try:
        return pd.read_parquet(io.BytesIO(raw))
    except Exception as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{label}: cannot be read as Parquet ({reason}); save it as Parquet, CSV or .xlsx") from None


def _read_excel(raw: bytes, label: str, sheet: str | None) -> tuple[pd.DataFrame, str]:
    """The sheet named (else the first) as text cells: dates ISO, numbers as Python writes them."""
    try:
        book = pd.ExcelFile(io.BytesIO(raw), engine="openpyxl")
    except Exception as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{label}: cannot be read as an Excel workbook ({reason}); save it again as .xlsx "
                         "or as CSV") from None
    names = [str(n) for n in book.sheet_names]
    if not names:
        raise InputError(f"{label}: the workbook has no sheets; save the history in its first sheet")
    if sheet is None:
        sheet = names[0]
    elif sheet not in names:
        shown = ", ".join(f'"{n}"' for n in names[:8]) + (", ..." if len(names) > 8 else "")
        raise InputError(f'{label}: no sheet "{sheet}"; its sheets are {shown}; set [history] sheet to one of them')
    try:
        frame = book.parse(sheet, dtype=object, header=0, nrows=MAX_ROWS + 1)
    except Exception as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f'{label} sheet "{sheet}": cannot be read ({reason}); save it again as .xlsx or as CSV') from None
    frame.columns = [str(c) for c in frame.columns]
    text = frame.apply(lambda column: column.map(_cell_text)).astype(str) if len(frame) else frame.astype(str)
    return _without_blank_tail(text), sheet


def _cell_text(value) -> str:
    """An Excel cell as text: a date as YYYY-MM-DD (with the time when it has one), a whole float
    without its ".0" kept as Python writes it, nothing for an empty cell."""
    if value is None or (isinstance(value, float) and np.isnan(value)) or value is pd.NaT:
        return ""
    if isinstance(value, datetime):
        return value.date().isoformat() if value.time() == time(0) else value.isoformat(sep=" ")
    return str(value)
