"""A lab from another installed package (issue 10): the entry-point group ``labcheck.methods``.

The example plugin in tests/data/plugin_example is installed into the test environment the way pip
installs any package, by putting it and its ``.dist-info`` (with ``entry_points.txt``) on the path;
``importlib.metadata`` then finds it.  A spec naming its method is checked, a template written, and a
submission graded, with its mistake named.  Expected values are worked out here by hand.
"""

import shutil
import sys
from pathlib import Path

import pytest

from labcheck import methods as registry
from labcheck.cli.main import main

EXAMPLE = Path(__file__).parent / "data" / "plugin_example"


@pytest.fixture
def plugin(tmp_path, monkeypatch):
    site = tmp_path / "site"
    shutil.copytree(EXAMPLE, site)
    monkeypatch.syspath_prepend(str(site))
    registry.load_plugins(reload=True)
    yield site / "leveling_line.toml"
    for mod in [m for m in sys.modules if m.startswith("labcheck_leveling_example")]:
        del sys.modules[mod]
    monkeypatch.undo()
    registry.load_plugins(reload=True)


def _submission(path: Path, fs_last: str = "1.312"):
    rows = ["part,item,value,unit", "identity,student_id,s1", "identity,name,Wynn Harrowgate"]
    rows += [f"observation,backsight,{v},m" for v in ("1.422", "0.918", "1.105")]
    rows += [f"observation,foresight,{v},m" for v in ("3.011", "2.568", fs_last)]
    # ΣBS = 3.445, ΣFS = 6.891: ΔH = −3.446, H_end = 112.408 − 3.446 = 108.962 (by hand)
    rows += ["result,sum_backsights,3.445,m", "result,sum_foresights,6.891,m",
             "result,height_difference,3.446,m",  # backsights and foresights swapped
             "result,end_elevation,115.854,m"]  # follows from the swapped value: carried
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_a_plugin_lab_is_checked_templated_and_graded(plugin, tmp_path, capsys):
    assert "leveling_line" in registry.METHODS and not registry.PLUGIN_ERRORS
    assert main(["spec", "check", str(plugin)]) == 0
    assert main(["template", str(plugin), "--out", str(tmp_path / "t.csv")]) == 0
    template = (tmp_path / "t.csv").read_text()
    assert "backsight" in template and "end_elevation" in template
    capsys.readouterr()
    sub = _submission(tmp_path / "s1.csv")
    assert main(["check", str(plugin), str(sub)]) == 0
    out = capsys.readouterr().out
    assert "sum_backsights" in out and "likely cause: backsights and foresights swapped" in out
    import json

    (tmp_path / "in").mkdir()
    shutil.copy(sub, tmp_path / "in" / "s1.csv")
    assert main(["grade", str(plugin), str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--quiet", "--jobs", "2"]) == 0
    rec = json.loads((tmp_path / "out" / "results.json").read_text())["submissions"][0]
    verdicts = {s["id"]: s["verdict"] for s in rec["steps"]}
    assert verdicts == {"sum_backsights": "correct", "sum_foresights": "correct", "height_difference": "wrong",
                        "end_elevation": "carried"}
    step = next(s for s in rec["steps"] if s["id"] == "end_elevation")
    assert step["expected"] == pytest.approx(108.962, abs=1e-9)


def test_a_broken_or_clashing_plugin_is_named_not_a_crash(tmp_path, monkeypatch):
    site = tmp_path / "site"
    (site / "bad_plugin-0.1.dist-info").mkdir(parents=True)
    (site / "bad_plugin-0.1.dist-info" / "METADATA").write_text("Metadata-Version: 2.1\nName: bad-plugin\nVersion: 0.1\n")
    (site / "bad_plugin-0.1.dist-info" / "entry_points.txt").write_text(
        "[labcheck.methods]\nbroken = no_such_module_here:METHOD\ndip = labcheck.methods:DIP\n")
    monkeypatch.syspath_prepend(str(site))
    try:
        registry.load_plugins(reload=True)
        assert "failed to load" in registry.PLUGIN_ERRORS["broken"]
        assert "would replace labcheck's own method 'dip'" in registry.PLUGIN_ERRORS["dip"]
        from labcheck.model.spec import SpecError, parse_spec
        from labcheck.base.resources import shipped_spec

        text = shipped_spec("horizon_dip").read_text().replace('methods = ["dip", "hidden_height"]', 'methods = ["broken"]')
        with pytest.raises(SpecError, match="an installed plugin names it, but the package that provides it failed"):
            parse_spec(text.encode(), "x.toml")
    finally:
        monkeypatch.undo()
        registry.load_plugins(reload=True)
