"""The blank student template for a lab: every identity, observation and result row."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from labcheck.model.spec import LabSpec
from labcheck.reading.submission import IDENTITY_FIELDS

__all__ = ["template_rows", "write_template", "TEMPLATE_COLUMNS"]

TEMPLATE_COLUMNS = ("part", "item", "value", "unit", "note", "description")


def template_rows(spec: LabSpec) -> list[tuple[str, str, str, str, str, str]]:
    """Rows of the template: (part, item, value, unit, note, description).

    Repeated observations get as many rows as the spec's ``min_readings``
    (at least three); students add rows for more readings.  The
    ``description`` column is help text and is ignored when grading.
    """
    rows = [("identity", key, "", "", "", text) for key, text in IDENTITY_FIELDS.items()]
    seen = set()
    for m in spec.methods:
        for o in m.observations:
            if o.name in seen:
                continue
            seen.add(o.name)
            rule = spec.observations[o.name]
            shared = [x.id for x in spec.methods if any(ob.name == o.name for ob in x.observations)]
            text = o.description
            if len(shared) > 1:
                text += f" (used by {' and '.join(shared)}; write {shared[1]}.{o.name} for a separate value)"
            n = max(rule.min_readings, 3) if o.repeated else 1
            if o.repeated and o.spread:
                text += "; one reading per row, add rows for more"
            elif o.repeated:
                text += "; add rows for more"
            for _ in range(n):
                rows.append(("observation", o.name, "", rule.unit, "", text))
            for alt in o.alternatives:
                rows.append(("observation", alt.name, "", alt.unit, "", alt.description))
    for m in spec.methods:
        for c in m.constants:
            if c.overridable and c.name not in seen:
                seen.add(c.name)
                lab_value = spec.constants_text.get(c.name, "none set")
                rows.append(("observation", c.name, "", c.unit, "",
                             f"optional: your own {c.label}, only if it differs from the lab's ({lab_value})"))
    for key, rule in spec.steps.items():
        unit = "" if rule.unit == "1" else rule.unit
        rows.append(("result", key, "", unit, "", f"{rule.step.label}: {rule.step.formula}"))
        if key in spec.reported_sigma:
            rows.append(("result", f"{key}_sigma", "", unit, "",
                         f"your uncertainty (one standard deviation) of the {rule.step.label}, from your instruments"))
    return rows


def write_template(spec: LabSpec, path: str | Path) -> Path:
    """Write the template as CSV, or XLSX when ``path`` ends in ``.xlsx``."""
    p = Path(path)
    rows = template_rows(spec)
    if p.suffix.lower() == ".xlsx":
        import openpyxl
        from openpyxl.styles import Font

        wb = openpyxl.Workbook()
        ws = wb.active
        ws.title = spec.id[:31]
        ws.append(list(TEMPLATE_COLUMNS))
        for cell in ws[1]:
            cell.font = Font(bold=True)
        for row in rows:
            ws.append(list(row))
        for col, width in zip("ABCDEF", (12, 30, 16, 9, 24, 90)):
            ws.column_dimensions[col].width = width
        # Values are text so that "0 11 20" or a leading zero stay as written.
        for row in ws.iter_rows(min_row=2, min_col=3, max_col=3):
            for cell in row:
                cell.number_format = "@"
        ws.freeze_panes = "A2"
        wb.save(p)
    else:
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(TEMPLATE_COLUMNS)
        writer.writerows(rows)
        p.write_text(buf.getvalue(), encoding="utf-8")
    return p
