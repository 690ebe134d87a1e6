"""Write results.json and gradebook.csv.

``results.json`` is streamed record by record so that a department-sized
batch never holds every record's text in memory twice.  Every text cell of
the gradebook is neutralised against spreadsheet formula injection.
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path
from typing import IO

from .spec import LabSpec

__all__ = ["neutralise_cell", "ResultsWriter", "write_gradebook", "gradebook_columns"]

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n", "\uff1d", "\uff0b", "\uff0d", "\uff20")


def neutralise_cell(text) -> str:
    """Make a text cell inert in a spreadsheet.

    A cell that starts with ``= + - @`` (or their full-width forms), a tab
    or a line break can be read as a formula by spreadsheet programs; it gets
    a leading apostrophe, which spreadsheets show as plain text.
    """
    s = "" if text is None else str(text)
    return "'" + s if s.startswith(_FORMULA_START) else s


class ResultsWriter:
    """Stream ``results.json``: header fields, then one submission record at a time."""

    def __init__(self, path: Path, spec: LabSpec, extra: dict | None = None):
        self._fh: IO[str] = open(path, "w", encoding="utf-8")
        head = {"lab": spec.id, "title": spec.title, "spec_file": Path(spec.path).name, "spec_sha256": spec.sha256}
        head.update(extra or {})
        body = json.dumps(head, ensure_ascii=False, indent=1)
        self._fh.write(body[:-2] + ',\n "submissions": [\n')
        self._first = True

    def add(self, record: dict) -> None:
        if not self._first:
            self._fh.write(",\n")
        self._fh.write(json.dumps(record, ensure_ascii=False, allow_nan=False, default=_jsonable))
        self._first = False

    def close(self, tail: dict | None = None) -> None:
        self._fh.write("\n ]")
        for key, value in (tail or {}).items():
            self._fh.write(f",\n {json.dumps(key)}: {json.dumps(value, ensure_ascii=False, default=_jsonable)}")
        self._fh.write("\n}\n")
        self._fh.close()


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
    cols += ["flags", "error"]
    return cols


def gradebook_row(record: dict, spec: LabSpec) -> list:
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
    row += [len(record.get("flags", [])), neutralise_cell(record.get("error") or "")]
    return row


def write_gradebook(path: Path, spec: LabSpec, rows: list[list]) -> None:
    """Write the gradebook: one row per student on the roster or submission file."""
    with open(path, "w", encoding="utf-8", newline="") as fh:
        writer = csv.writer(fh)
        writer.writerow(gradebook_columns(spec))
        for row in rows:
            writer.writerow(["" if v is None else v for v in row])
