import pytest
"""labcheck tune: the sweep moves exactly the values it should, and writes only when asked."""


from labcheck.cli.main import main
from labcheck.reading.ingest import read_rows
from labcheck.reading.submission import normalise
from labcheck.grading.tune import tune

from conftest import csv_bytes, good_dip_rows


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


@pytest.mark.parametrize("lab", ["horizon_dip", "taped_baseline"])
def test_tune_figures_equal_full_regrades_at_every_sweep_point(lab):
    # Issue 12: tune re-judges stored values instead of regrading; at every sweep point its counts,
    # mean score and passes must equal those of a full regrade with that one tolerance changed.
    from dataclasses import replace

    from labcheck.demo import SECTIONS
    from labcheck.grading.grade import grade_submission
    from labcheck.report.words import worded
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec
    from labcheck.grading.tune import MULTIPLIERS, _scaled

    spec = load_spec(shipped_spec(lab))
    section = next(s for s in SECTIONS if s.lab == lab)
    subs = [normalise(read_rows(csv_bytes(g.rows), f"{g.number}.csv"), spec) for g in section.generate()
            if g.number not in section.unreadable]
    report = tune(spec, subs)
    pass_pct = 100 * spec.pass_fraction
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
