"""Seeded fuzzing (hypothesis) of the reader and the whole per-file pipeline.

Seeds are real submissions of every shipped lab (the demo's groups, CSV and XLSX); hypothesis mutates
them at the byte level and at the cell level with the values students and damaged files produce.
Whatever comes in: no exception escapes, no file ends as a labcheck fault, and a batch accounts for
every input in results.json.
"""

import io
import json
import zipfile
from functools import lru_cache
from pathlib import Path

from hypothesis import HealthCheck, given, settings, strategies as st

from labcheck.run.batch import _SectionRun
from labcheck.demo import SECTIONS, csv_bytes, xlsx_bytes
from labcheck.reading.ingest import read_rows
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec

FUZZ = settings(max_examples=400, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

TRICKY = ["", " ", "1e308", "-1e308", "9" * 400, "1e-320", "nan", "inf", "-0", "0", "1:0", "1:", ":", "0 0 0",
          "N", "N 25", "25 61 00 S", "12d", "d m s", "°", "7,325", "6,373.0", "1.234.567,8", "\u2212", "1\u20092",
          "12.5 km", "12.5 furlong", "=1+1", "@SUM(A1)", "<script>alert(1)</script>", "0001-01-01T00:00:00Z",
          "9999-12-31T23:59:59+14:00", "2026-13-45T99:99Z", "x" * 5000, "\x00", "\ufeff12", "１２.５", "12..5",
          "lower", "upper", "sea", "suspended", "1e5 m", "-5 ft", "0.0000000001", "1/0", "None", "TRUE"]


@lru_cache(maxsize=None)
def _seeds():
    seeds = []
    for section in SECTIONS:
        groups = section.generate()[:3]
        for g in groups:
            seeds.append((section.lab, g.rows))
    return seeds


@lru_cache(maxsize=None)
def _seed_bytes(index: int, fmt: str) -> bytes:
    """A seed's file, made once: a workbook embeds the time it was made, and hypothesis replays need the same bytes."""
    rows = _seeds()[index][1]
    return xlsx_bytes(rows) if fmt == "xlsx" else csv_bytes(rows)


@lru_cache(maxsize=None)
def _runner(lab: str):
    import tempfile

    spec = load_spec(shipped_spec(lab))
    staging = Path(tempfile.mkdtemp())
    return _SectionRun(spec, staging / "out", staging, None, None)


def _check_one(lab: str, data: bytes, name: str):
    raw = read_rows(data, name)  # must never raise
    runner = _runner(lab)
    before = len(runner.run.internal_errors)
    outcome = runner._process(raw)  # read -> normalise -> grade -> render -> serialise, as in a batch
    record = json.loads(outcome.text)  # valid JSON, no NaN/Infinity
    assert len(runner.run.internal_errors) == before, runner.run.internal_errors[-1]
    assert record["status"] in ("graded", "unreadable", "wrong_lab"), record
    assert outcome.summary["status"] == record["status"]


@FUZZ
@given(data=st.data())
def test_cell_level_mutations_never_escape(data):
    lab, rows = data.draw(st.sampled_from(_seeds()))
    rows = [list(r) for r in rows]
    for _ in range(data.draw(st.integers(1, 6))):
        i = data.draw(st.integers(0, len(rows) - 1))
        col = data.draw(st.integers(0, 4))
        value = data.draw(st.one_of(st.sampled_from(TRICKY), st.text(max_size=30)))
        while len(rows[i]) < 5:
            rows[i].append("")
        rows[i][col] = value
    if data.draw(st.booleans()):  # duplicate or drop rows
        j = data.draw(st.integers(0, len(rows) - 1))
        rows.insert(j, list(rows[j])) if data.draw(st.booleans()) else rows.pop(j)
    fmt = data.draw(st.sampled_from(["csv", "xlsx"]))
    clean = [[str(c).replace("\x00", "") if fmt == "xlsx" else str(c) for c in r] for r in rows]
    try:
        payload = xlsx_bytes(clean) if fmt == "xlsx" else csv_bytes(clean)
    except Exception:  # openpyxl refuses some characters in cells: not a reader question
        payload = csv_bytes(clean)
        fmt = "csv"
    _check_one(lab, payload, f"f.{fmt}")


@FUZZ
@given(data=st.data())
def test_byte_level_mutations_never_escape(data):
    index = data.draw(st.integers(0, len(_seeds()) - 1))
    lab = _seeds()[index][0]
    fmt = data.draw(st.sampled_from(["csv", "xlsx"]))
    payload = bytearray(_seed_bytes(index, fmt))
    for _ in range(data.draw(st.integers(1, 8))):
        kind = data.draw(st.sampled_from(["flip", "insert", "delete", "truncate"]))
        at = data.draw(st.integers(0, max(0, len(payload) - 1)))
        if kind == "flip" and payload:
            payload[at] = data.draw(st.integers(0, 255))
        elif kind == "insert":
            payload[at:at] = data.draw(st.binary(min_size=1, max_size=40))
        elif kind == "delete":
            del payload[at:at + data.draw(st.integers(1, 40))]
        else:
            del payload[at:]
    _check_one(lab, bytes(payload), f"f.{fmt}")


@settings(max_examples=8, deadline=None, derandomize=True)
@given(data=st.data())
def test_a_mutated_batch_accounts_for_every_input(tmp_path_factory, data):
    from labcheck.cli.main import main

    tmp = tmp_path_factory.mktemp("batch")
    lab, _ = data.draw(st.sampled_from(_seeds()))
    seeds = [rows for l, rows in _seeds() if l == lab]
    buf = io.BytesIO()
    names = []
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for i in range(data.draw(st.integers(3, 12))):
            rows = [list(r) for r in data.draw(st.sampled_from(seeds))]
            r = data.draw(st.integers(0, len(rows) - 1))
            rows[r][2] = data.draw(st.sampled_from(TRICKY))
            blob = csv_bytes(rows)
            if data.draw(st.booleans()):
                blob = blob[: data.draw(st.integers(0, len(blob)))]
            name = f"sec/{i:02d}_{data.draw(st.sampled_from(['a.csv', 'CON.csv', 'b.xlsx', 'c.txt', 'd.pdf']))}"
            names.append(name)
            z.writestr(name, blob)
    (tmp / "in.zip").write_bytes(buf.getvalue())
    code = main(["grade", lab, str(tmp / "in.zip"), "--out", str(tmp / "out"), "--quiet"])
    assert code in (0, 1)
    results = json.loads((tmp / "out" / "results.json").read_text())
    assert results["run"]["complete"] is True
    assert sorted(s["submission"] for s in results["submissions"]) == sorted(f"in.zip/{n}" for n in names)
    assert all(s["status"] != "error" for s in results["submissions"])
