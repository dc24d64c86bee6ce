"""Read a table file as people keep it: CSV (comma, semicolon or tab) or an .xlsx sheet.

One reader for every table tenure takes in (the inventory, later work-order records).  It
does not interpret cells: it finds the header, matches header names case-insensitively with
surrounding and repeated spaces ignored, and hands back the cells with where each came from,
so that a caller can name the file, the row as the user sees it (the CSV line number, or the
spreadsheet row number) and the column in its messages.

- CSV: UTF-8 (a byte-order mark is allowed).  The delimiter is the one of ``,`` ``;`` and tab
  that occurs most often on the header line outside quotes (a one-column file needs none).
  Cells are text, trimmed.  Blank lines are skipped.
- .xlsx: the sheet named ``sheet``, or the first sheet.  The header is the first row with a
  value.  Cells keep their type: text (trimmed), numbers, ``datetime`` for date cells.  Empty
  cells are ``""`` in both forms; formulas give the value last saved by the spreadsheet.

A file that cannot be read raises :class:`TableError` with the file, the place and the
reason (an unterminated quote, a duplicated column, a sheet that does not exist, …).
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

#: delimiters a CSV file may use, in the order that wins a tie
DELIMITERS = (",", ";", "\t")
XLSX_SUFFIXES = (".xlsx", ".xlsm")


class TableError(Exception):
    """A table file that cannot be read: ``file``, ``where`` (for example ``line 7``) and ``message``."""

    def __init__(self, file: str, where: str, message: str):
        self.file, self.where, self.message = file, where, message
        super().__init__(f"{file}: {where}: {message}")


def header_key(name: Any) -> str:
    """The form a header is matched by: trimmed, inner spaces collapsed, lower case (``' In  Service'`` → ``'in service'``)."""
    return " ".join(str(name).split()).lower()


@dataclass(frozen=True)
class Table:
    """The cells of one table and where each came from.

    Attributes
    ----------
    file : str
        The file as given (used in messages).
    sheet : str or None
        The sheet read (xlsx) or None (CSV).
    frame : pandas.DataFrame
        One row per non-blank data row; columns are the header keys (:func:`header_key`) in file
        order; cells as described in the module docstring (object dtype).
    headers : dict
        Header key → the header as written.
    rows : tuple of int
        For each frame row, its line number (CSV) or row number (xlsx) as the user sees it.
    letters : dict
        Header key → column letter (xlsx only), so a message can say "column C (in service)".
    """

    file: str
    sheet: str | None
    frame: pd.DataFrame
    headers: dict
    rows: tuple
    letters: dict

    @property
    def columns(self) -> list[str]:
        return list(self.frame.columns)

    def records(self):
        """(index, {key: cell}) for each row, in file order."""
        keys = self.columns
        for i, values in enumerate(self.frame.itertuples(index=False, name=None)):
            yield i, dict(zip(keys, values))

    def where(self, i: int | None = None, key: str | None = None) -> str:
        """The place of row ``i`` and/or column ``key`` as the user sees it.

        CSV: ``"row 7.In Service"`` (row = line number); xlsx: ``"sheet 'units' row 7.In Service (column C)"``.
        """
        text = "header" if i is None else f"row {self.rows[i]}"
        if key is not None:
            text += f".{self.headers.get(key, key)}"
            if self.letters.get(key):
                text += f" (column {self.letters[key]})"
        return text if self.sheet is None else f"sheet {self.sheet!r} {text}"


def read_table(path: Path | str, sheet: str | None = None, *, shown: str | None = None) -> Table:
    """Read a CSV or .xlsx table file (see the module docstring).

    Parameters
    ----------
    path : path
        The file; ``.xlsx``/``.xlsm`` is read as a workbook, anything else as CSV text.
    sheet : str, optional
        Sheet of a workbook (default: the first); not allowed for CSV.
    shown : str, optional
        The file name used in messages (default: ``path``).

    Raises
    ------
    TableError
    """
    path = Path(path)
    name = shown or str(path)
    if not path.is_file():
        raise TableError(name, "file", "no such file")
    if path.suffix.lower() in XLSX_SUFFIXES:
        header, body, rows, letters, used = _read_xlsx(path, name, sheet)
    else:
        if sheet is not None:
            raise TableError(name, "sheet", f"= {sheet!r}: a sheet can only be chosen in an .xlsx workbook")
        header, body, rows = _read_csv(path, name)
        letters, used = {}, None
    return _build(name, used, header, body, rows, letters)


def _build(name: str, sheet: str | None, header: list, body: list[list], rows: list[int], letters: dict) -> Table:
    keys: list[str] = []
    written: dict[str, str] = {}
    keep: list[int] = []
    for j, h in enumerate(header):
        text = "" if h is None else " ".join(str(h).split())
        if not text:
            if any(j < len(r) and r[j] != "" for r in body):
                place = f"column {letters[j]}" if letters else f"column {j + 1}"
                raise TableError(name, (f"sheet {sheet!r} " if sheet else "") + f"header, {place}",
                                 "has values but no header; give the column a name or delete it (the header is "
                                 "the first row with a value)")
            continue
        key = header_key(text)
        if key in written:
            raise TableError(name, "header", f"column {text!r} appears twice (also {written[key]!r}); "
                             "headers are matched ignoring capitals and spaces, so give each column its own name")
        written[key] = text
        keys.append(key)
        keep.append(j)
    cells = [[r[j] if j < len(r) else "" for j in keep] for r in body]
    frame = pd.DataFrame(cells, columns=keys, dtype=object) if keys else pd.DataFrame()
    lets = {k: letters[j] for k, j in zip(keys, keep)} if letters else {}
    return Table(file=name, sheet=sheet, frame=frame, headers=written, rows=tuple(rows), letters=lets)


def _delimiter(line: str) -> str:
    """The delimiter of a header line: the most frequent of :data:`DELIMITERS` outside quotes."""
    counts = dict.fromkeys(DELIMITERS, 0)
    quoted = False
    for ch in line:
        if ch == '"':
            quoted = not quoted
        elif not quoted and ch in counts:
            counts[ch] += 1
    best = max(DELIMITERS, key=lambda d: counts[d])
    return best if counts[best] else ","


def _read_csv(path: Path, name: str) -> tuple[list, list[list], list[int]]:
    raw = path.read_bytes()
    if raw.startswith(b"PK\x03\x04"):
        raise TableError(name, "file", "is a zipped workbook (.xlsx), not CSV text; name it ….xlsx "
                         "(and give sheet = \"…\" when the table is not on the first sheet)")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise TableError(name, f"line {line}", f"byte 0x{raw[exc.start]:02x} is not UTF-8 text; save the file "
                         "as CSV UTF-8, or keep it as .xlsx") from None
    first = next((ln for ln in text.splitlines() if ln.strip()), "")
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=_delimiter(first), strict=True,
                        skipinitialspace=False)
    header: list | None = None
    body: list[list] = []
    rows: list[int] = []
    seen_header_at = 0
    while True:
        start = reader.line_num + 1
        try:
            rec = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            why = ("a quoted cell is never closed (a \" without its closing \")"
                   if "end of data" in str(exc) else f"is not valid CSV ({exc})")
            raise TableError(name, f"line {start}", why) from None
        cells = [c.strip() for c in rec]
        if not any(cells):
            continue
        if header is None:
            header, seen_header_at = cells, start
            continue
        if len(cells) > len(header) and any(cells[len(header):]):
            raise TableError(name, f"line {start}", f"has {len(cells)} cells but the header (line "
                             f"{seen_header_at}) has {len(header)} columns")
        body.append(cells)
        rows.append(start)
    if header is None:
        raise TableError(name, "file", "is empty; the first line must name the columns")
    return header, body, rows


def _cell(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, str):
        return v.strip()
    return v


def _read_xlsx(path: Path, name: str, sheet: str | None):
    from openpyxl import load_workbook
    from openpyxl.utils import get_column_letter

    try:
        wb = load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises several types for a damaged or foreign file
        raise TableError(name, "file", f"cannot be read as an .xlsx workbook ({type(exc).__name__}: {exc})") from None
    try:
        names = wb.sheetnames
        if sheet is None:
            used = names[0]
        elif sheet in names:
            used = sheet
        else:
            raise TableError(name, "sheet", f"= {sheet!r}: no such sheet; the workbook has "
                             + ", ".join(repr(n) for n in names))
        header = None
        body: list[list] = []
        rows: list[int] = []
        for r, values in enumerate(wb[used].iter_rows(min_row=1, values_only=True), start=1):
            cells = [_cell(v) for v in values]
            if not any(c != "" for c in cells):
                continue
            if header is None:
                header = cells
                continue
            body.append(cells)
            rows.append(r)
    finally:
        wb.close()
    if header is None:
        raise TableError(name, f"sheet {used!r}", "is empty; the first row must name the columns")
    width = max([len(header)] + [len(b) for b in body])
    letters = {j: get_column_letter(j + 1) for j in range(width)}
    return header, body, rows, letters, used
