#!/usr/bin/env python3
"""Reference values for runcal's luck signal and projections, computed with
scipy and statsmodels (versions recorded in the output).

Written to luck_values.json next to this file (committed; CI does not rerun
Python).  Definitions, independently of runcal:

  Noise model: z = (W - n*p)/sqrt(phi*n*p*(1-p)), phi the Pearson X^2/df of
  the statsmodels binomial GLM (scale="X2"); p-value 2*scipy.stats.norm.sf;
  Holm adjustment by statsmodels.stats.multitest.multipletests over the teams
  of one season.
  Shrinkage: k = 0.25/(var(win%, ddof=1) - mean(0.25/n)) for the actual
  record, k_run = (1 - phi)*k for the run-based win%.
  Talent beta after n games at p: a = (k_run/2 + n*p)/(1 - phi),
  b = (k_run/2 + n*(1-p))/(1 - phi); remaining wins ~ scipy.stats.betabinom.
  Range: for every lower end lo, the upper ends whose upper tail is nearest
  lo's lower tail (and their two neighbours); among these the range whose
  mass betabinom.cdf(hi) - betabinom.cdf(lo-1) is nearest the level, ties to
  the more balanced tails, then the shorter range.

Run from the repo root:  python3 tests/reference/luck_reference.py
"""
import json
import math
import os
import platform
import sys

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
from statsmodels.stats.multitest import multipletests

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reference import Data, glm_fit, load, logistic  # noqa: E402

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "luck_values.json")
LEVEL = 0.8


def central_range(n, a, b, level):
    if n == 0:
        return 0, 0, 1.0
    bb = st.betabinom(n, a, b)
    cdf = lambda j: float(bb.cdf(j)) if j >= 0 else 0.0
    lower = lambda lo: cdf(lo - 1)          # P(X < lo)
    upper = lambda hi: 1.0 - cdf(hi)        # P(X > hi)
    best = None
    for lo in range(n + 1):
        tail = lower(lo)
        gaps = [abs(upper(h) - tail) for h in range(lo, n + 1)]
        # the last of the nearest (runcal walks down from n and stops at ties)
        star = lo + min(range(len(gaps)), key=lambda i: (gaps[i], i))
        for hi in (star - 1, star, star + 1):
            if hi < lo or hi > n:
                continue
            mass = cdf(hi) - tail
            key = (abs(mass - level), abs(upper(hi) - tail), hi - lo)
            if best is None or better(key, best[0]):
                best = (key, lo, hi, mass)
    return best[1], best[2], best[3]


def better(k, b):
    eps = 1e-12
    if k[0] < b[0] - eps:
        return True
    if abs(k[0] - b[0]) > eps:
        return False
    if k[1] < b[1] - eps:
        return True
    return abs(k[1] - b[1]) <= eps and k[2] < b[2]


def ppf_mass(n, a, b):
    """Mass of the old inclusive 10%/90% percent-point range."""
    bb = st.betabinom(n, a, b)
    lo, hi = bb.ppf([0.1, 0.9])
    return float(bb.cdf(hi) - (bb.cdf(lo - 1) if lo > 0 else 0.0))


def main():
    rows = load()
    d = Data([r for r in rows if 1980 <= r["yearID"] <= 2006])
    g = glm_fit(d)
    x, phi = g["exponent"], g["dispersion"]
    # Luck of the 2006 clubs under the quasi-binomial noise model.
    teams = []
    for i, r in enumerate(d.rows):
        if r["yearID"] != 2006:
            continue
        n = float(d.n[i])
        p = float(logistic(x, d.l[i]))
        z = (float(d.W[i]) - n * p) / math.sqrt(phi * n * p * (1 - p))
        teams.append({"team": r["teamID"], "luck_z": z,
                      "luck_p": float(2 * st.norm.sf(abs(z)))})
    holm = multipletests([t["luck_p"] for t in teams], method="holm")[1]
    for t, h in zip(teams, holm):
        t["holm_p"] = float(h)
    # Shrinkage and the worked projection: 30-20 with 250-200 runs, 162 games.
    k = 0.25 / (float(np.var(d.y, ddof=1)) - float(np.mean(0.25 / d.n)))
    k_run = (1 - phi) * k
    W, L, RS, RA, season = 30, 20, 250.0, 200.0, 162
    n = W + L
    p = float(1 / (1 + math.exp(-x * math.log(RS / RA))))
    a = (k_run / 2 + n * p) / (1 - phi)
    b = (k_run / 2 + n * (1 - p)) / (1 - phi)
    remaining = season - n
    lo, hi, mass = central_range(remaining, a, b, LEVEL)
    example = {
        "wins": W, "losses": L, "runs_scored": RS, "runs_allowed": RA,
        "season_games": season, "exponent": x, "dispersion": phi,
        "k_actual": k, "k_run": k_run, "alpha": a, "beta": b,
        "regressed_win_pct": a / (a + b),
        "projected_wins": W + remaining * a / (a + b),
        "range": [W + lo, W + hi], "mass": mass,
    }
    # Ranges of a few beta-binomials, and the mass the old ppf ranges held.
    cases = []
    for nn, aa, bb_ in [(34, 40.0, 30.0), (56, 120.5, 99.5), (112, 150.0, 140.0),
                        (9, 1.0, 1.0), (1, 3.0, 3.0), (20, 2.0, 8.0), (81, 400.0, 400.0)]:
        lo, hi, mass = central_range(nn, aa, bb_, LEVEL)
        cases.append({"n": nn, "alpha": aa, "beta": bb_, "level": LEVEL,
                      "range": [lo, hi], "mass": mass,
                      "ppf_mass": ppf_mass(nn, aa, bb_)})
    out = {
        "generated_by": "tests/reference/luck_reference.py",
        "versions": {"python": platform.python_version(),
                     "numpy": np.__version__, "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__},
        "source": "Baseball Databank 2021.2 Teams.csv, 1980-2006",
        "dispersion": phi, "exponent": x,
        "luck_2006": teams, "projection": example, "ranges": cases,
    }
    text = json.dumps(out, indent=2) + "\n"
    with open(OUT, "w", encoding="utf-8") as f:
        f.write(text)
    print("wrote", os.path.normpath(OUT))


if __name__ == "__main__":
    main()
