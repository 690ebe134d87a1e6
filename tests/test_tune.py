import pytest
"""labcheck tune: the sweep moves exactly the values it should, and writes only when asked."""


from labcheck.cli.main import main
from labcheck.reading.ingest import read_rows
from labcheck.reading.submission import normalise
from labcheck.grading.tune import tune

from conftest import ARCMIN, csv_bytes, good_dip_rows, hz


def off_by(rows, key, factor):
    return [r if r[1] != key else (r[0], r[1], f"{float(r[2]) * factor:.6g}", r[3]) for r in rows]


def test_sweep_moves_a_step_at_the_right_multipliers(spec):
    # dip.radius_apparent 0.3 % off; current tolerance 0.5 %: wrong at ×¼ and ×½ (0.125 %, 0.25 %),
    # correct from ×1 (0.5 %) on.  A second, exact submission is correct throughout.
    subs = [normalise(read_rows(csv_bytes(rows), f"{i}.csv"), spec) for i, rows in
            enumerate([off_by(good_dip_rows(sid="a"), "dip.radius_apparent", 1.003), good_dip_rows(sid="b")])]
    report = tune(spec, subs)
    rows = {r.multiplier: r for r in report.steps["dip.radius_apparent"]}
    assert (rows[0.25].correct, rows[0.5].correct, rows[1.0].correct, rows[4.0].correct) == (1, 1, 2, 2)
    assert rows[0.25].wrong == 1 and rows[1.0].wrong == 0
    assert rows[0.25].mean_percent < rows[1.0].mean_percent


def test_tune_writes_only_when_asked(tmp_path, capsys, spec):
    from pathlib import Path

    (tmp_path / "in").mkdir()
    for sid in ("a", "b", "c"):
        (tmp_path / "in" / f"{sid}.csv").write_bytes(csv_bytes(good_dip_rows(sid=sid)))
    before = Path(spec.path).read_bytes()
    assert main(["tune", "horizon_dip", str(tmp_path / "in")]) == 0
    out = capsys.readouterr().out
    assert "<- current" in out and "Suggested bands" in out
    assert Path(spec.path).read_bytes() == before
    tuned = tmp_path / "tuned.toml"
    assert main(["tune", "horizon_dip", str(tmp_path / "in"), "--write", str(tuned)]) == 0
    text = tuned.read_text(encoding="utf-8")
    assert "# tuned by labcheck tune" in text and 'full_within = "2 sigma"' not in text
    assert main(["spec", "check", str(tuned)]) == 0


def test_tune_prints_the_tolerance_values_it_tried_and_counts_students(spec):
    # Issue 9: "0.02 arcmin ×0.25" instead of the value, and methods counted where students are meant.
    from labcheck.report.text import format_tune_report
    from labcheck.grading.tune import _scaled

    from labcheck.report.words import word

    assert word(_scaled(spec.steps["dip_mean"].tolerance, 0.25).text) == "0.005 arcmin"
    subs = [normalise(read_rows(csv_bytes(good_dip_rows(h=10 + i, sid=f"s{i}")), f"{i}.csv"), spec) for i in range(4)]
    report = tune(spec, subs)
    assert all(r.correct <= report.n for r in report.accuracy)  # at most one per student
    text = format_tune_report(report, spec)
    assert "0.005 arcmin" in text and "×0.25" not in text.split("0.005 arcmin")[1].split("\n")[0]
    assert "students with full points" in text


def _moved(rows, seed):
    """The rows with each observation's last digit moved by one with probability 1/2 (as the scale benchmark
    does): the reported steps no longer follow from the readings, so many are wrong or carried."""
    import random

    rng = random.Random(seed)
    out = []
    for r in rows:
        v = str(r[2]) if len(r) > 2 else ""
        if r[0] == "observation" and v[-1:].isdigit() and not any(c.isalpha() for c in v) and rng.random() < 0.5:
            r = (r[0], r[1], v[:-1] + str((int(v[-1]) + rng.choice((1, -1))) % 10), *r[3:])
        out.append(r)
    return out


@pytest.mark.parametrize("lab, moved", [("horizon_dip", False), ("taped_baseline", False),
                                        ("taped_baseline", True), ("trig_heighting", True)])
def test_tune_figures_equal_full_regrades_at_every_sweep_point(lab, moved):
    # Issue 12: tune re-judges stored values instead of regrading (and only from the swept step on); at
    # every sweep point its counts, mean score and passes must equal those of a full regrade with that one
    # tolerance changed.  "moved": readings moved under the reported values, so that verdicts before and
    # after the swept step are wrong or carried, and re-judging must follow them.
    from labcheck.demo import SECTIONS
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec

    spec = load_spec(shipped_spec(lab))
    if moved:  # half credit for a carried error, so that a carried step's verdict shows in the scores
        from dataclasses import replace

        spec = replace(spec, carried_fraction=0.5)
    section = next(s for s in SECTIONS if s.lab == lab)
    subs = [normalise(read_rows(csv_bytes(_moved(g.rows, g.number) if moved else g.rows), f"{g.number}.csv"), spec)
            for g in section.generate() if g.number not in section.unreadable]
    seen = _assert_equals_full_regrades(spec, subs)
    if moved:  # the moved sections exercise what they are for
        assert {"correct", "wrong", "carried"} <= seen, seen


def _assert_equals_full_regrades(spec, subs) -> set:
    """tune's figures at every sweep point equal those of a full regrade with that one tolerance changed;
    returns the verdicts seen."""
    from dataclasses import replace

    from labcheck.grading.grade import grade_submission
    from labcheck.grading.tune import MULTIPLIERS, _scaled
    from labcheck.report.words import worded

    report = tune(spec, subs)
    pass_pct = 100 * spec.pass_fraction
    seen: set = set()
    for key, rule in spec.steps.items():
        for m, row in zip(MULTIPLIERS, report.steps[key]):
            tried = replace(spec, steps={**spec.steps, key: replace(rule, tolerance=_scaled(rule.tolerance, m))})
            recs = [worded(grade_submission(sub, tried)) for sub in subs]
            verdicts = [s["verdict"] for r in recs for s in r["steps"] if s["id"] == key]
            pcts = [100 * r["score"] / r["max_score"] for r in recs if r["max_score"]]
            assert (row.correct, row.carried, row.wrong) == (verdicts.count("correct"), verdicts.count("carried"),
                                                              verdicts.count("wrong")), (key, m)
            assert row.mean_percent == pytest.approx(sum(pcts) / len(pcts), abs=1e-6), (key, m)
            assert row.n_pass == sum(p >= pass_pct - 1e-9 for p in pcts), (key, m)
            seen.update(verdicts)
    return seen


def test_a_swept_step_that_turns_correct_turns_the_carried_steps_after_it_correct(spec):
    # dip_mean reported 0.05 arcmin off the readings' mean (tolerance 0.02 arcmin): wrong at x1 and x2,
    # correct at x4.  The radius that follows from it is "carried" while dip_mean is wrong and "correct"
    # once it is not: sweeping dip_mean must judge the later steps again, not keep their verdicts.  Half
    # credit for a carried error (the shipped spec gives full credit, so that no score would show it).
    from dataclasses import replace

    spec = replace(spec, carried_fraction=0.5)
    rows = good_dip_rows()
    r_app = float(hz.radius_from_dip(12.0, 6.05 * ARCMIN)) / 1000
    fixed = {"dip_mean": "6.05", "dip.radius_apparent": f"{r_app:.1f}", "dip.radius": f"{0.87 * r_app:.1f}",
             "dip.radius_error_pct": f"{100 * (0.87 * r_app * 1000 - 6371008.8) / 6371008.8:.2f}"}
    rows = [(r[0], r[1], fixed.get(r[1], r[2]), *r[3:]) if r[0] == "result" else r for r in rows]
    subs = [normalise(read_rows(csv_bytes(rows), "a.csv"), spec)]
    report = tune(spec, subs)
    dip = {r.multiplier: r for r in report.steps["dip_mean"]}
    assert (dip[1.0].wrong, dip[4.0].correct) == (1, 1)
    assert dip[4.0].mean_percent > dip[2.0].mean_percent  # dip_mean's own points, and the carried steps' halves
    assert _assert_equals_full_regrades(spec, subs) >= {"wrong", "carried", "correct"}
