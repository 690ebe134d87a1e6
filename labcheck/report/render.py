"""Render feedback sheets and the section summary (HTML).

Templates never compute: everything they show is prepared here as text or
as ready-made coordinates.  Autoescape is always on; missing values are
errors (StrictUndefined), not silent blanks.
"""

from __future__ import annotations

import hashlib
import math
import sys
from collections import Counter

import jinja2
from markupsafe import Markup
import numpy as np

from labcheck import __version__
from labcheck.report.outputs import run_time
from labcheck.base.resources import templates_dir
from labcheck.model.spec import LabSpec
from labcheck.base.units import from_si, to_si
from labcheck.report.words import format_fixed, grouped

__all__ = ["Renderer", "fmt_number", "VERDICT_WORDS"]

VERDICT_WORDS = {
    "correct": "correct",
    "carried": "carried forward",
    "wrong": "wrong",
    "missing": "missing",
}

# Every status a record can have, as the section summary names it.
STATUS_WORDS = {
    "graded": "graded",
    "unreadable": "unreadable",
    "wrong_lab": "another lab's template",
    "error": "labcheck failed (see labcheck-errors.log)",
    "missing": "no submission",
}

ADVISORY = (
    "These grades are advisory: your instructor reviews every result before it counts. "
    "Every value was recomputed from the observations in your own submission."
)


def fmt_number(value, digits: int = 5) -> str:
    """A number with ``digits`` significant figures (at least the units digit), or a dash."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    v = float(value)
    if v == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(v)))
    decimals = max(0, digits - 1 - magnitude)
    return grouped(v, decimals)


# How a file's student was found, when it was not an exact id match (labcheck/reading/identity.py).
IDENTITY_WORDS = {
    "normalised": "the id matched once case, spaces or leading zeros were set aside",
    "folder": "credited from the export's folder (the sheet's id is missing or not on the roster)",
    "name": "matched by the name on the sheet (close spelling)",
    "conflict": "the sheet names another student than the export's folder; credited to the folder's student",
    "instructor": "credited by the instructor (labcheck course assign)",
}


def _points(p) -> str:
    if p is None:
        return "—"
    return f"{p:g}" if float(p).is_integer() else f"{p:.2f}"


PAGE_SIZES = ("A4", "letter")


_DICT_ATTRIBUTES = frozenset(dir(dict))
# The environment's compile options, written once: they build it and they key its compiled-template cache.
_SETTINGS = {"autoescape_extensions": ("html", "htm", "xml", "j2"), "autoescape_default": True,
             "undefined": "StrictUndefined", "trim_blocks": True, "lstrip_blocks": True}
_OPTIONS = dict(
    autoescape=jinja2.select_autoescape(enabled_extensions=_SETTINGS["autoescape_extensions"],
                                        default=_SETTINGS["autoescape_default"]),
    undefined=getattr(jinja2, _SETTINGS["undefined"]),
    trim_blocks=_SETTINGS["trim_blocks"],
    lstrip_blocks=_SETTINGS["lstrip_blocks"],
)
# What a compiled template depends on besides its source: a cache entry made under anything else is not ours.
_COMPILED_WITH = (f"labcheck {__version__}; jinja2 {jinja2.__version__}; python {sys.version_info[:3]}; "
                  f"{sorted(_SETTINGS.items())}")


class _Environment(jinja2.Environment):
    """jinja2's environment, with ``x.name`` on a plain dict looked up as ``x["name"]`` first.

    jinja2 tries ``getattr`` first and falls back to the key after an AttributeError; the view model is
    dicts, so every ``x.name`` in a sheet raised and caught an exception (about 800 a sheet).  For a name
    that is not an attribute of dict (``items``, ``get``…) the result is the same, and those keep jinja2's
    order.
    """

    def getattr(self, obj, attribute):
        if type(obj) is dict and attribute not in _DICT_ATTRIBUTES:
            try:
                return obj[attribute]
            except KeyError:
                return self.undefined(obj=obj, name=attribute)
        return super().getattr(obj, attribute)


class _BytecodeCache(jinja2.FileSystemBytecodeCache):
    """jinja2's cache of compiled templates, best effort: a cache file that cannot be read (damaged,
    truncated) is a miss and one that cannot be written (disk full) is skipped, so the cache can only
    save time, never cost a run.

    jinja2 keys an entry by the template's name and file (and checks its source), not by the options it
    was compiled with: a template compiled by another labcheck or jinja2 version, or with other options
    (autoescaping among them), must never be taken for ours.  So the key also carries those
    (:data:`_COMPILED_WITH`) and labcheck's entries are named apart from other programs'.
    """

    def __init__(self, directory: str | None = None):
        super().__init__(directory, "labcheck-%s.jinja-cache")

    def get_cache_key(self, name: str, filename: str | None = None) -> str:
        return hashlib.sha256(f"{_COMPILED_WITH}|{name}|{filename or ''}".encode("utf-8")).hexdigest()

    def load_bytecode(self, bucket) -> None:
        try:
            super().load_bytecode(bucket)
        except Exception:
            bucket.reset()

    def dump_bytecode(self, bucket) -> None:
        try:
            super().dump_bytecode(bucket)
        except Exception:
            pass


def _bytecode_cache():
    """The compiled-template cache, in jinja2's per-user folder under the system's temporary folder (made
    0700 and checked to be the user's; entries keyed by each template's name and source and by what it is
    compiled with, see :class:`_BytecodeCache`): compiling the
    four templates cost 0.09 s in every run and in every worker.  None where no such folder can be had."""
    try:
        return _BytecodeCache()
    except Exception:
        return None


class Renderer:
    def __init__(self, spec: LabSpec, generated: str | None = None, page_size: str | None = None):
        """``generated`` is the time the outputs state (the parent's, so that every worker's sheets agree)."""
        self.spec = spec
        self.env = _Environment(loader=jinja2.FileSystemLoader(str(templates_dir())), bytecode_cache=_bytecode_cache(),
                                **_OPTIONS)
        page_size = page_size or spec.page_size
        if page_size not in PAGE_SIZES:
            raise ValueError(f"page size {page_size!r}: use one of {', '.join(PAGE_SIZES)}")
        self.env.globals["page_size"] = page_size  # one of PAGE_SIZES: a CSS keyword, never student data
        self.sheet_template = self.env.get_template("feedback.html")
        self.section_template = self.env.get_template("section.html")
        # Our own stylesheet, not student data: marked safe so quotes survive inside <style>.
        self.css = Markup((templates_dir() / "style.css").read_text(encoding="utf-8"))
        self.generated = generated or run_time().strftime("%Y-%m-%d %H:%M UTC")

    # ----------------------------------------------------------------- sheet
    def sheet(self, record: dict) -> str:
        spec = self.spec
        methods = []
        for m in spec.methods:
            if m.id not in record["methods"]:
                continue
            steps = []
            for s in record["steps"]:
                if s["method"] != m.id:
                    continue
                unit = s["unit"]
                dec = s["decimals"]
                steps.append({
                    "key": s["id"],
                    "label": s["label"],
                    "formula": s["formula"],
                    "source": s["source"],
                    "inputs": [
                        {
                            "label": i["label"],
                            "value": i["value"],
                            "yours": i["yours"],
                            "origin": i["origin"],
                        }
                        for i in s["inputs"]
                    ],
                    "expected": format_fixed(s["expected"], dec, unit),
                    "sigma": ("± " + format_fixed(s["sigma"], dec, unit)) if s.get("sigma") else "",
                    "reported": format_fixed(s["reported"], dec, unit),
                    "reported_as": s["reported_as"] or "",
                    "carried": format_fixed(s["carried_expected"], dec, unit) if s["carried_expected"] is not None else "",
                    "tolerance": s["tolerance"],
                    "verdict": s["verdict"],
                    "verdict_words": VERDICT_WORDS[s["verdict"]],
                    "points": f"{_points(s['points'])} / {_points(s['max_points'])}",
                    "explanation": s["explanation"],
                    "diagnosis": s["diagnosis"],
                })
            acc = record["accuracy"].get(m.id)
            methods.append({
                "id": m.id,
                "title": m.title,
                "summary": m.summary,
                "observations": [o for o in record["observations"] if o["method"] == m.id],
                "steps": steps,
                "accuracy": None if acc is None else {
                    "explanation": acc["explanation"],
                    "rule": acc["rule"],
                    "points": f"{_points(acc['points'])} / {_points(acc['max_points'])}",
                    "reported": f"{fmt_number(acc['reported'])} {acc['unit']}" if acc["reported"] is not None else "not reported",
                    "reference_label": acc["reference_label"],
                    "reference_details": acc["reference_details"],
                    "reference_explanation": acc["reference_explanation"],
                },
                "quality": [q for q in record["quality"] if q["method"] == m.id],
            })
        adj = record.get("adjustments")
        score = adj["score"] if adj else record["score"]
        pct = 100.0 * score / record["max_score"] if record["max_score"] else 0.0
        adjustments = []
        for item in (adj or {}).get("items", []):
            if not item["applied"]:
                continue
            if item["step"]:
                what = f"{item['label']} ({item['step']})"
                points = (f"{_points(item['points'])} / {_points(item['max_points'])} "
                          f"(labcheck's: {_points(item['labcheck_points'])})")
            else:
                what, points = "the lab's total", f"{item['points']:+g}"
            adjustments.append({"what": what, "points": points, "reason": item["reason"]})
        return self.sheet_template.render(
            css=self.css,
            spec={"title": spec.title, "course": spec.course, "id": spec.id, "sha": spec.sha256[:12], "safety": spec.safety},
            who={k: record.get(k) or "" for k in ("student_id", "name", "group", "date", "site", "submission")},
            score=f"{_points(score)} / {_points(record['max_score'])}",
            labcheck_score=f"{_points(record['score'])} / {_points(record['max_score'])}" if adj else "",
            adjustments=adjustments,
            percent=f"{pct:.0f} %",
            methods=methods,
            flags=record["flags"],
            reading=record.get("reading", []),
            notes=record["notes"],
            advisory=ADVISORY,
            quality_score=(f"{_points(record['quality_score']['points'])} / {_points(record['quality_score']['max_points'])} "
                           f"({record['quality_score']['passed']} of {record['quality_score']['checks']} checks passed)")
            if record.get("quality_score") else "",
            version=__version__,
            generated=self.generated,
        )

    # --------------------------------------------------------------- section
    def integrity(self, leads: list[dict], n_submissions: int) -> str:
        """The instructor's integrity page: leads with their evidence, never shown to students."""
        from labcheck.grading.integrity import CAVEAT, P_LEAD

        kinds = {"shared_readings": "identical readings in two submissions",
                 "digit_preference": "preferred last digits",
                 "scatter_too_small": "scatter too small for the instrument",
                 "too_close_to_reference": "result implausibly close to the reference"}
        rows = [{"kind": kinds[l["kind"]], "students": ", ".join(f"{k} ({n})" if n else k for k, n in zip(l["students"], l["names"])),
                 "evidence": l["evidence"], "measure": l["measure"],
                 "p": f"{l['p']:.2g}" if l["p"] is not None else "—"} for l in leads]
        return self.env.get_template("integrity.html").render(
            css=self.css, spec={"title": self.spec.title, "course": self.spec.course, "id": self.spec.id,
                                "sha": self.spec.sha256[:12], "safety": self.spec.safety},
            leads=rows, n=n_submissions, caveat=CAVEAT, rate=f"{P_LEAD:g}",
            expected=f"{n_submissions * 3 * P_LEAD:.1f}", version=__version__, generated=self.generated)

    def section(self, summaries: list, skipped: list[dict], n_leads: int = 0, tally=None) -> str:
        """section.html as one string (see :meth:`section_chunks`)."""
        return "".join(self.section_chunks(summaries, skipped, n_leads, tally))

    def section_chunks(self, summaries: list, skipped: list[dict], n_leads: int = 0, tally=None):
        """Render section.html from the slim per-submission summaries and the per-step ``tally`` kept by the
        batch, as an iterator of text chunks to write as they come."""
        spec = self.spec
        graded = [s for s in summaries if s["status"] == "graded" and not s.get("superseded")]
        unreadable = [s for s in summaries if s["status"] not in ("graded", "missing")]  # unreadable, wrong_lab, error
        missing = [s for s in summaries if s["status"] == "missing"]
        percents = [100.0 * s["score"] / s["max_score"] for s in graded if s["max_score"]]
        pass_pct = 100.0 * spec.pass_fraction
        n_pass = sum(p >= pass_pct - 1e-9 for p in percents)

        step_rows = self._step_table(tally)
        radius_plot = self._accuracy_plot(graded)
        histogram = self._histogram(percents, pass_pct)

        def student(i: int, s: dict) -> dict:
            return {
                "student_id": s["student_id"] or "",
                "name": s["name"] or "",
                "group": s["group"] or "",
                "submission": s["submission"] or "",
                "status": s["status"],
                "score": f"{_points(s['score'])} / {_points(s['max_score'])}" if s["status"] == "graded" else "—",
                "flags": s["n_flags"],
                "link": s.get("sheet") or "",
                "unmatched": s.get("unmatched", False),
            }

        # Made one at a time as the page is written: a department's 100,000 rows are never all in memory.
        students = (student(i, s) for i, s in enumerate(summaries))
        unmatched = [student(i, s) for i, s in enumerate(summaries) if s.get("unmatched")]
        reconciled = [dict(student(i, s), how=IDENTITY_WORDS.get(s["identity"], s["identity"]))
                      for i, s in enumerate(summaries) if s.get("identity")]
        superseded = [dict(student(i, s), kept=s["superseded"]) for i, s in enumerate(summaries) if s.get("superseded")]
        stats = {
            "n_files": sum(1 for s in summaries if s["status"] != "missing"),
            "n_graded": len(graded),
            "n_unreadable": len(unreadable),
            "n_missing": len(missing),
            "n_skipped": len(skipped),
            "mean": f"{np.mean(percents):.0f} %" if percents else "—",
            "median": f"{np.median(percents):.0f} %" if percents else "—",
            "pass": f"{n_pass} of {len(percents)} ({100.0 * n_pass / len(percents):.0f} %)" if percents else "—",
            "pass_rule": f"{pass_pct:.0f} % of the maximum",
        }
        return self.section_template.generate(
            css=self.css,
            spec={"title": spec.title, "course": spec.course, "id": spec.id, "sha": spec.sha256[:12], "safety": spec.safety},
            stats=stats,
            histogram=histogram,
            step_rows=step_rows,
            radius_plot=radius_plot,
            unreadable=[{"submission": s["submission"], "error": s["error"], "status": STATUS_WORDS[s["status"]]}
                        for s in unreadable],
            missing=[{"student_id": s["student_id"], "name": s["name"]} for s in missing],
            unmatched=unmatched,
            reconciled=reconciled,
            superseded=superseded,
            skipped=skipped,
            students=students,
            n_leads=n_leads,
            version=__version__,
            generated=self.generated,
        )

    def _step_table(self, tally) -> list[dict]:
        if tally is None or not tally.verdicts:
            return []
        verdicts, diagnoses = tally.verdicts, tally.diagnoses
        out = []
        for key, rule in self.spec.steps.items():
            if key not in verdicts:
                continue
            c = verdicts[key]
            n = sum(c.values())
            top = ", ".join(f"{label} ({count})" for label, count in diagnoses.get(key, Counter()).most_common(3))
            out.append({
                "key": key,
                "label": rule.step.label,
                "n": n,
                "correct": _pct(c.get("correct", 0), n),
                "carried": _pct(c.get("carried", 0), n),
                "wrong": _pct(c.get("wrong", 0), n),
                "missing": _pct(c.get("missing", 0), n),
                "bar_correct": 100.0 * c.get("correct", 0) / n,
                "bar_carried": 100.0 * c.get("carried", 0) / n,
                "diagnoses": top or "—",
            })
        return out

    def _accuracy_plot(self, graded: list[dict]) -> dict | None:
        """Coordinates for an SVG dot plot: each group's recomputed result against its reference, in percent.

        Each group is placed by its own error, (result − reference)/reference,
        because references may differ between groups (the ellipsoid's radius
        along each group's own line).
        """
        acc = self.spec.accuracy
        methods = [m for m in self.spec.methods if any(m.id in (s["results"] or {}) for s in graded)]
        if acc is None or not methods:
            return None
        errors = {}
        references = []
        angular = all(self.spec.steps[self.spec.step_key(m.id, m.result_step)].step.kind == "angle" for m in methods)
        for m in methods:
            pts = []
            for s in graded:
                value, ref, unit, sigma = (s["results"] or {}).get(m.id, (None, None, None, None))
                if acc.kind == "sigma":
                    if value is not None and ref is not None and sigma:
                        pts.append(((value - ref) / sigma, s, value, unit))
                        references.append(ref)
                elif value is not None and ref is not None and (angular or ref):
                    pts.append(((value - ref) if angular else 100.0 * (value - ref) / ref, s, value, unit))
                    references.append(ref)
            errors[m.id] = pts
        if not references:
            return None
        axis_unit = "%"
        if acc.kind == "sigma":  # each group by its own propagated standard deviation
            axis_unit = "σ"
            full_pct, zero_pct, band_note = acc.full_within, acc.zero_beyond, ""
        elif angular:  # differences in the result's own unit
            axis_unit = next(u for pts in errors.values() for _, _, _, u in pts)
            full_pct = float(from_si(acc.full_within, axis_unit, "angle"))
            zero_pct = float(from_si(acc.zero_beyond, axis_unit, "angle"))
            band_note = ""
        elif acc.kind == "relative":
            full_pct, zero_pct = 100 * acc.full_within, 100 * acc.zero_beyond
            band_note = ""
        else:  # absolute bands: drawn at the median reference
            unit = next(u for pts in errors.values() for _, _, _, u in pts)
            median_ref_si = float(to_si(float(np.median(references)), unit, "length"))
            full_pct, zero_pct = 100 * acc.full_within / median_ref_si, 100 * acc.zero_beyond / median_ref_si
            band_note = " (bands drawn for the median reference)"
        all_err = [e for pts in errors.values() for e, *_ in pts]
        span = max([zero_pct * 1.3] + [abs(e) * 1.05 for e in all_err])
        span = min(span, max(zero_pct * 4, 1e-9))  # far outliers sit at the edge, marked
        width, left, right = 860, 190, 20
        row_h, top = 56, 30
        height = top + row_h * len(methods) + 40

        def x(e):
            e = min(max(e, -span), span)
            return round(left + (e + span) / (2 * span) * (width - left - right), 1)

        rows = []
        for i, m in enumerate(methods):
            y = top + row_h * i + row_h / 2
            dots = []
            for j, (e, s, value, unit) in enumerate(errors[m.id]):
                jitter = ((j * 7) % 11 - 5) * 3.0
                dots.append({
                    "x": x(e), "y": round(y + jitter, 1), "clipped": abs(e) > span,
                    "title": f"{s['group'] or s['student_id']}: {fmt_number(value)} {unit} ({e:+.3g} {axis_unit})",
                })
            rows.append({"label": m.title, "y": y, "label_y": y + 4, "dots": dots, "n": len(dots)})
        ticks = []
        step = _nice_step(2 * span / 6)
        t = math.ceil(-span / step) * step
        while t <= span + 1e-12:
            ticks.append({"x": x(t), "label": f"{t:+g} {axis_unit}" if abs(t) > 1e-12 else "0"})
            t += step
        bottom = top + row_h * len(methods)
        return {
            "width": width, "height": height, "left": left, "right_edge": width - right,
            "top": top - 10, "bottom": bottom, "band_h": row_h * len(methods) + 10,
            "ref_x": x(0.0), "ref_text_x": x(0.0) + 4, "ref_text_y": top, "ref_label": "reference",
            "full_x0": x(-full_pct), "full_w": round(x(full_pct) - x(-full_pct), 1),
            "zero_x0": x(-zero_pct), "zero_w": round(x(zero_pct) - x(-zero_pct), 1),
            "rows": rows, "ticks": ticks, "axis_y": bottom + 16, "tick_y2": bottom + 4,
            "band_text": f"inner band: full accuracy points ({acc.text}){band_note}",
        }

    def _histogram(self, percents: list[float], pass_pct: float) -> dict | None:
        if not percents:
            return None
        counts, edges = np.histogram(np.clip(percents, 0, 100), bins=10, range=(0, 100))
        width, height, left, bottom = 520, 200, 40, 170
        bar_w = (width - left - 10) / 10
        top_count = max(int(counts.max()), 1)
        bars = []
        for i, c in enumerate(counts):
            h = 140.0 * c / top_count
            bars.append({
                "x": round(left + i * bar_w + 2, 1), "y": round(bottom - h, 1), "w": round(bar_w - 4, 1),
                "h": round(h, 1), "count": int(c), "label": f"{int(edges[i])}–{int(edges[i + 1])}",
                "label_x": round(left + i * bar_w + bar_w / 2, 1), "count_y": round(bottom - h - 4, 1),
                "below_pass": edges[i + 1] <= pass_pct,
            })
        return {"width": width, "height": height, "bars": bars, "bottom": bottom, "left": left,
                "label_y": bottom + 16, "axis_right": width - 10,
                "pass_text_x": round(left + pass_pct / 100 * (width - left - 10) + 4, 1),
                "pass_x": round(left + pass_pct / 100 * (width - left - 10), 1), "pass_label": f"pass {pass_pct:.0f} %"}


def _pct(count, n) -> str:
    return f"{100.0 * count / n:.0f} %" if n else "—"


def _nice_step(raw: float) -> float:
    exp = math.floor(math.log10(raw))
    for m in (1, 2, 2.5, 5, 10):
        if m * 10**exp >= raw:
            return m * 10**exp
    return 10 ** (exp + 1)
