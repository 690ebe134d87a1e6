"""A small streaming reader of XLSX worksheets: the cells labcheck reads, as text, within bounds.

An XLSX workbook is a zip of XML parts (ECMA-376 Part 1, §18: SpreadsheetML).  This reader parses
only what a submission needs: the workbook's sheet list and relationships, the shared strings, the
number formats that mark a cell as a date, and one worksheet's rows, with the standard library's expat
parser (``xml.etree.ElementTree``, which never fetches external entities; expat ≥ 2.4 bounds entity
expansion).  A part of up to :data:`TREE_BYTES` is parsed whole in C and kept for the book's later
reads; a larger one is streamed (``iterparse``), which stops at the row cap: a Python step per XML
element made a small workbook cost about 2 ms, ten times a CSV.  Cells are converted as openpyxl's read-only, ``data_only``
reader converts them (tests/test_xlsx.py checks the two agree on every workbook the tests and the
demo make), but without building style objects for every cell: about 20 times faster.

A cell that holds a formula with no saved value is returned as :data:`UNSAVED_FORMULA`.
"""

from __future__ import annotations

import re
import zipfile
from datetime import datetime, timedelta
from xml.etree.ElementTree import ParseError, XMLParser, iterparse

__all__ = ["XlsxError", "UNSAVED_FORMULA", "Book"]

_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_REL = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"
_PKG_REL = "{http://schemas.openxmlformats.org/package/2006/relationships}"
_WORKSHEET_TYPE = "/worksheet"
UNSAVED_FORMULA = "\x00unsaved-formula\x00"  # cannot come from a cell: XML forbids NUL

# Built-in number formats that show dates or times (ECMA-376 Part 1, §18.8.30): 14-22 and 45-47.
TREE_BYTES = 1 << 20  # parts up to 1 MiB unpacked are parsed whole (a submission's are a few KiB)
_BUILTIN_DATE_FORMATS = frozenset(range(14, 23)) | {45, 46, 47}
_QUOTED = re.compile(r'"[^"]*"|\[[^\]]*\]|\\.|_.|\*.')
_DATE_CHARS = re.compile(r"[dmyhs]", re.IGNORECASE)


class XlsxError(Exception):
    """The workbook cannot be read; the message says why in plain words."""


def _is_date_format(code: str) -> bool:
    """A custom number format shows a date or time when, outside quotes and brackets, it has d m y h s."""
    return bool(_DATE_CHARS.search(_QUOTED.sub("", code.split(";")[0])))


def _failed(name: str, exc: Exception) -> XlsxError:
    return XlsxError(f"the workbook's part {name} cannot be read ({type(exc).__name__})")


class _Parts:
    """The workbook's XML parts, each parsed at most once: small ones whole, large ones streamed."""

    def __init__(self, zf: zipfile.ZipFile):
        self.zf = zf
        self.sizes = {i.filename: i.file_size for i in zf.infolist()}
        self._trees: dict = {}

    def __contains__(self, name: str) -> bool:
        return name in self.sizes

    def tree(self, name: str):
        """The part's root element, or None when the part is too large to hold whole."""
        if name not in self.sizes:
            raise XlsxError(f"the workbook has no part {name}")
        if self.sizes[name] > TREE_BYTES:
            return None
        if name not in self._trees:
            try:
                with self.zf.open(name) as fh:
                    data = fh.read(TREE_BYTES + 1)
                if len(data) > TREE_BYTES:  # the directory understated the size
                    return None
                parser = XMLParser()
                parser.feed(data)
                self._trees[name] = parser.close()
            except (ParseError, zipfile.BadZipFile, EOFError, OSError, ValueError) as exc:
                raise _failed(name, exc) from None
        return self._trees[name]

    def elements(self, name: str, tag: str):
        """The part's complete elements named ``tag``, in document order (not nested in one another).

        Streamed elements are cleared once the caller has them: take what you need before the next.
        """
        root = self.tree(name)
        if root is not None:
            yield from root.iter(tag)
            return
        try:
            with self.zf.open(name) as fh:
                for _, el in iterparse(fh, events=("end",)):
                    if el.tag == tag:
                        yield el
                        el.clear()
        except (ParseError, zipfile.BadZipFile, EOFError, OSError, ValueError) as exc:
            raise _failed(name, exc) from None


def sheet_names(parts: _Parts) -> list[tuple[str, str]]:
    """(sheet name, part name) of every worksheet, in the workbook's order (chart sheets left out)."""
    targets = {}
    for el in parts.elements("xl/_rels/workbook.xml.rels", f"{_PKG_REL}Relationship"):
        if el.get("Type", "").endswith(_WORKSHEET_TYPE):
            target = el.get("Target", "")
            targets[el.get("Id")] = target.lstrip("/") if target.startswith("/") else f"xl/{target}"
    sheets = []
    for el in parts.elements("xl/workbook.xml", f"{_MAIN}sheet"):
        part = targets.get(el.get(f"{_REL}id"))
        if part:
            sheets.append((el.get("name", ""), part))
    return sheets


def _shared_strings(parts: _Parts) -> list[str]:
    if "xl/sharedStrings.xml" not in parts:
        return []
    out = []
    for el in parts.elements("xl/sharedStrings.xml", f"{_MAIN}si"):
        # The text runs of the item; phonetic guides (rPh) are not part of the value.
        texts = [t.text or "" for t in el.iter(f"{_MAIN}t")]
        phonetic = {id(t) for r in el.iter(f"{_MAIN}rPh") for t in r.iter(f"{_MAIN}t")}
        out.append("".join(t.text or "" for t in el.iter(f"{_MAIN}t") if id(t) not in phonetic)
                   if phonetic else "".join(texts))
    return out


def _date_styles(parts: _Parts) -> tuple[set[int], bool]:
    """Indices of the cell formats (cellXfs) that show dates, and whether the workbook counts from 1904."""
    custom: dict[int, str] = {}
    xfs: list[int] = []
    if "xl/styles.xml" in parts:
        root = parts.tree("xl/styles.xml")
        if root is not None:
            for el in root.iter(f"{_MAIN}numFmt"):
                _custom_format(custom, el)
            for cell_xfs in root.iter(f"{_MAIN}cellXfs"):
                xfs.extend(_format_id(el) for el in cell_xfs.iter(f"{_MAIN}xf"))
        else:
            in_cell_xfs = False
            for event, el in iterparse(parts.zf.open("xl/styles.xml"), events=("start", "end")):
                if el.tag == f"{_MAIN}cellXfs":
                    in_cell_xfs = event == "start"
                elif event == "end" and el.tag == f"{_MAIN}numFmt":
                    _custom_format(custom, el)
                elif event == "end" and el.tag == f"{_MAIN}xf" and in_cell_xfs:
                    xfs.append(_format_id(el))
    dates = {i for i, f in enumerate(xfs) if f in _BUILTIN_DATE_FORMATS or (f in custom and _is_date_format(custom[f]))}
    date1904 = False
    for el in parts.elements("xl/workbook.xml", f"{_MAIN}workbookPr"):
        date1904 = el.get("date1904", "").lower() in ("1", "true")
    return dates, date1904


def _custom_format(custom: dict, el) -> None:
    try:
        custom[int(el.get("numFmtId", "-1"))] = el.get("formatCode", "")
    except ValueError:
        pass


def _format_id(xf) -> int:
    try:
        return int(xf.get("numFmtId", "0"))
    except ValueError:
        return 0


def _column_index(ref: str) -> int:
    """0-based column of a reference such as ``C12`` (A = 0); -1 when it has no letters."""
    n = 0
    for ch in ref:
        if "A" <= ch <= "Z":
            n = n * 26 + ord(ch) - 64
        elif "a" <= ch <= "z":
            n = n * 26 + ord(ch) - 96
        else:
            break
    if n > 16384:  # beyond XFD, the last column a sheet has
        raise XlsxError(f"a cell reference {ref!r} lies beyond the sheet's last column")
    return n - 1


def _number_text(text: str) -> str:
    """A numeric cell as openpyxl gives it back: integers as written, other numbers as Python floats."""
    if "." in text or "E" in text or "e" in text:
        value = float(text)
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    return str(int(text))


def _date_text(serial: float, date1904: bool) -> str:
    """A date serial as ISO text, converted as openpyxl converts it (to the millisecond)."""
    epoch = datetime(1904, 1, 1) if date1904 else datetime(1899, 12, 30)
    day, fraction = divmod(serial, 1)
    diff = timedelta(milliseconds=round(fraction * 86400 * 1000))
    if 0 <= serial < 1 and diff.days == 0:
        return (datetime.min + diff).time().isoformat()
    if 0 < serial < 60 and not date1904:
        day += 1  # the 1900 date system counts a 29 February 1900 that never was (ECMA-376 §18.17.4.1)
    return (epoch + timedelta(days=day) + diff).isoformat()


class Book:
    """One workbook: its sheets, and its shared strings and date formats read once; each part parsed once."""

    def __init__(self, zf: zipfile.ZipFile):
        self.zf = zf
        self.parts = _Parts(zf)
        self.sheets = sheet_names(self.parts)
        self._strings = None
        self._dates = None

    def read_sheet(self, part: str, max_cols: int, max_rows: int) -> list[list[str]]:
        if self._strings is None:
            self._strings = _shared_strings(self.parts)
            try:
                self._dates = _date_styles(self.parts)
            except (ParseError, OSError, ValueError, zipfile.BadZipFile) as exc:
                raise XlsxError(f"the workbook's styles cannot be read ({type(exc).__name__})") from None
        return read_sheet(self.parts, part, max_cols, max_rows, self._strings, *self._dates)


def read_sheet(parts: _Parts, part: str, max_cols: int, max_rows: int, strings: list[str],
               dates: set[int], date1904: bool) -> list[list[str]]:
    """The sheet's rows as text cells, the first ``max_cols`` columns only, at most ``max_rows`` rows.

    Missing rows come back empty (as a spreadsheet shows them); a cell holding a formula with no saved
    value is :data:`UNSAVED_FORMULA`.  Raises :class:`XlsxError` for a cell that cannot be read.
    """
    rows: list[list[str]] = []
    next_row = 1
    for el in parts.elements(part, f"{_MAIN}row"):
        try:
            number = int(el.get("r", next_row))
        except ValueError:
            raise XlsxError(f"a row number {el.get('r')!r} is not a number") from None
        if number < next_row:
            number = next_row
        while next_row < number and len(rows) < max_rows:
            rows.append([])
            next_row += 1
        if len(rows) >= max_rows:
            break
        cells: list[str] = []
        column = -1
        for c in el.iter(f"{_MAIN}c"):
            ref = c.get("r")
            column = _column_index(ref) if ref else column + 1
            if column < 0 or column >= max_cols:
                continue
            while len(cells) < column:
                cells.append("")
            cells.append(_cell_text(c, strings, dates, date1904))
        rows.append(cells)
        next_row = number + 1
    return rows


def _cell_text(c, strings: list[str], dates: set[int], date1904: bool) -> str:
    kind = c.get("t", "n")
    v = c.find(f"{_MAIN}v")
    value = v.text if v is not None else None
    if kind == "inlineStr":
        node = c.find(f"{_MAIN}is")
        return "".join(t.text or "" for t in node.iter(f"{_MAIN}t")) if node is not None else ""
    if value is None:
        return UNSAVED_FORMULA if c.find(f"{_MAIN}f") is not None else ""
    try:
        if kind == "s":
            return strings[int(value)]
        if kind in ("str", "e"):
            return value
        if kind == "b":
            return "TRUE" if value.strip() in ("1", "true") else "FALSE"
        if kind == "d":
            return datetime.fromisoformat(value.strip().rstrip("Z")).isoformat()
        text = _number_text(value.strip())
        style = c.get("s")
        if style is not None and int(style) in dates:
            return _date_text(float(value), date1904)
        return text
    except (ValueError, IndexError, OverflowError):
        raise XlsxError(f"the cell {c.get('r', '?')} holds {value[:40]!r}, which its type ({kind}) cannot be") from None
