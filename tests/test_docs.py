"""The README's commands and CI stay in step; docs name every method and step."""

import re
from pathlib import Path

from labcheck.methods import METHODS

ROOT = Path(__file__).resolve().parent.parent


def test_ci_runs_exactly_the_readme_test_command():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    command = re.search(r'TEST_COMMAND="(.*)"', ci).group(1)
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert f"\n{command}\n" in readme


def test_readme_has_the_demo_command_and_cautions():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert "labcheck demo" in readme
    for caution in ("solar filter", "cliff", "traffic", "heat", "licensed surveyor", "advisory"):
        assert caution in readme


def test_methods_doc_names_every_step_and_mistake():
    text = (ROOT / "docs" / "methods.md").read_text(encoding="utf-8")
    for method in METHODS.values():
        assert f"`{method.id}`" in text
        for step in method.steps:
            assert f"`{step.id}`" in text or f"{step.id}`" in text
            for v in step.variants:
                assert f"`{v.id}`" in text, v.id


def test_course_doc_matches_the_code(tmp_path):
    """docs/course.md states the alias lists, the fuzzy threshold and margin, and every table and column."""
    from labcheck.reading import identity
    from labcheck.course.record import Course

    text = (ROOT / "docs" / "course.md").read_text(encoding="utf-8")
    assert ", ".join(identity.ID_HEADINGS) in text
    assert ", ".join(identity.NAME_HEADINGS) in text
    assert f"**{identity.NAME_MATCH_THRESHOLD:g}** of 100" in text and f"within **{identity.NAME_MATCH_MARGIN:g}**" in text
    assert "`" + "`, `".join(identity.KEEP_POLICIES) + "`" in text or all(f"`{k}`" in text for k in identity.KEEP_POLICIES)
    course = Course.create(tmp_path / "c")
    tables = [r[0] for r in course.conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")]
    for table in tables:
        row = next((ln for ln in text.splitlines() if ln.startswith(f"| `{table}`")), None)
        assert row is not None, f"docs/course.md does not describe table {table}"
        for column in (r[1] for r in course.conn.execute(f"PRAGMA table_info({table})")):
            assert f"`{column}`" in row, f"docs/course.md: column {table}.{column} is not described"


def test_glossary_is_generated_from_the_declarations():
    """docs/glossary.md is what the method declarations and units say now (regenerate it when this fails:
    python -m labcheck.report.glossary > docs/glossary.md)."""
    from labcheck.report.glossary import glossary_markdown

    text = glossary_markdown()
    assert (ROOT / "docs" / "glossary.md").read_text(encoding="utf-8") == text, "docs/glossary.md is stale"
    for method in METHODS.values():
        for o in method.observations:
            assert f"| `{o.name}` |" in text
        for step in method.steps:
            assert f"| `{step.id}` |" in text
