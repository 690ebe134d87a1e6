"""Outputs are all or nothing: kill -9 at any moment, a full disk, a read-only folder.

Each kill runs `labcheck grade` in a subprocess that SIGKILLs itself at a chosen point (or after a
random delay); afterwards the output folder must hold the previous complete run or nothing, and a
rerun must give outputs byte-identical to an uninterrupted run (SOURCE_DATE_EPOCH fixes the stated time).
"""

import errno
import json
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from labcheck.cli.main import main

from conftest import csv_bytes, good_dip_rows

EPOCH = {"SOURCE_DATE_EPOCH": "1767225600"}
FOREIGN = "instructor-notes.txt"  # the instructor's own file in the output folder: carried over, never lost

KILL_AT = {
    # point: code run in the child before grading, patching labcheck to SIGKILL itself there
    "fifth sheet": """
import labcheck.run.batch as b
real = b._write_text
calls = []
def write(path, text):
    calls.append(path)
    if len(calls) == 5: kill()
    real(path, text)
b._write_text = write""",
    "gradebook written": """
import labcheck.report.outputs as o
real = o.GradebookWriter.close
def close(self):
    real(self); kill()
o.GradebookWriter.close = close""",
    "results closed": """
import labcheck.report.outputs as o
real = o.ResultsWriter.close
def close(self, tail=None):
    real(self, tail); kill()
o.ResultsWriter.close = close""",
    "between the two renames": """
import labcheck.run.batch as b
real = b.os.replace
calls = []
class _Os:
    def __getattr__(self, name): return getattr(os, name)
    def replace(self, src, dst):
        calls.append(src)
        if len(calls) == 2: kill()
        real(src, dst)
b.os = _Os()""",
    "before carrying the instructor's files": """
import labcheck.run.batch as b
def carry(src, dst): kill()
b._carry_foreign_files = carry""",
}

CHILD = """
import os, signal, sys
def kill(): os.kill(os.getpid(), signal.SIGKILL)
{patch}
from labcheck.cli.main import main
sys.exit(main(sys.argv[1:]))
"""


def _inputs(folder: Path, n: int, offset: int) -> Path:
    folder.mkdir(parents=True)
    for i in range(n):
        h = 8.0 + 0.37 * ((i + offset) % 17)
        (folder / f"g{i:03d}.csv").write_bytes(csv_bytes(good_dip_rows(h=h, sid=f"s{i + offset:03d}")))
    return folder


def _grade(inp: Path, out: Path, patch: str = "", *, kill_after: float | None = None) -> int:
    args = ["grade", "horizon_dip", str(inp), "--out", str(out), "--quiet", "--force"]
    env = {**os.environ, **EPOCH}
    proc = subprocess.Popen([sys.executable, "-c", CHILD.format(patch=patch), *args], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    if kill_after is not None:
        time.sleep(kill_after)
        proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=120)
    return proc.returncode


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _complete(folder: Path) -> bool:
    try:
        return json.loads((folder / "results.json").read_text())["run"]["complete"] is True
    except (OSError, ValueError, KeyError):
        return False


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Inputs A and B, and the outputs of uninterrupted runs: A, then B over A (with an instructor's file)."""
    root = tmp_path_factory.mktemp("atomic")
    a, b = _inputs(root / "A", 12, 0), _inputs(root / "B", 20, 100)
    ref = root / "ref"
    assert _grade(a, ref) == 0
    (ref / FOREIGN).write_text("my notes")
    snap_a = _snapshot(ref)
    assert _grade(b, ref) == 0
    snap_b = _snapshot(ref)
    assert snap_b[FOREIGN] == b"my notes" and snap_a != snap_b
    return root, a, b, snap_a, snap_b


@pytest.mark.parametrize("point", list(KILL_AT))
def test_kill_at_a_point_leaves_the_previous_run_or_nothing(runs, tmp_path, point):
    root, a, b, snap_a, snap_b = runs
    out = tmp_path / "graded"
    assert _grade(a, out) == 0
    (out / FOREIGN).write_text("my notes")
    assert _grade(b, out, KILL_AT[point]) == -signal.SIGKILL
    if out.exists():
        now = _snapshot(out)
        assert now == snap_a or {k: v for k, v in now.items() if k != FOREIGN} == \
            {k: v for k, v in snap_b.items() if k != FOREIGN}, "a half-written run in the output folder"
    assert _grade(b, out) == 0  # the rerun tidies what the killed run left, and finishes
    assert _snapshot(out) == snap_b
    assert not any(p.name.startswith(".graded.labcheck") for p in tmp_path.iterdir())


def test_kill_at_random_moments(runs, tmp_path):
    root, a, b, snap_a, snap_b = runs
    rng = random.Random(8)
    for trial in range(4):
        out = tmp_path / f"graded{trial}"
        assert _grade(a, out) == 0
        (out / FOREIGN).write_text("my notes")
        _grade(b, out, kill_after=rng.uniform(0.2, 2.5))
        if out.exists():
            now = _snapshot(out)
            assert now in (snap_a, snap_b) or _snapshot(out) == {k: v for k, v in snap_b.items() if k != FOREIGN}
            assert _complete(out)
        assert _grade(b, out) == 0 and _snapshot(out) == snap_b


def test_rerun_is_byte_identical(runs, tmp_path):
    root, a, b, snap_a, snap_b = runs
    assert _grade(b, tmp_path / "one") == 0 and _grade(b, tmp_path / "two") == 0
    assert _snapshot(tmp_path / "one") == _snapshot(tmp_path / "two")


# ---------------------------------------------------------------- full disk, read-only folder

def _mount_tmpfs(path: Path, size: str) -> bool:
    path.mkdir()
    if os.geteuid() != 0:
        return False
    return subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(path)],
                          capture_output=True).returncode == 0


@pytest.fixture
def small_disk(tmp_path):
    disk = tmp_path / "disk"
    mounted = _mount_tmpfs(disk, "400k")
    yield disk, mounted
    if mounted:
        subprocess.run(["umount", "-l", str(disk)], capture_output=True)


def test_a_full_disk_is_one_line_and_keeps_the_previous_run(tmp_path, small_disk, monkeypatch, capsys):
    disk, mounted = small_disk
    out = disk / "graded"
    assert main(["grade", "horizon_dip", str(_inputs(tmp_path / "A", 2, 0)), "--out", str(out), "--quiet"]) == 0
    before = _snapshot(out)
    if not mounted:  # no tmpfs here: the OS error is injected where the outputs are written
        import labcheck.run.batch as batch

        def full(path, text):
            raise OSError(errno.ENOSPC, "No space left on device")
        monkeypatch.setattr(batch, "_write_text", full)
    capsys.readouterr()
    code = main(["grade", "horizon_dip", str(_inputs(tmp_path / "B", 60, 100)), "--out", str(out), "--quiet", "--force"])
    err = capsys.readouterr().err
    assert code == 3
    assert err.strip().count("\n") == 0 and "the disk is full" in err and "Traceback" not in err
    assert _snapshot(out) == before
    assert [p.name for p in disk.iterdir()] == ["graded"]  # no staging left behind


def test_a_read_only_folder_is_one_line(tmp_path, small_disk, monkeypatch, capsys):
    disk, mounted = small_disk
    if mounted:
        subprocess.run(["mount", "-o", "remount,ro", str(disk)], check=True)
    else:
        real_mkdir = Path.mkdir

        def ro(self, *a, **k):
            if self.name.endswith("labcheck-staging"):
                raise OSError(errno.EROFS, "Read-only file system")
            return real_mkdir(self, *a, **k)
        monkeypatch.setattr(Path, "mkdir", ro)
    code = main(["grade", "horizon_dip", str(_inputs(tmp_path / "A", 2, 0)), "--out", str(disk / "graded"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 3 and "read-only file system" in err and err.strip().count("\n") == 0


def test_out_equal_to_an_input_folder_is_refused(tmp_path, capsys):
    inp = _inputs(tmp_path / "A", 2, 0)
    for out in (inp, tmp_path):
        assert main(["grade", "horizon_dip", str(inp), "--out", str(out), "--quiet", "--force"]) == 2
        assert "choose a separate output folder" in capsys.readouterr().err
    assert sorted(p.name for p in inp.iterdir()) == ["g000.csv", "g001.csv"]


def test_an_empty_input_is_said_plainly(tmp_path, capsys):
    (tmp_path / "empty").mkdir()
    assert main(["grade", "horizon_dip", str(tmp_path / "empty"), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert "found no submission files" in capsys.readouterr().err
    assert not (tmp_path / "out").exists()


# ---------------------------------------------------------------- parallel grading (--jobs)

def test_jobs_1_and_jobs_2_give_byte_identical_outputs(runs, tmp_path, monkeypatch):
    root, a, b, snap_a, snap_b = runs
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH["SOURCE_DATE_EPOCH"])
    for jobs in (1, 2):
        assert main(["grade", "horizon_dip", str(b), "--out", str(tmp_path / f"j{jobs}"), "--quiet",
                     "--jobs", str(jobs)]) == 0
    assert _snapshot(tmp_path / "j1") == _snapshot(tmp_path / "j2")


def test_jobs_give_byte_identical_demo_sections(tmp_path, monkeypatch):
    from labcheck.demo import SECTIONS

    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH["SOURCE_DATE_EPOCH"])
    for jobs in (1, 2):
        assert main(["demo", "--out", str(tmp_path / f"d{jobs}"), "--quiet", "--jobs", str(jobs)]) == 0
    for section in SECTIONS:
        one, two = (_snapshot(tmp_path / f"d{j}" / section.folder / "graded") for j in (1, 2))
        assert one == two, section.lab


def test_a_worker_that_dies_costs_only_its_own_file(tmp_path, monkeypatch):
    # A file that kills its worker process (a crash outside Python, the OOM killer): with fork, the
    # patch below reaches the workers; the file becomes an error record and the rest are graded.
    import labcheck.run.batch as batch

    real = batch._FileGrader.grade

    def deadly(self, item):
        if item.source.endswith("g003.csv"):
            os._exit(1)
        return real(self, item)

    monkeypatch.setattr(batch._FileGrader, "grade", deadly)
    inp = _inputs(tmp_path / "A", 12, 0)
    (inp / ".DS_Store").write_bytes(b"clutter")  # a skipped file in the dead worker's chunk of 8
    code = main(["grade", "horizon_dip", str(inp), "--out", str(tmp_path / "out"), "--quiet", "--jobs", "2"])
    assert code == 3
    results = json.loads((tmp_path / "out" / "results.json").read_text())
    assert [s["file"] for s in results["skipped"]] == ["A/.DS_Store"]
    subs = results["submissions"]
    assert len(subs) == 12
    assert [s["status"] for s in subs].count("graded") == 11
    dead = next(s for s in subs if s["submission"].endswith("g003.csv"))
    assert dead["status"] == "error" and "worker process died" in dead["error"]
    assert "died" in (tmp_path / "out" / "labcheck-errors.log").read_text()


def test_workers_die_with_a_killed_run(runs, tmp_path):
    # Regression: kill -9 of labcheck left its worker processes running (they held the task pipe open).
    root, a, b, snap_a, snap_b = runs
    marker = f"labcheck-orphan-check-{os.getpid()}-{time.time_ns()}"
    patch = KILL_AT["fifth sheet"] + f"\n# {marker}"
    assert _grade(b, tmp_path / "graded", patch) == -signal.SIGKILL
    deadline = time.time() + 5
    while time.time() < deadline:
        alive = []
        for proc in Path("/proc").iterdir():
            try:
                if proc.name.isdigit() and marker.encode() in (proc / "cmdline").read_bytes():
                    alive.append(proc.name)
            except OSError:
                continue
        if not alive:
            break
        time.sleep(0.2)
    assert not alive, f"worker processes outlived the killed run: {alive}"
