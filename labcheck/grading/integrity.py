"""Integrity leads for the instructor: patterns worth a second look, never findings.

Each lead names the evidence and a p-value or a distance.  Most have
innocent explanations (groups that measured side by side, a shared data set,
rounding habits), which is why they go to the instructor only
(``integrity.html``, ``integrity.json``) and never to a student's sheet.

Leads:

* ``shared_readings``: two submissions whose raw observations, as written,
  are identical or nearly so (Jaccard similarity of their readings ≥ 0.8, at
  least 4 readings in common), beyond the items the spec declares shared.
  Candidate pairs come from an inverted index of their rarer readings, so a
  department-sized batch is not compared pair by pair; the similarity of a
  candidate pair is then computed over all its readings.
* ``digit_preference``: the last written digits of a submission's raw
  readings (at least 20) differ from uniform (chi-square, p < 0.001).
* ``scatter_too_small``: repeated readings scatter far less than the
  instrument allows (chi-square lower tail, p < 0.001).
* ``too_close_to_reference``: a result closer to the reference than its
  propagated uncertainty makes plausible: P(|Z| ≤ |z|) < 0.001, i.e. within
  0.00125 σ.
"""

from __future__ import annotations

import hashlib
import math
import re
from array import array
from collections import Counter, defaultdict
from dataclasses import dataclass, field

from labcheck.base.phrase import Number, phrase
from labcheck.reductions.stats import terminal_digit_test

__all__ = ["Evidence", "collect_evidence", "find_leads", "P_LEAD", "CAVEAT"]

P_LEAD = 0.001  # each test's false-alarm rate per submission
JACCARD_LEAD = 0.8
MIN_SHARED = 4
CAVEAT = ("These are leads for review, not findings. Groups who measured side by side, shared a data set, "
          "or round their readings the same way can trigger them innocently. Talk with the students before "
          "drawing any conclusion, and follow your institution's academic-integrity procedure.")
_LAST_DIGIT = re.compile(r"(\d)\D*$")


@dataclass
class Evidence:
    """What the integrity screen keeps of one graded submission (small: kept for the whole batch)."""

    key: str
    name: str
    readings: tuple  # (item, value, k-th occurrence) as written, each as a 64-bit hash (8 bytes kept)
    digits: bytes  # the last written digit of each raw reading
    min_p_low: float | None
    z_to_reference: dict = field(default_factory=dict)  # method -> (value − ref)/σ


def collect_evidence(record: dict, raw_rows, shared: set[str]) -> Evidence:
    """The evidence of one graded submission: its readings as written and its test statistics."""
    seen = Counter()
    tokens, digits = [], []
    for row in raw_rows:
        if row.part not in ("observation", "observations", "obs") or not row.value or row.item in shared:
            continue
        token = (row.item, row.value.strip())
        seen[token] += 1
        tokens.append(_token_hash(f"{token[0]}={token[1]}#{seen[token]}"))
        m = _LAST_DIGIT.search(row.value.strip())
        if m and re.search(r"\d", row.value):
            digits.append(int(m.group(1)))
    p_lows = [q.get("p_low") for q in record.get("quality", []) if q.get("p_low") is not None]
    z = {}
    for mid, acc in (record.get("accuracy") or {}).items():
        if acc.get("sigma") and acc.get("recomputed") is not None and acc.get("reference") is not None:
            z[mid] = (acc["recomputed"] - acc["reference"]) / acc["sigma"]
    return Evidence(record.get("student_id") or record.get("submission") or "", record.get("name") or "",
                    array("q", tokens), bytes(digits), min(p_lows) if p_lows else None, z)


def _token_hash(token: str) -> int:
    """A reading token as a signed 64-bit hash: 8 bytes a reading for the whole section.  Two different
    readings share one with probability 2^-64 per pair, far below any section's number of pairs' inverse."""
    return int.from_bytes(hashlib.blake2b(token.encode("utf-8"), digest_size=8).digest(), "little", signed=True)


def _normal_cdf(x: float) -> float:
    return 0.5 * (1 + math.erf(x / math.sqrt(2)))


def similar_pairs(token_lists, threshold: float, min_shared: int = 1) -> list[tuple[int, int, int, int]]:
    """Every pair (i, j, shared, union), i < j, whose token sets have Jaccard similarity ≥ ``threshold`` and
    share at least ``min_shared`` tokens: exactly the pairs a comparison of all pairs finds, in near-linear time.

    Prefix filtering (S. Chaudhuri, V. Ganti, R. Kaushik 2006, "A primitive operator for similarity joins in
    data cleaning", ICDE; R. Bayardo, Y. Ma, R. Srikant 2007, "Scaling up all pairs similarity search", WWW):
    with every set's tokens sorted rarest first, two sets with J ≥ t share a token within the first
    |x| − ⌈t·|x|⌉ + 1 tokens of each, so only those prefixes are indexed.  A size filter (t·|x| ≤ |y| ≤ |x|/t)
    prunes more; every candidate is then verified exactly.
    """
    sets = [frozenset(t) for t in token_lists]
    frequency: dict = defaultdict(int)
    for s_ in sets:
        for t in s_:
            frequency[t] += 1
    rank = {t: i for i, t in enumerate(sorted(frequency, key=lambda t: (frequency[t], str(t))))}
    index: dict = defaultdict(list)  # token -> records whose prefix holds it, in increasing size order
    order = sorted(range(len(sets)), key=lambda i: (len(sets[i]), i))
    found = []
    for i in order:
        x = sets[i]
        n = len(x)
        if n < min_shared or n == 0:
            continue
        prefix = sorted(x, key=rank.__getitem__)[: n - math.ceil(threshold * n - 1e-9) + 1]
        candidates = set()
        for t in prefix:
            for j in index[t]:
                if len(sets[j]) >= threshold * n - 1e-9:  # sizes are visited in increasing order
                    candidates.add(j)
            index[t].append(i)
        for j in candidates:
            shared = len(x & sets[j])
            union = n + len(sets[j]) - shared
            if shared >= min_shared and shared >= threshold * union - 1e-9:
                found.append((min(i, j), max(i, j), shared, union))
    return sorted(found)


def find_leads(evidence: list[Evidence]) -> list[dict]:
    """All leads in a section, most telling first."""
    leads = []
    for a, b, shared, union in similar_pairs([ev.readings for ev in evidence], JACCARD_LEAD, MIN_SHARED):
        ea, eb = evidence[a], evidence[b]
        jaccard = shared / union
        leads.append({
            "kind": "shared_readings", "students": [ea.key, eb.key], "names": [ea.name, eb.name],
            "measure": phrase("Jaccard similarity {j}", j=Number(jaccard, ".2f")), "p": None,
            "distance": round(1 - jaccard, 3),
            "evidence": f"{shared} of their {union} distinct readings are identical as written "
                        f"(items not declared shared by the lab).",
        })
    for ev in evidence:
        if len(ev.digits) >= 20:
            t = terminal_digit_test(list(ev.digits))
            if t["p"] is not None and t["p"] < P_LEAD:
                top = sorted(range(10), key=lambda d: -t["counts"][d])[:2]
                leads.append({
                    "kind": "digit_preference", "students": [ev.key], "names": [ev.name],
                    "measure": phrase("chi-square {x} on 9 degrees of freedom", x=Number(t["statistic"], ".1f")),
                    "p": t["p"], "distance": None,
                    "evidence": f"last digits of {t['n']} raw readings: {t['counts']} (digits {top[0]} and {top[1]} "
                                "most often); honest readings end in every digit about equally.",
                })
        if ev.min_p_low is not None and ev.min_p_low < P_LEAD:
            leads.append({
                "kind": "scatter_too_small", "students": [ev.key], "names": [ev.name],
                "measure": "chi-square test of the readings' variance, lower tail", "p": ev.min_p_low, "distance": None,
                "evidence": "repeated readings agree far more closely than the instrument's standard deviation allows.",
            })
        for mid, z in ev.z_to_reference.items():
            p = 2 * _normal_cdf(abs(z)) - 1  # P(|Z| ≤ |z|)
            if p < P_LEAD:
                leads.append({
                    "kind": "too_close_to_reference", "students": [ev.key], "names": [ev.name],
                    "measure": phrase("{z} σ from the reference ({method})", z=Number(abs(z), ".5f"), method=mid),
                    "p": p, "distance": abs(z),
                    "evidence": "the result lies closer to the reference value than its propagated uncertainty "
                                "makes plausible; were the observations adjusted to the known answer?",
                })
    order = {"shared_readings": 0, "too_close_to_reference": 1, "scatter_too_small": 2, "digit_preference": 3}
    leads.sort(key=lambda l: (order[l["kind"]], l["p"] if l["p"] is not None else l["distance"] or 0))
    return leads
