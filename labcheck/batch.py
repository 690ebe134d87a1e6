"""Grade a section: every input file, one at a time, into the output folder.

One submission's failure never stops the batch or loses another's result:
unreadable files become ``unreadable`` records, and an unexpected error while
grading one file is recorded against that file (with its traceback kept for
the report) before the next file is read.  Records are streamed to
``results.json`` and sheets written as they are made, so memory stays flat
with the size of the section.
"""

from __future__ import annotations

import json
import re
import shutil
import traceback
import zipfile
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Callable

from .grading import grade_submission, missing_record, safe_id, unreadable_record
from .integrity import CAVEAT, P_LEAD, collect_evidence, find_leads
from .ingest import InputError, Limits, RawSubmission, Skipped, iter_submissions, read_roster
from .outputs import ResultsWriter, gradebook_row, write_gradebook
from .render import Renderer
from .spec import LabSpec
from .submission import normalise, observation_keys, result_keys

__all__ = ["OutputExistsError", "RunSummary", "grade_section", "count_inputs", "OUTPUT_NAMES"]

OUTPUT_NAMES = ("results.json", "gradebook.csv", "section.html", "feedback", "integrity.html", "integrity.json")


class OutputExistsError(Exception):
    """The output folder holds files and --force was not given."""


@dataclass
class RunSummary:
    out_dir: Path
    n_files: int = 0
    n_graded: int = 0
    n_unreadable: int = 0
    n_missing: int = 0
    n_skipped: int = 0
    n_unmatched: int = 0
    internal_errors: list[str] = field(default_factory=list)
    mean_percent: float | None = None
    n_pass: int = 0
    n_leads: int = 0

    @property
    def exit_code(self) -> int:
        return 1 if (self.n_unreadable or self.n_missing) else 0


def count_inputs(inputs: list[str | Path]) -> int:
    """How many files the inputs hold (for a progress bar); cheap, reads no file."""
    n = 0
    for item in inputs:
        p = Path(item)
        if p.is_dir():
            n += sum(1 for f in p.rglob("*") if f.is_file())
        elif p.suffix.lower() == ".zip":
            try:
                with zipfile.ZipFile(p) as z:
                    n += sum(1 for i in z.infolist() if not i.is_dir())
            except (zipfile.BadZipFile, OSError):
                n += 1
        else:
            n += 1
    return n


def prepare_output(out_dir: Path, force: bool) -> None:
    """Create ``out_dir``; refuse a non-empty one unless ``force``, then clear only our own outputs."""
    if out_dir.exists() and not out_dir.is_dir():
        raise OutputExistsError(f"{out_dir} exists and is not a folder")
    if out_dir.exists() and any(out_dir.iterdir()):
        if not force:
            raise OutputExistsError(
                f"{out_dir} is not empty; choose another --out folder or add --force to replace labcheck's outputs there"
            )
        for name in OUTPUT_NAMES:
            target = out_dir / name
            if target.is_dir() and not target.is_symlink():
                shutil.rmtree(target)
            elif target.exists() or target.is_symlink():
                target.unlink()
    out_dir.mkdir(parents=True, exist_ok=True)
    (out_dir / "feedback").mkdir()


def grade_section(
    spec: LabSpec,
    inputs: list[str | Path],
    out_dir: str | Path,
    roster: str | Path | None = None,
    *,
    force: bool = False,
    limits: Limits = Limits(),
    progress: Callable[[int, str], None] | None = None,
) -> RunSummary:
    """Grade every submission in ``inputs`` and write the outputs to ``out_dir``.

    Raises :class:`InputError` for a missing input or a bad roster and
    :class:`OutputExistsError` for a non-empty output folder, before anything
    is written.
    """
    out = Path(out_dir)
    for item in inputs:
        if not Path(item).exists():
            raise InputError(f"{item}: no such file or folder")
    roster_rows = read_roster(roster) if roster else None
    prepare_output(out, force)

    exclude = {out.resolve()}
    if roster:
        exclude.add(Path(roster).resolve())
    renderer = Renderer(spec)
    obs_keys, res_keys = observation_keys(spec), result_keys(spec)
    roster_ids = {r["student_id"]: r for r in roster_rows} if roster_rows is not None else None
    run = RunSummary(out)
    writer = ResultsWriter(out / "results.json", spec)
    summaries: list[dict] = []
    skipped: list[dict] = []
    sheet_links: dict[int, str] = {}
    used_sheet_names: set[str] = set()
    seen_ids: dict[str, str] = {}

    evidence = []
    count = 0
    for item in iter_submissions(inputs, limits, exclude=exclude):
        count += 1
        if progress:
            progress(count, item.source)
        if isinstance(item, Skipped):
            skipped.append({"file": item.source, "reason": item.reason})
            run.n_skipped += 1
            continue
        run.n_files += 1
        record = _grade_one(item, spec, obs_keys, res_keys, run)
        if not record["student_id"] and roster_ids:
            match = _roster_id_in_path(item.source, roster_ids)
            if match:
                record["student_id"] = match
                record["name"] = record["name"] or roster_ids[match]["name"]
                record["flags"].append({"row": None, "item": "student_id", "value": match,
                                        "message": "student_id taken from the file's path in the export"})
        if record["status"] == "graded":
            _resolve_identity(record, item, roster_ids, seen_ids, run)
            sheet = _unique_sheet_name(record["student_id"], used_sheet_names)
            try:
                html = renderer.sheet(record)
            except Exception:  # a renderer bug must not lose the grade
                tb = traceback.format_exc()
                run.internal_errors.append(f"{item.source}: rendering the sheet failed\n{tb}")
                record["flags"].append({"row": None, "item": "", "value": "",
                                        "message": "labcheck could not render this sheet (a bug; reported to the instructor)"})
                html = None
            if html is not None:
                (out / "feedback" / sheet).write_text(html, encoding="utf-8")
                record["sheet"] = f"feedback/{sheet}"
                sheet_links[len(summaries)] = record["sheet"]
            run.n_graded += 1
            evidence.append(collect_evidence(record, item.rows, spec.shared_items))
        else:
            run.n_unreadable += 1
            record["sheet"] = None
        writer.add(record)
        summaries.append(_summary(record, spec))

    if roster_rows is not None:
        present = {s["student_id"] for s in summaries if s["student_id"]}
        for r in roster_rows:
            if r["student_id"] not in present:
                rec = missing_record(r["student_id"], r["name"])
                rec["sheet"] = None
                writer.add(rec)
                summaries.append(_summary(rec, spec))
                run.n_missing += 1
    writer.close({"skipped": skipped})

    write_gradebook(out / "gradebook.csv", spec, [s["gradebook"] for s in summaries])
    leads = find_leads(evidence)
    run.n_leads = len(leads)
    (out / "integrity.json").write_text(json.dumps({"lab": spec.id, "caveat": CAVEAT, "false_alarm_rate_per_test": P_LEAD,
                                                    "leads": leads}, indent=1, ensure_ascii=False), encoding="utf-8")
    (out / "integrity.html").write_text(renderer.integrity(leads, len(evidence)), encoding="utf-8")
    (out / "section.html").write_text(renderer.section(summaries, skipped, sheet_links, len(leads)), encoding="utf-8")

    graded = [s for s in summaries if s["status"] == "graded" and s["max_score"]]
    if graded:
        percents = [100.0 * s["score"] / s["max_score"] for s in graded]
        run.mean_percent = sum(percents) / len(percents)
        run.n_pass = sum(p >= 100.0 * spec.pass_fraction - 1e-9 for p in percents)
    return run


def _grade_one(item: RawSubmission, spec: LabSpec, obs_keys, res_keys, run: RunSummary) -> dict:
    if item.error:
        return unreadable_record(item.source, item.error)
    try:
        sub = normalise(item, spec, obs_keys, res_keys)
        return grade_submission(sub, spec)
    except Exception as exc:  # one file's surprise must not stop the batch
        run.internal_errors.append(f"{item.source}\n{traceback.format_exc()}")
        return unreadable_record(
            item.source, f"labcheck failed on this file ({type(exc).__name__}: {exc}); this is a bug, please report it"
        )


def _resolve_identity(record: dict, item: RawSubmission, roster_ids, seen_ids: dict[str, str], run: RunSummary) -> None:
    if not record["student_id"]:
        stem = PurePosixPath(item.source).stem
        record["student_id"] = safe_id(stem)
        record["flags"].append({"row": None, "item": "student_id", "value": "",
                                "message": f"no student_id given; the file name is used ({record['student_id']})"})
    sid = record["student_id"]
    if roster_ids is not None:
        if sid in roster_ids:
            if not record["name"]:
                record["name"] = roster_ids[sid]["name"]
        else:
            record["unmatched"] = True
            run.n_unmatched += 1
            record["flags"].append({"row": None, "item": "student_id", "value": sid,
                                    "message": "this student_id is not on the roster"})
    if sid in seen_ids:
        record["flags"].append({"row": None, "item": "student_id", "value": sid,
                                "message": f"another submission has the same student_id ({seen_ids[sid]})"})
    else:
        seen_ids[sid] = record["submission"]


_TOKEN_SPLIT = re.compile(r"[\\/\s_.,;()\[\]]+")


def _roster_id_in_path(source: str, roster_ids: dict) -> str | None:
    """A roster student_id that appears as a whole token of the file's path (LMS exports name folders so)."""
    parts = [p for p in PurePosixPath(source).parts]
    tokens = set(parts)
    for part in parts:
        tokens.update(t for t in _TOKEN_SPLIT.split(part) if t)
    hits = sorted(t for t in tokens if t in roster_ids)
    return hits[0] if len(hits) == 1 else None


def _unique_sheet_name(student_id: str, used: set[str]) -> str:
    base = safe_id(student_id)
    name, n = f"{base}.html", 2
    while name.lower() in used:
        name = f"{base}-{n}.html"
        n += 1
    used.add(name.lower())
    return name


def _summary(record: dict, spec: LabSpec) -> dict:
    """The slim part of a record the gradebook and section summary need."""
    results = {}  # method -> (recomputed result, its reference, unit) for the section's accuracy plot
    for mid, acc in record.get("accuracy", {}).items():
        results[mid] = (acc["recomputed"], acc["reference"], acc["unit"], acc.get("sigma"))
    return {
        "student_id": record.get("student_id") or "",
        "name": record.get("name") or "",
        "group": record.get("group") or "",
        "submission": record.get("submission"),
        "status": record["status"],
        "score": record.get("score"),
        "max_score": record.get("max_score"),
        "error": record.get("error"),
        "n_flags": len(record.get("flags", [])),
        "unmatched": record.get("unmatched", False),
        "verdicts": [(s["id"], s["verdict"], s["diagnosis"]["label"] if s["diagnosis"] else None)
                     for s in record.get("steps", [])],
        "results": results,
        "gradebook": gradebook_row(record, spec),
    }
