"""Department scale: labcheck against its I/O floor, measured in one run.

    python benchmarks/bench_scale.py [--sizes 1000 10000 100000] [--jobs N]

For each size, builds a section of submissions mixed over the eight shipped labs (a quarter of them
XLSX), every one with readings of its own: the demo groups' readings, each moved by a unit in its last
digit with probability 1/2, so two submissions share about half their readings (Jaccard ~ 1/3, below
the integrity screen's 0.8) and the screen sees a real section.  Moved readings make some reported
steps wrong, so the diagnosis path is timed too (slower than an all-correct section).  Then, in the
same run, it times:

* the I/O floor: every input file read, and as many bytes as labcheck wrote written to as many
  files, each followed by ``sync`` (the median of ``--floor-runs`` measurements: it is a few seconds
  on a shared disk and varies by a factor of two from minute to minute);
* ``labcheck grade`` (a subprocess, as an instructor runs it, with ``--jobs``) of the whole section,
  lab by lab, into one output folder each.

It prints the ratio to the floor, the time per submission at each size and its ratio to the smallest
size, and the peak resident memory of the grading processes.  The machine is shared and noisy: read
the ratios.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from labcheck.demo import SECTIONS, csv_bytes, xlsx_bytes


def _moved(value: str, rng: random.Random) -> str:
    """The value with its last digit moved by one (a reading of its own), when it is a plain number."""
    v = value.strip()
    if not v or not v[-1].isdigit() or any(c.isalpha() for c in v.replace("e", "")):
        return value
    last = int(v[-1])
    return v[:-1] + str((last + rng.choice((1, -1))) % 10)


def build(folder: Path, n: int, seed: int = 12) -> dict[str, Path]:
    """n submissions mixed over the labs, in one folder per lab; returns lab -> folder."""
    rng = random.Random(seed)
    groups = {s.lab: [g for g in s.generate() if g.number not in s.unreadable] for s in SECTIONS}
    folders = {}
    for i in range(n):
        section = SECTIONS[i % len(SECTIONS)]
        group = groups[section.lab][(i // len(SECTIONS)) % len(groups[section.lab])]
        rows = [list(r) + [""] * (5 - len(r)) for r in group.rows]
        for r in rows:  # each reading moved with probability 1/2: two copies share about half (Jaccard ~ 1/3)
            if r[0] == "observation" and rng.random() < 0.5:
                r[2] = _moved(str(r[2]), rng)
        for r in rows:
            if r[1] == "student_id":
                r[2] = f"s{i:07d}"
        folder_lab = folders.setdefault(section.lab, folder / section.lab)
        folder_lab.mkdir(parents=True, exist_ok=True)
        xlsx = i % 4 == 3
        data = xlsx_bytes([tuple(r) for r in rows]) if xlsx else csv_bytes([tuple(r) for r in rows])
        (folder_lab / f"sub_{i:07d}.{'xlsx' if xlsx else 'csv'}").write_bytes(data)
    return folders


def build_dip(folder: Path, n: int, seed: int = 12) -> dict[str, Path]:
    """n honest dip groups, each with readings of its own (the demo generator, nothing planted), in one run."""
    from labcheck.demo.dip import dip_section

    lab_folder = folder / "horizon_dip"
    lab_folder.mkdir(parents=True)
    for i, group in enumerate(dip_section(n_groups=n, seed=seed, plant=False)):
        rows = [(p, it, f"s{i:07d}" if it == "student_id" else v, u, note) for p, it, v, u, note in group.rows]
        xlsx = i % 4 == 3
        data = xlsx_bytes(rows) if xlsx else csv_bytes(rows)
        (lab_folder / f"sub_{i:07d}.{'xlsx' if xlsx else 'csv'}").write_bytes(data)
    return {"horizon_dip": lab_folder}


def _tree_bytes(folder: Path) -> tuple[int, int]:
    files = [p for p in folder.rglob("*") if p.is_file()]
    return len(files), sum(p.stat().st_size for p in files)


def io_floor(inputs: list[Path], n_out_files: int, out_bytes: int, scratch: Path) -> float:
    """Seconds to read every input file and write n_out_files files totalling out_bytes, each phase synced."""
    subprocess.run(["sync"], check=False)
    t0 = time.perf_counter()
    total = 0
    for folder in inputs:
        for p in sorted(folder.rglob("*")):
            if p.is_file():
                total += len(p.read_bytes())
    scratch.mkdir(parents=True, exist_ok=True)
    chunk = b"x" * max(1, out_bytes // max(1, n_out_files))
    for k in range(n_out_files):
        (scratch / f"f{k:07d}").write_bytes(chunk)
    subprocess.run(["sync"], check=False)
    return time.perf_counter() - t0


def _rss_mib(pid: int) -> int:
    try:
        with open(f"/proc/{pid}/status") as fh:
            for line in fh:
                if line.startswith("VmRSS"):
                    return int(line.split()[1]) // 1024
    except OSError:
        pass
    return 0


def _run_watched(cmd: list[str]) -> tuple[subprocess.CompletedProcess, int, int]:
    """Run ``cmd``, polling the resident memory of it and of its worker processes (Linux /proc).

    Polled, not taken from RUSAGE_CHILDREN: that also counts this script's own forks (for ``sync``),
    which carry the memory of building the inputs.
    """
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    parent = worker = 0
    while proc.poll() is None:
        parent = max(parent, _rss_mib(proc.pid))
        children = Path(f"/proc/{proc.pid}/task/{proc.pid}/children")
        try:
            kids = children.read_text().split()
        except OSError:
            kids = []
        for kid in kids:
            worker = max(worker, _rss_mib(int(kid)))
        time.sleep(0.1)
    out, err = proc.communicate()
    return subprocess.CompletedProcess(cmd, proc.returncode, out, err), parent, worker


def grade_all(folders: dict[str, Path], out_root: Path, jobs: int) -> tuple[float, float, float]:
    """Wall seconds to grade every lab's folder with the CLI, and the peak RSS (MiB) of the grading parent
    and of any of its workers."""
    t0 = time.perf_counter()
    peak_parent = peak_worker = 0
    for lab, folder in folders.items():
        cmd = [sys.executable, "-m", "labcheck.cli.main", "grade", lab, str(folder), "--out", str(out_root / lab),
               "--quiet", "--jobs", str(jobs)]
        proc, parent, worker = _run_watched(cmd)
        peak_parent, peak_worker = max(peak_parent, parent), max(peak_worker, worker)
        results = out_root / lab / "results.json"
        n_files = sum(1 for p in folder.iterdir() if p.is_file())
        try:
            run = json.loads(results.read_text(encoding="utf-8"))["run"]
        except (OSError, ValueError, KeyError):
            run = {}
        if not run.get("complete") or run.get("counts", {}).get("files") != n_files:
            # An exit status alone proves nothing: a crash on import also exits 1.
            raise SystemExit(f"labcheck did not finish {lab} (exit {proc.returncode}): {proc.stderr[-2000:]}")
    subprocess.run(["sync"], check=False)
    return time.perf_counter() - t0, peak_parent, peak_worker


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000])
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--floor-runs", type=int, default=3, metavar="K",
                    help="measure the I/O floor K times and use the median (default 3)")
    ap.add_argument("--dip-only", action="store_true",
                    help="one run of fresh honest dip groups per size (the 100,000-in-one-run memory test)")
    args = ap.parse_args()
    rows = []
    for n in args.sizes:
        root = Path(tempfile.mkdtemp(prefix=f"labcheck-bench-{n}-"))
        try:
            folders = build_dip(root / "in", n) if args.dip_only else build(root / "in", n)
            elapsed, peak, worker = grade_all(folders, root / "out", args.jobs)
            n_out, out_bytes = _tree_bytes(root / "out")
            floors = []
            for k in range(args.floor_runs):  # the floor is small and the disk is shared: its median
                floors.append(io_floor(list(folders.values()), n_out, out_bytes, root / f"floor{k}"))
                shutil.rmtree(root / f"floor{k}", ignore_errors=True)
            floor = statistics.median(floors)
            rows.append((n, elapsed, floor, peak, worker))
        finally:
            shutil.rmtree(root, ignore_errors=True)
    base = rows[0][1] / rows[0][0]
    print(f"{'N':>8} {'grade s':>9} {'floor s':>8} {'x floor':>8} {'ms/sub':>8} {'vs first':>9} {'RSS parent':>11}"
          f" {'RSS worker':>11}  (MiB; --jobs {args.jobs}; {'one dip run' if args.dip_only else '8 labs'}, a quarter XLSX)")
    for n, elapsed, floor, peak, worker in rows:
        print(f"{n:>8} {elapsed:>9.2f} {floor:>8.2f} {elapsed / floor:>8.1f} {1000 * elapsed / n:>8.3f} "
              f"{(elapsed / n) / base:>9.2f} {peak:>11.0f} {worker:>11.0f}")


if __name__ == "__main__":
    main()
