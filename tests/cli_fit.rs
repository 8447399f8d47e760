//! `runcal fit` through the command line, checked against outside sources.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::{close, f, reference, repo, runcal};
use serde_json::Value;

fn databank_fit(extra: &[&str]) -> Value {
    let mut cmd = common::databank_cmd("fit");
    cmd.args(extra).args(["--format", "json", "-q"]);
    let out = cmd.assert().success().get_output().stdout.clone();
    serde_json::from_slice(&out).unwrap()
}

#[test]
fn databank_1980_2006_optimum_per_loss_matches_reference_script() {
    let r = reference();
    for loss in ["logloss", "mae", "rmse"] {
        // reference.py's unweighted losses: each team-season counts once.
        let v = databank_fit(&[
            "--seasons",
            "1980-2006",
            "--loss",
            loss,
            "--no-references",
            "--weight",
            "none",
        ]);
        assert_eq!(v["schema"], "runcal.fit/2");
        assert_eq!(v["rows_used"], 748);
        assert_eq!(v["rows_rejected"], 0);
        let fit = &v["fits"][0];
        assert_eq!(fit["model"], "pythagorean");
        assert_eq!(fit["loss"], loss);
        assert_eq!(fit["fitted"], true);
        assert_eq!(fit["converged"], true);
        // scipy.optimize.minimize_scalar (bounded) and the statsmodels GLM, via reference.py.
        let want = &r["subsets"]["1980-2006"]["fits"]["pythagorean"][loss];
        close(
            f(&fit["params"]["exponent"]),
            f(&want["params"]["exponent"]),
            1e-4,
            loss,
        );
        close(f(&fit["metrics"][loss]), f(&want["loss"]), 1e-6, loss);
    }
}

#[test]
fn mixed_season_lengths_weight_by_games_by_default_and_say_so() {
    // 1980-2006 holds the strike-shortened 1981 and 1994-95 seasons (103 to 163 games): by default
    // MAE and RMSE weight by games, matching reference.py's games-weighted optima (scipy).
    let r = reference();
    for loss in ["mae", "rmse"] {
        let out = common::ok(
            common::databank_cmd("fit")
                .args(["--seasons", "1980-2006", "--loss", loss, "--no-references"])
                .args(["--format", "json"]),
        );
        let err = String::from_utf8(out.stderr).unwrap();
        assert!(
            err.contains("season lengths differ")
                && err.contains("weight each team-season by its games"),
            "{err}"
        );
        let v: Value = serde_json::from_slice(&out.stdout).unwrap();
        let want = &r["subsets"]["1980-2006"]["fits"]["pythagorean"][format!("{loss}_games")];
        let fit = &v["fits"][0];
        close(
            f(&fit["params"]["exponent"]),
            f(&want["params"]["exponent"]),
            1e-4,
            loss,
        );
    }
    // One season length (the demo league's 140 games): equal weights, no note.
    let out = common::ok(runcal().args(["fit", &common::demo_path()]));
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(!err.contains("season lengths differ"), "{err}");
}

#[test]
fn logloss_fit_reports_quasi_binomial_standard_errors_like_statsmodels() {
    let glm = &reference()["subsets"]["1980-2006"]["glm"];
    let v = databank_fit(&["--seasons", "1980-2006", "--no-references"]);
    let fit = &v["fits"][0];
    // statsmodels GLM Binomial, var_weights = games, no intercept: scale="X2" and default scale.
    close(
        f(&fit["std_errors"]["exponent"]) / f(&glm["se_x2"]),
        1.0,
        1e-4,
        "se_x2",
    );
    close(
        f(&fit["std_errors_binomial"]["exponent"]) / f(&glm["se_binomial"]),
        1.0,
        1e-4,
        "se",
    );
    close(
        f(&fit["dispersion"]) / f(&glm["dispersion"]),
        1.0,
        1e-4,
        "dispersion",
    );
    assert!(fit["ci"].is_null() && fit["ci_level"].is_null());
}

#[test]
fn exponent_three_and_the_best_grid_exponent_give_the_usual_mae() {
    // Common practice (no published source): on 1980–2006 (748 team-seasons) exponent 3 gives an MAE
    // of about 0.034 in win%, and on a 0.1-step grid from 0.5 to 4 the best exponent is 1.9 with an
    // MAE of about 0.020. (reference.py's grid gives 0.03389 and 1.9 → 0.01963.)
    let mae_at = |x: f64| {
        let v = databank_fit(&[
            "--seasons",
            "1980-2006",
            "--loss",
            "mae",
            "--exponent",
            &format!("{x}"),
            "--no-references",
            "--weight",
            "none",
        ]);
        assert_eq!(v["fits"][0]["fitted"], false);
        f(&v["fits"][0]["metrics"]["mae"])
    };
    let at3 = mae_at(3.0);
    assert!((at3 - 0.034).abs() < 0.001, "MAE at exponent 3: {at3}");
    let grid: Vec<f64> = (0..=35).map(|k| ((5 + k) as f64) / 10.0).collect();
    let (best, best_mae) = grid
        .iter()
        .map(|&x| (x, mae_at(x)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .unwrap();
    assert!((best - 1.9).abs() < 1e-9, "best grid exponent {best}");
    assert!((best_mae - 0.020).abs() < 0.001, "best grid MAE {best_mae}");
    let want = &reference()["subsets"]["1980-2006"]["grid_mae"];
    close(at3, f(&want["mae_at_3"]), 1e-12, "mae at 3 vs reference.py");
    close(
        best_mae,
        f(&want["best_mae"]),
        1e-12,
        "best mae vs reference.py",
    );
}

#[test]
fn model_comparison_lists_fitted_models_and_unfitted_references() {
    let v = databank_fit(&["--model", "all", "--reference", "pythagorean:2.37"]);
    let fits = v["fits"].as_array().unwrap();
    let fitted: Vec<&Value> = fits.iter().filter(|f| f["fitted"] == true).collect();
    let refs: Vec<&Value> = fits.iter().filter(|f| f["fitted"] == false).collect();
    assert_eq!(fitted.len(), 4);
    // Exponent 2, 1.83, PythagenPat 0.287, Pythagenport 1.5/0.45, and the user's 2.37.
    assert_eq!(refs.len(), 5);
    assert!(refs.iter().any(|r| r["params"]["exponent"] == 2.37));
    assert!(
        refs.iter()
            .any(|r| r["model"] == "pythagenport" && r["params"]["a"] == 1.5)
    );
    // Fitted models come first, ranked by log-loss.
    let losses: Vec<f64> = fitted
        .iter()
        .map(|f| common::f(&f["metrics"]["logloss"]))
        .collect();
    assert!(losses.windows(2).all(|w| w[0] <= w[1]), "{losses:?}");
    for f in &fitted {
        assert!(f["iterations"].as_u64().unwrap() > 0);
        assert_eq!(f["converged"], true);
    }
    // Run-environment models report the range of exponents their rows receive.
    let pat = fitted.iter().find(|f| f["model"] == "pythagenpat").unwrap();
    let range = pat["exponent_range"].as_array().unwrap();
    assert!(common::f(&range[0]) < common::f(&range[1]));
}

#[test]
fn by_season_fits_each_group_and_lists_small_ones() {
    let v = databank_fit(&[
        "--seasons",
        "1871-1880",
        "--by",
        "season",
        "--min-group",
        "9",
    ]);
    let fits = v["fits"].as_array().unwrap();
    let small = v["too_small_groups"].as_array().unwrap();
    // 1871–1880: every season is a group; those with fewer than 9 clubs are listed, not fitted.
    assert_eq!(fits.len() + small.len(), 10);
    assert!(!small.is_empty() && !fits.is_empty());
    for s in small {
        assert!(s["rows"].as_u64().unwrap() < 9);
    }
    for fit in fits {
        assert!(fit["group"]["season"].is_i64());
        assert!(fit["rows"].as_u64().unwrap() >= 9);
    }
}

#[test]
fn csv_output_has_one_row_per_team_season_with_residuals() {
    let mut cmd = runcal();
    cmd.args([
        "fit",
        "demo-data/meridian-league.csv",
        "--format",
        "csv",
        "-q",
        "--model",
        "pythagenpat",
    ]);
    let out = String::from_utf8(cmd.assert().success().get_output().stdout.clone()).unwrap();
    let mut rdr = csv::Reader::from_reader(out.as_bytes());
    let headers = rdr.headers().unwrap().clone();
    assert!(headers.iter().any(|h| h == "expected_win_pct"));
    assert!(headers.iter().any(|h| h == "exponent"));
    let rows: Vec<csv::StringRecord> = rdr.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 350);
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    for r in &rows {
        let wins: f64 = r[col("wins")].parse().unwrap();
        let expected: f64 = r[col("expected_wins")].parse().unwrap();
        let luck: f64 = r[col("luck_wins")].parse().unwrap();
        assert!((wins - expected - luck).abs() < 1e-9);
    }
}

#[test]
fn demo_league_is_what_its_generator_makes() {
    // demo-data/make-demo.sh: the committed file is exactly the seeded generator's output.
    let mut cmd = runcal();
    cmd.args([
        "simulate",
        "--teams",
        "14",
        "--seasons",
        "25",
        "--games",
        "140",
        "--exponent",
        "1.83",
        "--seed",
        "2026",
        "--first-season",
        "2001",
    ]);
    let out = cmd.assert().success().get_output().stdout.clone();
    let committed = std::fs::read(repo().join("demo-data/meridian-league.csv")).unwrap();
    assert!(
        out == committed,
        "demo-data/meridian-league.csv differs from its generator"
    );
}

#[test]
fn demo_fit_recovers_the_league_exponent() {
    // The demo league's truth is what its design converges to on a very large simulation (Miller 2007
    // gives exactly the Weibull shape for continuous scores of one matchup; integer runs, tie-breaking
    // runs and a mix of opponents move the league-level value a little, so it is measured, not assumed).
    let design = runcal::simulate::Design {
        teams: 14,
        seasons: 1500,
        games: 140,
        shape: 1.83,
        runs_per_game: 4.5,
        talent_sd: 0.08,
        first_season: 1,
        league: "Meridian League".into(),
        seed: 424242,
    };
    let rows: Vec<runcal::data::TeamSeason> = runcal::simulate::seasons(&design)
        .unwrap()
        .iter()
        .map(|r| r.team_season(None))
        .collect();
    let t = runcal::data::Table::new(&rows, Default::default(), Default::default());
    let big = runcal::fit::fit_model(
        &t,
        runcal::model::ModelKind::Pythagorean,
        runcal::fit::Loss::Logloss,
    )
    .unwrap();
    let truth = big.model.params[0];
    let truth_se = big.std_errors.unwrap().corrected[0];
    assert!(
        (truth - 1.83).abs() < 0.1,
        "large-sample exponent {truth} far from the Weibull shape"
    );

    let mut cmd = runcal();
    cmd.args([
        "fit",
        "demo-data/meridian-league.csv",
        "--format",
        "json",
        "-q",
        "--no-references",
    ]);
    let v: Value = serde_json::from_slice(&cmd.assert().success().get_output().stdout).unwrap();
    let x = f(&v["fits"][0]["params"]["exponent"]);
    let se = f(&v["fits"][0]["std_errors"]["exponent"]);
    // 25 seasons pin the exponent to its quasi-binomial standard error (~0.04); a fit within three of
    // them of the truth fails by chance about 3 times in 1000.
    let gap = (x - truth).abs() / (se * se + truth_se * truth_se).sqrt();
    assert!(
        gap < 3.0,
        "demo fit {x} ± {se} vs truth {truth}: {gap:.2} standard errors"
    );
}

#[test]
fn table_output_names_the_fit_and_the_performers() {
    let mut cmd = runcal();
    cmd.args(["fit", "demo-data/meridian-league.csv", "-q"]);
    let out = String::from_utf8(cmd.assert().success().get_output().stdout.clone()).unwrap();
    assert!(out.contains("350 team-seasons used, 0 rejected"));
    assert!(out.contains("exponent 1.92"));
    assert!(out.contains("Most wins above their scoring"));
    assert!(out.contains("Most wins below their scoring"));
    assert!(out.contains("std. error"));
}

#[test]
fn plot_writes_an_svg_with_the_optimum_marked() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("fit.svg");
    let mut cmd = runcal();
    cmd.args(["fit", "demo-data/meridian-league.csv", "-q", "--plot"])
        .arg(&svg);
    cmd.assert().success();
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.starts_with("<svg"));
    assert!(text.contains("optimum 1.92"));
}

#[test]
fn a_fit_on_a_handful_of_team_seasons_warns_that_it_is_not_informative() {
    // 1 parameter + 5 needs 6 team-seasons; the Databank's AL of 1901 has 8.
    let few = |seasons: &str, league: &str| {
        let out = common::ok(common::databank_cmd("fit").args([
            "--seasons",
            seasons,
            "--league",
            league,
            "--no-references",
        ]));
        String::from_utf8(out.stderr).unwrap()
    };
    let err = few("1901", "AL");
    assert!(!err.contains("not informative"), "8 team-seasons: {err}");
    // A one-row file.
    let dir = tempfile::tempdir().unwrap();
    let one = dir.path().join("one.csv");
    std::fs::write(
        &one,
        "season,team,wins,losses,runs_scored,runs_allowed\n2026,Aster,80,60,700,650\n",
    )
    .unwrap();
    let out = common::ok(runcal().args(["fit", "--no-references"]).arg(&one));
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        err.contains("fitted on one team-season") && err.contains("not informative"),
        "{err}"
    );
}

#[test]
fn grouped_fit_shows_bootstrap_intervals_in_the_table() {
    let out = common::ok(
        runcal()
            .args(["fit", &common::demo_path(), "--by", "season"])
            .args([
                "--seasons",
                "2024-2025",
                "--bootstrap",
                "200",
                "--seed",
                "7",
            ]),
    );
    let table = String::from_utf8(out.stdout).unwrap();
    assert!(table.contains("95% bootstrap interval"), "{table}");
    // Each group's interval in the table is the one its JSON reports.
    let v: Value = serde_json::from_slice(
        &runcal()
            .args(["fit", &common::demo_path(), "--by", "season"])
            .args([
                "--seasons",
                "2024-2025",
                "--bootstrap",
                "200",
                "--seed",
                "7",
            ])
            .args(["--format", "json", "-q"])
            .assert()
            .success()
            .get_output()
            .stdout,
    )
    .unwrap();
    for fit in v["fits"].as_array().unwrap() {
        let ci = &fit["ci"]["exponent"];
        let cell = format!("{:.4}–{:.4}", f(&ci[0]), f(&ci[1]));
        assert!(table.contains(&cell), "{cell} not in\n{table}");
    }
}

#[test]
fn comparison_csv_holds_the_ranked_table_with_the_json_values() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("comparison.csv");
    let out = runcal()
        .args([
            "fit",
            &common::demo_path(),
            "--model",
            "all",
            "--format",
            "json",
            "-q",
        ])
        .arg("--comparison-csv")
        .arg(&path)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: Value = serde_json::from_slice(&out).unwrap();
    let mut rdr = csv::Reader::from_path(&path).unwrap();
    let header = rdr.headers().unwrap().clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let fits = v["fits"].as_array().unwrap();
    // Every fit and reference once, ranked by log-loss.
    assert_eq!(rows.len(), fits.len());
    let loss: Vec<f64> = rows
        .iter()
        .map(|r| r[col("logloss")].parse().unwrap())
        .collect();
    assert!(loss.windows(2).all(|w| w[0] <= w[1]), "{loss:?}");
    for (i, r) in rows.iter().enumerate() {
        assert_eq!(r[col("rank")], (i + 1).to_string());
        let fitted = &r[col("status")] == "fitted";
        // Two references share a model (exponents 2 and 1.83): the log-loss tells them apart.
        let j = fits
            .iter()
            .find(|j| {
                j["model"] == r[col("model")]
                    && j["fitted"] == fitted
                    && (f(&j["metrics"]["logloss"]) - loss[i]).abs() < 1e-12
            })
            .unwrap();
        for (name, value) in j["params"].as_object().unwrap() {
            let cell: f64 = r[col(&format!("param_{name}"))].parse().unwrap();
            close(cell, f(value), 1e-12, name);
        }
        close(
            r[col("rmse_wins")].parse().unwrap(),
            f(&j["metrics"]["rmse_wins"]),
            1e-12,
            "rmse_wins",
        );
    }
    // The comparison file may not overwrite an input.
    runcal()
        .args([
            "fit",
            &common::demo_path(),
            "--comparison-csv",
            &common::demo_path(),
        ])
        .assert()
        .code(2);
}

#[test]
fn loss_plot_ticks_are_distinct_at_the_precision_of_the_range() {
    // The Pythagenport loss curve spans about 0.001 in log-loss: every tick label must differ, and
    // all of one axis carry the same number of decimals.
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("pp.svg");
    let mut cmd = common::databank_cmd("fit");
    cmd.args(["--model", "pythagenport", "-q", "--plot"])
        .arg(&svg)
        .assert()
        .success();
    let text = std::fs::read_to_string(&svg).unwrap();
    // (anchor, label) of every text element: plotters anchors y tick labels at their end and x
    // tick labels at their middle.
    let labels: Vec<(String, String)> = text
        .split("<text")
        .skip(1)
        .filter_map(|t| {
            let (attrs, rest) = t.split_once('>')?;
            let anchor = attrs.split("text-anchor=\"").nth(1)?.split('"').next()?;
            let body = rest.split_once("</text>")?.0.trim();
            Some((anchor.to_string(), body.to_string()))
        })
        .collect();
    // The left panel's tick labels lie between its axis names and the legend.
    let start = labels.iter().position(|l| l.1 == "a").unwrap() + 1;
    let end = labels
        .iter()
        .position(|l| l.1.starts_with("optimum"))
        .unwrap();
    let ticks = &labels[start..end];
    let pick = |anchor: &str| -> Vec<&String> {
        ticks
            .iter()
            .filter(|l| l.0 == anchor)
            .map(|l| &l.1)
            .collect()
    };
    let (y, x) = (pick("end"), pick("middle"));
    for axis in [&y, &x] {
        assert!(axis.len() >= 3, "{ticks:?}");
        let mut seen = axis.to_vec();
        seen.dedup();
        assert_eq!(seen.len(), axis.len(), "repeated tick labels: {axis:?}");
        let decimals = |l: &str| l.split_once('.').map_or(0, |(_, d)| d.len());
        assert!(
            axis.iter().all(|l| decimals(l) == decimals(axis[0])),
            "{axis:?}"
        );
    }
}
