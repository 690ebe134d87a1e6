"""Lab spec validation: every error names the file, the key path and what was expected."""

import math
from pathlib import Path

import pytest

from labcheck.base.resources import shipped_spec, specs_dir
from labcheck.model.schema import key_names
from labcheck.model.spec import SpecError, load_spec, parse_spec

DOCS = Path(__file__).resolve().parent.parent / "docs" / "spec.md"


def spec_text(**replace):
    text = shipped_spec("horizon_dip").read_text(encoding="utf-8")
    for old, new in replace.items():
        assert old.replace("_", " ") in text or old in text
    return text


def test_every_shipped_spec_is_valid():
    files = sorted(specs_dir().glob("*.toml"))
    assert files
    for f in files:
        spec = load_spec(f)
        assert spec.safety and "solar filter" in spec.safety  # the usual cautions
        assert len(spec.sha256) == 64


def test_shipped_spec_values(spec):
    assert spec.constants_si["k"] == 0.13
    assert spec.constants_si["reference_radius"] == 6371008.8  # IUGG R1, Moritz (GRS80)
    assert list(spec.steps)[:2] == ["dip_mean", "dip.radius_apparent"]  # colliding ids prefixed
    assert spec.steps["dip.radius"].tolerance.relative == 0.005


def bad(text: str) -> SpecError:
    with pytest.raises(SpecError) as info:
        parse_spec(text.encode(), "my_lab.toml")
    return info.value


def base() -> str:
    return shipped_spec("horizon_dip").read_text(encoding="utf-8")


def test_bad_tolerance_names_key_path_and_expectation():
    err = bad(base().replace('tolerance = "0.02 arcmin"', 'tolerance = "quick"'))
    assert str(err).startswith("my_lab.toml: steps.dip_mean.tolerance: ")
    assert "expected a number with an optional unit" in str(err)


def test_percent_step_refuses_a_relative_tolerance():
    err = bad(base().replace('tolerance = "0.1 pp"', 'tolerance = "0.1 %"', 1))
    assert 'steps."dip.radius_error_pct".tolerance' in str(err)
    assert "percentage points" in str(err)


def test_missing_step_and_unknown_method_and_all_errors_at_once():
    text = base().replace('[steps."dip.radius"]\npoints = 2\ntolerance = "0.5 %"\n', "")
    text = text.replace('methods = ["dip", "hidden_height"]', 'methods = ["dip", "hidden_height", "astrolabe"]')
    err = bad(text)
    keys = [k for k, _ in err.problems]
    assert 'steps."dip.radius"' in keys
    assert "methods[2]" in keys
    assert "unknown method 'astrolabe'" in str(err)


def test_wrong_unit_kind_for_a_constant():
    err = bad(base().replace('reference_radius = "6371.0088 km"', 'reference_radius = "6371 arcmin"'))
    assert "constants.reference_radius" in str(err)
    assert "expected a length with a unit" in str(err)


def test_empty_safety_note_is_refused():
    import re

    text = re.sub(r'safety = """.*?"""', 'safety = "  "', base(), flags=re.S)
    assert "safety: must not be empty" in str(bad(text))


def test_not_toml():
    err = bad("id = ")
    assert "not valid TOML" in str(err)


def test_accuracy_bands_must_agree_and_widen():
    assert 'zero_beyond = "4 sigma"' in base()
    err = bad(base().replace('zero_beyond = "4 sigma"', 'zero_beyond = "1 sigma"'))
    assert "accuracy.zero_beyond: expected a band wider than full_within" in str(err)
    err = bad(base().replace('zero_beyond = "4 sigma"', 'zero_beyond = "1500 km"'))
    assert "must both be in % or in sigma, or both lengths" in str(err)


def test_sigma_bands_need_standard_deviations():
    import re

    text = re.sub(r"\nsigma = .*", "", base())
    text = text.replace('[uncertainty]\n', "").replace('k = "0.03"\n', "", 1)
    assert "bands in sigma need standard deviations" in str(bad(text))


def test_unknown_keys_are_reported():
    err = bad(base() + '\n[extras]\ncolour = "blue"\n')
    assert "extras: unknown key" in str(err)


def test_missing_file():
    with pytest.raises(SpecError, match="cannot read the file"):
        load_spec("/nonexistent/lab.toml")


def test_docs_cover_every_top_level_key():
    text = DOCS.read_text(encoding="utf-8")
    for key in key_names():
        assert f"`{key}`" in text, f"docs/spec.md does not document {key}"


# Each class of malformed spec found by probing (issue 8): refused with its key path, never a traceback.
MALFORMED = [
    ("points = inf", ("[steps.dip_mean]\npoints = 2", "[steps.dip_mean]\npoints = inf"),
     "steps.dip_mean.points", "expected a finite number"),
    ("points = nan", ("[steps.dip_mean]\npoints = 2", "[steps.dip_mean]\npoints = nan"),
     "steps.dip_mean.points", "expected a finite number"),
    ("negative step points", ("[steps.dip_mean]\npoints = 2", "[steps.dip_mean]\npoints = -2"),
     "steps.dip_mean.points", "expected 0 or more points"),
    ("negative accuracy points", ("points = 4\nfull_within", "points = -4\nfull_within"), "accuracy.points",
     "expected 0 or more points"),
    ("tolerance 1e400", ('tolerance = "0.02 arcmin"', 'tolerance = "1e400 arcmin"'),
     "steps.dip_mean.tolerance", "expected a finite number"),
    ("tolerance beyond any use", ('tolerance = "0.02 arcmin"', 'tolerance = "200 deg"'),
     "steps.dip_mean.tolerance", "accepts any value"),
    ("relative tolerance over 100 %", ('points = 2\ntolerance = "0.5 %"', 'points = 2\ntolerance = "500 %"'),
     'steps."dip.radius".tolerance', "accepts any value"),
    ("within_factor nan", ("[uncertainty]\n", "[uncertainty]\nwithin_factor = nan\n"),
     "uncertainty.within_factor", "expected a number above 1"),
    ("reported_points inf", ("[uncertainty]\n", "[uncertainty]\nreported_points = inf\n"),
     "uncertainty.reported_points", "expected 0 or more points"),
    ("a method as a table", ('methods = ["dip", "hidden_height"]', 'methods = [{ id = "dip" }, "hidden_height"]'),
     "methods[0]", "expected a method id string"),
    ("a method as a list", ('methods = ["dip", "hidden_height"]', 'methods = [["dip"], "hidden_height"]'),
     "methods[0]", "expected a method id string"),
    ("id with path characters", ('id = "horizon_dip"', 'id = "../../etc/passwd"'), "id", "snake_case"),
    ("id with markup", ('id = "horizon_dip"', 'id = "<b>dip</b>"'), "id", "snake_case"),
    ("min_readings huge", ("min_readings = 5", "min_readings = 1000000000"),
     "observations.dip_angle.min_readings", "from 1 to 100"),
]


@pytest.mark.parametrize("name, edit, key, message", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_specs_are_refused_with_their_key_path(name, edit, key, message):
    old, new = edit
    assert old in base(), f"the shipped spec changed: {old!r} not found"
    err = bad(base().replace(old, new, 1))
    assert key in [k for k, _ in err.problems], err.problems
    if message:
        assert message in dict(err.problems)[key]


def test_malformed_spec_on_the_command_line_is_exit_2_without_traceback(tmp_path, capsys):
    from labcheck.cli.main import main

    f = tmp_path / "bad.toml"
    f.write_text(base().replace('methods = ["dip", "hidden_height"]', 'methods = [{ id = "dip" }]'))
    assert main(["spec", "check", str(f)]) == 2
    err = capsys.readouterr().err
    assert "methods[0]" in err and "Traceback" not in err


def test_spec_reference_tables_are_generated_from_the_schema():
    """docs/spec.md's key tables are those labcheck/model/schema.py makes (regenerate with
    python -m labcheck.model.schema --docs docs/spec.md)."""
    from labcheck.model.schema import markdown_tables, render_docs

    text = DOCS.read_text(encoding="utf-8")
    for block in markdown_tables():
        assert f"<!-- schema:{block} -->" in text, block
    assert render_docs(text) == text, "docs/spec.md is stale"


def test_the_shipped_json_schema_is_current_and_judges_specs_as_labcheck_does():
    """lab_specs/spec.schema.json is generated from the schema; jsonschema (an independent validator) accepts
    every shipped spec and refuses the malformed ones that labcheck refuses for a declared limit."""
    import json
    import tomllib

    import jsonschema

    from labcheck.base.resources import specs_dir
    from labcheck.model.schema import json_schema, json_schema_text

    shipped = specs_dir() / "spec.schema.json"
    assert shipped.read_text(encoding="utf-8") == json_schema_text(), "regenerate: python -m labcheck.model.schema --json"
    schema = json.loads(shipped.read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    validator = jsonschema.Draft202012Validator(json_schema())
    for f in sorted(specs_dir().glob("*.toml")):
        errors = list(validator.iter_errors(tomllib.loads(f.read_text(encoding="utf-8"))))
        assert not errors, (f.name, [e.message for e in errors])
    for edit in [("min_readings = 5", "min_readings = 1000"), ('id = "horizon_dip"', 'id = "../x"'),
                 ("[steps.dip_mean]\npoints = 2", "[steps.dip_mean]\npoints = -2"),
                 ('title = ', 'page_size = "A5"\ntitle = '), ("[constants]", "[constantz]\n[constants]"),
                 ('[steps.dip_mean]\npoints = 2\ntolerance = "0.02 arcmin"', '[steps.dip_mean]\npoints = 2\ntolerance = "0.02 arcmin"\nweight = 1')]:
        text = base().replace(*edit, 1)
        assert text != base(), edit
        assert list(validator.iter_errors(tomllib.loads(text))), f"the JSON Schema accepts {edit[1]!r}"
        with pytest.raises(SpecError):
            parse_spec(text.encode(), "edited.toml")


# ---------------------------------------------------------------- Tolerance.first_match (labcheck tune)

from hypothesis import given, settings, strategies as st  # noqa: E402

_floats = st.floats(allow_nan=True, allow_infinity=True, width=64)
_sane = st.floats(min_value=-1e12, max_value=1e12, allow_nan=False)


@settings(max_examples=400, deadline=None)
@given(relative=st.one_of(st.none(), st.floats(min_value=0, max_value=1)),
       absolute=st.one_of(st.none(), st.floats(min_value=0, max_value=1e3)),
       reported=st.one_of(_sane, _floats), targets=st.lists(st.one_of(_sane, _floats), max_size=12),
       extra=st.floats(min_value=0, max_value=1e3), near=st.booleans())
def test_first_match_is_the_first_target_that_matches(relative, absolute, reported, targets, extra, near):
    # The vectorised test tune uses must answer exactly as the grader's matches(), target by target.
    import numpy as np

    from labcheck.model.spec import Tolerance

    tol = Tolerance("t", absolute_si=absolute, relative=relative)
    if near and targets and all(map(math.isfinite, (reported, targets[0]))):  # targets on the tolerance's edge
        targets = [reported + tol.allowed(t) + extra for t in targets[:1]] + targets
    expected = next((i for i, t in enumerate(targets) if tol.matches(reported, t, extra)), -1)
    assert tol.first_match(reported, np.array(targets, dtype=float), extra) == expected
