"""The sheets' template environment: its quick dict lookup means what jinja2's own lookup means."""

import jinja2
import pytest

from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec
from labcheck.report.render import Renderer
from conftest import good_dip_rows, grade_rows


@pytest.fixture(scope="module")
def env():
    return Renderer(load_spec(shipped_spec("horizon_dip")), "2026-01-01 00:00 UTC").env


def test_a_dict_key_is_found_and_escaped(env):
    out = env.from_string("{{ x.name }}|{{ x['name'] }}").render(x={"name": "<b>Ann</b>"})
    assert out == "&lt;b&gt;Ann&lt;/b&gt;|&lt;b&gt;Ann&lt;/b&gt;"


def test_a_missing_key_is_still_an_error(env):
    # StrictUndefined: a template naming a key the view model lacks fails loudly, as with jinja2's lookup.
    with pytest.raises(jinja2.UndefinedError):
        env.from_string("{{ x.nothing }}").render(x={"name": "Ann"})


def test_dict_methods_keep_jinja2s_meaning(env):
    # A name that is an attribute of dict (items, get…) is looked up as jinja2 does: attribute first.
    out = env.from_string("{% for k, v in x.items() %}{{ k }}={{ v }};{% endfor %}{{ x.get('a') }}")
    assert out.render(x={"a": 1, "items": "not this"}) == "a=1;items=not this;1"


def test_other_objects_keep_jinja2s_lookup(env):
    class Thing:
        name = "attr"

        def __getitem__(self, key):
            return "item"

    assert env.from_string("{{ t.name }} {{ t.other }}").render(t=Thing()) == "attr item"


# ---------------------------------------------------------------- the compiled-template cache

def _sheet_env(monkeypatch, cache):
    import labcheck.report.render as render

    monkeypatch.setattr(render, "_bytecode_cache", lambda: cache)
    return Renderer(load_spec(shipped_spec("horizon_dip")), "2026-01-01 00:00 UTC")


def test_a_damaged_cache_entry_is_a_miss(tmp_path, monkeypatch):
    from labcheck.report.render import _BytecodeCache

    cache = _BytecodeCache(str(tmp_path))
    first = _sheet_env(monkeypatch, cache)
    entries = sorted(tmp_path.iterdir())
    assert entries, "the first renderer should have filled the cache"
    for entry in entries:  # a cut-off write, and garbage after a valid header
        entry.write_bytes(entry.read_bytes()[:7])
    second = _sheet_env(monkeypatch, cache)
    uncached = _sheet_env(monkeypatch, None)
    record = grade_rows(load_spec(shipped_spec("horizon_dip")), good_dip_rows())
    sheet = uncached.sheet(record)
    assert "Test Student" in sheet
    assert first.sheet(record) == second.sheet(record) == sheet


def test_a_cache_that_cannot_be_written_costs_nothing(tmp_path, monkeypatch):
    import errno
    import tempfile

    from labcheck.report.render import _BytecodeCache

    def full(*a, **k):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(tempfile, "NamedTemporaryFile", full)
    renderer = _sheet_env(monkeypatch, _BytecodeCache(str(tmp_path)))
    assert renderer.env.from_string("{{ 1 + 1 }}").render() == "2"
    assert not list(tmp_path.iterdir())


def test_a_template_compiled_with_other_options_is_never_taken_for_ours(tmp_path, monkeypatch):
    # An entry of the same template compiled without autoescaping (another labcheck, or another program
    # with our cache class) lands under another key: our sheets stay escaped.
    import jinja2

    import labcheck.report.render as render
    from labcheck.base.resources import templates_dir
    from labcheck.report.render import _BytecodeCache

    cache = _BytecodeCache(str(tmp_path))
    monkeypatch.setattr(render, "_COMPILED_WITH", "an older labcheck, autoescape off")
    other = jinja2.Environment(loader=jinja2.FileSystemLoader(str(templates_dir())), bytecode_cache=cache,
                               autoescape=False, undefined=jinja2.StrictUndefined)
    other.get_template("feedback.html")
    theirs = set(tmp_path.iterdir())
    assert theirs
    monkeypatch.undo()
    ours = _sheet_env(monkeypatch, cache)
    assert set(tmp_path.iterdir()) > theirs  # our own entries, beside theirs
    record = grade_rows(load_spec(shipped_spec("horizon_dip")), good_dip_rows(name="<b>Ann</b>"))
    sheet = ours.sheet(record)
    assert "&lt;b&gt;Ann&lt;/b&gt;" in sheet and "<b>Ann</b>" not in sheet


def test_grouped_numbers_never_break_across_lines():
    # Regression: thousands were grouped with a thin space (U+2009), where a browser may break a line, and
    # a sheet showed "any value from 169" at the end of one line and "311 up" on the next.
    from labcheck.report.render import fmt_number
    from labcheck.report.words import format_fixed

    for text in (format_fixed(169311.0, 0), format_fixed(1234567.891, 3, "m"), fmt_number(6371008.8, 8)):
        assert "\u2009" not in text and " " not in text.split(" m")[0], text
        assert "\u202f" in text, text
