"""Helpers shared by the demo sections: invented names, rounding as students round, file writers."""

from __future__ import annotations

import csv
import io
import re
import math
from dataclasses import dataclass, field

__all__ = ["identity_rows", "DemoGroup", "FIRST", "LAST", "person", "sig", "num", "dms", "csv_bytes", "xlsx_bytes"]

FIRST = ["Amara", "Bexley", "Corin", "Dalia", "Emrys", "Fenna", "Galen", "Hester", "Idris", "Juno",
         "Kestrel", "Linnea", "Marek", "Noor", "Orla", "Piet", "Quilla", "Rafferty", "Sabine", "Tobiah",
         "Ulla", "Vesna", "Wynn", "Xanthe", "Yorick"]
LAST = ["Ashgrove", "Brindlemoor", "Caskwell", "Dunmarrow", "Eldervane", "Fallowby", "Greythorn",
        "Hollinsworth", "Ivesdale", "Jessamy", "Kettleburn", "Larkspur", "Mossfield", "Nettlecombe",
        "Oakhurst", "Pennyroyal", "Quarrendon", "Rushmere", "Sallowfield", "Thistlewood", "Umberleigh",
        "Varrow", "Whinfell", "Yarrowby", "Zennor"]


def person(index: int, shift: int = 0) -> str:
    """An invented name: first and last names from our own lists, paired differently per section."""
    return f"{FIRST[index % len(FIRST)]} {LAST[(index + shift) % len(LAST)]}"


@dataclass
class DemoGroup:
    number: int
    student_id: str
    name: str
    fmt: str  # "csv", "csv;" (a decimal-comma spreadsheet's CSV) or "xlsx"
    rows: list[tuple[str, str, str, str, str]] = field(default_factory=list)


def identity_rows(sid: str, name: str, group: str, date: str, site: str) -> list[tuple[str, str, str, str, str]]:
    """The identity rows of a demo submission (empty fields are left out)."""
    fields = (("student_id", sid), ("name", name), ("group", group), ("date", date), ("site", site))
    return [("identity", key, value, "", "") for key, value in fields if value]


def sig(x: float, digits: int = 4) -> float:
    """Round to ``digits`` significant figures, as a student copying a calculator would."""
    if x == 0:
        return 0.0
    return round(x, digits - 1 - math.floor(math.log10(abs(x))))


def num(x: float) -> str:
    """A number as a student writes it: no trailing zeros, no exponent for ordinary sizes."""
    return f"{x:.10g}"


def dms(angle_deg: float, decimals: int = 0, hemi: str = "") -> str:
    """D M S text: ``90 05 31`` or, with hemisphere letters ``NS``/``EW``, ``44°38'12.5"N``."""
    scale = 10**decimals
    total = round(abs(angle_deg) * 3600 * scale)
    d, rem = divmod(total, 3600 * scale)
    m, s = divmod(rem, 60 * scale)
    sec = f"{s / scale:0{3 + decimals if decimals else 2}.{decimals}f}"
    if hemi:
        letter = hemi[0] if angle_deg >= 0 else hemi[1]
        return f"{d}°{m:02d}'{sec}\"{letter}"
    return f"{'-' if angle_deg < 0 else ''}{d} {m:02d} {sec}"


def csv_bytes(rows) -> bytes:
    """A submission file's bytes (CSV, UTF-8) from (part, item, value, unit, note) rows."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["part", "item", "value", "unit", "note"])
    w.writerows(rows)
    return buf.getvalue().encode("utf-8")


def semicolon_csv_bytes(rows) -> bytes:
    """A CSV as a decimal-comma spreadsheet exports it: a ``sep=;`` line, ``;`` separators, CRLF,
    decimal commas in the values."""
    buf = io.StringIO()
    w = csv.writer(buf, delimiter=";", lineterminator="\r\n")
    buf.write("sep=;\r\n")
    w.writerow(["part", "item", "value", "unit", "note"])
    for part, item, value, unit, note in rows:
        if re.fullmatch(r"-?\d+\.\d+", str(value)):
            value = str(value).replace(".", ",")
        w.writerow([part, item, value, unit, note])
    return buf.getvalue().encode("utf-8")


def xlsx_bytes(rows) -> bytes:
    """A submission file's bytes (XLSX, first sheet) from (part, item, value, unit, note) rows."""
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["part", "item", "value", "unit", "note"])
    for r in rows:
        ws.append(list(r))
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()
