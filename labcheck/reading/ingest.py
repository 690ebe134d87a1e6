"""Read submissions: CSV or XLSX files, folders of them, and LMS zip exports.

Student files are untrusted.  Nothing is extracted to disk: zip members are
read into memory, with caps on every size, and a member whose name is
absolute or climbs out with ``..`` is refused.  Every cap is checked from
what a file declares (an archive's central directory, a workbook's parts)
before anything is expanded, and again while reading, since a declaration
may lie.  A file that cannot be read becomes a :class:`RawSubmission` with
an ``error``; no input fault ever escapes this module as an exception.

CSV is read as spreadsheet programs write it: LF, CRLF or CR-only line
endings; a ``sep=`` first line; comma, semicolon, tab or bar separators
found from the header row; UTF-8 with or without a byte-order mark, UTF-16
with one, and Windows-1252 only when the bytes are not UTF-8 (with a note
on the sheet); doubled quotes inside quoted fields.
"""

from __future__ import annotations

import csv
import io
import itertools
import re
import struct
import zipfile
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path, PurePosixPath
from typing import TYPE_CHECKING, Iterator

if TYPE_CHECKING:
    from labcheck.reading.identity import Roster

from labcheck.reading import xlsx
from labcheck.reading.xlsx import UNSAVED_FORMULA

__all__ = [
    "Limits",
    "Unparsed",
    "Row",
    "RawSubmission",
    "Skipped",
    "InputError",
    "iter_submissions",
    "read_rows",
    "read_roster",
    "read_adjustments",
    "COLUMNS",
    "SUBMISSION_SUFFIXES",
]

COLUMNS = ("part", "item", "value", "unit", "note")
REQUIRED_COLUMNS = ("part", "item", "value")
SUBMISSION_SUFFIXES = (".csv", ".tsv", ".txt", ".xlsx")
# Files an operating system or archiver leaves behind; listed as skipped, not graded.
_JUNK_NAMES = {".ds_store", "thumbs.db", "desktop.ini"}
_JUNK_DIRS = {"__macosx"}
_DELIMITERS = (",", ";", "\t", "|")
# Rows searched for the header row (a title or a blank line may come first).
_HEADER_SEARCH_ROWS = 20


class InputError(Exception):
    """An input path or roster the instructor gave cannot be used (exit status 2)."""


@dataclass(frozen=True)
class Limits:
    """Caps on what one run will read.  Defaults suit a department-sized batch.

    Each cap bounds one file's cost: the defaults keep any file inside them
    under about a second and 200 MB (measured by benchmarks/bench_worst_inputs.py).
    A real submission is 2-30 KB with 20-200 rows.
    """

    max_file_bytes: int = 5 * 1024 * 1024  # one submission file
    max_rows: int = 5000  # rows in one submission
    max_line_chars: int = 20_000  # one CSV line (a long note fits many times over)
    max_zip_members: int = 50_000
    max_zip_total_bytes: int = 1024 * 1024 * 1024  # uncompressed, whole archive
    max_xlsx_unpacked_bytes: int = 50 * 1024 * 1024  # an XLSX is itself a zip: all its parts
    max_xlsx_part_bytes: int = 4 * 1024 * 1024  # one worksheet or the shared strings, unpacked
    max_xlsx_parts: int = 500  # parts in one workbook
    max_xlsx_sheets: int = 50


@dataclass
class Row:
    """One row of a submission, as written (all text)."""

    number: int  # the row number a spreadsheet shows (header is row 1)
    part: str
    item: str
    value: str
    unit: str
    note: str
    issue: str = ""  # a fault found while reading this row (a formula with no saved value)


@dataclass
class RawSubmission:
    """A submission file: its rows, or why it could not be read.

    ``notes`` say how the file was read when that is worth telling the
    student (another encoding, another sheet); they appear on the sheet.
    ``decimal_hint`` is ``","`` when the file's separator is one that
    decimal-comma locales write (``;``), else None.
    """

    source: str  # the file's name as the instructor will recognise it
    rows: list[Row] = field(default_factory=list)
    error: str | None = None
    notes: list[str] = field(default_factory=list)
    decimal_hint: str | None = None
    modified: float | None = None  # the file's time (POSIX seconds; a zip member's stored time), for duplicates


@dataclass
class Unparsed:
    """A submission file's bytes, read but not yet parsed (``iter_submissions(parse=False)``): parsing,
    the costly part, can then happen in a worker process (:func:`parse`)."""

    source: str
    data: bytes
    limits: "Limits"
    modified: float | None = None

    def parse(self) -> "RawSubmission":
        raw = read_rows(self.data, self.source, self.limits)
        raw.modified = self.modified
        return raw


@dataclass(frozen=True)
class Skipped:
    """A file deliberately passed over (operating-system clutter), with the reason."""

    source: str
    reason: str


def _is_junk(parts: tuple[str, ...]) -> bool:
    if any(p.lower() in _JUNK_DIRS for p in parts[:-1]):
        return True
    name = parts[-1]
    return name.lower() in _JUNK_NAMES or name.startswith("._") or name.startswith("~$")


def iter_submissions(
    inputs: list[str | Path], limits: Limits = Limits(), exclude: set[Path] | None = None, *, parse: bool = True
) -> Iterator[RawSubmission | Skipped]:
    """Yield every submission (or skipped file) found in ``inputs``, in a stable order.

    Each input is a submission file, a folder (searched recursively) or a
    zip archive.  Files at or under a path in ``exclude`` (the output folder,
    the roster) are not read.  Raises :class:`InputError` only for an input path that does
    not exist; everything inside is yielded, readable or not.  With ``parse=False`` files that were
    read are yielded as :class:`Unparsed` (their bytes), for a worker process to parse.
    """
    excluded = [p.resolve() for p in (exclude or set())]
    finish = (lambda data, shown, when: _timed(read_rows(data, shown, limits), when)) if parse else (
        lambda data, shown, when: Unparsed(shown, data, limits, when))

    def is_excluded(p: Path) -> bool:
        r = p.resolve()
        return any(r == e or e in r.parents for e in excluded)

    for item in inputs:
        path = Path(item)
        if not path.exists():
            raise InputError(f"{path}: no such file or folder")
    for item in inputs:
        path = Path(item)
        if path.is_dir():
            for file in sorted(p for p in path.rglob("*") if p.is_file() or p.is_symlink()):
                if is_excluded(file):
                    continue
                rel = file.relative_to(path)
                display = str(PurePosixPath(path.name, *rel.parts))
                if _is_junk(rel.parts):
                    yield Skipped(display, "operating-system or archiver clutter")
                    continue
                yield from _from_file(file, display, limits, finish)
        elif not is_excluded(path):
            yield from _from_file(path, path.name, limits, finish)


def _from_file(path: Path, display: str, limits: Limits, finish) -> Iterator[RawSubmission | Skipped]:
    if path.is_symlink():
        yield RawSubmission(display, error="a symbolic link; not followed")
        return
    if path.suffix.lower() == ".zip":
        yield from _from_zip(path, display, limits, finish)
        return
    try:
        size = path.stat().st_size
        if size > limits.max_file_bytes:
            yield RawSubmission(display, error=f"file too large ({size} bytes; the cap is {limits.max_file_bytes})")
            return
        with open(path, "rb") as fh:
            data = fh.read(limits.max_file_bytes + 1)  # the file may grow while we read
    except OSError as exc:
        yield RawSubmission(display, error=f"cannot read the file: {exc.strerror or exc}")
        return
    if len(data) > limits.max_file_bytes:
        yield RawSubmission(display, error=f"file too large (over {limits.max_file_bytes} bytes)")
        return
    try:
        when = path.stat().st_mtime
    except OSError:
        when = None
    yield finish(data, display, when)


def _timed(raw: RawSubmission, when: float | None) -> RawSubmission:
    raw.modified = when
    return raw


def _zip_time(info: zipfile.ZipInfo) -> float | None:
    try:
        return datetime(*info.date_time).timestamp()
    except (ValueError, OverflowError, OSError):
        return None


def _safe_member_name(name: str) -> str | None:
    """The member's path if it stays inside the archive, else None."""
    n = name.replace("\\", "/")
    if n.startswith("/") or (len(n) > 1 and n[1] == ":"):
        return None
    parts = PurePosixPath(n).parts
    if any(p == ".." for p in parts):
        return None
    return n


_EOCD = struct.Struct("<4s4H2LH")  # end of central directory record
_ZIP64_LOCATOR = struct.Struct("<4sLQL")
_ZIP64_EOCD = struct.Struct("<4sQ2H2L4Q")


def zip_directory_size(fh) -> tuple[int, int] | None:
    """(members, central-directory bytes) as an archive declares them, read from its last 64 KiB.

    Read before the archive is opened, so that an archive declaring a
    million members is refused without listing them.  None when no
    end-of-central-directory record is found (not a zip).  The zip format:
    PKWARE APPNOTE.TXT, sections 4.3.14-4.3.16.
    """
    fh.seek(0, io.SEEK_END)
    size = fh.tell()
    tail_len = min(size, _EOCD.size + 65535)
    fh.seek(size - tail_len)
    tail = fh.read(tail_len)
    at = tail.rfind(b"PK\x05\x06")
    if at < 0 or at + _EOCD.size > len(tail):
        return None
    _, _, _, _, members, cd_size, _, _ = _EOCD.unpack_from(tail, at)
    loc = at - _ZIP64_LOCATOR.size
    if loc >= 0 and tail[loc:loc + 4] == b"PK\x06\x07":
        _, _, offset, _ = _ZIP64_LOCATOR.unpack_from(tail, loc)
        if 0 <= offset <= size - _ZIP64_EOCD.size:
            fh.seek(offset)
            rec = fh.read(_ZIP64_EOCD.size)
            if rec[:4] == b"PK\x06\x06":
                fields = _ZIP64_EOCD.unpack(rec)
                members, cd_size = fields[7], fields[8]
    return members, cd_size


# Each central-directory entry is 46 bytes plus its name, extra field and comment.
_CD_BYTES_PER_MEMBER = 46 + 1024


def _from_zip(path: Path, display: str, limits: Limits, finish) -> Iterator[RawSubmission | Skipped]:
    try:
        with open(path, "rb") as fh:
            declared = zip_directory_size(fh)
    except OSError as exc:
        yield RawSubmission(display, error=f"cannot read the file: {exc.strerror or exc}")
        return
    if declared is None:
        yield RawSubmission(display, error="not a readable zip archive (no central directory)")
        return
    if declared[0] > limits.max_zip_members:
        yield RawSubmission(display, error=f"archive declares {declared[0]} files; the cap is {limits.max_zip_members}")
        return
    if declared[1] > limits.max_zip_members * _CD_BYTES_PER_MEMBER:
        yield RawSubmission(display, error=f"archive's directory is {declared[1]} bytes; too large to list")
        return
    try:
        archive = zipfile.ZipFile(path)
    except Exception as exc:  # zipfile raises many types for a corrupt archive
        yield RawSubmission(display, error=f"not a readable zip archive ({type(exc).__name__}: {exc})")
        return
    with archive:
        members = [m for m in archive.infolist() if not m.is_dir()]
        if len(members) > limits.max_zip_members:
            yield RawSubmission(
                display, error=f"archive has {len(members)} files; the cap is {limits.max_zip_members}"
            )
            return
        total = 0
        for info in sorted(members, key=lambda m: m.filename):
            shown = f"{display}/{info.filename}"
            safe = _safe_member_name(info.filename)
            if safe is None:
                yield RawSubmission(shown, error="refused: the member's path is absolute or leaves the archive (..)")
                continue
            parts = PurePosixPath(safe).parts
            if _is_junk(parts):
                yield Skipped(shown, "operating-system or archiver clutter")
                continue
            suffix = PurePosixPath(safe).suffix.lower()
            if suffix == ".zip":
                yield RawSubmission(shown, error="a zip inside a zip is not opened; submit its files directly")
                continue
            if suffix not in SUBMISSION_SUFFIXES:
                yield read_rows(b"", shown, limits)  # refused by name, without expanding it
                continue
            if info.file_size > limits.max_file_bytes:
                yield RawSubmission(
                    shown, error=f"refused: expands to {info.file_size} bytes; the cap is {limits.max_file_bytes}"
                )
                continue
            if total + info.file_size > limits.max_zip_total_bytes:
                yield RawSubmission(shown, error="refused: the archive expands beyond the total size cap")
                continue
            try:
                with archive.open(info) as fh:
                    data = fh.read(limits.max_file_bytes + 1)  # the declared size may lie
            except Exception as exc:  # corrupt deflate/LZMA/bzip2 data, bad CRC, encryption, truncation
                yield RawSubmission(shown, error=f"cannot read this archive member ({type(exc).__name__}: {exc})")
                continue
            if len(data) > limits.max_file_bytes:
                yield RawSubmission(shown, error=f"refused: expands beyond {limits.max_file_bytes} bytes")
                continue
            total += len(data)
            yield finish(data, shown, _zip_time(info))


def read_rows(data: bytes, source: str, limits: Limits = Limits()) -> RawSubmission:
    """Parse one submission file's bytes (CSV, TSV or XLSX by name) into rows.  Never raises."""
    suffix = PurePosixPath(source).suffix.lower()
    if suffix not in SUBMISSION_SUFFIXES:
        hint = " (the old .xls format: save it as .xlsx or CSV)" if suffix == ".xls" else ""
        return RawSubmission(source, error=f"not a CSV or XLSX submission{hint}")
    if not data.strip():
        return RawSubmission(source, error="the file is empty")
    if len(data) > limits.max_file_bytes:
        return RawSubmission(source, error=f"file too large ({len(data)} bytes; the cap is {limits.max_file_bytes})")
    raw = RawSubmission(source)
    try:
        if suffix == ".xlsx":
            table = _xlsx_table(data, limits, raw)
        else:
            table = _csv_table(data, limits, raw, tab_default=suffix in (".tsv", ".txt"))
    except _Unreadable as exc:
        return RawSubmission(source, error=str(exc))
    return _rows_from_table(table, raw, limits)


class _Unreadable(Exception):
    pass


def _decode(data: bytes, raw: RawSubmission) -> str:
    """Text from bytes: UTF-8 (BOM or not), UTF-16 with a BOM, else Windows-1252 with a note."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError:
            raise _Unreadable("broken UTF-16 text; save the file as 'CSV UTF-8'") from None
    if b"\x00" in data[:8192]:
        raise _Unreadable("binary data, not a CSV text file; save the file as 'CSV UTF-8'")
    if data[:4] == b"PK\x03\x04":
        raise _Unreadable("this is a zip or XLSX file named .csv; rename it to .xlsx or export it as CSV")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        pass
    try:
        text = data.decode("cp1252")
    except UnicodeDecodeError as exc:
        raise _Unreadable(f"neither UTF-8 nor Windows-1252 text (byte {exc.start}); save the file as 'CSV UTF-8'") from None
    raw.notes.append("The file is not UTF-8 text; it was read as Windows-1252. "
                     "Check accented letters in your name and notes; save as 'CSV UTF-8' next time.")
    return text


def _lines(text: str, limits: Limits) -> Iterator[str]:
    """Physical lines ending in LF, CRLF or a lone CR (endings kept, so quoted line breaks survive), lazily;
    a line longer than the cap stops the file."""
    for number, line in enumerate(io.StringIO(text, newline=""), start=1):
        if len(line) > limits.max_line_chars:
            raise _Unreadable(f"line {number} is longer than {limits.max_line_chars} characters; "
                              "is this a submission template?")
        yield line


def _header_names(cells) -> list[str] | None:
    """The row's cells as column names when it is the header row (it names part, item and value), else None."""
    names = [c.strip().lower() for c in cells]
    return names if all(col in names for col in REQUIRED_COLUMNS) else None


def _header_delimiter(lines: list[str], tab_default: bool) -> str:
    """The separator that splits the header row into cells naming part, item and value."""
    for line in lines:
        if not line.strip():
            continue
        for delim in _DELIMITERS:
            if _header_names(next(csv.reader([line.rstrip("\r\n")], delimiter=delim), [])):
                return delim
    if tab_default:
        return "\t"
    first = next((ln for ln in lines if ln.strip()), "")
    return max(_DELIMITERS, key=first.count)


def _csv_table(data: bytes, limits: Limits, raw: RawSubmission, tab_default: bool) -> list[list[str]]:
    """Rows of cells, read only as far as the row cap: a 5 MB file of rows costs what its first rows cost."""
    text = _decode(data, raw)
    lines = _lines(text, limits)
    head = list(itertools.islice(lines, _HEADER_SEARCH_ROWS))
    delim = None
    first = next((i for i, ln in enumerate(head) if ln.strip()), None)
    if first is not None:
        m = re.fullmatch(r'\s*"?sep=(.)"?\s*', head[first].rstrip("\r\n"), flags=re.IGNORECASE)
        if m:  # a spreadsheet's "sep=;" line names the separator
            delim = m.group(1)
            head[first] = "\n"  # keeps row numbers as a spreadsheet shows them
    delim = delim or _header_delimiter(head, tab_default)
    if delim == ";":
        raw.decimal_hint = ","
    table: list[list[str]] = []
    filled = 0
    try:
        reader = csv.reader(itertools.chain(head, lines), delimiter=delim, quotechar='"', doublequote=True, strict=False)
        for cells in reader:
            table.append(cells)
            filled += any(c.strip() for c in cells)
            if filled > limits.max_rows + 1:  # the header and one row past the cap: enough to refuse
                break
    except csv.Error as exc:
        raise _Unreadable(f"malformed CSV ({exc})") from None
    return table


def _xlsx_table(data: bytes, limits: Limits, raw: RawSubmission) -> list[list[str]]:
    """The sheet holding the header row, as text cells, read within the caps (see :mod:`labcheck.reading.xlsx`).

    Only the columns up to the last of ours are read, so a cell typed in the last column of a row costs
    nothing; reading stops past the row cap.
    """
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
        infos = zf.infolist()
    except Exception:
        raise _Unreadable("not a valid XLSX workbook") from None
    if len(infos) > limits.max_xlsx_parts:
        raise _Unreadable(f"the workbook has {len(infos)} parts; the cap is {limits.max_xlsx_parts}")
    unpacked = sum(i.file_size for i in infos)
    if unpacked > limits.max_xlsx_unpacked_bytes:
        raise _Unreadable(f"workbook expands to {unpacked} bytes; the cap is {limits.max_xlsx_unpacked_bytes}")
    big = [i for i in infos if i.file_size > limits.max_xlsx_part_bytes]
    if big:
        raise _Unreadable(f"the workbook part {big[0].filename} expands to {big[0].file_size} bytes; "
                          f"the cap is {limits.max_xlsx_part_bytes} (a submission needs far less)")
    try:
        book = xlsx.Book(zf)
        sheets = book.sheets[: limits.max_xlsx_sheets]
        if not sheets:
            raise _Unreadable("the workbook has no worksheet")
        chosen, width = None, len(COLUMNS) + 1
        for name, part in sheets:
            head = book.read_sheet(part, 64, _HEADER_SEARCH_ROWS)
            found = _header_width(head)
            if found:
                chosen, width = (name, part), found
                break
        if chosen is None:
            chosen = sheets[0]
        elif chosen != sheets[0]:
            raw.notes.append(f"Read the sheet {chosen[0]!r}, where the header row is; the workbook's first sheet "
                             f"{sheets[0][0]!r} has none.")
        return book.read_sheet(chosen[1], width, 2 * limits.max_rows + _HEADER_SEARCH_ROWS + 1)
    except xlsx.XlsxError as exc:
        raise _Unreadable(f"the workbook cannot be read: {exc}; open it in a spreadsheet program and save it "
                          "again, or export it as CSV") from None
    except _Unreadable:
        raise
    except Exception as exc:  # a damaged part the parser still trips on
        raise _Unreadable(f"not a readable XLSX workbook ({type(exc).__name__})") from None


def _header_width(rows: list[list[str]]) -> int | None:
    """How many columns to read: up to the last of ours in the first header row, or None without one."""
    for row in rows:
        names = _header_names(row)
        if names:
            return max(names.index(c) for c in COLUMNS if c in names) + 1
    return None


_UNSAVED_FORMULA_MESSAGE = ("a formula with no saved value (the file was never calculated and saved by a spreadsheet "
                    "program): open it in one, let it calculate, and save it, or type the value")


def _rows_from_table(table: list[list[str]], raw: RawSubmission, limits: Limits) -> RawSubmission:
    source = raw.source
    start = next((i for i, r in enumerate(table[:_HEADER_SEARCH_ROWS]) if _header_names(r)), None)
    if start is None:
        first = next((r for r in table if any(c.strip() for c in r)), None)
        if first is None:
            return RawSubmission(source, error="the file has no rows")
        found = ", ".join(c.strip() for c in first if c.strip())[:200] or "nothing"
        if PurePosixPath(source).suffix.lower() == ".txt":
            return RawSubmission(source, error="not a CSV or XLSX submission: a text file with no header row "
                                               f"of {', '.join(COLUMNS)}")
        return RawSubmission(
            source,
            error=f"wrong columns: expected a header row with {', '.join(COLUMNS)}; found {found}",
        )
    header = _header_names(table[start])
    index = {name: header.index(name) for name in COLUMNS if name in header}
    body = table[start + 1:]
    filled = sum(1 for cells in body if any(c.strip() for c in cells))
    if filled > limits.max_rows:
        return RawSubmission(source, error=f"too many rows (over {limits.max_rows}, the cap)")
    if len(body) > 2 * limits.max_rows:
        return RawSubmission(source, error=f"the sheet runs past row {2 * limits.max_rows} (blank rows included); "
                                           "delete the stray cells far below the table")
    columns = [index.get(name) for name in COLUMNS]  # part, item, value, unit, note (None: column absent)
    rows = []
    for offset, cells in enumerate(body):
        if not any(c.strip() for c in cells):
            continue
        texts = [cells[j] if j is not None and j < len(cells) else "" for j in columns]
        issue = ""
        if UNSAVED_FORMULA in texts:
            # A formula with no saved value in part, item, value or unit makes the row unusable; in the
            # note it only loses the note.
            if UNSAVED_FORMULA in texts[:4]:
                issue = _UNSAVED_FORMULA_MESSAGE
            texts = ["" if t == UNSAVED_FORMULA else t for t in texts]
        part, item, value, unit, note = (t.strip() for t in texts)
        rows.append(Row(start + offset + 2, part.lower(), item, value, unit, note, issue))
    raw.rows = rows
    return raw


MAX_ROSTER_BYTES = 20_000_000  # a department's roster of 100,000 students is about 5 MB
_ROSTER_SEPARATORS = (",", ";", "\t", "|")


def read_roster(path: str | Path, id_column: str | None = None, name_column: str | None = None,
                section: str | None = None) -> "Roster":
    """Read a roster CSV as an LMS or a spreadsheet writes it (docs/course.md, "Rosters").

    Separators ``, ; tab |`` (found from the header row); UTF-8 (BOM or not), UTF-16 with a BOM, or
    Windows-1252; the id and name columns by the aliases in :mod:`labcheck.reading.identity` or as named;
    a name from first and last name columns when there is no name column; up to 5 title rows before
    the header; rows with no id, or with no name and spaces in the id (an LMS's "Points Possible" row),
    passed over.  ``section`` names the
    section of every student (else a section column, else blank).
    """
    from labcheck.reading.identity import Roster, RosterEntry, RosterError, roster_columns

    p = Path(path)
    try:
        if p.stat().st_size > MAX_ROSTER_BYTES:
            raise InputError(f"{p}: the roster is over {MAX_ROSTER_BYTES // 1_000_000} MB; is it the right file?")
        data = p.read_bytes()
    except OSError as exc:
        raise InputError(f"{p}: cannot read the roster: {exc.strerror or exc}") from None
    try:
        text = _decode(data, RawSubmission(str(p)))
    except _Unreadable as exc:
        raise InputError(f"{p}: the roster cannot be read: {exc}") from None
    lines = text.splitlines()
    header_at, delim, cols, first_error = None, ",", None, None
    for i, line in enumerate(lines[:6]):
        if not line.strip():
            continue
        for d in sorted(_ROSTER_SEPARATORS, key=lambda d: -line.count(d)):
            cells = next(csv.reader([line], delimiter=d), [])
            try:
                cols = roster_columns(cells, id_column, name_column)
            except RosterError as exc:
                first_error = first_error or exc
                continue
            header_at, delim = i, d
            break
        if header_at is not None:
            break
    if header_at is None:
        raise InputError(f"{p}: {first_error or 'the roster is empty'}")
    entries, seen = [], {}
    reader = csv.reader(io.StringIO("\n".join(lines[header_at + 1:]), newline=""), delimiter=delim)
    for n, cells in enumerate(reader, start=header_at + 2):
        def cell(key):
            i = cols[key]
            return cells[i].strip() if i is not None and i < len(cells) else ""
        sid = cell("id").lstrip("'")
        if not sid:
            continue
        name = cell("name") or " ".join(x for x in (cell("first"), cell("last")) if x)
        if not name and " " in sid:
            continue  # an LMS's annotation row ("Points Possible"), not a student
        if sid in seen:
            raise InputError(f"{p}: row {n}: student id {sid!r} appears twice (rows {seen[sid]} and {n})")
        seen[sid] = n
        entries.append(RosterEntry(sid, name, section if section is not None else cell("section")))
    if not entries:
        raise InputError(f"{p}: the roster has a header row but no students")
    try:
        return Roster(entries)
    except RosterError as exc:
        raise InputError(f"{p}: {exc}") from None


MAX_ADJUSTMENT_FILE_BYTES = 5_000_000  # 50,000 adjustments of 100 characters


def read_adjustments(path: str | Path) -> list[dict]:
    """The instructor's adjustments as a CSV (``labcheck course adjust --file``): columns student_id, lab,
    step (may be blank), points, reason; ``,`` ``;`` or tab; UTF-8.  One dict per row, with its row number."""
    try:
        if Path(path).stat().st_size > MAX_ADJUSTMENT_FILE_BYTES:
            raise InputError(f"{path}: over {MAX_ADJUSTMENT_FILE_BYTES // 1_000_000} MB; is it the adjustments file?")
        with open(path, newline="", encoding="utf-8-sig") as fh:
            sample = fh.read(4096)
            fh.seek(0)
            delim = max(",;\t", key=sample.split("\n", 1)[0].count)
            reader = csv.DictReader(fh, delimiter=delim)
            fields = {(f or "").strip().lower() for f in reader.fieldnames or []}
            need = {"student_id", "lab", "points", "reason"}
            if not need <= fields:
                raise InputError(f"{path}: an adjustments file needs the columns student_id, lab, step, points, "
                                 f"reason; missing {', '.join(sorted(need - fields))}")
            rows = []
            for n, row in enumerate(reader, start=2):
                clean = {(k or "").strip().lower(): (v or "").strip() for k, v in row.items() if k}
                if not any(clean.values()):
                    continue
                try:
                    points = float(clean["points"])
                except ValueError:
                    raise InputError(f"{path}: row {n}: points {clean['points']!r} is not a number") from None
                rows.append({"row": n, "student": clean["student_id"], "lab": clean["lab"],
                             "step": clean.get("step") or None, "points": points, "reason": clean["reason"]})
            return rows
    except OSError as exc:
        raise InputError(f"{path}: cannot read it: {exc.strerror or exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: not UTF-8 text; save it as 'CSV UTF-8'") from None
