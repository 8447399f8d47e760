#!/usr/bin/env python3
"""Straightforward numpy/scipy/pandas versions of three runcal workloads, for bench/compare.sh.

Each subcommand does the same work as one runcal command and prints a short JSON summary, so that
compare.sh can time both and check that they agree:

  fit4 TEAMS.csv       runcal fit TEAMS.csv --map ... --model all
                       four log-loss fits (pythagorean, pythagenpat, linear by bounded Brent;
                       pythagenport by Nelder-Mead) and their metrics.
  bootstrap TEAMS.csv N SEED
                       runcal fit TEAMS.csv --map ... --bootstrap N --seed SEED
                       the Pythagorean log-loss exponent refitted on N multinomial resamples of the
                       team-seasons (numpy resampling, scipy.optimize.minimize_scalar(method=
                       "bounded") per resample), with percentile intervals of the exponent and of
                       mae, rmse, logloss and rmse_wins.
  games GAMES.csv      runcal fit GAMES.csv --games
                       pandas read_csv, a groupby into team-seasons, then the Pythagorean log-loss fit.

Definitions follow runcal's DESIGN: win% = (W + T/2)/(W + L + T), l = ln(RS/RA),
p = 1/(1 + exp(-x*l)), log-loss = -sum(W ln p + L ln(1-p)) / sum(W + L) with p clipped to
[1e-12, 1 - 1e-12]. No attempt is made to be clever: this is what one would write first.
"""
import json
import sys

import numpy as np
import pandas as pd
from scipy import optimize

CLAMP = 1e-12
XATOL = 1e-10


class Seasons:
    """Team-season arrays; ties count half."""

    def __init__(self, wins, losses, ties, games, rs, ra):
        self.w = wins + ties / 2.0
        self.lo = losses + ties / 2.0
        self.n = self.w + self.lo
        self.y = self.w / self.n
        self.g = games
        self.rs, self.ra = rs, ra
        self.l = np.log(rs / ra)
        self.rpg = (rs + ra) / games

    def predict(self, model, params):
        if model == "pythagorean":
            x = params[0]
        elif model == "pythagenpat":
            x = self.rpg ** params[0]
        elif model == "pythagenport":
            x = params[0] * np.log10(self.rpg) + params[1]
        elif model == "linear":
            return 0.5 + (self.rs - self.ra) / (self.g * params[0])
        return 1.0 / (1.0 + np.exp(-x * self.l))

    def logloss(self, p, c=None):
        c = np.ones_like(p) if c is None else c
        q = np.clip(p, CLAMP, 1.0 - CLAMP)
        return -(c * (self.w * np.log(q) + self.lo * np.log(1.0 - q))).sum() / (c * self.n).sum()

    def metrics(self, p, c=None):
        c = np.ones_like(p) if c is None else c
        e = self.y - p
        rmse = float(np.sqrt((c * e * e).sum() / c.sum()))
        return {
            "mae": float((c * np.abs(e)).sum() / c.sum()),
            "rmse": rmse,
            "logloss": float(self.logloss(p, c)),
            "rmse_wins": rmse * float((c * self.g).sum() / c.sum()),
        }


def teams_table(path):
    df = pd.read_csv(path)
    f = lambda col: df[col].to_numpy(dtype=float)
    return Seasons(f("W"), f("L"), np.zeros(len(df)), f("G"), f("R"), f("RA"))


def fit_exponent(d, c=None):
    res = optimize.minimize_scalar(
        lambda x: d.logloss(d.predict("pythagorean", [x]), c),
        bounds=(0.5, 5.0),
        method="bounded",
        options={"xatol": XATOL},
    )
    return float(res.x)


def fit4(path):
    d = teams_table(path)
    out = {}
    one = {"pythagorean": (0.5, 5.0), "pythagenpat": (0.01, 1.5), "linear": (2.0, 40.0)}
    for model, bounds in one.items():
        res = optimize.minimize_scalar(
            lambda v: d.logloss(d.predict(model, [v])),
            bounds=bounds,
            method="bounded",
            options={"xatol": XATOL},
        )
        out[model] = [float(res.x)]
    res = optimize.minimize(
        lambda v: d.logloss(d.predict("pythagenport", v)),
        x0=[1.5, 0.45],
        method="Nelder-Mead",
        options={"xatol": 1e-10, "fatol": 1e-14, "maxiter": 20000},
    )
    out["pythagenport"] = [float(v) for v in res.x]
    return {
        m: {"params": p, "metrics": d.metrics(d.predict(m, p))} for m, p in out.items()
    }


def bootstrap(path, resamples, seed):
    d = teams_table(path)
    x_full = fit_exponent(d)
    rng = np.random.default_rng(seed)
    n = len(d.y)
    xs = np.empty(resamples)
    mets = {k: np.empty(resamples) for k in ("mae", "rmse", "logloss", "rmse_wins")}
    for b in range(resamples):
        c = np.bincount(rng.integers(0, n, n), minlength=n).astype(float)
        x = fit_exponent(d, c)
        xs[b] = x
        for k, v in d.metrics(d.predict("pythagorean", [x]), c).items():
            mets[k][b] = v

    def ci(v):
        return [float(np.percentile(v, 2.5)), float(np.percentile(v, 97.5))]

    return {
        "exponent": x_full,
        "ci": ci(xs),
        "sd": float(np.std(xs, ddof=1)),
        "metrics_ci": {k: ci(v) for k, v in mets.items()},
    }


def games(path):
    g = pd.read_csv(path)
    if "season" not in g.columns:
        g["season"] = g["date"].str.slice(0, 4).astype(int)
    if "league" not in g.columns:
        g["league"] = ""
    hs, aw = g["home_score"], g["away_score"]
    sides = []
    for team, scored, allowed in (("home", hs, aw), ("away", aw, hs)):
        sides.append(
            pd.DataFrame(
                {
                    "season": g["season"],
                    "league": g["league"],
                    "team": g[team],
                    "games": 1,
                    "wins": (scored > allowed).astype(int),
                    "losses": (scored < allowed).astype(int),
                    "ties": (scored == allowed).astype(int),
                    "rs": scored,
                    "ra": allowed,
                }
            )
        )
    t = pd.concat(sides).groupby(["season", "league", "team"], sort=True).sum()
    f = lambda col: t[col].to_numpy(dtype=float)
    d = Seasons(f("wins"), f("losses"), f("ties"), f("games"), f("rs"), f("ra"))
    x = fit_exponent(d)
    return {
        "team_seasons": len(t),
        "exponent": x,
        "metrics": d.metrics(d.predict("pythagorean", [x])),
    }


def games_polars(path):
    """The same aggregation with polars (lazy scan, one group_by), the stronger anchor. The
    compute time (read, aggregate, fit; the import excluded) is reported beside the result."""
    import time

    import polars as pl

    t0 = time.perf_counter()
    g = pl.scan_csv(path)
    names = g.collect_schema().names()
    if "season" not in names:
        g = g.with_columns(pl.col("date").str.slice(0, 4).cast(pl.Int32).alias("season"))
    if "league" not in names:
        g = g.with_columns(pl.lit("").alias("league"))

    def side(team, scored, allowed):
        return g.select(
            pl.col("season"),
            pl.col("league"),
            pl.col(team).alias("team"),
            (pl.col(scored) > pl.col(allowed)).cast(pl.Int64).alias("wins"),
            (pl.col(scored) < pl.col(allowed)).cast(pl.Int64).alias("losses"),
            (pl.col(scored) == pl.col(allowed)).cast(pl.Int64).alias("ties"),
            pl.col(scored).cast(pl.Float64).alias("rs"),
            pl.col(allowed).cast(pl.Float64).alias("ra"),
        )

    t = (
        pl.concat([side("home", "home_score", "away_score"), side("away", "away_score", "home_score")])
        .group_by(["season", "league", "team"])
        .agg(pl.len().alias("games"), pl.col("wins", "losses", "ties", "rs", "ra").sum())
        .sort(["season", "league", "team"])
        .collect()
    )
    f = lambda col: t[col].to_numpy().astype(float)
    d = Seasons(f("wins"), f("losses"), f("ties"), f("games"), f("rs"), f("ra"))
    x = fit_exponent(d)
    return {
        "team_seasons": t.height,
        "exponent": x,
        "metrics": d.metrics(d.predict("pythagorean", [x])),
        "compute_seconds": time.perf_counter() - t0,
        "polars": pl.__version__,
    }


def main(argv):
    if len(argv) >= 2 and argv[0] == "fit4":
        out = fit4(argv[1])
    elif len(argv) >= 4 and argv[0] == "bootstrap":
        out = bootstrap(argv[1], int(argv[2]), int(argv[3]))
    elif len(argv) >= 2 and argv[0] == "games":
        out = games(argv[1])
    elif len(argv) >= 2 and argv[0] == "games-polars":
        out = games_polars(argv[1])
    else:
        sys.exit("usage: reference_impl.py fit4 FILE | bootstrap FILE N SEED | games FILE | games-polars FILE")
    print(json.dumps(out, indent=1, sort_keys=True))


if __name__ == "__main__":
    main(sys.argv[1:])
