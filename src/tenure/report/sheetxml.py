"""A write-only spreadsheet writer: ``plan.xlsx`` as SpreadsheetML text, zipped, in one pass.

The workbook format is Office Open XML (ECMA-376 Part 1, "SpreadsheetML"; ISO/IEC 29500).  A
sheet's rows are turned into XML text as they are added and only that text is kept, so a
10,000-unit plan costs one string per row instead of one styled cell object per cell (openpyxl's
model, whose build and save took 28 s of a 10,000-unit run; docs/benchmarks-writing.md).

What is written, and nothing else: values (text as inline strings, never formulas; numbers; true
or false), a small table of cell styles (number format, bold / size / colour of the font, a solid
fill, alignment and wrapping), column widths, row heights, frozen panes, and the creator and title
of the document.  Text that no XML 1.0 document may hold (control characters other than tab,
line feed and carriage return) is written as U+FFFD.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import re
import zipfile
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
#: number formats every spreadsheet knows by id (ECMA-376 Part 1, 18.8.30); others get ids from 164
BUILTIN_FORMATS = {"General": 0, "0": 1, "0.00": 2, "#,##0": 3, "#,##0.00": 4, "0%": 9, "0.00%": 10}
_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")
_BAD_TITLE = re.compile(r"[\[\]:*?/\\]")


@dataclass(frozen=True)
class Font:
    """A font of a cell style: bold, size [pt] and colour (``RRGGBB``), on the default face."""

    bold: bool = False
    size: float = 11.0
    color: str | None = None


@dataclass(frozen=True)
class Fill:
    """A solid fill of colour ``RRGGBB``."""

    color: str


@dataclass(frozen=True)
class Align:
    """Alignment of a cell: horizontal ("left", "center", "right" or None), vertical, wrapping."""

    horizontal: str | None = None
    vertical: str | None = None
    wrap: bool = False


def _text(s: str) -> str:
    s = s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return _ILLEGAL.sub("\ufffd", s) if _ILLEGAL.search(s) else s


def _attr(s: str) -> str:
    return _text(s).replace('"', "&quot;")


def column_letter(j: int) -> str:
    """The letters of column ``j`` (1 → A, 27 → AA)."""
    out = ""
    while j:
        j, r = divmod(j - 1, 26)
        out = chr(65 + r) + out
    return out


_LETTERS = [column_letter(j) for j in range(1, 703)]


def _letter(j: int) -> str:
    return _LETTERS[j - 1] if j <= len(_LETTERS) else column_letter(j)


class Book:
    """A workbook being written: sheets in order, the cell styles they use, its title and creator."""

    def __init__(self, title: str = "", creator: str = ""):
        self.title, self.creator = title, creator
        self.sheets: list[Sheet] = []
        self._styles: dict[tuple, int] = {(None, None, None, None): 0}
        self._fonts: dict[Font, int] = {Font(): 0}
        self._fills: dict[Fill, int] = {}
        self._formats: dict[str, int] = {}

    def sheet(self, title: str) -> Sheet:
        """A new sheet at the end; its title is cut to 31 characters and any of ``[]:*?/\\`` become '-'."""
        name = _BAD_TITLE.sub("-", title)[:31] or f"sheet{len(self.sheets) + 1}"
        taken = {s.title for s in self.sheets}
        base, n = name, 1
        while name in taken:
            n += 1
            name = f"{base[:31 - len(str(n)) - 1]}-{n}"
        ws = Sheet(self, name)
        self.sheets.append(ws)
        return ws

    def style(self, number_format: str | None = None, font: Font | None = None, fill: Fill | None = None,
              align: Align | None = None) -> int:
        """The index of the cell style with these parts (0: the default style)."""
        key = (number_format, font if font != Font() else None, fill, align if align != Align() else None)
        got = self._styles.get(key)
        if got is None:
            got = self._styles[key] = len(self._styles)
            if font is not None:
                self._fonts.setdefault(font, len(self._fonts))
            if fill is not None:
                self._fills.setdefault(fill, len(self._fills) + 2)  # fills 0 and 1 are reserved
            if number_format is not None and number_format not in BUILTIN_FORMATS:
                self._formats.setdefault(number_format, 164 + len(self._formats))
        return got

    # ------------------------------------------------------------------
    def _styles_xml(self) -> str:
        fmts = "".join(f'<numFmt numFmtId="{i}" formatCode="{_attr(f)}"/>' for f, i in self._formats.items())
        fonts = "".join("<font>" + ("<b/>" if f.bold else "") + f'<sz val="{f.size:g}"/>'
                        + (f'<color rgb="FF{f.color}"/>' if f.color else "") + '<name val="Calibri"/><family val="2"/></font>'
                        for f in self._fonts)
        fills = ('<fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/></fill>'
                 + "".join(f'<fill><patternFill patternType="solid"><fgColor rgb="FF{f.color}"/><bgColor indexed="64"/>'
                           "</patternFill></fill>" for f in self._fills))
        xfs = []
        for fmt, font, fill, align in self._styles:
            num = 0 if fmt is None else BUILTIN_FORMATS.get(fmt, self._formats.get(fmt, 0))
            a = [(f'<xf numFmtId="{num}" fontId="{self._fonts[font] if font else 0}" '
                  f'fillId="{self._fills[fill] if fill else 0}" borderId="0" xfId="0"')]
            a += [' applyNumberFormat="1"'] if fmt is not None else []
            a += [' applyFont="1"'] if font else []
            a += [' applyFill="1"'] if fill else []
            if align:
                parts = "".join([f' horizontal="{align.horizontal}"' if align.horizontal else "",
                                 f' vertical="{align.vertical}"' if align.vertical else "",
                                 ' wrapText="1"' if align.wrap else ""])
                a.append(f' applyAlignment="1"><alignment{parts}/></xf>')
            else:
                a.append("/>")
            xfs.append("".join(a))
        return (HEAD + f'<styleSheet xmlns="{MAIN}">'
                + (f'<numFmts count="{len(self._formats)}">{fmts}</numFmts>' if self._formats else "")
                + f'<fonts count="{len(self._fonts)}">{fonts}</fonts><fills count="{len(self._fills) + 2}">{fills}</fills>'
                + '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>'
                + '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>'
                + f'<cellXfs count="{len(xfs)}">{"".join(xfs)}</cellXfs>'
                + '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles></styleSheet>')

    def _package(self) -> dict[str, str]:
        n = len(self.sheets)
        ct = "application/vnd.openxmlformats-officedocument"
        parts = {
            "[Content_Types].xml": HEAD + '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
            f'<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{ct}.spreadsheetml.sheet.main+xml"/>'
            + "".join(f'<Override PartName="/xl/worksheets/sheet{i}.xml" ContentType="{ct}.spreadsheetml.worksheet+xml"/>'
                      for i in range(1, n + 1))
            + f'<Override PartName="/xl/styles.xml" ContentType="{ct}.spreadsheetml.styles+xml"/>'
            '<Override PartName="/docProps/core.xml" ContentType="application/vnd.openxmlformats-package.core-properties+xml"/>'
            f'<Override PartName="/docProps/app.xml" ContentType="{ct}.extended-properties+xml"/></Types>',
            "_rels/.rels": HEAD + f'<Relationships xmlns="{PKG_REL}">'
            f'<Relationship Id="rId1" Type="{REL}/officeDocument" Target="xl/workbook.xml"/>'
            '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/relationships/metadata/'
            'core-properties" Target="docProps/core.xml"/>'
            f'<Relationship Id="rId3" Type="{REL}/extended-properties" Target="docProps/app.xml"/></Relationships>',
            "docProps/app.xml": HEAD + '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/'
            'extended-properties"><Application>tenure</Application></Properties>',
            "docProps/core.xml": HEAD + '<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/2006/'
            'metadata/core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" xmlns:dcterms="http://purl.org/dc/'
            'terms/" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            f"<dc:title>{_text(self.title)}</dc:title><dc:creator>{_text(self.creator)}</dc:creator>"
            f'<dcterms:created xsi:type="dcterms:W3CDTF">{_dt.datetime.now(_dt.UTC):%Y-%m-%dT%H:%M:%SZ}'
            "</dcterms:created></cp:coreProperties>",
            "xl/workbook.xml": HEAD + f'<workbook xmlns="{MAIN}" xmlns:r="{REL}"><bookViews><workbookView activeTab="0"/>'
            "</bookViews><sheets>" + "".join(f'<sheet name="{_attr(s.title)}" sheetId="{i}" r:id="rId{i}"/>'
                                             for i, s in enumerate(self.sheets, start=1)) + "</sheets></workbook>",
            "xl/_rels/workbook.xml.rels": HEAD + f'<Relationships xmlns="{PKG_REL}">'
            + "".join(f'<Relationship Id="rId{i}" Type="{REL}/worksheet" Target="worksheets/sheet{i}.xml"/>'
                      for i in range(1, n + 1))
            + f'<Relationship Id="rId{n + 1}" Type="{REL}/styles" Target="styles.xml"/></Relationships>',
            "xl/styles.xml": self._styles_xml(),
        }
        return parts

    def to_bytes(self) -> bytes:
        """The whole workbook as the bytes of an ``.xlsx`` file (a zip package)."""
        if not self.sheets:
            self.sheet("sheet1")
        buf = io.BytesIO()
        with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED, compresslevel=4) as z:
            for name, text in self._package().items():
                z.writestr(name, text.encode("utf-8"))
            for i, s in enumerate(self.sheets, start=1):
                with z.open(f"xl/worksheets/sheet{i}.xml", "w", force_zip64=True) as fh:
                    for chunk in s._xml(tab_selected=i == 1):
                        fh.write(chunk.encode("utf-8"))
        return buf.getvalue()


class Sheet:
    """One sheet: rows are appended in order (each becomes XML text at once); widths, heights and the frozen
    panes may be set at any time before the book is saved."""

    def __init__(self, book: Book, title: str):
        self.book, self.title = book, title
        self.rows: list[tuple[int, str]] = []
        self.row = 0
        self.width: dict[int, float] = {}
        self.height: dict[int, float] = {}
        self.freeze: str | None = None
        self.max_col = 0

    def append(self, values: Sequence[Any], styles: Sequence[int] | int = 0) -> int:
        """Add a row of ``values`` (None or "": an empty cell) with a style index per cell (or one for all);
        returns the row number (1-based)."""
        self.row += 1
        r = self.row
        one = styles if isinstance(styles, int) else None
        cells = []
        for j, v in enumerate(values):
            if v is None:
                continue
            s = one if one is not None else styles[j]
            ref = f"{_LETTERS[j] if j < 702 else column_letter(j + 1)}{r}"
            st = f' s="{s}"' if s else ""
            if isinstance(v, str):
                if not v:
                    continue  # an empty text is an empty cell
                sp = ' xml:space="preserve"' if v[:1].isspace() or v[-1:].isspace() else ""
                cells.append(f'<c r="{ref}"{st} t="inlineStr"><is><t{sp}>{_text(v)}</t></is></c>')
            elif isinstance(v, bool):
                cells.append(f'<c r="{ref}"{st} t="b"><v>{int(v)}</v></c>')
            elif isinstance(v, int):
                cells.append(f'<c r="{ref}"{st}><v>{v}</v></c>')
            elif isinstance(v, float):
                if math.isfinite(v):
                    cells.append(f'<c r="{ref}"{st}><v>{float(v)!r}</v></c>')
            elif hasattr(v, "dtype") and getattr(v, "shape", None) == ():  # a numpy scalar: as its Python value
                x = v.item()
                if isinstance(x, bool):
                    cells.append(f'<c r="{ref}"{st} t="b"><v>{int(x)}</v></c>')
                elif isinstance(x, int) or (isinstance(x, float) and math.isfinite(x)):
                    cells.append(f'<c r="{ref}"{st}><v>{x!r}</v></c>')
            else:
                t = str(v)
                cells.append(f'<c r="{ref}"{st} t="inlineStr"><is><t xml:space="preserve">{_text(t)}</t></is></c>')
        self.max_col = max(self.max_col, len(values))
        self.rows.append((r, "".join(cells)))
        return r

    def skip(self) -> None:
        """An empty row."""
        self.row += 1

    def _xml(self, tab_selected: bool = False):
        yield HEAD + f'<worksheet xmlns="{MAIN}" xmlns:r="{REL}">'
        last = f"{_letter(max(self.max_col, 1))}{max(self.row, 1)}"
        yield f'<dimension ref="A1:{last}"/>'
        yield '<sheetViews><sheetView workbookViewId="0"' + (' tabSelected="1"' if tab_selected else "") + ">"
        if self.freeze and self.freeze != "A1":
            m = re.fullmatch(r"([A-Z]+)(\d+)", self.freeze)
            col = sum((ord(ch) - 64) * 26 ** k for k, ch in enumerate(reversed(m.group(1))))
            xs, ys = col - 1, int(m.group(2)) - 1
            pane = "bottomRight" if xs and ys else "topRight" if xs else "bottomLeft"
            yield ("<pane" + (f' xSplit="{xs}"' if xs else "") + (f' ySplit="{ys}"' if ys else "")
                   + f' topLeftCell="{self.freeze}" activePane="{pane}" state="frozen"/>'
                   f'<selection pane="{pane}" activeCell="{self.freeze}" sqref="{self.freeze}"/>')
        yield '</sheetView></sheetViews><sheetFormatPr defaultRowHeight="15"/>'
        if self.width:
            yield "<cols>" + "".join(f'<col min="{j}" max="{j}" width="{w:g}" customWidth="1"/>'
                                     for j, w in sorted(self.width.items())) + "</cols>"
        yield "<sheetData>"
        h = self.height
        step = 2000
        for i in range(0, len(self.rows), step):
            yield "".join(f'<row r="{r}" ht="{h[r]:g}" customHeight="1">{c}</row>' if r in h else f'<row r="{r}">{c}</row>'
                          for r, c in self.rows[i:i + step])
        yield "</sheetData></worksheet>"
