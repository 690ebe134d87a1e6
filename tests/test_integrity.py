"""Integrity leads on synthetic sections: known copies and fabrications are found; an honest
section raises no more leads than the tests' nominal false-alarm rate predicts."""

import random
import math

import pytest

from labcheck.demo.common import csv_bytes
from labcheck.demo.dip import dip_section
from labcheck.grading.grade import grade_submission
from labcheck.report.words import worded
from labcheck.reading.ingest import read_rows
from labcheck.grading.integrity import P_LEAD, collect_evidence, find_leads
from labcheck.reading.submission import normalise


def screen(spec, groups):
    evidence = []
    for g in groups:
        raw = read_rows(csv_bytes(g.rows), f"{g.student_id}.csv")
        rec = worded(grade_submission(normalise(raw, spec), spec))
        evidence.append(collect_evidence(rec, raw.rows, spec.shared_items))
    return worded(find_leads(evidence))


@pytest.fixture(scope="module")
def honest_200():
    return dip_section(n_groups=200, seed=4242, plant=False)


def test_an_honest_section_of_200_raises_few_leads(spec, honest_200):
    leads = screen(spec, honest_200)
    # Three statistical tests at p < 0.001 each over 200 groups: 0.6 false leads expected
    # (Poisson); more than 3 would happen by chance with probability 0.003.
    expected = 200 * 3 * P_LEAD
    assert expected == pytest.approx(0.6)
    assert len(leads) <= 3, leads


def test_known_copies_and_fabrications_are_found(spec, honest_200):
    groups = [g for g in honest_200[:60]]
    # Two copies: groups 11 and 31 hand in groups 10 and 30's observations (their own identity).
    for copier, source in ((11, 10), (31, 30)):
        c, s = groups[copier - 1], groups[source - 1]
        c.rows = [r for r in c.rows if r[0] == "identity"] + [r for r in s.rows if r[0] != "identity"]
    # One fabrication: group 45's dip readings all the same number.
    f = groups[44]
    value = next(r[2] for r in f.rows if r[1] == "dip_angle") if any(r[1] == "dip_angle" for r in f.rows) else None
    if value is None:  # a theodolite group: use the zenith readings instead
        value = next(r[2] for r in f.rows if r[1] == "horizon_zenith_angle")
        f.rows = [r if r[1] != "horizon_zenith_angle" else (r[0], r[1], value, r[3], r[4]) for r in f.rows]
    else:
        f.rows = [r if r[1] != "dip_angle" else (r[0], r[1], value, r[3], r[4]) for r in f.rows]
    leads = screen(spec, groups)
    pairs = {tuple(sorted(l["students"])) for l in leads if l["kind"] == "shared_readings"}
    assert (groups[9].student_id, groups[10].student_id) in pairs
    assert (groups[29].student_id, groups[30].student_id) in pairs
    assert any(l["kind"] == "scatter_too_small" and l["students"] == [groups[44].student_id] for l in leads)
    for l in leads:
        assert l["evidence"] and (l["p"] is not None or l["distance"] is not None)


def test_a_result_too_close_to_the_reference_is_a_lead():
    from labcheck.grading.integrity import Evidence

    close = Evidence("s1", "", (), (), None, {"dip": 0.0004})
    fine = Evidence("s2", "", (), (), None, {"dip": 0.3})
    leads = find_leads([close, fine])
    assert [l["students"] for l in leads] == [["s1"]]
    assert leads[0]["p"] == pytest.approx(2 * (0.5 * (1 + math.erf(0.0004 / math.sqrt(2)))) - 1)


def test_leads_never_reach_a_student_sheet(tmp_path):
    from labcheck.cli.main import main

    out = tmp_path / "demo"
    main(["demo", "--out", str(out), "--quiet"])
    sheet = (out / "horizon_dip" / "graded" / "feedback" / "b2150-016.html").read_text(encoding="utf-8")
    assert "integrity" not in sheet.lower() and "b2150-017" not in sheet
    assert "b2150-017" in (out / "horizon_dip" / "graded" / "integrity.html").read_text(encoding="utf-8")


def _brute_force(token_lists, threshold, min_shared):
    sets = [set(t) for t in token_lists]
    out = []
    for i in range(len(sets)):
        for j in range(i + 1, len(sets)):
            shared = len(sets[i] & sets[j])
            union = len(sets[i] | sets[j])
            if union and shared >= min_shared and shared / union >= threshold:
                out.append((i, j, shared, union))
    return out


@pytest.mark.parametrize("seed, copies", [(1, 0), (2, 0), (3, 12), (4, 40), (5, 3)])
def test_prefix_filtering_finds_exactly_the_brute_force_pairs(seed, copies):
    # Issue 12: candidate pairs by exact prefix filtering must equal a comparison of all pairs, on
    # seeded sections of unique readings with and without planted near-copies (some sharing only
    # readings common to many submissions, which the old inverted-index heuristic skipped).
    from labcheck.grading.integrity import JACCARD_LEAD, MIN_SHARED, similar_pairs

    rng = random.Random(seed)
    common = [f"dip_angle={v / 10:.1f}" for v in range(55, 65)]  # readings many honest groups write
    lists = []
    for _ in range(300):
        own = [f"r{rng.randrange(100_000)}" for _ in range(rng.randint(2, 12))]
        lists.append(own + rng.sample(common, rng.randint(0, 4)))
    for _ in range(copies):  # a near-copy: most readings of another submission, one or two changed
        src = list(rng.choice(lists))
        for _ in range(rng.randint(0, 2)):
            src[rng.randrange(len(src))] = f"x{rng.randrange(10**6)}"
        lists.append(src)
    lists.append(rng.sample(common, 6))
    lists.append(rng.sample(common, 6))  # two built only of common readings
    rng.shuffle(lists)
    assert similar_pairs(lists, JACCARD_LEAD, MIN_SHARED) == _brute_force(lists, JACCARD_LEAD, MIN_SHARED)
    for t in (0.5, 0.9, 1.0):
        assert similar_pairs(lists, t, 1) == _brute_force(lists, t, 1)
