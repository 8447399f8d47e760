#!/usr/bin/env python3
"""A straightforward numpy version of `runcal outlook`, for bench/compare.sh (row e).

    outlook_reference.py GAMES.csv AS_OF EXPONENT K SIMULATIONS SEED

does the work of
    runcal outlook GAMES.csv --as-of AS_OF --exponent EXPONENT --regress-games K --simulations N
with the same model (runcal's README, Methods): games on or before AS_OF are played, later ones are
left; each club's run-based win% p = 1/(1 + (RA/RS)^x); the dispersion phi = Pearson X^2/(n - 1) of
the actual records around p; strength posterior Beta(K'/2 + n'p, K'/2 + n'(1 - p)) with n' = n/(1 - phi)
and K' = K/(1 - phi); the home win% posterior Beta(2500*.54 + home wins, 2500*.46 + home losses);
every simulated season draws all strengths and the home edge, then plays each game left with the
home side's chance odds(h)*odds(s_home) / (odds(h)*odds(s_home) + odds(s_away)). One group (the
whole league); ties for first share the credit. Vectorised over seasons; prints a JSON summary.
"""
import json
import sys

import numpy as np
import pandas as pd


def main(path, as_of, exponent, k, sims, seed):
    g = pd.read_csv(path)
    played = g[g["date"] <= as_of]
    left = g[g["date"] > as_of]
    teams = sorted(set(g["home"]) | set(g["away"]))
    idx = {t: i for i, t in enumerate(teams)}
    T = len(teams)
    ph = played["home"].map(idx).to_numpy()
    pa = played["away"].map(idx).to_numpy()
    hs = played["home_score"].to_numpy(dtype=float)
    aw = played["away_score"].to_numpy(dtype=float)
    home_won = hs > aw
    wins = np.bincount(ph, home_won, T) + np.bincount(pa, ~home_won, T)
    losses = np.bincount(ph, ~home_won, T) + np.bincount(pa, home_won, T)
    rs = np.bincount(ph, hs, T) + np.bincount(pa, aw, T)
    ra = np.bincount(ph, aw, T) + np.bincount(pa, hs, T)
    n = wins + losses
    p = 1.0 / (1.0 + (ra / rs) ** exponent)
    y = wins / n
    phi = np.sum(n * (y - p) ** 2 / (p * (1 - p))) / (T - 1)
    scale = 1.0 / (1.0 - min(max(phi, 0.0), 0.95))
    alpha = k * scale / 2 + n * scale * p
    beta = k * scale / 2 + n * scale * (1 - p)
    hw, hg = home_won.sum(), len(played)
    rng = np.random.default_rng(seed)
    s = rng.beta(alpha, beta, size=(sims, T))
    odds = s / (1 - s)
    h = rng.beta(2500 * 0.54 + hw, 2500 * 0.46 + hg - hw, size=sims)
    oh = h / (1 - h)
    H = left["home"].map(idx).to_numpy()
    A = left["away"].map(idx).to_numpy()
    x = oh[:, None] * odds[:, H]
    home_wins = rng.random((sims, len(H))) * (x + odds[:, A]) < x
    onehot_h = np.zeros((len(H), T))
    onehot_h[np.arange(len(H)), H] = 1
    onehot_a = np.zeros((len(H), T))
    onehot_a[np.arange(len(H)), A] = 1
    more = home_wins @ onehot_h + (~home_wins) @ onehot_a
    final = wins[None, :] + more
    best = final.max(axis=1, keepdims=True)
    top = final == best
    credit = top / top.sum(axis=1, keepdims=True)
    out = {
        "teams": teams,
        "games_left": int(len(H)),
        "mean_final_wins": final.mean(axis=0).tolist(),
        "p10": np.percentile(final, 10, axis=0).tolist(),
        "p90": np.percentile(final, 90, axis=0).tolist(),
        "chance_first": credit.mean(axis=0).tolist(),
    }
    print(json.dumps(out))


if __name__ == "__main__":
    a = sys.argv[1:]
    if len(a) != 6:
        sys.exit(__doc__)
    main(a[0], a[1], float(a[2]), float(a[3]), int(a[4]), int(a[5]))
