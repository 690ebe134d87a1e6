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
