"""Instructor adjustments applied to a graded record: pure data in, data out.

Grading layer: imports nothing of labcheck's above the standard library.

An adjustment is the instructor's, with a reason, and takes one of two forms
(docs/course.md, "Adjustments"):

* on a step (``step`` set): the step's points become ``points`` (0 to the step's
  maximum), in place of labcheck's;
* on the lab (``step`` None): ``points`` are added to the total (negative to deduct).

The adjusted total is kept between 0 and the lab's maximum.  Each adjustment
remembers the step's verdict and points when it was made (its basis); when a
later grading gives that step another verdict or other points, the adjustment
is still applied but marked ``changed`` for the instructor's review.
"""

from __future__ import annotations

from labcheck.base.phrase import Number, phrase

__all__ = ["apply_adjustments", "step_state"]


def step_state(record: dict, step_id: str) -> tuple[str, float, float] | None:
    """(verdict, points, max points) of a step in a graded record, or None when the record has no such step."""
    for s in record.get("steps", []):
        if s["id"] == step_id:
            return s["verdict"], float(s["points"]), float(s["max_points"])
    return None


def apply_adjustments(record: dict, adjustments: list[dict]) -> dict | None:
    """The adjusted result of a graded record, or None when there is nothing to apply.

    ``adjustments``: dicts with ``id``, ``step`` (or None), ``points``, ``reason``, and the basis
    ``basis_verdict`` / ``basis_points`` (None for a lab adjustment).  Returns
    ``{"score", "labcheck_score", "max_score", "items": [...]}``; each item says what was applied,
    labcheck's own points for the step now, and whether the step ``changed`` since the adjustment was made.
    Nothing is applied to a record that was not graded (its items say so).
    """
    if not adjustments:
        return None
    graded = record.get("status") == "graded" and record.get("max_score")
    items, total = [], 0.0
    for adj in adjustments:
        item = {"id": adj["id"], "step": adj.get("step"), "points": float(adj["points"]), "reason": adj["reason"],
                "applied": False, "changed": False, "change": None, "labcheck_points": None, "max_points": None,
                "label": None}
        if not graded:
            item["change"] = "not applied: this student has no graded submission in this run"
        elif adj.get("step"):
            state = step_state(record, adj["step"])
            if state is None:
                item["change"] = f"not applied: step {adj['step']} is not in this grading"
                item["changed"] = True
            else:
                verdict, points, most = state
                new = min(max(item["points"], 0.0), most)
                item.update(applied=True, labcheck_points=points, max_points=most, points=new,
                            label=next(s["label"] for s in record["steps"] if s["id"] == adj["step"]))
                total += new - points
                basis = (adj.get("basis_verdict"), adj.get("basis_points"))
                if basis != (None, None) and (basis[0] != verdict or abs(float(basis[1]) - points) > 1e-9):
                    item["changed"] = True
                    item["change"] = phrase("the step was {was} with {was_points} points when adjusted; labcheck now "
                                            "gives {now} with {now_points}", was=basis[0],
                                            was_points=Number(float(basis[1]), "g"), now=verdict,
                                            now_points=Number(points, "g"))
        else:
            item["applied"] = True
            total += item["points"]
        items.append(item)
    if not graded:
        return {"score": record.get("score"), "labcheck_score": record.get("score"),
                "max_score": record.get("max_score"), "items": items}
    score, most = float(record["score"]), float(record["max_score"])
    return {"score": round(min(max(score + total, 0.0), most), 6), "labcheck_score": score, "max_score": most,
            "items": items}
