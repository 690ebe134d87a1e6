"""Who a submission belongs to: the roster, id normalisation, and reconciling a file with the roster.

Pure: no files are read here (``ingest.read_roster`` reads a roster file into a
:class:`Roster`).  May import only the standard library and rapidfuzz.

Every reconciliation that is not an exact match of the sheet's id is reported
(``record["identity"]`` and a flag on the record), never silent.  The policy,
in order (docs/course.md, "Identity"):

1. The sheet's student_id, matched after normalisation (case, spaces, a
   spreadsheet's leading apostrophe, full-width characters, and leading zeros
   when every roster id is a number).
2. The id in the export's folder or file name (a whole token of the path).  When
   the sheet names one roster student and the folder another, the file is
   credited to the folder's student (the export's account is who submitted it)
   and the conflict is listed for review.
3. The name on the sheet, matched to a roster name (rapidfuzz ``token_sort_ratio``,
   so "Hollinsworth, Amara" finds "Amara Hollinsworth") when it scores at least
   :data:`NAME_MATCH_THRESHOLD` and no other roster name comes within
   :data:`NAME_MATCH_MARGIN` of it.
4. Otherwise the file stays unmatched (listed for review, graded under the id it gave).
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass
from datetime import datetime
from pathlib import PurePosixPath

__all__ = [
    "ID_HEADINGS", "NAME_HEADINGS", "FIRST_NAME_HEADINGS", "LAST_NAME_HEADINGS", "SECTION_HEADINGS",
    "NAME_MATCH_THRESHOLD", "NAME_MATCH_MARGIN", "KEEP_POLICIES",
    "RosterEntry", "Roster", "RosterError", "normalise_id", "heading_key", "roster_columns",
    "reconcile", "export_time", "keep_rank",
]

# Roster column headings, tried in this order (after heading_key: lower case, "_", "-" and "." read as spaces).
ID_HEADINGS = ("student id", "studentid", "student number", "student no", "sis user id", "sis id", "id number",
               "username", "user name", "login id", "login", "user id", "userid", "id", "email", "email address")
NAME_HEADINGS = ("name", "full name", "student name", "display name", "student")
FIRST_NAME_HEADINGS = ("first name", "given name", "given names", "forename", "first")
LAST_NAME_HEADINGS = ("last name", "surname", "family name", "last")
SECTION_HEADINGS = ("section", "section name", "class section")

NAME_MATCH_THRESHOLD = 90.0  # rapidfuzz token_sort_ratio, 0-100: a misspelt letter in a two-word name scores 94-97
NAME_MATCH_MARGIN = 5.0  # the best roster name must beat the next by this much, else the match is ambiguous

KEEP_POLICIES = ("latest", "earliest", "best")


class RosterError(ValueError):
    """A roster that cannot be used (its message says what to change)."""


def heading_key(text: str) -> str:
    """A column heading compared loosely: lower case, ``_ - .`` as spaces, runs of spaces as one."""
    s = unicodedata.normalize("NFKC", text or "").replace("\ufeff", "").strip().strip('"').lower()
    return " ".join(re.sub(r"[_\-.]+", " ", s).split())


def normalise_id(text: str | None, numeric: bool = False) -> str:
    """An id as compared: NFKC, no whitespace anywhere, case folded, no leading apostrophe;
    with ``numeric``, leading zeros dropped from an all-digit id (a spreadsheet drops them)."""
    s = unicodedata.normalize("NFKC", text or "")
    s = "".join(s.split()).lstrip("'").casefold()
    if numeric and s.isdigit():
        s = s.lstrip("0") or "0"
    return s


def roster_columns(headings: list[str], id_column: str | None = None, name_column: str | None = None) -> dict:
    """Which column holds what: ``{"id": i, "name": i | None, "first": i | None, "last": i | None,
    "section": i | None}`` from the headings (aliases above, or the columns the instructor named).

    Raises :class:`RosterError` naming what was found when there is no id or no name.
    """
    keys = [heading_key(h) for h in headings]

    def find(names, chosen=None, what=""):
        if chosen is not None:
            k = heading_key(chosen)
            if k not in keys:
                raise RosterError(f"no column {chosen!r} for the {what}; the columns are {', '.join(headings)}")
            return keys.index(k)
        for name in names:
            if name in keys:
                return keys.index(name)
        return None

    cols = {"id": find(ID_HEADINGS, id_column, "student id"),
            "name": find(NAME_HEADINGS, name_column, "name"),
            "first": find(FIRST_NAME_HEADINGS), "last": find(LAST_NAME_HEADINGS), "section": find(SECTION_HEADINGS)}
    if cols["id"] is not None and cols["name"] == cols["id"]:
        cols["name"] = None
    if cols["id"] is None or (cols["name"] is None and cols["first"] is None and cols["last"] is None):
        raise RosterError(
            "a roster needs a student id column and a name column (or first and last names); found "
            f"{', '.join(repr(h) for h in headings) or 'no columns'}. Headings read as ids: {', '.join(ID_HEADINGS)}; "
            f"as names: {', '.join(NAME_HEADINGS)}, or first/last names; or name them with --id-column "
            "and --name-column")
    return cols


@dataclass(frozen=True)
class RosterEntry:
    student_id: str  # as the roster writes it: the id labcheck credits and exports
    name: str
    section: str = ""


class Roster:
    """The course's students, found by normalised id, by a token of a path, or by name."""

    def __init__(self, entries: list[RosterEntry]):
        self.entries = list(entries)
        ids = [normalise_id(e.student_id) for e in self.entries]
        self.numeric = bool(ids) and all(i.isdigit() for i in ids)
        self._by_key: dict[str, RosterEntry] = {}
        self._by_exact: dict[str, RosterEntry] = {}
        for e in self.entries:
            key = self.key(e.student_id)
            if not key:
                continue
            if key in self._by_key:
                other = self._by_key[key].student_id
                raise RosterError(f"the ids {other!r} and {e.student_id!r} are the same student id once case, "
                                  "spaces and leading zeros are set aside; correct the roster")
            self._by_key[key] = e
            self._by_exact[e.student_id] = e
        self._names = None
        # path tokens must carry the id's own digits: keyed without dropping leading zeros (see in_path)
        self._by_path = {normalise_id(e.student_id): e for e in self._by_exact.values()}

    def __len__(self) -> int:
        return len(self.entries)

    def __contains__(self, student_id: str) -> bool:
        return student_id in self._by_exact

    def __getitem__(self, student_id: str) -> RosterEntry:
        return self._by_exact[student_id]

    def key(self, text: str | None) -> str:
        return normalise_id(text, self.numeric)

    def find(self, text: str | None) -> RosterEntry | None:
        """The roster entry whose id equals ``text`` after normalisation."""
        return self._by_key.get(self.key(text)) if text else None

    def in_path(self, source: str) -> RosterEntry | None:
        """The one roster student whose id is a whole token of the file's path (folders of an LMS export).

        Stricter than :meth:`find`: a path token must be the id with its own digits (leading zeros kept,
        only case aside), so that a date's ``03`` or ``10`` in a folder name never finds student 3 or 10 of
        a numeric roster.
        """
        hits = {}
        for part in PurePosixPath(source).parts:
            for token in {part, *(_TOKEN_SPLIT.split(part))}:
                e = self._by_path.get(normalise_id(token)) if token else None
                if e is not None:
                    hits[e.student_id] = e
        return next(iter(hits.values())) if len(hits) == 1 else None

    def by_name(self, name: str | None) -> tuple[RosterEntry | None, float, float]:
        """(entry, score, next best score): entry is None unless the match is sure (threshold and margin)."""
        if not name or not name.strip() or not self.entries:
            return None, 0.0, 0.0
        from rapidfuzz import fuzz, process, utils

        if self._names is None:
            self._names = [e.name for e in self.entries]
        best = process.extract(name, self._names, scorer=fuzz.token_sort_ratio, processor=utils.default_process,
                               limit=2)
        if not best:
            return None, 0.0, 0.0
        top, score, index = best[0]
        second = best[1][1] if len(best) > 1 else 0.0
        sure = score >= NAME_MATCH_THRESHOLD and score - second >= NAME_MATCH_MARGIN
        return (self.entries[index] if sure else None), float(score), float(second)


_TOKEN_SPLIT = re.compile(r"[\\/\s_.,;()\[\]]+")


def _flag(record: dict, value: str, message: str) -> None:
    record["flags"].append({"row": None, "item": "student_id", "value": value, "message": message})


def reconcile(record: dict, source: str, roster: Roster | None) -> None:
    """Settle who ``record`` belongs to against the roster (in place), by the policy in this module's docstring.

    Sets ``record["identity"]`` (how, as written, detail) whenever the match was not exact, and
    ``record["unmatched"]`` when no roster student was found.  Without a roster nothing changes.
    """
    if roster is None:
        return
    written = record.get("student_id") or ""
    sheet = roster.find(written)
    folder = roster.in_path(source)
    how = detail = None
    if sheet is not None and folder is not None and sheet.student_id != folder.student_id:
        entry, how = folder, "conflict"
        detail = (f"the sheet names {sheet.student_id} ({sheet.name}) but the file is in {folder.student_id}'s "
                  f"folder of the export; credited to {folder.student_id}, whose folder it is (your instructor checks this)")
    elif sheet is not None:
        entry = sheet
        if sheet.student_id != written:
            how, detail = "normalised", f"student_id {written!r} read as {sheet.student_id}"
    elif folder is not None:
        entry, how = folder, "folder"
        detail = (f"student_id {written!r} is not on the roster; " if written else "no student_id given; ") + \
            f"credited to {folder.student_id}, from the file's folder in the export"
    else:
        entry, score, second = roster.by_name(record.get("name"))
        if entry is not None:
            how = "name"
            detail = (f"student_id {written!r} is not on the roster; " if written else "no student_id given; ") + \
                f"the name {record.get('name')!r} matches {entry.student_id} ({entry.name}) (score {round(score)} of 100)"
    if entry is None:
        if written:
            record["unmatched"] = True
            _flag(record, written, "this student_id is not on the roster")
        return
    record["student_id"] = entry.student_id
    if not record.get("name"):
        record["name"] = entry.name
    if how is not None:
        record["identity"] = {"how": how, "written": written, "credited": entry.student_id, "detail": detail}
        _flag(record, written, detail)


# ---------------------------------------------------------------- several submissions from one student

# A date with a time of day (a bare date could be an all-digit student id).
_STAMP = re.compile(r"(?<!\d)(20\d\d)[-_.]?([01]\d)[-_.]?([0-3]\d)[T _-]?([0-2]\d)[-_:.hH]?([0-5]\d)"
                    r"(?:[-_:.mM]?([0-5]\d))?(?!\d)")


def export_time(source: str) -> datetime | None:
    """The latest date-and-time written in the file's path (LMS exports stamp each attempt), or None."""
    found = []
    for m in _STAMP.finditer(source):
        y, mo, d, h, mi, s = (int(g) if g else 0 for g in m.groups())
        try:
            found.append(datetime(y, mo, d, h, mi, s))
        except ValueError:
            continue
    return max(found) if found else None


def keep_rank(policy: str, source: str, modified: float | None, order: int, percent: float | None) -> tuple:
    """A sort key: of one student's submissions, the one with the highest key is kept.

    ``latest`` (default): the export's own time stamp in the path, else the file's time, else input order.
    ``earliest``: the reverse.  ``best``: the highest percent, then latest.
    """
    stamp = export_time(source)
    when = (1, stamp.timestamp()) if stamp else ((0, modified) if modified is not None else (-1, 0.0))
    latest = (when, order)
    if policy == "earliest":
        return (when[0], -when[1], -order)
    if policy == "best":
        return (percent if percent is not None else -1.0, latest)
    return latest
