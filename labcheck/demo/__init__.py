"""The bundled demo: invented sections of each lab, with planted mistakes.

Every section is generated from a known truth with realistic noise (seeded:
the same demo every time), packed as an LMS-style zip export with a roster,
and graded by ``labcheck demo``.  ``PLANTED`` maps each group number to the
mistake labcheck must find and the step where it shows.

Demo layer: may import every layer but the command line (``common.py`` is base: it imports nothing of
labcheck's).
"""

from __future__ import annotations

import csv
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from labcheck.demo import baselines, dip, zenith
from labcheck.demo.common import DemoGroup, csv_bytes, semicolon_csv_bytes, xlsx_bytes

__all__ = ["Section", "SECTIONS", "build_demo", "csv_bytes", "xlsx_bytes", "DemoGroup"]


@dataclass(frozen=True)
class Section:
    lab: str  # the shipped spec's id
    code: str  # section letter
    folder: str
    generate: Callable[[], list[DemoGroup]]
    planted: dict[int, tuple[str, str | None]]
    missing_student: tuple[str, str] | None = None
    unreadable: set[int] = field(default_factory=set)
    bad_rows: dict[int, str] = field(default_factory=dict)  # group -> observation with a misread row
    notes: dict[int, str] = field(default_factory=dict)  # group -> id of a quality note that must appear
    leads: set = field(default_factory=set)  # (lead kind, student ids) the integrity screen must raise
    wrong_lab: tuple[str, str] | None = None  # (student id, lab): a file made from that lab's template

    @property
    def zip_name(self) -> str:
        return f"section_{self.code}_submissions.zip"


SECTIONS = (
    Section("horizon_dip", "B", "horizon_dip", dip.dip_section,
            {k: v for k, v in dip.PLANTED.items() if v[0] not in ("unreadable", "bad_row")},
            dip.MISSING_STUDENT, dip.UNREADABLE, {22: "dip_angle"}, leads=dip.LEADS, wrong_lab=dip.WRONG_LAB_FILE),
    Section("taped_baseline", "C", "taped_baseline", baselines.taped_section, baselines.TAPED_PLANTED,
            baselines.TAPED_MISSING),
    Section("baseline_radius", "D", "baseline_radius", baselines.radius_section, baselines.RADIUS_PLANTED,
            baselines.RADIUS_MISSING),
    Section("odometer_baseline", "E", "odometer_baseline", baselines.odometer_section, baselines.ODOMETER_PLANTED,
            baselines.ODOMETER_MISSING),
    Section("noon_shadow", "F", "noon_shadow", zenith.gnomon_section, zenith.GNOMON_PLANTED,
            notes=zenith.GNOMON_NOTES),
    Section("noon_sight", "G", "noon_sight", zenith.sextant_section, zenith.SEXTANT_PLANTED),
    Section("meridian_arc", "H", "meridian_arc", zenith.arc_section, zenith.ARC_PLANTED),
    Section("trig_heighting", "I", "trig_heighting", zenith.theodolite_section, zenith.THEODOLITE_PLANTED),
)


def _filled_template(lab: str, student_id: str) -> list[tuple]:
    """Another lab's blank template with an identity and a number in every observation row."""
    from labcheck.base.resources import shipped_spec
    from labcheck.model.spec import load_spec
    from labcheck.report.template import template_rows

    rows = []
    for part, item, _value, unit, _note, _description in template_rows(load_spec(shipped_spec(lab))):
        if part == "identity":
            rows.append((part, item, {"student_id": student_id, "name": "Quillon Ashgrove"}.get(item, ""), "", ""))
        elif part == "observation":
            rows.append((part, item, "30.0" if unit else "", unit, ""))
    return rows


def build_demo(folder: Path, section: Section) -> tuple[Path, Path]:
    """Write one section's LMS-style zip export and roster into ``folder``; return their paths."""
    folder.mkdir(parents=True, exist_ok=True)
    groups = section.generate()
    zip_path = folder / section.zip_name
    top = f"GEOD2150-{section.code}_{section.lab}"
    with zipfile.ZipFile(zip_path, "w", zipfile.ZIP_DEFLATED) as z:
        for grp in groups:
            suffix = "xlsx" if grp.fmt == "xlsx" else "csv"
            member = f"{top}/{grp.name.replace(' ', '_')}_{grp.student_id}/{section.lab}_{section.code}{grp.number:02d}.{suffix}"
            data = {"xlsx": xlsx_bytes, "csv;": semicolon_csv_bytes}.get(grp.fmt, csv_bytes)(grp.rows)
            if grp.number in section.unreadable:  # planted: a workbook damaged in upload
                data = data[:700]
            z.writestr(member, data)
        z.writestr(f"__MACOSX/{top}/._{section.lab}_{section.code}01.csv", b"\x00\x05\x16\x07")
        if section.wrong_lab:  # planted: another lab's template uploaded to this assignment
            sid, lab = section.wrong_lab
            z.writestr(f"{top}/Stray_{sid}/{lab}.csv", csv_bytes(_filled_template(lab, sid)))
    roster_path = folder / "roster.csv"
    with open(roster_path, "w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["student_id", "name"])
        for grp in groups:
            w.writerow([grp.student_id, grp.name])
        if section.missing_student:
            w.writerow(section.missing_student)
    return zip_path, roster_path
