"""Tell when a submission was made from another shipped lab's template.

A group that filled in the taped-baseline template and uploaded it to the
dip lab would otherwise be graded 0 with dozens of "unknown observation"
lines.  When most of a submission's observation and result items are
unknown to the lab being graded and most of those belong to one other
shipped lab, the submission gets the status ``wrong_lab`` and a message
naming that lab instead of a grade.
"""

from __future__ import annotations

from functools import lru_cache

from labcheck.base.resources import specs_dir
from labcheck.model.spec import LabSpec, load_spec
from labcheck.reading.submission import Submission, observation_keys, result_keys

__all__ = ["wrong_lab_message"]

MIN_UNKNOWN = 3  # fewer unknown items than this are typos, not another template
MATCH_SHARE = 0.6  # share of the unknown items the other lab must have


@lru_cache(maxsize=1)
def _shipped_items() -> tuple[tuple[str, str, frozenset[str]], ...]:
    labs = []
    for f in sorted(specs_dir().glob("*.toml")):
        spec = load_spec(f)
        labs.append((spec.id, spec.title, frozenset(observation_keys(spec)) | frozenset(result_keys(spec))))
    return tuple(labs)


def wrong_lab_message(sub: Submission, spec: LabSpec) -> str | None:
    """A message naming the shipped lab whose template ``sub`` looks like, or None."""
    unknown = sub.unknown_items
    if len(unknown) < MIN_UNKNOWN or len(unknown) <= sub.known_rows:
        return None
    best, best_hits = None, 0
    for lab_id, title, items in _shipped_items():
        if lab_id == spec.id:
            continue
        hits = sum(1 for item in unknown if item in items)
        if hits > best_hits:
            best, best_hits = (lab_id, title), hits
    if best is None or best_hits < max(MIN_UNKNOWN, MATCH_SHARE * len(unknown)):
        return None
    lab_id, title = best
    return (f"this looks like the {lab_id} template ({title}), not the {spec.id} template: {best_hits} of its "
            f"{len(unknown)} unknown items belong to {lab_id}. Grade it with that lab's spec, or have the group fill "
            f"in the {spec.id} template (labcheck template {spec.id})")
