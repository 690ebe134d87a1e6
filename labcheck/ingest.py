"""Read submissions: CSV or XLSX files, folders of them, and LMS zip exports.

Student files are untrusted.  Nothing is extracted to disk: zip members are
read into memory, with caps on every size, and a member whose name is
absolute or climbs out with ``..`` is refused.  A file that cannot be read
becomes a :class:`RawSubmission` with an ``error``; it never stops the batch.
"""

from __future__ import annotations

import csv
import io
import zipfile
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Iterator

__all__ = [
    "Limits",
    "Row",
    "RawSubmission",
    "Skipped",
    "InputError",
    "iter_submissions",
    "read_rows",
    "read_roster",
    "COLUMNS",
]

COLUMNS = ("part", "item", "value", "unit", "note")
REQUIRED_COLUMNS = ("part", "item", "value")
SUBMISSION_SUFFIXES = (".csv", ".xlsx")
# Files an operating system or archiver leaves behind; listed as skipped, not graded.
_JUNK_NAMES = {".ds_store", "thumbs.db", "desktop.ini"}
_JUNK_DIRS = {"__macosx"}


class InputError(Exception):
    """An input path or roster the instructor gave cannot be used (exit status 2)."""


@dataclass(frozen=True)
class Limits:
    """Caps on what one run will read.  Defaults suit a department-sized batch."""

    max_file_bytes: int = 5 * 1024 * 1024  # one submission file
    max_rows: int = 5000  # rows in one submission
    max_zip_members: int = 50_000
    max_zip_total_bytes: int = 1024 * 1024 * 1024  # uncompressed, whole archive
    max_xlsx_unpacked_bytes: int = 50 * 1024 * 1024  # an XLSX is itself a zip


@dataclass
class Row:
    """One row of a submission, as written (all text)."""

    number: int  # the row number a spreadsheet shows (header is row 1)
    part: str
    item: str
    value: str
    unit: str
    note: str


@dataclass
class RawSubmission:
    """A submission file: its rows, or why it could not be read."""

    source: str  # the file's name as the instructor will recognise it
    rows: list[Row] = field(default_factory=list)
    error: str | None = None


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
    inputs: list[str | Path], limits: Limits = Limits(), exclude: set[Path] | None = None
) -> Iterator[RawSubmission | Skipped]:
    """Yield every submission (or skipped file) found in ``inputs``, in a stable order.

    Each input is a submission file, a folder (searched recursively) or a
    zip archive.  Files at or under a path in ``exclude`` (the output folder,
    the roster) are not read.  Raises :class:`InputError` only for an input path that does
    not exist; everything inside is yielded, readable or not.
    """
    excluded = [p.resolve() for p in (exclude or set())]

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
                yield from _from_file(file, display, limits)
        elif not is_excluded(path):
            yield from _from_file(path, path.name, limits)


def _from_file(path: Path, display: str, limits: Limits) -> Iterator[RawSubmission | Skipped]:
    if path.is_symlink():
        yield RawSubmission(display, error="a symbolic link; not followed")
        return
    if path.suffix.lower() == ".zip":
        yield from _from_zip(path, display, limits)
        return
    size = path.stat().st_size
    if size > limits.max_file_bytes:
        yield RawSubmission(display, error=f"file too large ({size} bytes; the cap is {limits.max_file_bytes})")
        return
    try:
        data = path.read_bytes()
    except OSError as exc:
        yield RawSubmission(display, error=f"cannot read the file: {exc.strerror or exc}")
        return
    yield read_rows(data, display, limits)


def _safe_member_name(name: str) -> str | None:
    """The member's path if it stays inside the archive, else None."""
    n = name.replace("\\", "/")
    if n.startswith("/") or (len(n) > 1 and n[1] == ":"):
        return None
    parts = PurePosixPath(n).parts
    if any(p == ".." for p in parts):
        return None
    return n


def _from_zip(path: Path, display: str, limits: Limits) -> Iterator[RawSubmission | Skipped]:
    try:
        archive = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, OSError) as exc:
        yield RawSubmission(display, error=f"not a readable zip archive ({exc})")
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
            if info.file_size > limits.max_file_bytes:
                yield RawSubmission(
                    shown, error=f"refused: expands to {info.file_size} bytes; the cap is {limits.max_file_bytes}"
                )
                continue
            if total + info.file_size > limits.max_zip_total_bytes:
                yield RawSubmission(shown, error="refused: the archive expands beyond the total size cap")
                continue
            if PurePosixPath(safe).suffix.lower() == ".zip":
                yield RawSubmission(shown, error="a zip inside a zip is not opened; submit its files directly")
                continue
            try:
                with archive.open(info) as fh:
                    data = fh.read(limits.max_file_bytes + 1)  # the declared size may lie
            except (zipfile.BadZipFile, OSError, RuntimeError, NotImplementedError, EOFError) as exc:
                yield RawSubmission(shown, error=f"cannot read this archive member ({exc})")
                continue
            if len(data) > limits.max_file_bytes:
                yield RawSubmission(shown, error=f"refused: expands beyond {limits.max_file_bytes} bytes")
                continue
            total += len(data)
            yield read_rows(data, shown, limits)


def read_rows(data: bytes, source: str, limits: Limits = Limits()) -> RawSubmission:
    """Parse one submission file's bytes (CSV or XLSX by name) into rows."""
    suffix = PurePosixPath(source).suffix.lower()
    if suffix not in SUBMISSION_SUFFIXES:
        hint = " (the old .xls format: save it as .xlsx or CSV)" if suffix == ".xls" else ""
        return RawSubmission(source, error=f"not a CSV or XLSX submission{hint}")
    if not data.strip():
        return RawSubmission(source, error="the file is empty")
    try:
        table = _xlsx_table(data, limits) if suffix == ".xlsx" else _csv_table(data)
    except _Unreadable as exc:
        return RawSubmission(source, error=str(exc))
    return _rows_from_table(table, source, limits)


class _Unreadable(Exception):
    pass


def _csv_table(data: bytes) -> list[list[str]]:
    if b"\x00" in data[:8192]:
        raise _Unreadable("binary data, not a CSV text file")
    if data[:4] == b"PK\x03\x04":
        raise _Unreadable("this is a zip or XLSX file named .csv; rename it to .xlsx or export it as CSV")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise _Unreadable(
            f"not UTF-8 text (byte {exc.start}); save the file as 'CSV UTF-8'"
        ) from None
    try:
        sample = text[:4096]
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t") if sample.count("\n") else csv.excel
    except csv.Error:
        dialect = csv.excel
    try:
        return [row for row in csv.reader(io.StringIO(text, newline=""), dialect)]
    except csv.Error as exc:
        raise _Unreadable(f"malformed CSV ({exc})") from None


def _xlsx_cell_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


def _xlsx_table(data: bytes, limits: Limits) -> list[list[str]]:
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except zipfile.BadZipFile:
        raise _Unreadable("not a valid XLSX workbook") from None
    unpacked = sum(i.file_size for i in zf.infolist())
    if unpacked > limits.max_xlsx_unpacked_bytes:
        raise _Unreadable(f"workbook expands to {unpacked} bytes; the cap is {limits.max_xlsx_unpacked_bytes}")
    import openpyxl  # imported here: CSV-only runs never pay for it

    try:
        wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for a corrupt workbook
        raise _Unreadable(f"not a readable XLSX workbook ({type(exc).__name__})") from None
    try:
        ws = wb.worksheets[0]
        table = []
        for i, row in enumerate(ws.iter_rows(values_only=True)):
            if i > limits.max_rows + 1:
                break
            table.append([_xlsx_cell_text(v) for v in row])
        return table
    finally:
        wb.close()


def _rows_from_table(table: list[list[str]], source: str, limits: Limits) -> RawSubmission:
    # The header is the first non-blank row.
    start = next((i for i, r in enumerate(table) if any(c.strip() for c in r)), None)
    if start is None:
        return RawSubmission(source, error="the file has no rows")
    header = [c.strip().lower() for c in table[start]]
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    if missing:
        found = ", ".join(h for h in header if h) or "nothing"
        return RawSubmission(
            source,
            error=f"wrong columns: expected a header row with {', '.join(COLUMNS)}; found {found}",
        )
    index = {name: header.index(name) for name in COLUMNS if name in header}
    body = table[start + 1 :]
    if len(body) > limits.max_rows:
        return RawSubmission(source, error=f"too many rows ({len(body)}; the cap is {limits.max_rows})")
    columns = [index.get(name) for name in COLUMNS]  # part, item, value, unit, note (None: column absent)
    rows = []
    for offset, cells in enumerate(body):
        if not any(c.strip() for c in cells):
            continue
        part, item, value, unit, note = (cells[j].strip() if j is not None and j < len(cells) else "" for j in columns)
        rows.append(Row(start + offset + 2, part.lower(), item, value, unit, note))
    return RawSubmission(source, rows=rows)


def read_roster(path: str | Path) -> list[dict[str, str]]:
    """Read a roster CSV with at least the columns ``student_id`` and ``name``."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise InputError(f"{p}: cannot read the roster: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{p}: the roster is not UTF-8 text; save it as 'CSV UTF-8'") from None
    reader = csv.DictReader(io.StringIO(text, newline=""))
    fields = [f.strip().lower() for f in (reader.fieldnames or [])]
    if "student_id" not in fields or "name" not in fields:
        raise InputError(f"{p}: a roster needs the columns student_id and name; found {', '.join(fields) or 'none'}")
    roster, seen = [], set()
    for n, row in enumerate(reader, start=2):
        clean = {(k or "").strip().lower(): (v or "").strip() for k, v in row.items() if k}
        sid = clean.get("student_id", "")
        if not sid:
            continue
        if sid in seen:
            raise InputError(f"{p}: row {n}: student_id {sid!r} appears twice")
        seen.add(sid)
        roster.append({"student_id": sid, "name": clean.get("name", "")})
    return roster
