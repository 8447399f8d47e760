//! The luck signal's noise model and the projection's shrinkage, on simulated leagues and the
//! Databank: the z-scores must have unit spread, the run-based constant must predict the rest of
//! a season as well as any other.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::{close, databank, f, repo, table};
use runcal::data::{Table, TeamSeason, Weighting};
use runcal::fit::{self, Loss};
use runcal::luck::{self, Noise, NoiseSource};
use runcal::model::{Model, ModelKind};
use runcal::simulate::{self, Design, SeasonRow};

fn design(teams: usize, seasons: usize, games: usize, seed: u64) -> Design {
    Design::like_demo(teams, seasons, games, seed)
}

/// Each team-season of a simulated league as of every cut (games played), and at the season's end.
fn cut_seasons(d: &Design, cuts: &[u64]) -> Vec<Vec<SeasonRow>> {
    let n = d.teams;
    let rows: Vec<SeasonRow> = (0..d.seasons)
        .flat_map(|s| (0..n).map(move |t| SeasonRow::empty(d.first_season + s as i32, t)))
        .collect();
    let mut at: Vec<Vec<SeasonRow>> = vec![rows; cuts.len() + 1];
    simulate::games(d, |g| {
        let base = (g.season - d.first_season) as usize * n;
        for (team, scored, allowed) in [
            (g.home, g.home_score, g.away_score),
            (g.away, g.away_score, g.home_score),
        ] {
            let played = at[cuts.len()][base + team].games;
            for (c, rows) in at.iter_mut().enumerate() {
                if c == cuts.len() || played < cuts[c] {
                    rows[base + team].add_game(scored, allowed);
                }
            }
        }
    })
    .unwrap();
    at
}

fn team_seasons(rows: &[SeasonRow]) -> Vec<TeamSeason> {
    rows.iter().map(|r| r.team_season(None)).collect()
}

fn spread(z: &[f64]) -> (f64, f64) {
    let n = z.len() as f64;
    let mean = z.iter().sum::<f64>() / n;
    let sd = (z.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n).sqrt();
    let tail = z.iter().filter(|v| v.abs() >= 2.0).count() as f64 / n;
    (sd, tail)
}

fn z_scores(rows: &[TeamSeason], t: &Table, model: &Model, noise: &Noise) -> Vec<f64> {
    luck::ranking(rows, t, model, noise, None, None)
        .lines
        .iter()
        .filter_map(|l| l.luck_z)
        .collect()
}

#[test]
fn luck_z_has_unit_spread_on_simulated_seasons_cut_at_106_games() {
    // Calibrate on 100 full 162-game seasons, then apply to 500 other seasons as of game 106.
    let history = cut_seasons(&design(14, 100, 162, 41), &[]).pop().unwrap();
    let rows = team_seasons(&history);
    let t = Table::new(&rows, Default::default(), Default::default());
    let f = fit::fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
    let phi = f.std_errors.as_ref().unwrap().dispersion;
    let season = cut_seasons(&design(14, 500, 162, 42), &[106]).remove(0);
    let rows = team_seasons(&season);
    assert!(rows.iter().all(|r| r.games == 106));
    let t = Table::new(&rows, Default::default(), Default::default());
    let quasi = z_scores(
        &rows,
        &t,
        &f.model,
        &Noise::new(Some(phi), NoiseSource::Profile),
    );
    let binomial = z_scores(&rows, &t, &f.model, &Noise::binomial());
    let (sd, tail) = spread(&quasi);
    let (sd_b, tail_b) = spread(&binomial);
    eprintln!(
        "φ {phi:.3}; quasi-binomial sd {sd:.3}, |z|≥2 {:.2}%; binomial sd {sd_b:.3}, {:.2}%",
        100.0 * tail,
        100.0 * tail_b
    );
    // A standard normal has sd 1 and P(|Z| ≥ 2) = 4.55% (any normal table).
    assert!((0.9..=1.1).contains(&sd), "sd of z {sd}");
    assert!((0.035..=0.06).contains(&tail), "share with |z| ≥ 2: {tail}");
    // The binomial z understates luck by about √φ (DESIGN.md's noise model).
    assert!(
        (sd_b / sd - phi.sqrt()).abs() < 0.05,
        "{sd_b} vs {sd}·√{phi}"
    );
}

#[test]
fn luck_z_has_unit_spread_on_the_databank_1980_2019() {
    // Baseball Databank 2021.2 (tests/data), the log-loss Pythagorean fit on the same rows.
    let ds = databank(Some("1980-2019"));
    let t = table(&ds, Weighting::None);
    let f = fit::fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
    let phi = f.std_errors.as_ref().unwrap().dispersion;
    let noise = Noise::new(Some(phi), NoiseSource::Data);
    let (sd, tail) = spread(&z_scores(&ds.rows, &t, &f.model, &noise));
    let (sd_b, _) = spread(&z_scores(&ds.rows, &t, &f.model, &Noise::binomial()));
    eprintln!(
        "Databank 1980–2019: φ {phi:.3}, sd {sd:.3} (binomial {sd_b:.3}), |z|≥2 {:.2}%",
        100.0 * tail
    );
    assert!((0.85..=1.15).contains(&sd), "sd of z {sd}");
    assert!(sd_b < 0.7, "binomial z sd {sd_b}");
}

/// Rest-of-season error in wins of each scored team-season at a cut, for one regression constant.
fn rest_of_season_errors(
    at_cut: &[SeasonRow],
    end: &[SeasonRow],
    model: &Model,
    k: f64,
) -> Vec<f64> {
    at_cut
        .iter()
        .zip(end)
        .map(|(c, e)| {
            let n = c.games as f64;
            let p = model.expected_win_pct(c.runs_scored as f64, c.runs_allowed as f64, n);
            let regressed = (n * p + k / 2.0) / (n + k);
            let remaining = (e.games - c.games) as f64;
            (e.wins - c.wins) as f64 - remaining * regressed
        })
        .collect()
}

fn rmse(e: &[f64]) -> f64 {
    (e.iter().map(|v| v * v).sum::<f64>() / e.len() as f64).sqrt()
}

#[test]
#[ignore = "slow in debug: 1,200 simulated 162-game seasons; run in release by .ci/run"]
fn the_run_based_constant_predicts_the_rest_of_the_season_as_well_as_any_other() {
    // 1,200 seasons of 30 clubs: the first 600 (full seasons) calibrate the exponent, φ and k, the
    // other 600 are scored as of games 35, 70 and 106 against their actual rest-of-season wins.
    // Measured when written (exponent 1.8774, φ 0.360, k 94.8, (1 − φ)·k 60.6), RMSE in wins:
    //   cut 35: 7.579 at 60.6, 7.570 at 50 (the grid's best), 7.695 at 94.8;
    //   cut 70: 5.679, 5.674 at 50, 5.753 at 94.8; cut 106: 4.066, 4.065 at 50, 4.095 at 94.8.
    // The optimum sits near 50 at every cut, a little below (1 − φ)·k: the full-season exponent is a
    // little low for a partial season (fitted at game 35 it is 1.958), so p̂ arrives slightly
    // compressed toward .500. The gap is ≤ 0.01 wins, within one standard error of the RMSE.
    let teams = 30;
    let cuts = [35, 70, 106];
    let at = cut_seasons(&design(teams, 1200, 162, 77), &cuts);
    let half = 600 * teams;
    let calibration = team_seasons(&at[cuts.len()][..half]);
    let t = Table::new(&calibration, Default::default(), Default::default());
    let f = fit::fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap();
    let phi = f.std_errors.as_ref().unwrap().dispersion;
    let k_actual = luck::regression_games(&t).unwrap();
    let k_run = luck::run_based_regression_games(k_actual, phi).unwrap();
    eprintln!(
        "calibration: exponent {:.4}, φ {phi:.3}, k {k_actual:.1}, (1 − φ)·k {k_run:.1}",
        f.model.params[0]
    );
    let end = &at[cuts.len()][half..];
    for (c, &cut) in cuts.iter().enumerate() {
        let scored = &at[c][half..];
        let derived = rest_of_season_errors(scored, end, &f.model, k_run);
        let (rmse_derived, rmse_se) = rmse_with_se(&derived, teams);
        let mut line = format!("cut {cut}: k {k_run:.1} → {rmse_derived:.3} ± {rmse_se:.3}");
        let grid = (0..=16).map(|i| 10.0 * f64::from(i));
        for k in grid.chain([k_actual]) {
            let other = rest_of_season_errors(scored, end, &f.model, k);
            line.push_str(&format!("; {k:.0}: {:.3}", rmse(&other)));
            // No constant on the grid does better than the derived one by more than the RMSE's own
            // standard error (seasons as blocks: clubs of a season play each other).
            assert!(
                rmse(&other) >= rmse_derived - rmse_se,
                "cut {cut}: k {k} gives {} against {rmse_derived} ± {rmse_se}",
                rmse(&other)
            );
        }
        eprintln!("{line}");
        // Against the actual record's constant (today's k) the derived one wins by many paired
        // standard errors.
        let old = rest_of_season_errors(scored, end, &f.model, k_actual);
        let (gain, se) = paired_gain(&old, &derived, teams);
        assert!(gain > 3.0 * se, "cut {cut}: gain {gain} ± {se}");
    }
}

/// RMSE and its standard error by the delta method over season blocks of `teams` rows.
fn rmse_with_se(e: &[f64], teams: usize) -> (f64, f64) {
    let r = rmse(e);
    let per: Vec<f64> = e
        .chunks(teams)
        .map(|c| c.iter().map(|v| v * v).sum::<f64>() / c.len() as f64)
        .collect();
    let (mean, se) = mean_and_se(&per);
    (r, se / (2.0 * mean.sqrt()))
}

/// Mean over seasons of the per-season sum of squared-error differences (a² − b²), and its SE.
fn paired_gain(a: &[f64], b: &[f64], teams: usize) -> (f64, f64) {
    let per: Vec<f64> = a
        .chunks(teams)
        .zip(b.chunks(teams))
        .map(|(x, y)| x.iter().zip(y).map(|(p, q)| p * p - q * q).sum::<f64>())
        .collect();
    mean_and_se(&per)
}

fn mean_and_se(v: &[f64]) -> (f64, f64) {
    let m = v.len() as f64;
    let mean = v.iter().sum::<f64>() / m;
    let var = v.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / (m - 1.0);
    (mean, (var / m).sqrt())
}

/// Values computed by tests/reference/luck_reference.py with scipy and statsmodels.
fn luck_reference() -> serde_json::Value {
    let text = std::fs::read_to_string(repo().join("tests/reference/luck_values.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

#[test]
fn quasi_binomial_luck_and_holm_of_2006_match_statsmodels() {
    let r = luck_reference();
    let ds = databank(Some("2006"));
    let t2006 = table(&ds, Weighting::None);
    let rows = &ds.rows;
    let model = Model::new(ModelKind::Pythagorean, vec![f(&r["exponent"])]);
    let noise = Noise::new(Some(f(&r["dispersion"])), NoiseSource::Profile);
    let lines = luck::ranking(rows, &t2006, &model, &noise, None, None).lines;
    let want = r["luck_2006"].as_array().unwrap();
    assert_eq!(lines.len(), want.len());
    for w in want {
        let got = lines
            .iter()
            .find(|l| l.line.team == w["team"].as_str().unwrap())
            .unwrap();
        // z = (W − n·p̂)/sqrt(φ·n·p̂(1 − p̂)), φ from statsmodels GLM scale="X2";
        // p = 2·scipy.stats.norm.sf(|z|).
        close(
            got.luck_z.unwrap(),
            f(&w["luck_z"]),
            1e-8,
            "quasi-binomial z",
        );
        close(got.luck_p.unwrap(), f(&w["luck_p"]), 1e-9, "p");
        // statsmodels.stats.multitest.multipletests(p, method="holm") over the 30 clubs of 2006.
        close(
            got.holm_p.unwrap(),
            f(&w["holm_p"]),
            1e-9,
            "Holm-adjusted p",
        );
    }
}

#[test]
fn projection_worked_example_matches_scipy_betabinom() {
    let r = luck_reference();
    let ex = &r["projection"];
    let ds = databank(Some("1980-2006"));
    let t = table(&ds, Weighting::None);
    let phi = f(&ex["dispersion"]);
    // k = 0.25/(var(win%, ddof 1) − mean(0.25/n)) with numpy; the run-based constant (1 − φ)·k.
    let k = luck::regression_games(&t).unwrap();
    close(k, f(&ex["k_actual"]), 1e-6, "k of the actual record");
    let k_run = luck::run_based_regression_games(k, phi).unwrap();
    close(k_run, f(&ex["k_run"]), 1e-6, "k of the run-based record");
    let model = Model::new(ModelKind::Pythagorean, vec![f(&ex["exponent"])]);
    let p = model.expected_win_pct(250.0, 200.0, 50.0);
    let outlook = luck::Outlook {
        season_games: 162,
        regression_games: k_run,
        dispersion: phi,
        level: 0.8,
    };
    let (a, b) = luck::projection::talent_beta(50.0, p, &outlook);
    close(a, f(&ex["alpha"]), 1e-6, "alpha");
    close(b, f(&ex["beta"]), 1e-6, "beta");
    let got = luck::project(30.0, 50.0, p, &outlook, 50);
    assert_eq!(got.remaining, 112);
    close(
        got.regressed_win_pct,
        f(&ex["regressed_win_pct"]),
        1e-9,
        "regressed win%",
    );
    close(
        got.projected_wins,
        f(&ex["projected_wins"]),
        1e-6,
        "projected wins",
    );
    // The range and its mass: scipy.stats.betabinom(112, α, β).cdf(hi) − .cdf(lo − 1), by the same
    // selection rule written independently in the script.
    close(got.interval.0, f(&ex["range"][0]), 0.0, "range low");
    close(got.interval.1, f(&ex["range"][1]), 0.0, "range high");
    close(got.mass, f(&ex["mass"]), 1e-9, "range mass");
    assert_eq!(got.level, 0.8);
}

#[test]
fn ranges_hold_the_mass_nearest_their_level_as_scipy_betabinom_computes_it() {
    for c in luck_reference()["ranges"].as_array().unwrap() {
        let n = c["n"].as_u64().unwrap();
        let (lo, hi, mass) = luck::central_range(n, f(&c["alpha"]), f(&c["beta"]), f(&c["level"]));
        // scipy.stats.betabinom cdf differences (tests/reference/luck_reference.py).
        assert_eq!(
            [lo, hi],
            [
                c["range"][0].as_u64().unwrap(),
                c["range"][1].as_u64().unwrap()
            ],
            "{c}"
        );
        close(mass, f(&c["mass"]), 1e-9, "mass");
        // Nearer the level than the 10%/90% percent-point range, which over-covers.
        assert!(
            (mass - 0.8).abs() <= (f(&c["ppf_mass"]) - 0.8).abs() + 1e-12,
            "{c}"
        );
    }
}
