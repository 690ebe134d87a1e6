"""The trade's names in one place: docs/glossary.md, generated from the method declarations and the units.

Report layer: reads :data:`labcheck.methods.METHODS` (labcheck's own methods only: a plugin's names are its
package's to document) and :mod:`labcheck.base.units`.  Regenerate with
``python -m labcheck.report.glossary > docs/glossary.md``; tests/test_docs.py fails when the file is stale.
"""

from __future__ import annotations

from labcheck.base import units
from labcheck.methods import METHODS

__all__ = ["glossary_markdown"]


def _cell(text) -> str:
    return " ".join(str(text or "").split()).replace("|", "\\|")


def _what(label: str, description: str) -> str:
    label, description = _cell(label), _cell(description)
    if not description or description.lower().startswith(label.lower()):
        return description or label
    return f"{label}: {description}"


def glossary_markdown() -> str:
    """The glossary as Markdown: units by kind, then per method its observations, constants, steps and mistakes."""
    out = ["# Glossary of labcheck's names", "",
           "Generated from the method declarations (`labcheck/methods/`) and the units "
           "(`labcheck/base/units.py`) by `python -m labcheck.report.glossary`; do not edit by hand. "
           "Observation names, step ids and mistake ids are public vocabulary: they appear in templates, "
           "specs and results.json and are never renamed.", "",
           "## Units", "",
           "A unit in a template or a value cell is one of these names (or a common spelling of one, such as "
           "`metres`, `°`, `percent`).", "",
           "| kind | units |", "| --- | --- |"]
    for kind, table in units.UNITS.items():
        out.append(f"| {kind} | {', '.join(f'`{u}`' for u in table)} |")
    for method in sorted(METHODS.values(), key=lambda m: m.id):
        out += ["", f"## Method `{method.id}`: {_cell(method.title)}", ""]
        if method.observations:
            out += ["Observations (the template's `observation` rows):", "",
                    "| name | what | kind | template unit | rows |", "| --- | --- | --- | --- | --- |"]
            for o in method.observations:
                rows = "several" if o.repeated else "one"
                out.append(f"| `{o.name}` | {_what(o.label, o.description)} | {o.kind} | "
                           f"{f'`{o.unit}`' if o.unit else '—'} | {rows} |")
            out.append("")
        if method.constants:
            out += ["Constants (from the lab spec's `[constants]`):", "",
                    "| name | what | kind | default |", "| --- | --- | --- | --- |"]
            for c in method.constants:
                out.append(f"| `{c.name}` | {_what(c.label, c.description)} | {c.kind} | "
                           f"{_cell(c.default) or '—'} |")
            out.append("")
        out += ["Steps (the template's `result` rows; a spec's `[steps]` keys):", "",
                "| step id | what | unit | formula | inputs |", "| --- | --- | --- | --- | --- |"]
        for s in method.steps:
            out.append(f"| `{s.id}` | {_cell(s.label)} | `{s.unit}` | {_cell(s.formula)} | "
                       f"{', '.join(f'`{i}`' for i in s.inputs)} |")
        mistakes = [(s.id, v) for s in method.steps for v in s.variants]
        if mistakes:
            out += ["", "Known mistakes (a wrong value one of these reproduces is named on the sheet):", "",
                    "| mistake id | step | what |", "| --- | --- | --- |"]
            for step_id, v in mistakes:
                out.append(f"| `{v.id}` | `{step_id}` | {_cell(v.label)} |")
    return "\n".join(out) + "\n"


if __name__ == "__main__":
    import sys

    sys.stdout.write(glossary_markdown())
