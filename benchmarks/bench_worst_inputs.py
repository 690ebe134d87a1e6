"""The cost of the worst single inputs the caps allow (and a few just past them).

Each case is read by `iter_submissions` and normalised in a fresh subprocess; the script reports wall
time and the child's peak resident memory, and the same for a child that only imports labcheck and
reads a tiny CSV (the floor), so the ratio is measured in one run on this machine.

    python benchmarks/bench_worst_inputs.py [--keep DIR]

Target (issue 8): every input inside the caps costs under 1 s and 200 MB above the floor.
"""

from __future__ import annotations

import argparse
import io
import json
import subprocess
import sys
import tempfile
import zipfile
from pathlib import Path

CHILD = r"""
import json, resource, sys, time
import tracemalloc
t0 = time.perf_counter()
from labcheck.reading.ingest import RawSubmission, iter_submissions
from labcheck.base.resources import shipped_spec
from labcheck.model.spec import load_spec
from labcheck.reading.submission import normalise
spec = load_spec(shipped_spec("horizon_dip"))
t1 = time.perf_counter()
def read_all():
    n = errors = 0
    first_error = ""
    for item in iter_submissions([sys.argv[1]]):
        if isinstance(item, RawSubmission):
            n += 1
            if item.error:
                errors += 1
                first_error = first_error or item.error
            else:
                normalise(item, spec)
    return n, errors, first_error
n, errors, first_error = read_all()
t2 = time.perf_counter()
tracemalloc.start()  # a second, untimed pass: the peak memory reading allocates
read_all()
traced = tracemalloc.get_traced_memory()[1] / 2**20
print(json.dumps({"seconds": t2 - t1, "import_seconds": t1 - t0, "files": n, "unreadable": errors,
                  "first_error": first_error[:90], "traced_mb": traced,
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""

HEADER = "part,item,value,unit,note\n"


def _xlsx(rows_xml: str, extra_parts: dict | None = None) -> bytes:
    """A minimal valid workbook with the given sheetData rows (hand-written XML, as a hostile file would be)."""
    parts = {
        "[Content_Types].xml": '<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Default Extension="xml" ContentType="application/xml"/>'
        '<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
        '<Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        '</Types>',
        "_rels/.rels": '<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        '<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/>'
        '</Relationships>',
        "xl/workbook.xml": '<?xml version="1.0"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
        'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets>'
        '<sheet name="Sheet1" sheetId="1" r:id="rId1"/></sheets></workbook>',
        "xl/_rels/workbook.xml.rels": '<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        '<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/>'
        '</Relationships>',
        "xl/worksheets/sheet1.xml": '<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        f"<sheetData>{rows_xml}</sheetData></worksheet>",
    }
    parts.update(extra_parts or {})
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, text in parts.items():
            z.writestr(name, text)
    return buf.getvalue()


def _is(ref: str, text: str) -> str:
    return f'<c r="{ref}" t="inlineStr"><is><t>{text}</t></is></c>'


def _header_row() -> str:
    return '<row r="1">' + "".join(_is(f"{c}1", h) for c, h in zip("ABCDE", HEADER.strip().split(","))) + "</row>"


def cases(folder: Path) -> dict[str, Path]:
    out = {}

    def put(name: str, data: bytes) -> None:
        (folder / name).write_bytes(data)
        out[name] = folder / name

    put("tiny.csv", (HEADER + "observation,eye_height,12.5,m,\n").encode())
    # Cells in the last column of every row: 29 KB on disk (the 790 MB / 12 s case).
    rows = "".join(f'<row r="{r}">{_is(f"A{r}", "observation")}{_is(f"B{r}", "dip_angle")}'
                   f'<c r="C{r}"><v>6.0</v></c><c r="XFD{r}"><v>1</v></c></row>' for r in range(2, 4002))
    put("last_column.xlsx", _xlsx(_header_row() + rows))
    # A cell at the last row a sheet has: a million empty rows in between.
    put("last_row.xlsx", _xlsx(_header_row() + '<row r="1048576"><c r="A1048576"><v>1</v></c></row>'))
    # The largest sheet part inside the cap (4 MiB), made of tiny cells.
    per_row = '<row r="{r}"><c r="A{r}"><v>1</v></c><c r="B{r}"><v>2</v></c><c r="C{r}"><v>3</v></c></row>'
    body, r = [], 2
    while sum(len(x) for x in body) < 4 * 1024 * 1024 - 2000:
        body.append(per_row.format(r=r))
        r += 1
    put("sheet_at_cap.xlsx", _xlsx(_header_row() + "".join(body)))
    # CSV at the file cap (5 MiB): the row cap stops it; one with 5000 rows of long notes; one giant line.
    put("csv_5mb_rows.csv", (HEADER + "observation,dip_angle,6.0,arcmin,\n" * 150_000)[: 5 * 1024 * 1024].encode())
    put("csv_5000_long_notes.csv", (HEADER + ("observation,dip_angle,6.0,arcmin," + "n" * 1000 + "\n") * 5000).encode())
    put("csv_one_line.csv", (HEADER.strip() + "," * (5 * 1024 * 1024 - 100)).encode())
    # A zip of 250 members, each a highly compressible 5 MiB CSV (the 6-minute case).
    member = (HEADER + "observation,dip_angle,6.0,arcmin,\n" * 160_000)[: 5 * 1024 * 1024 - 10].encode()
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for i in range(250):
            z.writestr(f"s/{i:03d}.csv", member)
    put("zip_250_large.zip", buf.getvalue())
    # A zip with 200,000 empty members: past the 50,000 cap, refused from its directory record.
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_STORED) as z:
        for i in range(200_000):
            z.writestr(f"m{i}.csv", b"")
    put("zip_200k_members.zip", buf.getvalue())
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--keep", metavar="DIR", help="write the cases here and keep them")
    args = ap.parse_args()
    folder = Path(args.keep or tempfile.mkdtemp())
    folder.mkdir(parents=True, exist_ok=True)
    files = cases(folder)
    results = {}
    for name, path in files.items():
        proc = subprocess.run([sys.executable, "-c", CHILD, str(path)], capture_output=True, text=True, check=True)
        results[name] = json.loads(proc.stdout)
    floor = results["tiny.csv"]["peak_mb"]
    print(f"{'case':<26} {'size':>10} {'read s':>8} {'RSS MB':>7} {'traced MB':>10}  outcome")
    for name, r in results.items():
        size = files[name].stat().st_size
        outcome = f"{r['files']} file(s), {r['unreadable']} unreadable" + (f": {r['first_error']}" if r["first_error"] else "")
        print(f"{name:<26} {size:>10,} {r['seconds']:>8.3f} {r['peak_mb']:>7.1f} {r['traced_mb']:>10.1f}  {outcome[:80]}")
    worst = max((r for n, r in results.items() if n != "zip_250_large.zip"), key=lambda r: r["seconds"])
    print(f"\nfloor (import labcheck, read one tiny CSV): {floor:.1f} MB peak RSS; "
          f"worst single file {worst['seconds']:.3f} s; traced = peak Python allocation while reading")


if __name__ == "__main__":
    main()
