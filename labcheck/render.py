"""Render feedback sheets and the section summary (HTML).

Templates never compute: everything they show is prepared here as text or
as ready-made coordinates.  Autoescape is always on; missing values are
errors (StrictUndefined), not silent blanks.
"""

from __future__ import annotations

import math
from datetime import datetime, timezone

import jinja2
from markupsafe import Markup
import numpy as np
import pandas as pd

from . import __version__
from .resources import templates_dir
from .spec import LabSpec

__all__ = ["Renderer", "fmt_number", "VERDICT_WORDS"]

VERDICT_WORDS = {
    "correct": "correct",
    "carried": "carried forward",
    "wrong": "wrong",
    "missing": "missing",
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
    return f"{v:,.{decimals}f}".replace(",", "\u2009")


def _points(p) -> str:
    if p is None:
        return "—"
    return f"{p:g}" if float(p).is_integer() else f"{p:.2f}"


class Renderer:
    def __init__(self, spec: LabSpec):
        self.spec = spec
        self.env = jinja2.Environment(
            loader=jinja2.FileSystemLoader(str(templates_dir())),
            autoescape=jinja2.select_autoescape(enabled_extensions=("html", "htm", "xml", "j2"), default=True),
            undefined=jinja2.StrictUndefined,
            trim_blocks=True,
            lstrip_blocks=True,
        )
        self.sheet_template = self.env.get_template("feedback.html")
        self.section_template = self.env.get_template("section.html")
        # Our own stylesheet, not student data: marked safe so quotes survive inside <style>.
        self.css = Markup((templates_dir() / "style.css").read_text(encoding="utf-8"))
        self.generated = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")

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
                    "expected": f"{fmt_number(s['expected'])} {unit}" if s["expected"] is not None else "—",
                    "reported": f"{fmt_number(s['reported'])} {unit}" if s["reported"] is not None else "—",
                    "reported_as": s["reported_as"] or "",
                    "carried": f"{fmt_number(s['carried_expected'])} {unit}" if s["carried_expected"] is not None else "",
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
                },
                "quality": [q for q in record["quality"] if q["method"] == m.id],
            })
        pct = 100.0 * record["score"] / record["max_score"] if record["max_score"] else 0.0
        return self.sheet_template.render(
            css=self.css,
            spec={"title": spec.title, "course": spec.course, "id": spec.id, "sha": spec.sha256[:12], "safety": spec.safety},
            who={k: record.get(k) or "" for k in ("student_id", "name", "group", "date", "site", "submission")},
            score=f"{_points(record['score'])} / {_points(record['max_score'])}",
            percent=f"{pct:.0f} %",
            methods=methods,
            flags=record["flags"],
            notes=record["notes"],
            advisory=ADVISORY,
            version=__version__,
            generated=self.generated,
        )

    # --------------------------------------------------------------- section
    def section(self, summaries: list[dict], skipped: list[dict], sheet_links: dict[int, str]) -> str:
        """Render section.html from the slim per-submission summaries kept by the batch."""
        spec = self.spec
        graded = [s for s in summaries if s["status"] == "graded"]
        unreadable = [s for s in summaries if s["status"] == "unreadable"]
        missing = [s for s in summaries if s["status"] == "missing"]
        percents = [100.0 * s["score"] / s["max_score"] for s in graded if s["max_score"]]
        pass_pct = 100.0 * spec.pass_fraction
        n_pass = sum(p >= pass_pct - 1e-9 for p in percents)

        step_rows = self._step_table(graded)
        radius_plot = self._radius_plot(graded)
        histogram = self._histogram(percents, pass_pct)

        students = []
        for i, s in enumerate(summaries):
            students.append({
                "student_id": s["student_id"] or "",
                "name": s["name"] or "",
                "group": s["group"] or "",
                "submission": s["submission"] or "",
                "status": s["status"],
                "score": f"{_points(s['score'])} / {_points(s['max_score'])}" if s["status"] == "graded" else "—",
                "flags": s["n_flags"],
                "link": sheet_links.get(i, ""),
                "unmatched": s.get("unmatched", False),
            })
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
        return self.section_template.render(
            css=self.css,
            spec={"title": spec.title, "course": spec.course, "id": spec.id, "sha": spec.sha256[:12], "safety": spec.safety},
            stats=stats,
            histogram=histogram,
            step_rows=step_rows,
            radius_plot=radius_plot,
            unreadable=[{"submission": s["submission"], "error": s["error"]} for s in unreadable],
            missing=[{"student_id": s["student_id"], "name": s["name"]} for s in missing],
            unmatched=[s for s in students if s["unmatched"]],
            skipped=skipped,
            students=students,
            version=__version__,
            generated=self.generated,
        )

    def _step_table(self, graded: list[dict]) -> list[dict]:
        rows = [(key, v, d) for s in graded for key, v, d in s["verdicts"]]
        if not rows:
            return []
        df = pd.DataFrame(rows, columns=["step", "verdict", "diagnosis"])
        counts = pd.crosstab(df["step"], df["verdict"])
        out = []
        for key, rule in self.spec.steps.items():
            if key not in counts.index:
                continue
            c = counts.loc[key]
            n = int(c.sum())
            diag = df[(df["step"] == key) & df["diagnosis"].notna()]["diagnosis"].value_counts()
            top = ", ".join(f"{label} ({count})" for label, count in diag.head(3).items())
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

    def _radius_plot(self, graded: list[dict]) -> dict | None:
        """Coordinates for an SVG dot plot of each method's recomputed radius against the reference."""
        methods = [m for m in self.spec.methods if any(m.id in s["radii"] for s in graded)]
        if not methods:
            return None
        ref = None
        values = []
        for s in graded:
            for mid, (value, reference) in s["radii"].items():
                ref = reference
                if value is not None:
                    values.append(value)
        if ref is None:
            return None
        acc = self.spec.accuracy
        if acc.kind == "relative":
            zero_half = acc.zero_beyond * ref
            full_half = acc.full_within * ref
        else:
            zero_half, full_half = acc.zero_beyond / 1000.0, acc.full_within / 1000.0
        span = max([zero_half * 1.3] + [abs(v - ref) * 1.05 for v in values])
        lo, hi = ref - span, ref + span
        width, left, right = 860, 190, 20
        row_h, top = 56, 30
        height = top + row_h * len(methods) + 40

        def x(v):
            v = min(max(v, lo), hi)
            return round(left + (v - lo) / (hi - lo) * (width - left - right), 1)

        rows = []
        for i, m in enumerate(methods):
            y = top + row_h * i + row_h / 2
            dots = []
            pts = [s for s in graded if m.id in s["radii"] and s["radii"][m.id][0] is not None]
            for j, s in enumerate(pts):
                v = s["radii"][m.id][0]
                jitter = ((j * 7) % 11 - 5) * 3.0
                dots.append({
                    "x": x(v), "y": round(y + jitter, 1),
                    "clipped": v < lo or v > hi,
                    "title": f"{s['group'] or s['student_id']}: {fmt_number(v)} km",
                })
            rows.append({"label": m.title, "y": y, "label_y": y + 4, "dots": dots, "n": len(pts)})
        ticks = []
        step = _nice_step((hi - lo) / 6)
        t = math.ceil(lo / step) * step
        while t <= hi:
            ticks.append({"x": x(t), "label": fmt_number(t, 4)})
            t += step
        return {
            "width": width, "height": height, "left": left, "right_edge": width - right,
            "top": top - 10, "bottom": top + row_h * len(methods),
            "ref_x": x(ref), "ref_label": f"reference {fmt_number(ref, 8)} km",
            "full_x0": x(ref - full_half), "full_w": round(x(ref + full_half) - x(ref - full_half), 1),
            "zero_x0": x(ref - zero_half), "zero_w": round(x(ref + zero_half) - x(ref - zero_half), 1),
            "rows": rows, "ticks": ticks, "axis_y": top + row_h * len(methods) + 16,
            "band_h": row_h * len(methods) + 10, "ref_text_x": x(ref) + 4, "ref_text_y": top,
            "tick_y2": top + row_h * len(methods) + 4,
            "band_text": f"inner band: full accuracy points ({self.spec.accuracy.text})",
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
