"""One submission checked on its own (``labcheck check``): read, normalise, tell another lab's template,
grade.  Works on bytes: the caller reads the file.

Run layer: may import every layer below.
"""

from __future__ import annotations

from dataclasses import dataclass

from labcheck.grading.grade import grade_submission
from labcheck.grading.labmatch import wrong_lab_message
from labcheck.model.spec import LabSpec
from labcheck.reading.ingest import Limits, read_rows
from labcheck.reading.submission import normalise
from labcheck.report.words import worded

__all__ = ["Checked", "check_bytes"]


@dataclass
class Checked:
    status: str  # graded, unreadable or wrong_lab
    message: str | None  # why, when not graded
    record: dict | None


def check_bytes(spec: LabSpec, data: bytes, name: str, limits: Limits = Limits()) -> Checked:
    """Grade one file's bytes; ``name`` (its file name) tells CSV from XLSX."""
    raw = read_rows(data, name, limits)
    if raw.error:
        return Checked("unreadable", raw.error, None)
    sub = normalise(raw, spec)
    wrong = wrong_lab_message(sub, spec)
    if wrong:
        return Checked("wrong_lab", wrong, None)
    return Checked("graded", None, worded(grade_submission(sub, spec)))
