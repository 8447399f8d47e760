"""Exact final-wins distribution of one club, for tests/outlook.rs.

Reads tests/reference/outlook_fixture.json (one demo club's games left: its strength, each opponent's,
the venue and the home win% used; written by tests/outlook.rs with REGENERATE_OUTLOOK_FIXTURE=1),
recomputes every game's chance with the published log5 formula (B. James, 1981),
    log5(a, b) = (a - a*b) / (a + b - 2*a*b),
applied twice -- club against opponent, then the result against the road side's (1 - h) -- and checks
it against the fixture's chance. With strengths held fixed the club's wins in its games left are a
sum of independent Bernoulli trials: a Poisson-binomial, whose pmf scipy.stats.poisson_binom gives.

Writes tests/reference/outlook_reference.json. Libraries: numpy and scipy at the versions in
tests/reference/requirements.txt (scipy 1.17.1, numpy 2.4.6). Run from the repository root:
    python tests/reference/outlook_reference.py
"""

import json

import numpy as np
import scipy
from scipy.stats import poisson_binom


def log5(a, b):
    return (a - a * b) / (a + b - 2.0 * a * b)


def main():
    with open("tests/reference/outlook_fixture.json") as f:
        fx = json.load(f)
    h = fx["home_win_pct"]
    chances = []
    for g in fx["games"]:
        if g["at_home"]:
            home, road = g["strength"], g["opponent_strength"]
        else:
            home, road = g["opponent_strength"], g["strength"]
        p_home = log5(log5(home, road), 1.0 - h)
        assert abs(p_home - g["home_probability"]) < 1e-12, (p_home, g)
        chances.append(p_home if g["at_home"] else 1.0 - p_home)
    p = np.array(chances)
    k = np.arange(len(p) + 1)
    pmf = poisson_binom.pmf(k, p)
    out = {
        "source": "tests/reference/outlook_reference.py: scipy.stats.poisson_binom "
        f"(scipy {scipy.__version__}, numpy {np.__version__}) over the log5 chances of "
        "tests/reference/outlook_fixture.json",
        "club": fx["club"],
        "games_left": len(p),
        "mean": float(p.sum()),
        "sd": float(np.sqrt((p * (1 - p)).sum())),
        "pmf": [float(x) for x in pmf],
    }
    with open("tests/reference/outlook_reference.json", "w") as f:
        json.dump(out, f, indent=2)
        f.write("\n")


if __name__ == "__main__":
    main()
