"""Benchmark: grade sections of growing size and report ratios measured in one run.

Usage:  python benchmarks/bench_grade.py [N_SMALL N_LARGE]   (default 200 2000)

Builds N copies of the demo's submissions (new student ids, same data) as
CSV files in a temporary folder, grades them with the library (no
subprocess), and prints per-submission time and peak memory for both sizes.
The machine is shared and noisy: read the ratio (large per-submission time /
small per-submission time; 1.0 is perfectly linear), not the absolute times.
"""

from __future__ import annotations

import csv
import io
import resource
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

from labcheck.run.batch import grade_section
from labcheck.demo.dip import dip_section
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec


def write_section(folder: Path, n: int) -> None:
    groups = [g for g in dip_section() if g.number != 15]
    for i in range(n):
        g = groups[i % len(groups)]
        rows = [(p, it, f"bench-{i:06d}" if it == "student_id" else v, u, note) for p, it, v, u, note in g.rows]
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["part", "item", "value", "unit", "note"])
        w.writerows(rows)
        (folder / f"sub_{i:06d}.csv").write_text(buf.getvalue(), encoding="utf-8")


def run(n: int) -> tuple[float, float]:
    """Seconds to grade n submissions (timed without tracing), and the peak traced memory of a second pass."""
    spec = load_spec(shipped_spec("horizon_dip"))
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "in"
        src.mkdir()
        write_section(src, n)
        t0 = time.perf_counter()
        summary = grade_section(spec, [src], Path(tmp) / "out")
        elapsed = time.perf_counter() - t0
        assert summary.n_graded == n, summary
        tracemalloc.start()  # memory in a separate pass: tracing slows Python severalfold
        grade_section(spec, [src], Path(tmp) / "out2")
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    return elapsed, peak / 2**20


def main() -> None:
    small, large = (int(a) for a in sys.argv[1:3]) if len(sys.argv) >= 3 else (200, 2000)
    run(20)  # warm imports and caches
    t_small, m_small = run(small)
    t_large, m_large = run(large)
    per_small, per_large = t_small / small, t_large / large
    print(f"N={small:>6}: {t_small:7.2f} s  {1000 * per_small:6.2f} ms/submission  peak traced memory {m_small:6.1f} MiB")
    print(f"N={large:>6}: {t_large:7.2f} s  {1000 * per_large:6.2f} ms/submission  peak traced memory {m_large:6.1f} MiB")
    print(f"per-submission time ratio (large/small): {per_large / per_small:.2f}  (1.00 = linear)")
    print(f"peak memory ratio (large/small): {m_large / m_small:.2f} for {large / small:.0f}x the submissions")
    print(f"max resident set size of this process: {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB")


if __name__ == "__main__":
    main()
