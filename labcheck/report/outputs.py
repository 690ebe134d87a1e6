"""Write results.json and gradebook.csv.

``results.json`` is streamed record by record so that a department-sized
batch never holds every record's text in memory twice.  Every text cell of
the gradebook is neutralised against spreadsheet formula injection.
"""

from __future__ import annotations

import csv
import json
import math
import os
import re
from datetime import datetime, timezone
from pathlib import Path
from typing import IO

from labcheck.model.spec import LabSpec

__all__ = ["neutralise_cell", "ResultsWriter", "GradebookWriter", "gradebook_columns"]

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n", "\uff1d", "\uff0b", "\uff0d", "\uff20")
# A formula character just after a separator a spreadsheet may split on (comma, semicolon, tab, bar,
# line break), with spaces or a quote between: the cell would start a formula once split there.
_AFTER_SEPARATOR = re.compile("([,;\t|\r\n][\\s\"']*)(?=[=+\\-@\uff1d\uff0b\uff0d\uff20])")


def neutralise_cell(text) -> str:
    """Make a text cell inert in a spreadsheet (OWASP's CSV-injection guidance).

    A cell that starts with ``= + - @`` (or their full-width forms), a tab or a
    line break can be read as a formula; it gets a leading apostrophe, which
    spreadsheets show as plain text.  So does every such character that
    follows a separator inside the cell (``x;=1+1``), in case a program splits
    the cell there.  Every cell is also written quoted (:class:`GradebookWriter`).
    """
    s = "" if text is None else str(text)
    s = _AFTER_SEPARATOR.sub(r"\1'", s)
    return "'" + s if s.startswith(_FORMULA_START) else s


def run_time() -> datetime:
    """The time a run states in its outputs: now, or ``SOURCE_DATE_EPOCH`` when set.

    ``SOURCE_DATE_EPOCH`` (the reproducible-builds convention) lets two runs
    on the same inputs be compared byte for byte.
    """
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if epoch.isdigit():
        return datetime.fromtimestamp(int(epoch), timezone.utc)
    return datetime.now(timezone.utc)


def record_json(record: dict) -> str:
    """One record as JSON text.  Raises ValueError if a non-finite number reached it (a labcheck bug)."""
    return json.dumps(record, ensure_ascii=False, allow_nan=False, default=_jsonable)


class ResultsWriter:
    """Stream ``results.json``: header fields, then one submission record at a time."""

    def __init__(self, path: Path, spec: LabSpec, extra: dict | None = None):
        self._fh: IO[str] = open(path, "w", encoding="utf-8")
        head = {"lab": spec.id, "title": spec.title, "spec_file": Path(spec.path).name, "spec_sha256": spec.sha256}
        head.update(extra or {})
        body = json.dumps(head, ensure_ascii=False, indent=1)
        self._fh.write(body[:-2] + ',\n "submissions": [\n')
        self._first = True

    def add(self, record: dict | str) -> None:
        """Append a record (a dict, or its text from :func:`record_json`)."""
        if not self._first:
            self._fh.write(",\n")
        self._fh.write(record if isinstance(record, str) else record_json(record))
        self._first = False

    def close(self, tail: dict | None = None) -> None:
        """Finish the file; ``tail`` keys follow the records, and the last of them should be the completion record."""
        self._fh.write("\n ]")
        for key, value in (tail or {}).items():
            self._fh.write(f",\n {json.dumps(key)}: {json.dumps(value, ensure_ascii=False, default=_jsonable)}")
        self._fh.write("\n}\n")
        self._fh.close()

    def abandon(self) -> None:
        """Close without finishing (the run failed); the file never claims completion."""
        try:
            self._fh.close()
        except OSError:
            pass


def _jsonable(value):
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if hasattr(value, "item"):  # numpy scalars
        return value.item()
    raise TypeError(f"cannot write {type(value).__name__} to JSON")


def gradebook_columns(spec: LabSpec) -> list[str]:
    cols = ["student_id", "name", "group", "submission", "status", "score", "max_score", "percent"]
    cols += [f"points:{key}" for key in spec.steps]
    cols += [f"points:{key}_sigma" for key in spec.reported_sigma]
    cols += [f"accuracy:{m.id}" for m in spec.methods]
    cols += ["quality"]  # the field-quality points: with the points and accuracy columns they sum to the score
    cols += ["flags", "error"]
    return cols


def gradebook_row(record: dict, spec: LabSpec, adjusted: bool = False) -> list:
    """One gradebook row from a record (summary fields only)."""
    points = {s["id"]: s["points"] for s in record.get("steps", [])}
    acc = record.get("accuracy", {})
    score, max_score = record.get("score"), record.get("max_score")
    percent = round(100.0 * score / max_score, 1) if score is not None and max_score else None
    row = [
        neutralise_cell(record.get("student_id")),
        neutralise_cell(record.get("name")),
        neutralise_cell(record.get("group")),
        neutralise_cell(record.get("submission") or ""),
        record["status"],
        score,
        max_score,
        percent,
    ]
    row += [points.get(key) for key in spec.steps]
    row += [points.get(f"{key}_sigma") for key in spec.reported_sigma]
    row += [acc[m.id]["points"] if m.id in acc else None for m in spec.methods]
    quality = record.get("quality_score")
    row += [quality["points"] if quality else None]
    row += [len(record.get("flags", [])), neutralise_cell(record.get("error") or "")]
    if adjusted:  # a course's run: the score with the instructor's adjustments, and how many
        adj = record.get("adjustments")
        row += [adj["score"] if adj else score, len(adj["items"]) if adj else 0]
    return row


class GradebookWriter:
    """Write gradebook.csv a row at a time (nothing kept per student): header first, rows as they come."""

    def __init__(self, path: Path, spec: LabSpec, adjusted: bool = False):
        self._fh = open(path, "w", encoding="utf-8", newline="")
        self._writer = csv.writer(self._fh, quoting=csv.QUOTE_ALL)
        self._writer.writerow(gradebook_columns(spec) + (["adjusted_score", "adjustments"] if adjusted else []))

    def add(self, row: list) -> None:
        self._writer.writerow(["" if v is None else v for v in row])

    def close(self) -> None:
        self._fh.close()
