"""One submission checked on its own (``labcheck check``): read, normalise, tell another lab's template,
grade.  Works on bytes: the caller reads the file.

Run layer: may import every layer below.
"""

from __future__ import annotations

from dataclasses import dataclass

from labcheck.grading.grade import grade_submission, unreadable_record
from labcheck.grading.labmatch import wrong_lab_message
from labcheck.model.spec import LabSpec
from labcheck.reading.ingest import Limits, RawSubmission, read_rows
from labcheck.reading.submission import normalise
from labcheck.report.words import worded

__all__ = ["Checked", "check_bytes", "record_of"]


@dataclass
class Checked:
    status: str  # graded, unreadable or wrong_lab
    message: str | None  # why, when not graded
    record: dict | None


def record_of(raw: RawSubmission, spec: LabSpec, keys: tuple | None = None) -> dict:
    """The record of one read file, before identity and wording: ``unreadable``, ``wrong_lab`` (another lab's
    template) or ``graded``.  ``keys`` are the spec's observation and result keys, when the caller has them."""
    if raw.error:
        return unreadable_record(raw.source, raw.error)
    sub = normalise(raw, spec, *keys) if keys else normalise(raw, spec)
    wrong = wrong_lab_message(sub, spec)
    if wrong:
        record = unreadable_record(raw.source, wrong)
        record.update(status="wrong_lab", student_id=sub.identity.get("student_id", ""),
                      name=sub.identity.get("name", ""))
        return record
    return grade_submission(sub, spec)


def check_bytes(spec: LabSpec, data: bytes, name: str, limits: Limits = Limits()) -> Checked:
    """Grade one file's bytes; ``name`` (its file name) tells CSV from XLSX."""
    record = record_of(read_rows(data, name, limits), spec)
    if record["status"] != "graded":
        return Checked(record["status"], record["error"], None)
    return Checked("graded", None, worded(record))
