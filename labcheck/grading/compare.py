"""Compare two grading runs (``labcheck diff``): whose grade moved, on which steps.

Works on the ``results.json`` of each run; nothing is recomputed.  Students
are matched by ``student_id`` (or by the submission's file name when a
record has no id).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["StudentChange", "RunDiff", "diff_runs", "load_results"]


class ResultsError(Exception):
    """A results.json cannot be read (exit status 2)."""


@dataclass
class StudentChange:
    key: str
    name: str
    old_score: float | None
    new_score: float | None
    old_status: str | None
    new_status: str | None
    steps: list[dict] = field(default_factory=list)  # {"id", "old_verdict", "new_verdict", "old_points", "new_points"}

    @property
    def delta(self) -> float | None:
        if self.old_score is None or self.new_score is None:
            return None
        return round(self.new_score - self.old_score, 3)


@dataclass
class RunDiff:
    old_lab: str
    new_lab: str
    spec_changed: bool
    changed: list[StudentChange]
    unchanged: int
    only_old: list[str]
    only_new: list[str]


def load_results(folder_or_file: str | Path) -> dict:
    p = Path(folder_or_file)
    if p.is_dir():
        p = p / "results.json"
    try:
        return json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ResultsError(f"{p}: no results.json here (give a folder written by labcheck grade)") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ResultsError(f"{p}: not a readable results.json ({exc})") from None


def _key(rec: dict) -> str:
    return rec.get("student_id") or f"file:{rec.get('submission')}"


def _parts(rec: dict) -> dict:
    """Points per graded part: steps, accuracy per method, quality."""
    parts = {s["id"]: (s["verdict"], s["points"]) for s in rec.get("steps", [])}
    for mid, acc in (rec.get("accuracy") or {}).items():
        parts[f"accuracy:{mid}"] = ("", acc["points"])
    if rec.get("quality_score"):
        parts["quality"] = ("", rec["quality_score"]["points"])
    return parts


def _counted(results: dict) -> list[dict]:
    """The records that count: a file another file of the same student superseded is left out."""
    superseded = {s["submission"] for s in results.get("superseded", [])}
    return [r for r in results.get("submissions", []) if r.get("submission") not in superseded]


def diff_runs(old: dict, new: dict) -> RunDiff:
    """Every student whose status, score or any step's verdict or points differ between the runs."""
    old_by = {_key(r): r for r in _counted(old)}
    new_by = {_key(r): r for r in _counted(new)}
    changed, unchanged = [], 0
    for key in [k for k in old_by if k in new_by]:
        a, b = old_by[key], new_by[key]
        pa, pb = _parts(a), _parts(b)
        steps = []
        for part in list(dict.fromkeys(list(pa) + list(pb))):
            va, vb = pa.get(part, (None, None)), pb.get(part, (None, None))
            if va != vb:
                steps.append({"id": part, "old_verdict": va[0], "new_verdict": vb[0],
                              "old_points": va[1], "new_points": vb[1]})
        if steps or a.get("status") != b.get("status") or a.get("score") != b.get("score"):
            changed.append(StudentChange(key, b.get("name") or a.get("name") or "", a.get("score"), b.get("score"),
                                         a.get("status"), b.get("status"), steps))
        else:
            unchanged += 1
    changed.sort(key=lambda c: (-(abs(c.delta) if c.delta is not None else 1e9), c.key))
    return RunDiff(old.get("lab", ""), new.get("lab", ""), old.get("spec_sha256") != new.get("spec_sha256"),
                   changed, unchanged, sorted(k for k in old_by if k not in new_by),
                   sorted(k for k in new_by if k not in old_by))
