"""The lab spec's keys, each declared once: name, type, whether required, default, limits, unit kind and doc.

Model layer: imports only the standard library.  Three things are made from this one declaration:

* the validation in :mod:`labcheck.model.spec` (unknown keys, types, defaults, limits and choices; the
  checks that tie keys to the methods, such as a tolerance's unit kind, stay there);
* the reference tables of docs/spec.md (:func:`markdown_tables`; tests/test_spec.py fails when they are
  stale; regenerate with ``python -m labcheck.model.schema --docs docs/spec.md``);
* the JSON Schema shipped as ``lab_specs/spec.schema.json`` (:func:`json_schema`), for editors that
  check TOML against a schema as it is typed (``labcheck spec schema`` says where it is).

Declared as frozen dataclasses rather than pydantic models: no new dependency, and a spec's tables are
keyed by names the chosen methods define (steps, observations, constants), which a fixed model cannot
state; the checker reports every problem at once with its key path, which the declarations feed.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass

__all__ = ["Key", "SPEC", "key_at", "key_names", "expected_words", "json_schema", "markdown_tables"]


@dataclass(frozen=True)
class Key:
    """One key of a spec, or a table of keys."""

    name: str
    doc: str
    type: str  # string, choice, integer, number, list, table, quantity, tolerance, band, unit
    required: bool = False
    required_text: str = ""  # when required depends on the lab, the condition in words
    default: object = None
    default_text: str = ""  # the default in words when it depends on the method
    choices: tuple = ()
    minimum: float | None = None
    maximum: float | None = None
    exclusive: bool = False  # minimum and maximum are exclusive
    pattern: str | None = None
    items: str = ""  # a list's items: "string"
    keys: tuple["Key", ...] = ()  # a table's fixed keys
    each: "Key | None" = None  # a table keyed by names the methods define: each entry's declaration
    each_name: str = ""  # how the docs write such a name: <name>, "<key>"
    unit_kind: str = ""  # for quantities and tolerances: the unit's kind, in words
    example: str = ""

    def child(self, name: str) -> "Key | None":
        return next((k for k in self.keys if k.name == name), None)


_ANY_NUMBER_WITH_UNIT = r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*\S*\s*$"

SPEC = Key("", "a lab spec", "table", keys=(
    Key("id", "lab id, snake_case; shown on sheets and in `results.json`", "string", required=True,
        pattern=r"^[a-z][a-z0-9_]{0,63}$", example='"horizon_dip"'),
    Key("title", "the lab's title, shown on every sheet", "string", required=True),
    Key("course", "the course's name, shown above the title", "string", default=""),
    Key("page_size", "the paper printed sheets and PDFs are laid out for; `labcheck course feedback --page` "
        "chooses otherwise for one set of PDFs", "choice", choices=("A4", "letter"), default="A4"),
    Key("methods", "the method ids graded in this lab, in the order shown (docs/methods.md lists them; "
        "installed plugins add more)", "list", required=True, items="string", example='["dip", "hidden_height"]'),
    Key("methods_required", '"any": grade the methods a group attempted; "all": every method, one left out '
        "scores zero", "choice", choices=("any", "all"), default="any"),
    Key("safety", "the lab's safety note, printed on every sheet and the section summary; must not be empty",
        "string", required=True),
    Key("constants", "the constants the methods use (see \"[constants]\" below)", "table",
        required_text="when the methods use any",
        each=Key("<name>", "the constant's value with a unit, or a word for a constant that is a choice",
                 "constant", unit_kind="the constant's kind"),
        each_name="<name>"),
    Key("observations", "per observation: template unit, instrument standard deviation, fewest readings", "table",
        each=Key("<name>", "one observation", "table", keys=(
            Key("unit", "the unit printed in the template; a blank unit cell in a submission means this unit",
                "unit", default_text="the method's", unit_kind="the observation's kind"),
            Key("sigma", "standard deviation of one reading of the instrument, used for field-quality notes and "
                "uncertainty", "quantity", unit_kind="the observation's kind", example='"20 arcsec"'),
            Key("min_readings", "fewest readings the lab asks for; the template gets at least three rows for "
                "repeated observations", "integer", default=1, minimum=1, maximum=100),
        )), each_name="<name>"),
    Key("steps", "per step key: points, tolerance, display unit", "table", required=True,
        each=Key('"<key>"', "one step (a key with a dot must be quoted)", "table", keys=(
            Key("points", "points for the step", "number", required=True, minimum=0),
            Key("tolerance", 'computation tolerance: absolute with a unit of the step\'s kind ("0.02 arcmin", '
                '"1 km"), relative ("0.5 %"), or for steps in percent, percentage points ("0.1 pp")',
                "tolerance", required=True, unit_kind="the step's kind"),
            Key("unit", "display unit for the step", "unit", default_text="the method's (km for radii, arcmin "
                "for the dip, % for errors)", unit_kind="the step's kind"),
        )), each_name='"<key>"'),
    Key("grading", "how points are given", "table", keys=(
        Key("carried_fraction", "fraction of a step's points for a step done right from the group's own wrong "
            "earlier values", "number", default=1.0, minimum=0, maximum=1),
        Key("pass_fraction", "fraction of the maximum score counted as a pass in the section summary", "number",
            default=0.6, minimum=0, maximum=1),
    )),
    Key("accuracy", "the accuracy rule for each method's result; without it no accuracy is judged and the "
        "reference constants are not needed", "table", keys=(
            Key("points", "points per graded method", "number", required=True, minimum=0),
            Key("full_within", 'full points when the recomputed result is within this of the method\'s reference: '
                '"5 %", a length such as "300 km", an angle such as "5 arcmin", or "2 sigma"', "band",
                required=True),
            Key("zero_beyond", "no points beyond this; linear between. Same kind as `full_within`, and wider",
                "band", required=True),
        )),
    Key("mistakes", "per mistake id, replacement wording for its explanation on the sheet", "table",
        each=Key("<mistake id>", "the explanation text", "string"), each_name="<mistake id>"),
    Key("uncertainty", "standard deviations of constants, and students' own reported uncertainties", "table",
        keys=(
            Key("reported", "step keys whose uncertainty students report (the template gains a row "
                "`<key>_sigma`)", "list", items="string", default=[]),
            Key("reported_points", "points for each reported uncertainty", "number", default=1, minimum=0),
            Key("within_factor", "a reported σ within this factor of the propagated one is correct", "number",
                default=2.0, minimum=1, exclusive=True),
        ),
        each=Key("<constant>", 'the constant\'s standard deviation in its units, e.g. k = "0.03"', "quantity",
                 unit_kind="the constant's kind"), each_name="<constant>"),
    Key("quality", "field-data quality: its points and the tests' levels", "table", keys=(
        Key("points", "points for field-data quality, shared out over the checks that apply (0: the checks are "
            "noted on the sheet but not scored)", "number", default=0, minimum=0),
        Key("alpha", "significance of the chi-square test of each set of readings' scatter against the "
            "instrument's `sigma` (both tails)", "number", default=0.01, minimum=0, maximum=0.5, exclusive=True),
        Key("outlier_alpha", "significance of Grubbs' outlier test (a reading is flagged, never dropped)", "number",
            default=0.05, minimum=0, maximum=0.5, exclusive=True),
        Key("precision_standard", "N of the 1:N standard that forward and back runs must meet (taped baseline)",
            "number", minimum=0, exclusive=True, example="5000"),
    )),
    Key("integrity", "the copied-readings screen", "table", keys=(
        Key("shared", "observation items all groups legitimately share (station coordinates, tape constants), "
            "left out of the copied-readings screen", "list", items="string", default=[]),
    )),
))


def key_at(path: str) -> Key:
    """The declaration at a dotted path; ``*`` stands for a name the methods define (``steps.*.points``)."""
    key = SPEC
    for part in path.split("."):
        if part == "*":
            key = key.each
        else:
            key = key.child(part)
        if key is None:
            raise KeyError(path)
    return key


def key_names(path: str = "") -> list[str]:
    """The fixed keys of the table at ``path`` (the top level when empty)."""
    return [k.name for k in (key_at(path) if path else SPEC).keys]


def expected_words(path: str = "") -> str:
    """"a, b or c": the fixed keys of a table, for "unknown key" messages."""
    names = key_names(path)
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} or {names[-1]}"


# ---------------------------------------------------------------- JSON Schema

_BAND = r"^\s*(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*\S+\s*$"


def _json(key: Key) -> dict:
    out: dict = {"description": key.doc}
    if key.type == "table":
        out["type"] = "object"
        if key.keys:
            out["properties"] = {k.name: _json(k) for k in key.keys}
            required = [k.name for k in key.keys if k.required]
            if required:
                out["required"] = required
        out["additionalProperties"] = _json(key.each) if key.each is not None else False
        return out
    if key.type == "list":
        out["type"] = "array"
        out["items"] = {"type": key.items or "string"}
    elif key.type == "choice":
        out["enum"] = list(key.choices)
    elif key.type in ("integer", "number"):
        out["type"] = key.type
    elif key.type == "quantity":
        out["type"] = ["string", "number"]
        out["pattern"] = _ANY_NUMBER_WITH_UNIT
    elif key.type == "constant":
        out["type"] = ["string", "number"]
        out["pattern"] = f"({_ANY_NUMBER_WITH_UNIT})|(^[a-z][a-z_]*$)"
    elif key.type in ("tolerance", "band"):
        out["type"] = "string"
        out["pattern"] = _BAND
    else:  # string, unit
        out["type"] = "string"
    if key.pattern:
        out["pattern"] = key.pattern
    if key.type == "string" and key.name == "safety":
        out["pattern"] = r"\S"
    if key.minimum is not None:
        out["exclusiveMinimum" if key.exclusive else "minimum"] = key.minimum
    if key.maximum is not None:
        out["exclusiveMaximum" if key.exclusive else "maximum"] = key.maximum
    if key.default is not None and key.default != "":
        out["default"] = key.default
    return out


def json_schema() -> dict:
    """The spec's JSON Schema (draft 2020-12), for editors and other tools."""
    schema = {"$schema": "https://json-schema.org/draft/2020-12/schema",
              "$id": "labcheck-lab-spec.schema.json",
              "title": "labcheck lab spec",
              **_json(SPEC)}
    schema["description"] = ("A labcheck lab spec (TOML). Generated from labcheck/model/schema.py; "
                             "docs/spec.md explains every key.")
    return schema


def json_schema_text() -> str:
    return json.dumps(json_schema(), indent=2, ensure_ascii=False) + "\n"


# ---------------------------------------------------------------- docs/spec.md

def _default_words(key: Key) -> str:
    if key.default_text:
        return key.default_text
    if key.required:
        return "required"
    if key.required_text:
        return f"required {key.required_text}"
    if key.default is None:
        return "none"
    if isinstance(key.default, str):
        return f'`"{key.default}"`' if key.default else '`""`'
    if isinstance(key.default, list):
        return "`[]`"
    return f"`{key.default:g}`"


def _limits_words(key: Key) -> str:
    if key.choices:
        return " or ".join(f'`"{c}"`' for c in key.choices)
    lo, hi = key.minimum, key.maximum
    if lo is None and hi is None:
        return {"quantity": f"a number and a unit of {key.unit_kind}" if key.unit_kind else "a number and a unit",
                "tolerance": f"a number and a unit of {key.unit_kind}, or %" if key.unit_kind else "",
                "unit": f"a unit of {key.unit_kind}" if key.unit_kind else "",
                "list": "a list of strings", "band": "%, a length, an angle, or sigma"}.get(key.type, key.type)
    lt = "<" if key.exclusive else "≤"
    if lo is not None and hi is not None:
        return f"{lo:g} {lt} value {lt} {hi:g}"
    return f"value {'>' if key.exclusive else '≥'} {lo:g}" if lo is not None else f"value {lt} {hi:g}"


def _table(keys) -> list[str]:
    out = ["| key | default | values | meaning |", "| --- | --- | --- | --- |"]
    for k in keys:
        out.append(f"| `{k.name}` | {_default_words(k)} | {_limits_words(k)} | {k.doc} |")
    return out


def markdown_tables() -> dict[str, str]:
    """The generated reference tables of docs/spec.md, by block name."""
    blocks = {"top": _table(SPEC.keys)}
    for k in SPEC.keys:
        if k.type != "table":
            continue
        if k.keys:
            blocks[k.name] = _table(k.keys)
        elif k.each is not None and k.each.keys:
            blocks[k.name] = _table(k.each.keys)
    return {name: "\n".join(lines) for name, lines in blocks.items()}


_BLOCK = re.compile(r"(<!-- schema:(\w+) -->\n)(.*?)(<!-- /schema -->)", re.S)


def render_docs(text: str) -> str:
    """docs/spec.md with every ``<!-- schema:NAME -->`` block replaced by its generated table."""
    tables = markdown_tables()
    return _BLOCK.sub(lambda m: m.group(1) + tables[m.group(2)] + "\n" + m.group(4), text)


if __name__ == "__main__":
    import sys
    from pathlib import Path

    if len(sys.argv) == 3 and sys.argv[1] == "--docs":
        p = Path(sys.argv[2])
        p.write_text(render_docs(p.read_text(encoding="utf-8")), encoding="utf-8")
    elif len(sys.argv) == 3 and sys.argv[1] == "--json":
        Path(sys.argv[2]).write_text(json_schema_text(), encoding="utf-8")
    else:
        sys.exit("usage: python -m labcheck.model.schema --docs docs/spec.md | --json lab_specs/spec.schema.json")
