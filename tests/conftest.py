import math

import pytest

from labcheck.demo import csv_bytes as demo_csv_bytes
from labcheck.reading.ingest import read_rows
from labcheck.reductions import horizon as hz
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec
from labcheck.reading.submission import normalise
from labcheck.grading.grade import grade_submission
from labcheck.report.words import worded  # records as the outputs show them

ARCMIN = math.radians(1 / 60)


@pytest.fixture(scope="session")
def spec():
    return load_spec(shipped_spec("horizon_dip"))


def csv_bytes(rows) -> bytes:
    """Rows of 3 to 5 cells, padded to (part, item, value, unit, note)."""
    return demo_csv_bytes([tuple(r) + ("",) * (5 - len(r)) for r in rows])


def good_dip_rows(h=12.0, readings=(5.9, 6.0, 6.1, 6.0, 6.0), sid="s1", name="Test Student"):
    """A correct dip-method submission computed with the method's own formula at report precision."""
    rows = [("identity", "student_id", sid), ("identity", "name", name), ("observation", "eye_height", str(h), "m")]
    rows += [("observation", "dip_angle", str(r), "arcmin") for r in readings]
    mean = round(sum(readings) / len(readings), 3)
    r_app = float(hz.radius_from_dip(h, mean * ARCMIN)) / 1000
    radius = 0.87 * r_app
    err = 100 * (radius * 1000 - 6371008.8) / 6371008.8
    rows += [
        ("result", "dip_mean", f"{mean}", "arcmin"),
        ("result", "dip.radius_apparent", f"{r_app:.1f}", "km"),
        ("result", "dip.radius", f"{radius:.1f}", "km"),
        ("result", "dip.radius_error_pct", f"{err:.2f}", "%"),
    ]
    return rows


def grade_rows(spec, rows):
    raw = read_rows(csv_bytes(rows), "sub.csv")
    assert raw.error is None, raw.error
    return worded(grade_submission(normalise(raw, spec), spec))


def step(record, key):
    return next(s for s in record["steps"] if s["id"] == key)
