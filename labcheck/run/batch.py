"""Grade a section: every input file, one at a time, into the output folder.

Two promises, kept here:

* **One file never costs another.**  Every stage for one input (read,
  normalise, grade, render, serialise) runs inside one guard.  An input fault
  becomes that file's ``unreadable`` record with a plain reason; a fault of
  labcheck's own becomes that file's ``error`` record, its traceback kept in
  ``labcheck-errors.log`` for the instructor (never on a sheet); the batch goes on.
* **Nothing looks complete that is not.**  A run writes into a staging folder
  beside the output folder and moves it into place only when every output is
  complete; ``results.json`` ends with a completion record written last.  The
  previous run (with ``--force``) is replaced only then.  After a kill at any
  moment the output folder holds the previous complete run or nothing; the
  next run tidies what a killed one left (see :func:`recover_output`).
"""

from __future__ import annotations

import errno
from collections import Counter
import json
import os
import shutil
import sys
import traceback
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Callable

from labcheck import __version__
from labcheck.grading.adjust import apply_adjustments
from labcheck.grading.grade import missing_record, safe_id, unreadable_record
from labcheck.grading.integrity import CAVEAT, P_LEAD, collect_evidence, find_leads
from labcheck.reading.identity import KEEP_POLICIES, Roster, keep_rank, reconcile
from labcheck.reading.ingest import InputError, Limits, RawSubmission, Skipped, Unparsed, iter_submissions, read_roster
from labcheck.report.outputs import GradebookWriter, ResultsWriter, gradebook_row, record_json, run_time
from labcheck.report.render import Renderer
from labcheck.report.words import worded
from labcheck.run.check import record_of
from labcheck.model.spec import LabSpec
from labcheck.reading.submission import observation_keys, result_keys

__all__ = ["OutputExistsError", "OutputWriteError", "RunSummary", "grade_section", "count_inputs", "OUTPUT_NAMES",
           "EXIT_OK", "EXIT_INCOMPLETE", "EXIT_USAGE", "EXIT_LABCHECK_FAILED", "recover_output", "sheet_file_name"]

ERROR_LOG = "labcheck-errors.log"
_SPOOL = ".gradebook-rows.jsonl"  # staging only: rows wait here until one file per student is chosen
OUTPUT_NAMES = ("results.json", "gradebook.csv", "section.html", "feedback", "integrity.html", "integrity.json", ERROR_LOG)

from labcheck.base.exitcodes import EXIT_INCOMPLETE, EXIT_LABCHECK_FAILED, EXIT_OK, EXIT_USAGE  # noqa: F401 (re-exported)


class OutputExistsError(Exception):
    """The output folder holds files and --force was not given."""


class OutputWriteError(Exception):
    """The outputs could not be written (disk full, read-only folder): nothing was replaced."""


@dataclass
class RunSummary:
    out_dir: Path
    n_files: int = 0
    n_graded: int = 0
    n_unreadable: int = 0
    n_wrong_lab: int = 0
    n_errors: int = 0
    n_missing: int = 0
    n_skipped: int = 0
    n_unmatched: int = 0
    n_superseded: int = 0
    n_counted: int = 0  # graded files that count (one per student), in the mean and the pass count
    n_reconciled: int = 0  # files matched to the roster other than by an exact id (listed for review)
    internal_errors: list[str] = field(default_factory=list)
    mean_percent: float | None = None
    n_pass: int = 0
    n_leads: int = 0

    @property
    def exit_code(self) -> int:
        if self.n_errors:
            return EXIT_LABCHECK_FAILED
        return EXIT_INCOMPLETE if (self.n_unreadable or self.n_missing or self.n_wrong_lab) else EXIT_OK

    def counts(self) -> dict:
        return {"files": self.n_files, "graded": self.n_graded, "unreadable": self.n_unreadable,
                "wrong_lab": self.n_wrong_lab, "error": self.n_errors, "missing": self.n_missing,
                "skipped": self.n_skipped, "unmatched": self.n_unmatched, "superseded": self.n_superseded}


def count_inputs(inputs: list[str | Path]) -> int:
    """How many files the inputs hold (for a progress bar); cheap, reads no file."""
    n = 0
    for item in inputs:
        p = Path(item)
        if p.is_dir():
            n += sum(1 for f in p.rglob("*") if f.is_file())
        elif p.suffix.lower() == ".zip":
            try:
                with open(p, "rb") as fh:
                    from labcheck.reading.ingest import zip_directory_size

                    declared = zip_directory_size(fh)
                n += declared[0] if declared and declared[0] <= Limits().max_zip_members else 1
            except OSError:
                n += 1
        else:
            n += 1
    return n


def _staging(out: Path) -> Path:
    return out.parent / f".{out.name}.labcheck-staging"


def _previous(out: Path) -> Path:
    return out.parent / f".{out.name}.labcheck-previous"


def recover_output(out: Path) -> None:
    """Tidy what a killed run left beside ``out``.

    A staging folder never claimed completion: it is removed.  A folder of
    the previous run exists only while a commit was under way: if ``out`` is
    gone it is put back; otherwise the new run is in place and only the
    instructor's own files still need carrying over.
    """
    staging, previous = _staging(out), _previous(out)
    if staging.exists():
        shutil.rmtree(staging)
    if previous.exists():
        if not out.exists():
            os.replace(previous, out)
            return
        _carry_foreign_files(previous, out)
        shutil.rmtree(previous)


def _carry_foreign_files(src: Path, dst: Path) -> None:
    """Move files that are not labcheck's outputs (the instructor's own) from ``src`` to ``dst``."""
    for entry in sorted(src.iterdir()):
        if entry.name not in OUTPUT_NAMES and not (dst / entry.name).exists():
            os.replace(entry, dst / entry.name)


def _check_output_folder(out: Path, inputs: list[str | Path], force: bool) -> None:
    if out.exists() and not out.is_dir():
        raise OutputExistsError(f"{out} exists and is not a folder")
    resolved = out.resolve()
    for item in inputs:
        p = Path(item).resolve()
        if resolved == p or resolved in p.parents:
            raise InputError(f"--out {out} is, or holds, the input {item}; choose a separate output folder")
    if out.exists() and any(out.iterdir()) and not force:
        raise OutputExistsError(
            f"{out} is not empty; choose another --out folder or add --force to replace labcheck's outputs there"
        )


def _commit(staging: Path, out: Path) -> None:
    """Move the finished staging folder into place, replacing the previous run only now.

    Everything written is synced first (one ``sync`` rather than one per file), so that even after a power
    cut the folder that is renamed into place holds the whole run.
    """
    if hasattr(os, "sync"):
        os.sync()
    if out.exists():
        previous = _previous(out)
        os.replace(out, previous)
        os.replace(staging, out)
        _carry_foreign_files(previous, out)
        shutil.rmtree(previous)
    else:
        os.replace(staging, out)
    _fsync_dir(out.parent)


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _write_text(path: Path, text: str) -> None:
    """Write one output into the staging folder.  No fsync per file: a kill cannot lose what the page cache
    holds, and :func:`_commit` syncs the whole staging folder once before it moves it into place."""
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(text)


def _write_failure(folder: Path, exc: OSError) -> OutputWriteError:
    reasons = {errno.ENOSPC: "the disk is full", errno.EDQUOT: "the disk quota is used up",
               errno.EROFS: "the folder is on a read-only file system", errno.EACCES: "permission denied",
               errno.EPERM: "permission denied"}
    reason = reasons.get(exc.errno, exc.strerror or str(exc))
    return OutputWriteError(f"cannot write the outputs in {folder}: {reason}; nothing was replaced")


def grade_section(
    spec: LabSpec,
    inputs: list[str | Path],
    out_dir: str | Path,
    roster: "str | Path | Roster | None" = None,
    *,
    force: bool = False,
    keep: str = "latest",
    id_column: str | None = None,
    name_column: str | None = None,
    adjustments: dict[str, list[dict]] | None = None,
    assigned: dict[str, str] | None = None,
    limits: Limits = Limits(),
    progress: Callable[[int, str], None] | None = None,
    jobs: int = 1,
) -> RunSummary:
    """Grade every submission in ``inputs`` and write the outputs to ``out_dir``.

    ``jobs`` > 1 grades and renders in that many worker processes; the outputs are byte-identical
    to ``jobs=1`` (everything that depends on other files is done here, in input order).

    Raises :class:`InputError` for a missing or empty input, a bad roster, or an
    output folder that is an input; :class:`OutputExistsError` for a non-empty
    output folder without ``force`` (both before anything is written); and
    :class:`OutputWriteError` when the outputs cannot be written, in which
    case the previous run, if any, is left as it was.
    """
    out = Path(out_dir)
    for item in inputs:
        if not Path(item).exists():
            raise InputError(f"{item}: no such file or folder")
    if keep not in KEEP_POLICIES:
        raise InputError(f"unknown policy for several submissions from one student: {keep!r}; "
                         f"use one of {', '.join(KEEP_POLICIES)}")
    roster_path = None if isinstance(roster, Roster) or not roster else Path(roster)
    roster_rows = roster if isinstance(roster, Roster) else (read_roster(roster, id_column, name_column) if roster else None)
    try:
        recover_output(out)
    except OSError as exc:
        raise _write_failure(out.parent, exc) from None
    _check_output_folder(out, inputs, force)
    staging = _staging(out)
    try:
        staging.mkdir(parents=True)
        (staging / "feedback").mkdir()
        section = _SectionRun(spec, out, staging, roster_rows, progress, jobs, keep, assigned or {})
        section.adjustments = adjustments
        run = section.grade(inputs, roster_path, limits)
        _commit(staging, out)
    except OSError as exc:
        shutil.rmtree(staging, ignore_errors=True)
        raise _write_failure(out, exc) from None
    except BaseException:  # our own errors, an interrupt: nothing half-written stays behind
        shutil.rmtree(staging, ignore_errors=True)
        raise
    return run


@dataclass
class _Outcome:
    """What grading one input produced: its record's JSON, its slim summary, and its sheet."""

    text: str
    summary: dict
    evidence: object | None = None
    sheet_html: str | None = None
    sheet_name: str | None = None
    gradebook: list | None = None  # the student's gradebook row (written at once, not kept)
    verdicts: tuple = ()  # (step key, verdict, diagnosis label) for the section's step table (tallied, not kept)


@dataclass
class _Graded:
    """One file graded by :class:`_FileGrader` (in any process): the record before identity is resolved."""

    record: dict
    html: str | None = None
    evidence: object | None = None
    traceback: str | None = None  # a fault of labcheck's own (the record is then an error record)
    render_traceback: str | None = None


class _FileGrader:
    """Everything for one file that needs no other file: normalise, grade, render, collect evidence.

    Pure per file, so it runs the same in the parent (``--jobs 1``) or in a worker process.  Never raises.
    """

    def __init__(self, spec: LabSpec, roster: Roster | None, generated: str, assigned: dict | None = None):
        self.spec = spec
        self.assigned = assigned or {}
        self.renderer = Renderer(spec, generated)
        self.keys = (observation_keys(spec), result_keys(spec))
        self.roster = roster

    def grade(self, item) -> _Graded:
        """Grade one file (a :class:`RawSubmission`, or :class:`Unparsed` bytes parsed here)."""
        spec = self.spec
        try:
            if isinstance(item, Unparsed):
                item = item.parse()
            record = record_of(item, spec, self.keys)  # the same reading and grading as labcheck check
            _identify(record, item.source, self.roster, self.assigned)
            record = worded(record)  # grading's values and sentences, worded once for every output
            record["sheet"] = None
            graded = _Graded(record)
            if record["status"] == "graded":
                self.render(graded)
                graded.evidence = collect_evidence(record, item.rows, spec.shared_items)
            return graded
        except Exception:
            record = unreadable_record(item.source, "labcheck failed on this file (a fault in labcheck, not in the "
                                                    f"file); the traceback is in {ERROR_LOG}")
            record.update(status="error", sheet=None)
            try:
                _identify(record, item.source, self.roster, self.assigned)
            except Exception:
                pass
            return _Graded(record, traceback=f"{item.source}\n{traceback.format_exc()}")

    def render(self, graded: _Graded) -> None:
        try:
            graded.html = self.renderer.sheet(graded.record)
            graded.render_traceback = None
        except Exception:  # a renderer fault must not lose the grade
            graded.html = None
            graded.render_traceback = f"{graded.record['submission']}: rendering the sheet failed\n{traceback.format_exc()}"


# ---------------------------------------------------------------- worker processes (--jobs N)

_WORKER: _FileGrader | None = None


def _die_with_parent() -> None:
    """A worker must not outlive a killed labcheck (it would hold the task pipe open and never see EOF).

    On Linux the kernel sends SIGKILL when the parent dies (prctl PR_SET_PDEATHSIG); elsewhere a daemon
    thread notices the parent is gone within a second.
    """
    parent = os.getppid()
    try:
        import ctypes
        import signal

        libc = ctypes.CDLL("libc.so.6", use_errno=True)
        if libc.prctl(1, signal.SIGKILL, 0, 0, 0) == 0:  # PR_SET_PDEATHSIG = 1
            if os.getppid() != parent:  # the parent died before the call
                os._exit(1)
            return
    except (OSError, AttributeError):
        pass
    import threading
    import time

    def watch():
        while True:
            time.sleep(1.0)
            if os.getppid() != parent:
                os._exit(1)

    threading.Thread(target=watch, daemon=True).start()


def _worker_init(spec_source: bytes, spec_path: str, roster, generated: str, assigned=None) -> None:
    global _WORKER
    from labcheck.model.spec import parse_spec

    _die_with_parent()
    _WORKER = _FileGrader(parse_spec(spec_source, spec_path), roster, generated, assigned)


def _worker_grade(item: RawSubmission) -> _Graded:
    return _WORKER.grade(item)


def _worker_grade_chunk(items: list) -> list:
    """Several files graded in one task (None for a skipped one): one pipe message and one wake-up each way
    for the chunk, not for every file."""
    return [None if isinstance(item, Skipped) else _WORKER.grade(item) for item in items]


class _Pool:
    """Files graded in worker processes, results handed back in input order, a bounded number in flight.

    Files go to the workers in chunks of a few (:data:`CHUNK`): a task per file cost about 1 ms of
    futures, locks, pipe wake-ups and context switches, as much as grading a small file.  A worker that
    dies (a crash in C code, the OOM killer) breaks the pool: every file then in flight is graded again
    alone in a fresh one-worker pool, so a file that kills its worker becomes that file's ``error``
    record and costs no other file (issue 8's isolation, across processes).
    """

    CHUNK = 8

    def __init__(self, jobs: int, spec: LabSpec, roster, generated: str, assigned=None):
        import concurrent.futures as cf
        import multiprocessing

        self._cf = cf
        self._args = (spec.source, spec.path, roster, generated, assigned or {})
        self._context = multiprocessing.get_context("spawn" if sys.platform == "win32" else "fork")
        self.jobs = jobs
        self.window = 2 * jobs  # chunks in flight: each worker has the next one waiting
        self._executor = self._new(jobs)

    def _new(self, workers: int):
        return self._cf.ProcessPoolExecutor(workers, mp_context=self._context, initializer=_worker_init,
                                            initargs=self._args)

    def _chunks(self, items):
        chunk = []
        for item in items:
            chunk.append(item)
            if len(chunk) == self.CHUNK:
                yield chunk
                chunk = []
        if chunk:
            yield chunk

    def map(self, items):
        """Yield (item, _Graded or None for a skipped file) in input order."""
        from collections import deque

        pending: deque = deque()
        chunks = self._chunks(items)
        exhausted = False
        while True:
            while not exhausted and len(pending) < self.window:
                chunk = next(chunks, None)
                if chunk is None:
                    exhausted = True
                    break
                pending.append((chunk, self._submit(chunk)))
            if not pending:
                return
            chunk, future = pending.popleft()
            yield from zip(chunk, self._result(chunk, future, pending))

    def _submit(self, chunk):
        try:
            return self._executor.submit(_worker_grade_chunk, chunk)
        except self._cf.process.BrokenProcessPool:
            self._executor = self._new(self.jobs)
            return self._executor.submit(_worker_grade_chunk, chunk)

    def _result(self, chunk, future, pending) -> list:
        try:
            return future.result()
        except self._cf.process.BrokenProcessPool:
            # Grade this chunk's files and every other one in flight alone; then carry on with a fresh pool.
            graded = self._each_alone(chunk)
            for i, (other, _) in enumerate(pending):
                pending[i] = (other, _Done(self._each_alone(other)))
            self._executor.shutdown(wait=False, cancel_futures=True)
            self._executor = self._new(self.jobs)
            return graded

    def _each_alone(self, chunk) -> list:
        return [None if isinstance(item, Skipped) else self._alone(item) for item in chunk]

    def _alone(self, item) -> _Graded:
        with self._new(1) as solo:
            try:
                return solo.submit(_worker_grade, item).result()
            except self._cf.process.BrokenProcessPool:
                record = unreadable_record(item.source, "labcheck's worker process died on this file (a fault in "
                                                        f"labcheck, not in the file); see {ERROR_LOG}")
                record.update(status="error", sheet=None)
                return _Graded(record, traceback=f"{item.source}\nthe worker process grading this file died "
                                                 "(killed, or a crash outside Python)")

    def close(self) -> None:
        self._executor.shutdown(wait=True, cancel_futures=True)


class _Done:
    """A result already at hand, shaped like a future."""

    def __init__(self, value):
        self._value = value

    def result(self):
        return self._value


class _SectionRun:
    def __init__(self, spec: LabSpec, out: Path, staging: Path, roster: Roster | None, progress, jobs: int = 1,
                 keep: str = "latest", assigned: dict[str, str] | None = None):
        self.spec, self.out, self.staging, self.progress = spec, out, staging, progress
        self.generated = run_time().strftime("%Y-%m-%d %H:%M UTC")
        self.roster = roster
        self.keep = keep
        self.kept: dict[str, tuple] = {}  # student id -> (rank, row number, submission) of the file kept so far
        self.superseded: set[int] = set()  # row numbers of files another file of the same student replaces
        self.assigned = assigned or {}  # a course's: file -> the student the instructor credited it to
        self.grader = _FileGrader(spec, roster, self.generated, self.assigned)
        self.adjustments: dict[str, list[dict]] | None = None  # a course's: student id -> the instructor's adjustments
        self.renderer = self.grader.renderer  # one set of compiled templates for the sheets and the pages
        self.run = RunSummary(out)
        self.seen_ids: dict[str, int] = {}  # student id -> its first file's number (the file named on a repeat)
        self.first_sources: list[str] = []  # the file of each distinct student id, once
        self.used_sheet_names: set[str] = set()
        self.jobs = jobs if spec.source else 1  # a spec built in memory cannot be sent to a worker

    def _graded_in_order(self, items):
        """(item, _Graded or None for a skipped file), in input order, from this process or the workers."""
        if self.jobs <= 1:
            for item in items:
                yield item, None if isinstance(item, Skipped) else self.grader.grade(item)
            return
        pool = _Pool(self.jobs, self.spec, self.roster, self.generated, self.assigned)
        try:
            yield from pool.map(items)
        finally:
            pool.close()

    def grade(self, inputs, roster, limits: Limits) -> RunSummary:
        spec, run, staging = self.spec, self.run, self.staging
        exclude = {self.out.resolve(), staging.resolve(), _previous(self.out).resolve()}
        if roster:
            exclude.add(Path(roster).resolve())
        writer = ResultsWriter(staging / "results.json", spec)
        spool = open(staging / _SPOOL, "w+", encoding="utf-8")  # gradebook rows and verdicts, until duplicates are settled
        gradebook = None
        try:
            summaries, skipped, evidence = [], [], []
            count = 0
            items = iter_submissions(inputs, limits, exclude=exclude, parse=False)  # parsed where graded
            for item, graded in self._graded_in_order(items):
                count += 1
                if self.progress:
                    self.progress(count, item.source)
                if isinstance(item, Skipped):
                    skipped.append({"file": item.source, "reason": item.reason})
                    run.n_skipped += 1
                    continue
                run.n_files += 1
                outcome = self._finish(item, graded, len(summaries))
                if outcome.sheet_html is not None:
                    _write_text(staging / "feedback" / outcome.sheet_name, outcome.sheet_html)
                if outcome.evidence is not None:
                    evidence.append((len(summaries), outcome.evidence))
                writer.add(outcome.text)
                spool.write(json.dumps([outcome.gradebook, outcome.verdicts], ensure_ascii=False) + "\n")
                summaries.append(outcome.summary)
                self._count(outcome.summary)
            if run.n_files == 0:
                where = ", ".join(str(i) for i in inputs)
                extra = f" (only {run.n_skipped} clutter file(s))" if run.n_skipped else ""
                raise InputError(f"found no submission files in {where}{extra}; nothing graded")
            superseded = self._superseded_list(summaries)
            adjusted = self.adjustments is not None
            gradebook = GradebookWriter(staging / "gradebook.csv", spec, adjusted)
            tally = StepTally()
            spool.seek(0)
            for number, line in enumerate(spool):  # one row per student: a superseded file's row is left out
                if number not in self.superseded:
                    row, verdicts = json.loads(line)
                    gradebook.add(row)
                    tally.add(verdicts)
            if self.roster is not None:
                present = {s["student_id"] for s in summaries if s["student_id"]}
                for r in self.roster.entries:
                    if r.student_id not in present:
                        rec = missing_record(r.student_id, r.name)
                        rec["sheet"] = None
                        writer.add(record_json(rec))
                        gradebook.add(gradebook_row(rec, spec, adjusted))
                        summaries.append(_summary(rec, spec))
                        run.n_missing += 1
            gradebook.close()
            leads = worded(find_leads([e for n, e in evidence if n not in self.superseded]))
            run.n_leads = len(leads)
            _write_text(staging / "integrity.json", json.dumps(
                {"lab": spec.id, "caveat": CAVEAT, "false_alarm_rate_per_test": P_LEAD, "leads": leads},
                indent=1, ensure_ascii=False))
            _write_text(staging / "integrity.html", self.renderer.integrity(leads, len(evidence)))
            with open(staging / "section.html", "w", encoding="utf-8") as fh:  # streamed: no whole page in memory
                fh.writelines(self.renderer.section_chunks(summaries, skipped, len(leads), tally))
            if run.internal_errors:
                _write_text(staging / ERROR_LOG, _error_log(run.internal_errors))
            graded = [s for s in summaries if s["status"] == "graded" and s["max_score"] and not s["superseded"]]
            if graded:
                percents = [100.0 * s["score"] / s["max_score"] for s in graded]
                run.mean_percent = sum(percents) / len(percents)
                run.n_counted = len(percents)
                run.n_pass = sum(p >= 100.0 * spec.pass_fraction - 1e-9 for p in percents)
            completion = {"complete": True, "labcheck_version": __version__,
                          "finished": run_time().isoformat(timespec="seconds"), "counts": run.counts(),
                          "integrity_leads": run.n_leads, "exit_status": run.exit_code}
            tail = {"skipped": skipped}
            if superseded:
                tail["superseded"] = superseded
            tail["run"] = completion
            writer.close(tail)  # the completion record is written last
        except BaseException:
            writer.abandon()
            if gradebook is not None:
                gradebook.close()
            raise
        finally:
            spool.close()
            (staging / _SPOOL).unlink(missing_ok=True)
        return run

    def _superseded_list(self, summaries: list) -> list[dict]:
        """Mark the files another file of the same student replaces (by the keep policy); list them."""
        listed = []
        kept_file = {sid: summaries[number]["submission"] for sid, (_, number) in self.kept.items()}
        for number in sorted(self.superseded):
            s = summaries[number]
            s.superseded = kept_file[s["student_id"]]
            listed.append({"submission": s["submission"], "student_id": s["student_id"], "kept": s.superseded,
                           "policy": self.keep})
        self.run.n_superseded = len(listed)
        return listed

    def _count(self, summary: dict) -> None:
        status = summary["status"]
        if status == "graded":
            self.run.n_graded += 1
        elif status == "wrong_lab":
            self.run.n_wrong_lab += 1
        elif status == "error":
            self.run.n_errors += 1
        else:
            self.run.n_unreadable += 1
        self.run.n_unmatched += bool(summary.get("unmatched"))
        self.run.n_reconciled += bool(summary.get("identity"))

    def _process(self, item: RawSubmission) -> _Outcome:
        """Grade one input here and finish it (used by the tests and ``--jobs 1``)."""
        return self._finish(item, self.grader.grade(item))

    def _finish(self, item: RawSubmission, graded: _Graded, number: int | None = None) -> _Outcome:
        """The in-order part: identity against the roster and the files before, the sheet's name, the JSON.

        Inside one guard too: a fault here is this file's, never the batch's.
        """
        spec = self.spec
        try:
            record = graded.record
            if graded.traceback:
                self.run.internal_errors.append(graded.traceback)
            html, sheet, evidence = graded.html, None, graded.evidence
            if record["status"] == "graded":
                before = (record["student_id"], record["name"], len(record["flags"]))
                self._resolve_identity(record, item)
                mine = (self.adjustments or {}).get(record["student_id"])
                if mine:
                    record["adjustments"] = worded(apply_adjustments(record, mine))
                if mine or (record["student_id"], record["name"], len(record["flags"])) != before:
                    # The sheet shows the identity and its flags: render it again with them (rare).
                    self.grader.render(graded)
                    html = graded.html
                    if evidence is not None:
                        evidence.key, evidence.name = record["student_id"], record["name"] or ""
                if graded.render_traceback:
                    self.run.internal_errors.append(graded.render_traceback)
                    record["flags"].append({"row": None, "item": "", "value": "",
                                            "message": "labcheck could not render this sheet; the instructor has the details"})
                sheet = sheet_file_name(record["student_id"], self.used_sheet_names)
                record["sheet"] = f"feedback/{sheet}" if html is not None else None
            if number is not None:
                self._keep_one(record, item, number)
            return _Outcome(record_json(record), _summary(record, spec), evidence, html, sheet if html else None,
                            gradebook_row(record, spec, self.adjustments is not None), _verdicts(record))
        except Exception:
            self.run.internal_errors.append(f"{item.source}\n{traceback.format_exc()}")
            record = unreadable_record(item.source, "labcheck failed on this file (a fault in labcheck, not in the "
                                                    f"file); the traceback is in {ERROR_LOG}")
            record.update(status="error", sheet=None)
            return _Outcome(record_json(record), _summary(record, spec),
                            gradebook=gradebook_row(record, spec, self.adjustments is not None))

    def _resolve_identity(self, record: dict, item: RawSubmission) -> None:
        """A repeat of a student id is flagged here (the roster was matched in :func:`_identify`)."""
        sid = record["student_id"]
        if sid in self.seen_ids:
            first = self.first_sources[self.seen_ids[sid]]
            record["flags"].append({"row": None, "item": "student_id", "value": sid,
                                    "message": f"another submission has the same student_id ({first}); "
                                               f"one is kept by the '{self.keep}' policy"})
        else:
            self.seen_ids[sid] = len(self.first_sources)
            self.first_sources.append(record["submission"])

    def _keep_one(self, record: dict, item, number: int) -> None:
        """Of one student's files, keep one by the policy; the others are superseded (listed, not counted)."""
        sid = record.get("student_id")
        if not sid or record["status"] in ("unreadable", "error") and not record.get("identity"):
            return  # an unreadable file with no id of its own belongs to nobody yet
        percent = (record["score"] / record["max_score"]) if record.get("score") is not None and record.get("max_score") else None
        # A graded file always outranks one that could not be graded: a broken re-upload never hides a grade.
        rank = ((record.get("identity") or {}).get("how") == "instructor", record["status"] == "graded", keep_rank(self.keep, item.source, getattr(item, "modified", None),
                                                        number, percent))
        if sid not in self.kept:
            self.kept[sid] = (rank, number)
        elif rank > self.kept[sid][0]:
            self.superseded.add(self.kept[sid][1])
            self.kept[sid] = (rank, number)
        else:
            self.superseded.add(number)


def _identify(record: dict, source: str, roster: Roster | None, assigned: dict | None = None) -> None:
    """Who the record belongs to: the instructor's assignment, the roster's reconciliation, else the file's
    name (flagged)."""
    if assigned and source in assigned and roster is not None and assigned[source] in roster:
        entry = roster[assigned[source]]
        written = record.get("student_id") or ""
        record["student_id"], record["name"] = entry.student_id, record.get("name") or entry.name
        record["identity"] = {"how": "instructor", "written": written, "credited": entry.student_id,
                              "detail": f"credited to {entry.student_id} by your instructor"}
        record["flags"].append({"row": None, "item": "student_id", "value": written,
                                "message": record["identity"]["detail"]})
        return
    reconcile(record, source, roster)
    if not record["student_id"] and record["status"] == "graded":
        stem = PurePosixPath(source).stem
        record["student_id"] = safe_id(stem)
        record["flags"].append({"row": None, "item": "student_id", "value": "",
                                "message": f"no student_id given; the file name is used ({record['student_id']})"})
        if roster is not None:
            record["unmatched"] = True
            record["flags"].append({"row": None, "item": "student_id", "value": record["student_id"],
                                    "message": "this student_id is not on the roster"})


def _error_log(errors: list[str]) -> str:
    head = (f"labcheck {__version__}: faults of labcheck's own, one block per file (for the instructor; "
            "please report them). The files' students are listed with status 'error'.\n")
    return head + "".join(f"\n{'=' * 72}\n{e.rstrip()}\n" for e in errors)


# Names Windows reserves for devices, with any extension (CON.html cannot be opened there).
_RESERVED_NAMES = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(10)), *(f"lpt{i}" for i in range(10)),
                   "com¹", "com²", "com³", "lpt¹", "lpt²", "lpt³"}


def sheet_file_name(student_id: str, used: set[str]) -> str:
    """A sheet file name from a student id: safe on every common system, unique (case-insensitively) in ``used``."""
    base = safe_id(student_id)
    if base.split(".")[0].lower() in _RESERVED_NAMES:
        base = f"id-{base}"
    name, n = f"{base}.html", 2
    while name.lower() in used:
        name = f"{base}-{n}.html"
        n += 1
    used.add(name.lower())
    return name


class StepTally:
    """The section's verdicts and diagnoses per step, counted as records come (nothing kept per student)."""

    def __init__(self):
        self.verdicts: dict = {}
        self.diagnoses: dict = {}

    def add(self, verdicts) -> None:
        for key, verdict, diagnosis in verdicts:
            self.verdicts.setdefault(key, Counter())[verdict] += 1
            if diagnosis is not None:
                self.diagnoses.setdefault(key, Counter())[diagnosis] += 1


def _verdicts(record: dict) -> tuple:
    return tuple((s["id"], s["verdict"], s["diagnosis"]["label"] if s["diagnosis"] else None)
                 for s in record.get("steps", []))


class Summary:
    """The slim part of a record the section summary needs, kept for every student (about 200 bytes
    plus its strings: a department's 100,000 fit in a few tens of MB).  Read like a dict by the renderer."""

    __slots__ = ("student_id", "name", "group", "submission", "status", "score", "max_score", "error", "n_flags",
                 "unmatched", "results", "sheet", "superseded", "identity")

    def __init__(self, **fields):
        for key in self.__slots__:
            setattr(self, key, fields.get(key))

    def __getitem__(self, key):
        return getattr(self, key)

    def get(self, key, default=None):
        value = getattr(self, key, None)
        return default if value is None else value


def _summary(record: dict, spec: LabSpec) -> Summary:
    """The slim part of a record the section summary needs."""
    results = {}  # method -> (recomputed result, its reference, unit, sigma) for the section's accuracy plot
    for mid, acc in record.get("accuracy", {}).items():
        results[mid] = (acc["recomputed"], acc["reference"], acc["unit"], acc.get("sigma"))
    status = record["status"]
    return Summary(
        student_id=record.get("student_id") or "",
        name=record.get("name") or "",
        group=record.get("group") or "",
        submission=record.get("submission"),
        status=status,
        score=record.get("score"),
        max_score=record.get("max_score"),
        error=record.get("error") if status != "graded" else None,
        n_flags=len(record.get("flags", [])),
        unmatched=bool(record.get("unmatched", False)),
        identity=(record.get("identity") or {}).get("how"),
        results=results or None,
        sheet=record.get("sheet"),
    )
