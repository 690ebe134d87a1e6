"""A course record: the roster, the labs, every grading run, the instructor's adjustments and their history.

Run layer: may import the reading, grading and reporting layers and :mod:`labcheck.run.batch`; prints nothing
(the CLI prints).  The record is one SQLite file, ``course.sqlite``, in the course folder, beside the run
folders ``labs/<lab>/run-NNN/`` that hold each run's usual outputs (docs/course.md).

Promises kept here:

* **Every write is one transaction.**  A killed command leaves the database as it was; a reader in another
  process sees the previous run of a lab or the new one, never half of one (WAL journal, so readers are
  never blocked by a grading run).
* **Nothing is overwritten.**  Every run is kept; the latest of a lab (for a section, or for everyone) is
  current.  An adjustment is withdrawn, never deleted; every change is in ``history``.
* **Foreign keys on**, a versioned schema (``PRAGMA user_version``) and migrations applied in order, each
  in its own transaction.
"""

from __future__ import annotations

import csv
import json
import os
import sqlite3
import zipfile
import zlib
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from labcheck.grading.adjust import apply_adjustments, step_state
from labcheck.report.words import worded
from labcheck.reading.identity import Roster, RosterEntry

__all__ = ["DB_NAME", "SCHEMA_VERSION", "Course", "CourseError", "LabStatus"]

DB_NAME = "course.sqlite"

# Each migration takes the schema from version i to i + 1.  Append, never edit a shipped one.
MIGRATIONS = [
    """
    CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
    CREATE TABLE students (
        student_id TEXT PRIMARY KEY,
        name TEXT NOT NULL,
        section TEXT NOT NULL DEFAULT '',
        active INTEGER NOT NULL DEFAULT 1 CHECK (active IN (0, 1)),
        added_at TEXT NOT NULL,
        updated_at TEXT NOT NULL
    );
    CREATE TABLE labs (lab_id TEXT PRIMARY KEY, title TEXT NOT NULL, added_at TEXT NOT NULL);
    CREATE TABLE specs (
        spec_id INTEGER PRIMARY KEY,
        lab_id TEXT NOT NULL REFERENCES labs(lab_id),
        sha256 TEXT NOT NULL,
        file_name TEXT NOT NULL,
        text BLOB NOT NULL,
        added_at TEXT NOT NULL,
        UNIQUE (lab_id, sha256)
    );
    CREATE TABLE runs (
        run_id INTEGER PRIMARY KEY,
        lab_id TEXT NOT NULL REFERENCES labs(lab_id),
        spec_id INTEGER NOT NULL REFERENCES specs(spec_id),
        section TEXT NOT NULL DEFAULT '',
        folder TEXT NOT NULL UNIQUE,
        inputs TEXT NOT NULL,
        keep TEXT NOT NULL,
        started_at TEXT NOT NULL,
        finished_at TEXT NOT NULL,
        counts TEXT NOT NULL,
        n_results INTEGER NOT NULL,
        exit_status INTEGER NOT NULL,
        labcheck_version TEXT NOT NULL
    );
    CREATE TABLE results (
        run_id INTEGER NOT NULL REFERENCES runs(run_id),
        n INTEGER NOT NULL,
        student_id TEXT NOT NULL,
        name TEXT NOT NULL,
        submission TEXT,
        status TEXT NOT NULL,
        counted INTEGER NOT NULL CHECK (counted IN (0, 1)),
        score REAL,
        max_score REAL,
        quality_points REAL,
        identity TEXT,
        unmatched INTEGER NOT NULL,
        unexplained TEXT NOT NULL,
        leads INTEGER NOT NULL,
        sheet TEXT,
        record BLOB NOT NULL,
        PRIMARY KEY (run_id, n)
    );
    CREATE INDEX results_student ON results (student_id, run_id);
    CREATE TABLE adjustments (
        adjustment_id INTEGER PRIMARY KEY,
        student_id TEXT NOT NULL REFERENCES students(student_id),
        lab_id TEXT NOT NULL REFERENCES labs(lab_id),
        step TEXT,
        points REAL NOT NULL,
        reason TEXT NOT NULL CHECK (length(trim(reason)) > 0),
        made_at TEXT NOT NULL,
        basis_run INTEGER REFERENCES runs(run_id),
        basis_verdict TEXT,
        basis_points REAL,
        withdrawn_at TEXT
    );
    CREATE TABLE run_adjustments (
        run_id INTEGER NOT NULL REFERENCES runs(run_id),
        adjustment_id INTEGER NOT NULL REFERENCES adjustments(adjustment_id),
        applied INTEGER NOT NULL,
        changed INTEGER NOT NULL,
        note TEXT,
        PRIMARY KEY (run_id, adjustment_id)
    );
    CREATE TABLE history (event_id INTEGER PRIMARY KEY, at TEXT NOT NULL, action TEXT NOT NULL, detail TEXT NOT NULL);
    """,
    # 2: the instructor's identity decisions (a file credited to a student; a reconciliation accepted).
    """
    CREATE TABLE assignments (
        assignment_id INTEGER PRIMARY KEY,
        lab_id TEXT NOT NULL REFERENCES labs(lab_id),
        submission TEXT NOT NULL,
        student_id TEXT NOT NULL REFERENCES students(student_id),
        reason TEXT NOT NULL,
        made_at TEXT NOT NULL,
        withdrawn_at TEXT
    );
    CREATE TABLE reviews (
        review_id INTEGER PRIMARY KEY,
        lab_id TEXT NOT NULL REFERENCES labs(lab_id),
        student_id TEXT NOT NULL,
        submission TEXT,
        kind TEXT NOT NULL,
        made_at TEXT NOT NULL
    );
    """,
    # 3: an adjustment replaces the student's active one on the same lab and step: found by index, not by
    # reading every adjustment (an adjustments file of n rows was quadratic in n).
    """
    CREATE INDEX adjustments_student ON adjustments (student_id, lab_id);
    """,
]
SCHEMA_VERSION = len(MIGRATIONS)


class CourseError(Exception):
    """A course command that cannot be done as asked (the message says why and what to do)."""


def _now() -> str:
    from labcheck.report.outputs import run_time

    return run_time().isoformat(timespec="seconds")


@dataclass
class LabStatus:
    """The review list of one lab's current results (``labcheck course status``)."""

    lab_id: str
    title: str
    runs: list[dict] = field(default_factory=list)  # the current run of each section scope
    graded: int = 0
    missing: list[dict] = field(default_factory=list)
    unreadable: list[dict] = field(default_factory=list)
    identity: list[dict] = field(default_factory=list)
    superseded: list[dict] = field(default_factory=list)
    leads: list[dict] = field(default_factory=list)
    unexplained: list[dict] = field(default_factory=list)
    adjustments: list[dict] = field(default_factory=list)  # flagged: the step changed since, or not applied

    @property
    def to_review(self) -> int:
        return sum(len(x) for x in (self.missing, self.unreadable, self.identity, self.superseded, self.leads,
                                    self.unexplained, self.adjustments))


class AdjustLookup:
    """What :meth:`Course.adjust` looks up, read once for many adjustments (none of them changes it)."""

    def __init__(self, course: "Course"):
        self.course = course
        self._roster: Roster | None = None
        self._labs: set[str] = set()
        self._current: dict[str, dict] = {}
        self._specs: dict[int, object] = {}

    def student(self, text: str) -> RosterEntry:
        if self._roster is None:
            self._roster = self.course.all_students()
        found = self._roster.find(text)
        if found is None:
            raise CourseError(f"no student {text!r} in this course's roster")
        return found

    def lab(self, lab_id: str) -> None:
        if lab_id not in self._labs:
            self.course._lab(lab_id)
            self._labs.add(lab_id)

    def current(self, lab_id: str) -> dict:
        if lab_id not in self._current:
            self._current[lab_id] = self.course.current_results(lab_id)
        return self._current[lab_id]

    def spec(self, run_id: int):
        if run_id not in self._specs:
            self._specs[run_id] = self.course.spec_of_run(run_id)
        return self._specs[run_id]


class Course:
    """One course folder and its record.  Open with :meth:`create` or :meth:`open`; close when done."""

    def __init__(self, folder: Path, conn: sqlite3.Connection):
        self.folder = folder
        self.conn = conn
        self.pages: dict[str, int] = {}  # PDF name -> its pages, for the PDFs written by write_feedback

    # ------------------------------------------------------------ opening
    @classmethod
    def create(cls, folder: str | Path, title: str = "") -> "Course":
        folder = Path(folder)
        if (folder / DB_NAME).exists():
            raise CourseError(f"{folder} already holds a course record ({DB_NAME}); use it, or choose another folder")
        if folder.exists() and not folder.is_dir():
            raise CourseError(f"{folder} is a file, not a folder")
        folder.mkdir(parents=True, exist_ok=True)
        course = cls._connect(folder)
        with course.transaction():
            course.conn.execute("INSERT INTO meta VALUES ('title', ?), ('created_at', ?)", (title or folder.name, _now()))
            course._log("course created", {"title": title or folder.name})
        return course

    @classmethod
    def open(cls, folder: str | Path) -> "Course":
        folder = Path(folder)
        if not (folder / DB_NAME).is_file():
            raise CourseError(f"{folder} holds no course record ({DB_NAME}); start one with "
                              f"'labcheck course new {folder} --roster FILE'")
        return cls._connect(folder)

    @classmethod
    def _connect(cls, folder: Path) -> "Course":
        try:
            conn = sqlite3.connect(folder / DB_NAME, isolation_level=None, timeout=30.0)
            conn.row_factory = sqlite3.Row
            conn.execute("PRAGMA foreign_keys = ON")
            conn.execute("PRAGMA journal_mode = WAL")
            conn.execute("PRAGMA synchronous = FULL")
        except sqlite3.DatabaseError as exc:
            raise CourseError(f"{folder / DB_NAME}: not a course record ({exc})") from None
        course = cls(folder, conn)
        course._migrate()
        return course

    def _migrate(self) -> None:
        version = self.conn.execute("PRAGMA user_version").fetchone()[0]
        if version > SCHEMA_VERSION:
            raise CourseError(f"{self.folder / DB_NAME} was written by a newer labcheck (schema {version}; "
                              f"this one knows {SCHEMA_VERSION}); upgrade labcheck")
        for number in range(version, SCHEMA_VERSION):
            with self.transaction():
                for statement in MIGRATIONS[number].split(";"):
                    if statement.strip():
                        self.conn.execute(statement)
                self.conn.execute(f"PRAGMA user_version = {number + 1}")

    def close(self) -> None:
        self.conn.close()

    def __enter__(self) -> "Course":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    @contextmanager
    def transaction(self):
        """One write: all of it or none of it (BEGIN IMMEDIATE takes the write lock at once)."""
        self.conn.execute("BEGIN IMMEDIATE")
        try:
            yield self.conn
        except BaseException:
            self.conn.execute("ROLLBACK")
            raise
        self.conn.execute("COMMIT")

    def _log(self, action: str, detail: dict) -> None:
        self.conn.execute("INSERT INTO history (at, action, detail) VALUES (?, ?, ?)",
                          (_now(), action, json.dumps(detail, ensure_ascii=False, sort_keys=True)))

    @property
    def title(self) -> str:
        row = self.conn.execute("SELECT value FROM meta WHERE key = 'title'").fetchone()
        return row[0] if row else self.folder.name

    # ------------------------------------------------------------ roster
    def set_roster(self, roster: Roster, replace_section: str | None = None) -> dict:
        """Add the roster's students, or update their names and sections.  With ``replace_section``, a
        student of that section who is not in this roster is marked as dropped (kept, not deleted)."""
        now = _now()
        counts = {"added": 0, "updated": 0, "unchanged": 0, "dropped": 0}
        with self.transaction() as db:
            existing = {r["student_id"]: r for r in db.execute("SELECT * FROM students")}
            known = Roster([RosterEntry(r["student_id"], r["name"], r["section"]) for r in existing.values()]) \
                if existing else None
            seen = set()
            for e in roster.entries:
                same = known.find(e.student_id) if known else None  # "S1005" updates "s1005"
                if same is None:
                    db.execute("INSERT INTO students (student_id, name, section, active, added_at, updated_at) "
                               "VALUES (?, ?, ?, 1, ?, ?)", (e.student_id, e.name, e.section, now, now))
                    counts["added"] += 1
                    seen.add(e.student_id)
                    continue
                old = existing[same.student_id]
                seen.add(same.student_id)
                if (old["name"], old["section"], old["active"]) == (e.name, e.section, 1):
                    counts["unchanged"] += 1
                    continue
                db.execute("UPDATE students SET name = ?, section = ?, active = 1, updated_at = ? WHERE student_id = ?",
                           (e.name, e.section, now, same.student_id))
                counts["updated"] += 1
            if replace_section is not None:
                for sid, old in existing.items():
                    if old["section"] == replace_section and old["active"] and sid not in seen:
                        db.execute("UPDATE students SET active = 0, updated_at = ? WHERE student_id = ?", (now, sid))
                        counts["dropped"] += 1
            self._log("roster", {"students": len(roster), "section": replace_section, **counts})
        return counts

    def roster(self, section: str | None = None) -> Roster:
        """The active students (of one section, when named)."""
        sql = "SELECT student_id, name, section FROM students WHERE active = 1"
        args: tuple = ()
        if section is not None:
            sql += " AND section = ?"
            args = (section,)
        rows = self.conn.execute(sql + " ORDER BY student_id", args).fetchall()
        return Roster([RosterEntry(r["student_id"], r["name"], r["section"]) for r in rows])

    def sections(self) -> list[str]:
        return [r[0] for r in self.conn.execute("SELECT DISTINCT section FROM students WHERE active = 1 ORDER BY 1")]

    def all_students(self) -> Roster:
        """Every student the course has had, dropped ones too."""
        rows = self.conn.execute("SELECT student_id, name, section FROM students").fetchall()
        return Roster([RosterEntry(r["student_id"], r["name"], r["section"]) for r in rows])

    def find_student(self, text: str) -> RosterEntry:
        return AdjustLookup(self).student(text)

    def adjust_lookup(self) -> AdjustLookup:
        """A lookup to hand to :meth:`adjust` for many rows at once."""
        return AdjustLookup(self)

    # ------------------------------------------------------------ grading
    def grade(self, spec, inputs: list, *, section: str | None = None, keep: str = "latest", jobs: int = 1,
              progress=None, limits=None):
        """Grade ``inputs`` into a new run folder and record the run; returns (RunSummary, run_id).

        The files are written first (atomically, as ``labcheck grade`` does), then the run and its results
        go into the database in one transaction.  A kill before that commit leaves an unrecorded run
        folder, which the next run passes over (it takes the next number).
        """
        from labcheck.run.batch import grade_section
        from labcheck.reading.ingest import Limits

        if section is not None and section not in self.sections():
            raise CourseError(f"no section {section!r} in this course; the sections are "
                              f"{', '.join(repr(s) for s in self.sections()) or 'none'}")
        roster = self.roster(section)
        if not len(roster):
            raise CourseError("the course's roster has no active students; add them with 'labcheck course roster'")
        adjustments = self._adjustments_by_student(spec.id)
        assigned = self.assignments(spec.id)
        started = _now()
        lab_dir = self.folder / "labs" / spec.id
        lab_dir.mkdir(parents=True, exist_ok=True)
        # A run's folder is numbered by its run id; a folder a killed run left unrecorded keeps its number.
        # The number is reserved by creating the folder (mkdir is atomic), so two runs at once never share one.
        used = [int(p.name[4:]) for p in (self.folder / "labs").glob("*/run-*") if p.name[4:].isdigit()]
        number = max(used + [self.conn.execute("SELECT max(run_id) FROM runs").fetchone()[0] or 0]) + 1
        while True:
            out = lab_dir / f"run-{number:03d}"
            try:
                out.mkdir()
                break
            except FileExistsError:
                number += 1
        recorded = number - 1
        try:
            run = grade_section(spec, inputs, out, roster, keep=keep, jobs=jobs, progress=progress,
                                limits=limits or Limits(), adjustments=adjustments, assigned=assigned)
        except BaseException:
            if out.is_dir() and not any(out.iterdir()):
                out.rmdir()  # nothing was graded (a bad input, an interrupt): the number is free again
            raise
        results = json.loads((out / "results.json").read_text(encoding="utf-8"))
        integrity = json.loads((out / "integrity.json").read_text(encoding="utf-8"))
        leads: dict[str, int] = {}
        for lead in integrity.get("leads", []):
            for sid in lead["students"]:
                leads[sid] = leads.get(sid, 0) + 1
        superseded = {s["submission"] for s in results.get("superseded", [])}
        with self.transaction() as db:
            db.execute("INSERT INTO labs (lab_id, title, added_at) VALUES (?, ?, ?) ON CONFLICT (lab_id) "
                       "DO UPDATE SET title = excluded.title", (spec.id, spec.title, started))
            db.execute("INSERT OR IGNORE INTO specs (lab_id, sha256, file_name, text, added_at) VALUES (?, ?, ?, ?, ?)",
                       (spec.id, spec.sha256, Path(spec.path).name, spec.source or b"", started))
            spec_id = db.execute("SELECT spec_id FROM specs WHERE lab_id = ? AND sha256 = ?",
                                 (spec.id, spec.sha256)).fetchone()[0]
            records = results["submissions"]
            cur = db.execute(
                "INSERT INTO runs (run_id, lab_id, spec_id, section, folder, inputs, keep, started_at, finished_at, "
                "counts, n_results, exit_status, labcheck_version) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (number, spec.id, spec_id, section or "", str(out.relative_to(self.folder)),
                 json.dumps([str(i) for i in inputs]), keep, started, results["run"]["finished"],
                 json.dumps(results["run"]["counts"]), len(records), results["run"]["exit_status"],
                 results["run"]["labcheck_version"]))
            run_id = cur.lastrowid
            for n, rec in enumerate(records):
                db.execute("INSERT INTO results VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                           _result_row(run_id, n, rec, rec.get("submission") not in superseded,
                                       leads.get(rec.get("student_id") or "", 0)))
            counted: dict[str, dict] = {}
            for r in records:
                if r.get("student_id") and r.get("submission") not in superseded:
                    counted.setdefault(r["student_id"], r)
            for sid, items in adjustments.items():
                applied = worded(apply_adjustments(counted.get(sid, {"status": "missing"}), items)) or {"items": []}
                for item in applied["items"]:
                    db.execute("INSERT INTO run_adjustments VALUES (?, ?, ?, ?, ?)",
                               (run_id, item["id"], int(item["applied"]), int(item["changed"]), item["change"]))
            self._log("grade", {"lab": spec.id, "run": run_id, "folder": str(out.relative_to(self.folder)),
                                "section": section or "", "spec_sha256": spec.sha256, "counts": results["run"]["counts"],
                                "unrecorded_before": recorded})
        return run, run_id

    def labs(self) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM labs ORDER BY added_at, lab_id").fetchall()

    def _lab(self, lab_id: str) -> sqlite3.Row:
        row = self.conn.execute("SELECT * FROM labs WHERE lab_id = ?", (lab_id,)).fetchone()
        if row is None:
            known = ", ".join(r["lab_id"] for r in self.labs()) or "none yet"
            raise CourseError(f"no lab {lab_id!r} in this course (graded labs: {known})")
        return row

    def runs(self, lab_id: str) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM runs WHERE lab_id = ? ORDER BY run_id", (lab_id,)).fetchall()

    def current_runs(self, lab_id: str) -> list[sqlite3.Row]:
        """The latest run of each section scope ('' = everyone) of a lab."""
        return self.conn.execute(
            "SELECT * FROM runs WHERE run_id IN (SELECT max(run_id) FROM runs WHERE lab_id = ? GROUP BY section) "
            "ORDER BY run_id", (lab_id,)).fetchall()

    def current_results(self, lab_id: str) -> dict[str, sqlite3.Row]:
        """Student id -> the counted result of the latest run that covers that student (every roster student
        of a run has a row, 'missing' when no file came)."""
        students = {r["student_id"]: r["section"] for r in self.conn.execute("SELECT * FROM students")}
        out: dict[str, sqlite3.Row] = {}
        for run in self.current_runs(lab_id):  # in run order: a later run replaces an earlier one
            for row in self.conn.execute("SELECT * FROM results WHERE run_id = ? AND counted = 1 ORDER BY n",
                                         (run["run_id"],)):
                sid = row["student_id"]
                if run["section"] and students.get(sid) not in (run["section"], None):
                    continue
                out[sid] = row
        return out

    # ------------------------------------------------------------ adjustments
    def adjust(self, student: str, lab_id: str, points: float, reason: str, step: str | None = None, *,
               lookup: "AdjustLookup | None" = None) -> int:
        """Record an adjustment (replacing the student's active one on the same step, or on the lab's total).

        ``lookup`` (:meth:`adjust_lookup`) keeps the roster, each lab's current results and each run's spec
        from one row to the next of an adjustments file: adjustments change none of them, and looking them
        up afresh for every row made a file of n rows cost n times the roster."""
        lookup = lookup or AdjustLookup(self)
        entry = lookup.student(student)
        lookup.lab(lab_id)
        if not reason or not reason.strip():
            raise CourseError("an adjustment needs a reason (--reason TEXT); the student's sheet shows it")
        if points != points or abs(points) > 1e6:
            raise CourseError(f"points {points!r} are not a usable number")
        current = lookup.current(lab_id).get(entry.student_id)
        basis_verdict = basis_points = None
        basis_run = current["run_id"] if current is not None else None
        if step:
            spec = lookup.spec(basis_run) if basis_run else None
            if spec is not None and step not in spec.steps:
                raise CourseError(f"lab {lab_id} has no step {step!r}; its steps are {', '.join(spec.steps)}")
            if current is not None and current["status"] == "graded":
                state = step_state(_record(current), step)
                if state is not None:
                    basis_verdict, basis_points, most = state
                    if not 0 <= points <= most:
                        raise CourseError(f"step {step} is worth 0 to {most:g} points; {points:g} is outside that")
        now = _now()
        with self.transaction() as db:
            db.execute("UPDATE adjustments SET withdrawn_at = ? WHERE student_id = ? AND lab_id = ? AND "
                       "step IS ? AND withdrawn_at IS NULL", (now, entry.student_id, lab_id, step or None))
            cur = db.execute(
                "INSERT INTO adjustments (student_id, lab_id, step, points, reason, made_at, basis_run, basis_verdict, "
                "basis_points) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (entry.student_id, lab_id, step or None, float(points), reason.strip(), now, basis_run, basis_verdict,
                 basis_points))
            self._log("adjust", {"student": entry.student_id, "lab": lab_id, "step": step, "points": points,
                                 "reason": reason.strip(), "adjustment": cur.lastrowid})
        return cur.lastrowid

    def withdraw(self, student: str, lab_id: str, step: str | None = None) -> int:
        entry = self.find_student(student)
        with self.transaction() as db:
            n = db.execute("UPDATE adjustments SET withdrawn_at = ? WHERE student_id = ? AND lab_id = ? AND "
                           "step IS ? AND withdrawn_at IS NULL", (_now(), entry.student_id, lab_id, step or None)).rowcount
            self._log("withdraw", {"student": entry.student_id, "lab": lab_id, "step": step, "withdrawn": n})
        return n

    def adjustments(self, lab_id: str | None = None, active: bool = True) -> list[dict]:
        sql = "SELECT * FROM adjustments WHERE 1 = 1"
        args: list = []
        if lab_id is not None:
            sql += " AND lab_id = ?"
            args.append(lab_id)
        if active:
            sql += " AND withdrawn_at IS NULL"
        return [_adjustment(r) for r in self.conn.execute(sql + " ORDER BY adjustment_id", args)]

    def _adjustments_by_student(self, lab_id: str) -> dict[str, list[dict]]:
        out: dict[str, list[dict]] = {}
        for a in self.adjustments(lab_id):
            out.setdefault(a["student_id"], []).append(a)
        return out

    def adjusted(self, lab_id: str, row: sqlite3.Row) -> dict | None:
        """A current result with today's active adjustments applied (None when it has none)."""
        mine = self._adjustments_by_student(lab_id).get(row["student_id"])
        return worded(apply_adjustments(_record(row), mine)) if mine else None

    # ------------------------------------------------------------ identity decisions
    def _submission(self, lab_id: str, text: str) -> str:
        """A file of the lab's runs, named in full or by a unique end of its path."""
        names = {r[0] for r in self.conn.execute(
            "SELECT DISTINCT submission FROM results JOIN runs USING (run_id) WHERE lab_id = ? AND submission "
            "IS NOT NULL", (lab_id,))}
        if text in names:
            return text
        hits = sorted(n for n in names if n.endswith("/" + text.lstrip("/")) or n.endswith(text))
        if len(hits) == 1:
            return hits[0]
        if not hits:
            raise CourseError(f"no file {text!r} among lab {lab_id}'s submissions (see its results.json)")
        raise CourseError(f"{text!r} names {len(hits)} files of lab {lab_id}; give more of the path: "
                          + "; ".join(hits[:5]))

    def assign(self, lab_id: str, submission: str, student: str, reason: str) -> str:
        """Credit a file to a student from the next grading on (beating the sheet, the folder and the keep
        policy): for a misfiled upload, or to choose which of a student's files counts."""
        self._lab(lab_id)
        entry = self.find_student(student)
        name = self._submission(lab_id, submission)
        if not reason or not reason.strip():
            raise CourseError("say why (--reason TEXT): it is kept in the course's history")
        now = _now()
        with self.transaction() as db:
            db.execute("UPDATE assignments SET withdrawn_at = ? WHERE lab_id = ? AND submission = ? AND "
                       "withdrawn_at IS NULL", (now, lab_id, name))
            db.execute("INSERT INTO assignments (lab_id, submission, student_id, reason, made_at) VALUES (?, ?, ?, ?, ?)",
                       (lab_id, name, entry.student_id, reason.strip(), now))
            self._log("assign", {"lab": lab_id, "submission": name, "student": entry.student_id, "reason": reason.strip()})
        return name

    def assignments(self, lab_id: str) -> dict[str, str]:
        return {r["submission"]: r["student_id"] for r in self.conn.execute(
            "SELECT * FROM assignments WHERE lab_id = ? AND withdrawn_at IS NULL ORDER BY assignment_id", (lab_id,))}

    def accept(self, lab_id: str, student: str) -> int:
        """Mark the student's current identity reconciliation in a lab as reviewed (it leaves the review list
        until a new run reconciles another file)."""
        self._lab(lab_id)
        row = self.current_results(lab_id).get(self.find_student(student).student_id)
        if row is None or not (row["identity"] or row["unmatched"]):
            raise CourseError(f"{student} has no identity to review in lab {lab_id}")
        with self.transaction() as db:
            db.execute("INSERT INTO reviews (lab_id, student_id, submission, kind, made_at) VALUES (?, ?, ?, 'identity', ?)",
                       (lab_id, row["student_id"], row["submission"], _now()))
            self._log("accept identity", {"lab": lab_id, "student": row["student_id"], "submission": row["submission"]})
        return 1

    def _reviewed(self, lab_id: str) -> set[tuple[str, str]]:
        return {(r["student_id"], r["submission"]) for r in self.conn.execute(
            "SELECT * FROM reviews WHERE lab_id = ? AND kind = 'identity'", (lab_id,))}

    # ------------------------------------------------------------ reading back
    def spec_of_run(self, run_id: int):
        from labcheck.model.spec import parse_spec

        row = self.conn.execute("SELECT s.* FROM specs s JOIN runs r ON r.spec_id = s.spec_id WHERE r.run_id = ?",
                                (run_id,)).fetchone()
        return parse_spec(bytes(row["text"]), row["file_name"]) if row and row["text"] else None

    def status(self) -> list[LabStatus]:
        out = []
        roster = {e.student_id: e for e in self.roster().entries}
        for lab in self.labs():
            st = LabStatus(lab["lab_id"], lab["title"], runs=[dict(r) for r in self.current_runs(lab["lab_id"])])
            current = self.current_results(lab["lab_id"])
            reviewed = self._reviewed(lab["lab_id"])
            for run in st.runs:
                for row in self.conn.execute("SELECT * FROM results WHERE run_id = ? AND counted = 0 ORDER BY n",
                                             (run["run_id"],)):
                    st.superseded.append({"student_id": row["student_id"], "name": row["name"],
                                          "submission": row["submission"], "run": run["run_id"]})
            for sid, row in sorted(current.items()):
                who = {"student_id": sid, "name": row["name"], "submission": row["submission"], "run": row["run_id"]}
                if row["status"] == "graded":
                    st.graded += 1
                elif row["status"] == "missing":
                    st.missing.append(who)
                else:
                    st.unreadable.append(dict(who, status=row["status"], reason=_record(row).get("error")))
                if (row["identity"] or row["unmatched"]) and row["identity"] != "instructor" and \
                        (sid, row["submission"]) not in reviewed:
                    detail = (_record(row).get("identity") or {}).get("detail") or "the student_id is not on the roster"
                    st.identity.append(dict(who, detail=detail))
                if row["leads"]:
                    st.leads.append(dict(who, leads=row["leads"]))
                for step in json.loads(row["unexplained"]):
                    st.unexplained.append(dict(who, step=step))
            for a in self.adjustments(lab["lab_id"]):
                row = current.get(a["student_id"])
                applied = worded(apply_adjustments(_record(row) if row is not None else {"status": "missing"}, [a]))
                item = applied["items"][0]
                if item["changed"] or not item["applied"]:
                    st.adjustments.append({"student_id": a["student_id"], "name": roster.get(a["student_id"], RosterEntry("", "")).name,
                                           "step": a["step"], "points": a["points"], "reason": a["reason"],
                                           "change": item["change"]})
            out.append(st)
        return out

    def grades(self, as_percent: bool = False) -> tuple[list[str], list[dict]]:
        """(lab ids, one dict per active roster student: {"student": RosterEntry, lab_id: value or None}).

        The value is the current result's score with the active adjustments (field quality is part of the
        score), or its percent of the lab's maximum; None when the student has no graded submission.
        """
        labs = [lab["lab_id"] for lab in self.labs()]
        rows = [{"student": e} for e in self.roster().entries]
        for lab_id in labs:
            current = self.current_results(lab_id)
            active = self._adjustments_by_student(lab_id)
            for row in rows:
                res = current.get(row["student"].student_id)
                value = None
                if res is not None and res["status"] == "graded" and res["max_score"]:
                    adj = apply_adjustments(_record(res), active.get(res["student_id"], []))
                    score = adj["score"] if adj else res["score"]
                    value = round(100.0 * score / res["max_score"], 1) if as_percent else round(score, 3)
                row[lab_id] = value
        return labs, rows

    def write_export(self, path: str | Path, *, as_percent: bool = False, id_header: str = "student_id",
                     name_header: str = "name", with_section: bool = False, headers: dict | None = None,
                     labs: list[str] | None = None, sep: str = ",",
                     points_possible: bool = False) -> tuple[int, list[str]]:
        """The LMS grade file: one row per active roster student, one column per lab (docs/course.md,
        "Export").  Every text cell is neutralised; written to a ``.part`` file, then renamed.
        Returns (rows, labs written)."""
        from labcheck.report.outputs import neutralise_cell

        path = Path(path)
        all_labs, rows = self.grades(as_percent=as_percent)
        headers = headers or {}
        unknown = sorted(set(headers) - set(all_labs)) + sorted(set(labs or []) - set(all_labs))
        if unknown:
            raise CourseError(f"lab(s) not in this course: {', '.join(unknown)} (labs: {', '.join(all_labs) or 'none'})")
        wanted = [lab for lab in all_labs if not labs or lab in labs]
        head = [id_header] + ([name_header] if name_header else []) + (["section"] if with_section else []) + \
            [headers.get(lab, lab) for lab in wanted]
        tmp = path.with_name(path.name + ".part")
        try:
            with open(tmp, "w", encoding="utf-8", newline="") as fh:
                w = csv.writer(fh, delimiter=sep, quoting=csv.QUOTE_ALL)
                w.writerow([neutralise_cell(h) for h in head])
                if points_possible:  # the row some LMS imports read each column's maximum from
                    w.writerow(["Points Possible"] + [""] * (len(head) - len(wanted) - 1) +
                               [f"{self._points_possible(lab, as_percent):g}" for lab in wanted])
                for row in rows:
                    e = row["student"]
                    cells = [e.student_id] + ([e.name] if name_header else []) + ([e.section] if with_section else [])
                    w.writerow([neutralise_cell(c) for c in cells] +
                               ["" if row[lab] is None else f"{row[lab]:g}" for lab in wanted])
                fh.flush()
                os.fsync(fh.fileno())
            tmp.replace(path)  # the previous export stays whole until the new one is
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        self._log("export", {"file": str(path), "rows": len(rows), "labs": wanted, "percent": as_percent})
        return len(rows), wanted

    def _points_possible(self, lab_id: str, as_percent: bool) -> float:
        """A lab's maximum for an LMS: 100 in percent; in points, the one maximum its current results share."""
        if as_percent:
            return 100.0
        maxima = {round(r["max_score"], 6) for r in self.current_results(lab_id).values()
                  if r["status"] == "graded" and r["max_score"]}
        if len(maxima) != 1:
            raise CourseError(f"lab {lab_id}'s students have different maximum scores ({', '.join(f'{m:g}' for m in sorted(maxima)) or 'none'}: "
                              "the methods they attempted differ); export it with --scale percent")
        return maxima.pop()

    def write_feedback(self, lab_id: str, out: str | Path, page_size: str | None = None, progress=None, jobs: int = 1,
                       students: list[str] | None = None) -> tuple[list[str], Path]:
        """Every graded student's current sheet (or those of ``students``), with today's adjustments, as
        ``<student id>.pdf`` in ``out``, and one zip of them.  Sheets are rendered here; the PDFs are laid out
        in ``jobs`` processes (WeasyPrint's layout is the slow part).  Returns (PDF names, the zip's path)."""
        from labcheck.run.batch import sheet_file_name
        from labcheck.report.outputs import run_time
        from labcheck.report.pdf import html_to_pdf
        from labcheck.report.render import Renderer

        self._lab(lab_id)
        out = Path(out)
        out.mkdir(parents=True, exist_ok=True)
        for left in out.glob("*.pdf.part"):  # cut off by a killed run: never a sheet, and ours by name
            left.unlink(missing_ok=True)
        renderers: dict = {}
        used: set[str] = set()
        made = []
        generated = run_time().strftime("%Y-%m-%d %H:%M UTC")
        wanted = None if students is None else {self.find_student(s).student_id for s in students}
        active = self._adjustments_by_student(lab_id)  # today's, read once for every sheet
        pages: list = []
        pool = None
        import multiprocessing

        if jobs > 1 and "fork" in multiprocessing.get_all_start_methods():  # elsewhere (Windows): one process
            from concurrent.futures import ProcessPoolExecutor

            pool = ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context("fork"))
        for sid, row in sorted(self.current_results(lab_id).items()):
            if row["status"] != "graded" or (wanted is not None and sid not in wanted):
                continue
            if row["run_id"] not in renderers:
                spec = self.spec_of_run(row["run_id"])
                if spec is None:
                    raise CourseError(f"run {row['run_id']}'s spec text is not in the record")
                renderers[row["run_id"]] = Renderer(spec, generated, page_size=page_size)
            record = _record(row)
            if active.get(sid):
                record["adjustments"] = worded(apply_adjustments(record, active[sid]))
            name = sheet_file_name(sid, used)[: -len(".html")] + ".pdf"
            html = renderers[row["run_id"]].sheet(record)
            made.append(name)
            pages.append(pool.submit(html_to_pdf, html, out / name) if pool else html_to_pdf(html, out / name))
            if progress:
                progress(len(made), name)
        try:
            for name, n in zip(made, pages):
                self.pages[name] = n.result() if pool else n
        finally:
            if pool:
                pool.shutdown(cancel_futures=True)
        bundle = out / f"feedback-{lab_id}.zip"
        part = out / f"feedback-{lab_id}.zip.part"
        try:
            with zipfile.ZipFile(part, "w", zipfile.ZIP_DEFLATED) as zf:
                for name in made:
                    zf.write(out / name, name)
            part.replace(bundle)
        except BaseException:
            part.unlink(missing_ok=True)
            raise
        return made, bundle

    def history(self) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM history ORDER BY event_id").fetchall()

    def run_folder(self, run_id: int) -> Path:
        row = self.conn.execute("SELECT folder FROM runs WHERE run_id = ?", (run_id,)).fetchone()
        if row is None:
            raise CourseError(f"no run {run_id} in this course")
        return self.folder / row["folder"]

    def run_adjustments(self, run_id: int) -> list[dict]:
        return [dict(r) for r in self.conn.execute(
            "SELECT ra.*, a.student_id, a.step, a.points, a.reason FROM run_adjustments ra "
            "JOIN adjustments a USING (adjustment_id) WHERE ra.run_id = ? ORDER BY adjustment_id", (run_id,))]


def _record(row: sqlite3.Row) -> dict:
    return json.loads(zlib.decompress(row["record"]).decode("utf-8"))


def _adjustment(r: sqlite3.Row) -> dict:
    return {"id": r["adjustment_id"], "student_id": r["student_id"], "lab_id": r["lab_id"], "step": r["step"],
            "points": r["points"], "reason": r["reason"], "made_at": r["made_at"], "basis_run": r["basis_run"],
            "basis_verdict": r["basis_verdict"], "basis_points": r["basis_points"], "withdrawn_at": r["withdrawn_at"]}


def _result_row(run_id: int, n: int, rec: dict, counted: bool, leads: int) -> tuple:
    unexplained = [s["id"] for s in rec.get("steps", []) if s.get("verdict") == "wrong" and not s.get("diagnosis")]
    quality = rec.get("quality_score")
    body = zlib.compress(json.dumps(rec, ensure_ascii=False, sort_keys=True).encode("utf-8"), 6)
    return (run_id, n, rec.get("student_id") or "", rec.get("name") or "", rec.get("submission"), rec["status"],
            int(counted), rec.get("score"), rec.get("max_score"), quality["points"] if quality else None,
            (rec.get("identity") or {}).get("how"), int(bool(rec.get("unmatched"))), json.dumps(unexplained),
            leads, rec.get("sheet"), body)

