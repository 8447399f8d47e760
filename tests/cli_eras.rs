//! `runcal eras`: window fits against `runcal fit --seasons A-B` and statsmodels, the change test
//! against statsmodels and scipy, the reports, and hostile options.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::{DATABANK_MAPS, close, databank_path, f, repo, runcal};
use serde_json::Value;

fn maps() -> Vec<String> {
    DATABANK_MAPS
        .iter()
        .flat_map(|m| ["--map".to_string(), (*m).to_string()])
        .collect()
}

/// Run with the Databank's `--map`s; the JSON printed.
fn json_of(args: &[&str]) -> Value {
    let mut all: Vec<String> = args.iter().map(|a| (*a).to_string()).collect();
    all.extend(maps());
    json_stdout(&all)
}

fn json_stdout(args: &[String]) -> Value {
    let out = runcal()
        .args(args)
        .args(["--format", "json", "-q"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    serde_json::from_slice(&out).unwrap()
}

fn eras(extra: &[&str]) -> Value {
    let db = databank_path();
    let mut args = vec!["eras", db.as_str()];
    args.extend_from_slice(extra);
    json_of(&args)
}

fn eras_values() -> Value {
    let text = std::fs::read_to_string(repo().join("tests/reference/eras_values.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn window(report: &Value, first: i64, last: i64) -> &Value {
    report["windows"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["first_season"] == first && w["last_season"] == last)
        .unwrap_or_else(|| panic!("no window {first}-{last}"))
}

#[test]
fn window_fits_are_exactly_fit_runs_on_the_same_seasons() {
    let report = eras(&[
        "--seasons",
        "1995-2020",
        "--window",
        "10",
        "--bootstrap",
        "200",
        "--seed",
        "9",
    ]);
    for (a, b) in [(1995, 2004), (2003, 2012), (2011, 2020)] {
        let w = window(&report, a, b);
        let seed = w["bootstrap_seed"].as_u64().unwrap().to_string();
        let db = databank_path();
        let seasons = format!("{a}-{b}");
        let fit = json_of(&[
            "fit",
            &db,
            "--seasons",
            &seasons,
            "--no-references",
            "--bootstrap",
            "200",
            "--seed",
            &seed,
        ]);
        let fit = &fit["fits"][0];
        // The same rows, solver and bootstrap streams: the numbers are identical, not merely close.
        assert_eq!(w["exponent"], fit["params"]["exponent"], "{seasons}");
        assert_eq!(w["std_error"], fit["std_errors"]["exponent"], "{seasons}");
        assert_eq!(w["dispersion"], fit["dispersion"], "{seasons}");
        assert_eq!(w["ci"], fit["ci"]["exponent"], "{seasons}");
        close(
            f(&w["runs_per_game"]),
            f(&fit["average_rpg"]),
            1e-12,
            "runs per game",
        );
    }
}

#[test]
fn two_databank_windows_match_statsmodels() {
    let report = eras(&["--window", "10"]);
    for r in eras_values()["windows"].as_array().unwrap() {
        let w = window(
            &report,
            r["first"].as_i64().unwrap(),
            r["last"].as_i64().unwrap(),
        );
        assert_eq!(w["team_seasons"], r["team_seasons"]);
        // statsmodels GLM, binomial, var_weights n (tests/reference/eras.py).
        close(f(&w["exponent"]), f(&r["exponent"]), 1e-8, "exponent");
        // statsmodels bse of the same fit; quasi-binomial with scale="X2".
        close(
            f(&w["std_error_binomial"]),
            f(&r["se_binomial"]),
            1e-8,
            "binomial SE",
        );
        close(f(&w["std_error"]), f(&r["se_x2"]), 1e-8, "quasi SE");
        close(f(&w["dispersion"]), f(&r["dispersion"]), 1e-8, "dispersion");
        // numpy: sum(RS+RA)/sum(G).
        close(f(&w["runs_per_game"]), f(&r["runs_per_game"]), 1e-10, "RPG");
        // PythagenPat's implied exponent is RPG^z by definition (published formula).
        let z = f(&report["history"]["z"]);
        close(
            f(&w["implied_exponent_history_z"]),
            f(&r["runs_per_game"]).powf(z),
            1e-9,
            "implied",
        );
        close(
            f(&w["implied_exponent_published_z"]),
            f(&r["runs_per_game"]).powf(0.287),
            1e-9,
            "implied at 0.287",
        );
    }
}

#[test]
fn change_test_matches_statsmodels_and_scipy() {
    for r in eras_values()["change"].as_array().unwrap() {
        let seasons = format!("{}-{}", r["first"], r["last"]);
        let block = r["block"].as_i64().unwrap();
        let mut args = vec!["--seasons", seasons.as_str(), "--window", "10"];
        if block > 1 {
            args.extend(["--change-by", "block"]);
        }
        let c = &eras(&args)["change_test"];
        let what = format!("{seasons} by {block}");
        assert_eq!(c["groups"], r["groups"], "{what}");
        assert_eq!(c["groups_left_out"], r["groups_left_out"], "{what}");
        assert_eq!(c["df_change"], r["df_change"], "{what}");
        assert_eq!(c["df_residual"], r["df_residual"], "{what}");
        // statsmodels GLM deviances and Pearson chi-square (tests/reference/eras.py).
        close(
            f(&c["common_exponent"]),
            f(&r["common_exponent"]),
            1e-8,
            &what,
        );
        close(
            f(&c["deviance_change"]),
            f(&r["deviance_change"]),
            1e-6,
            &what,
        );
        close(f(&c["dispersion"]), f(&r["dispersion"]), 1e-8, &what);
        close(f(&c["f_statistic"]), f(&r["f_statistic"]), 1e-6, &what);
        // scipy.stats.f.sf and scipy.stats.chi2.sf.
        let p = f(&r["p_value"]);
        close(f(&c["p_value"]), p, 1e-6 * p.max(1e-3), &what);
        close(
            f(&c["p_value_binomial_lr"]),
            f(&r["p_value_binomial_lr"]),
            1e-6,
            &what,
        );
        assert_eq!(c["exponent_changed"], p < 0.05, "{what}");
    }
}

#[test]
fn expanding_windows_end_with_the_whole_history() {
    let report = eras(&["--window", "30", "--windows", "expanding"]);
    let windows = report["windows"].as_array().unwrap();
    // 150 seasons, the first window 30 long: 121 windows, all starting in 1871.
    assert_eq!(windows.len(), 121);
    assert!(windows.iter().all(|w| w["first_season"] == 1871));
    let last = windows.last().unwrap();
    assert_eq!(last["seasons"], 150);
    assert_eq!(last["exponent"], report["history"]["exponent"]);
}

#[test]
fn recommendation_names_a_span_and_its_rule() {
    let report = eras(&["--window", "10"]);
    let rec = &report["recommendation"];
    assert_eq!(rec["rule"], "shortest consistent recent span");
    let chosen = &rec["chosen"];
    assert_eq!(chosen["last_season"], 2020);
    assert!(chosen["consistent"].as_bool().unwrap());
    assert!(f(&chosen["std_error"]) <= 0.05);
    // No shorter consistent span reaches the target (the rule's definition).
    let n = chosen["seasons"].as_u64().unwrap();
    for c in rec["candidates"].as_array().unwrap() {
        if c["seasons"].as_u64().unwrap() < n && c["consistent"].as_bool().unwrap() {
            assert!(f(&c["std_error"]) > 0.05, "{c}");
        }
    }
    let db = databank_path();
    let out = runcal()
        .args(["eras", db.as_str(), "--window", "10", "-q"])
        .args(maps())
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    let line = format!(
        "calibrate on {}–2020 (±{:.3})",
        chosen["first_season"],
        f(&chosen["std_error"])
    );
    assert!(text.contains(&line), "{line} not in\n{text}");
    assert!(text.contains("in plain words"), "{text}");
    assert!(text.contains("not wagering or financial advice"), "{text}");
}

#[test]
fn csv_has_one_safe_row_per_window() {
    let db = databank_path();
    let out = runcal()
        .args([
            "eras",
            db.as_str(),
            "--seasons",
            "2001-2020",
            "--window",
            "5",
        ])
        .args(maps())
        .args(["--format", "csv", "-q"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let mut r = csv::Reader::from_reader(out.as_slice());
    assert_eq!(r.headers().unwrap().get(1), Some("first_season"));
    let rows: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 16);
    for row in &rows {
        // No cell starts like a spreadsheet formula except a negative number.
        for c in row.iter() {
            assert!(
                !c.starts_with(['=', '+', '@'])
                    && (!c.starts_with('-') || c.parse::<f64>().is_ok()),
                "{c}"
            );
        }
    }
}

#[test]
fn game_logs_work_like_season_tables() {
    let args = [
        "eras",
        "demo-data/meridian-2026-games.csv",
        "--games",
        "--window",
        "1",
    ];
    let v = json_stdout(&args.map(String::from));
    assert_eq!(v["schema"], "runcal.eras/1");
    assert_eq!(v["input"], "games");
    assert_eq!(v["windows"].as_array().unwrap().len(), 1);
    // One season: the change test has nothing to compare, and says so.
    assert!(v["change_test"].is_null());
    assert!(v["change_test_skipped"].as_str().unwrap().contains("two"));
}

#[test]
fn plot_draws_both_panels_with_title_and_caution() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("eras.svg");
    let db = databank_path();
    runcal()
        .args(["eras", db.as_str(), "--window", "10", "-q", "--plot"])
        .arg(&svg)
        .args(maps())
        .assert()
        .success();
    let text = std::fs::read_to_string(&svg).unwrap();
    for want in [
        "Pythagorean exponent, rolling 10-season windows, 1871–2020",
        "implied by PythagenPat, z 0.287 (published)",
        "runs per game (both teams)",
        "last season of the window",
        "not wagering or financial advice",
    ] {
        assert!(text.contains(want), "{want} missing from the chart");
    }
    // Ticks in the tables' formats: seasons as plain years, exponents with two decimals.
    for tick in ["1900", "2000", "2.00", "9.00"] {
        assert!(
            text.lines().any(|l| l.trim() == tick),
            "tick {tick} missing"
        );
    }
}

fn refused(args: &[&str], says: &str) {
    let out = runcal().args(args).assert().code(2).get_output().clone();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains(says), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{err}");
}

#[test]
fn hostile_options_are_refused_with_exit_2() {
    let demo = "demo-data/meridian-league.csv";
    let cases: [(&[&str], &str); 15] = [
        (&["--window", "0"], "--window must be at least 1"),
        (&["--window", "-3"], "expected a whole number"),
        (&["--window", "20000"], "at most 10000 (a documented limit)"),
        (
            &["--window", "1", "--bootstrap", "10", "--resample", "season"],
            "at least 2 seasons",
        ),
        (&["--window", "26"], "longer than the 25 season(s)"),
        (
            &["--seasons", "2019", "--window", "2"],
            "longer than the 1 season(s)",
        ),
        (
            &["--bootstrap", "100001"],
            "at most 100000 (a documented limit)",
        ),
        (&["--bootstrap", "1"], "--bootstrap takes 2 to 100000"),
        (&["--bootstrap", "99999999999999999999"], "--bootstrap"),
        (&["--target-se", "0"], "--target-se"),
        (&["--target-se", "NaN"], "--target-se"),
        (&["--bootstrap", "10", "--ci-level", "1.5"], "--ci-level"),
        (&["--plot", demo], "input"),
        (
            &["--windows", "expanding", "--window", "40"],
            "longer than the 25",
        ),
        (
            &["--min-group", "1", "--window", "1", "--league", "<script>"],
            "no rows",
        ),
    ];
    for (extra, says) in cases {
        refused(&[&["eras", demo], extra].concat(), says);
    }
    refused(&["eras", "/dev/null"], "/dev/null");
    refused(&["eras", "tests"], "tests");
}

#[test]
fn a_single_season_gets_one_window_and_a_recommendation() {
    let v = json_of(&[
        "eras",
        &databank_path(),
        "--seasons",
        "2019",
        "--window",
        "1",
    ]);
    assert_eq!(v["windows"].as_array().unwrap().len(), 1);
    assert!(v["change_test"].is_null());
    assert_eq!(v["recommendation"]["chosen"]["first_season"], 2019);
    // 30 teams cannot reach ±0.05 in one season: the rule says so rather than pretending.
    assert_eq!(v["recommendation"]["meets_target"], false);
}

#[test]
fn databank_numbers_in_the_readme_are_what_the_command_prints() {
    // README, "Has the league moved?": the command shown there and the numbers it quotes.
    let report = eras(&["--seasons", "1900-2020", "--window", "10"]);
    let fitted: Vec<&Value> = report["windows"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|w| w["fitted"] == true)
        .collect();
    assert_eq!(fitted.len(), 112);
    let by = |w: &&Value| f(&w["exponent"]);
    let lo = fitted
        .iter()
        .min_by(|a, b| by(a).total_cmp(&by(b)))
        .unwrap();
    let hi = fitted
        .iter()
        .max_by(|a, b| by(a).total_cmp(&by(b)))
        .unwrap();
    assert_eq!(
        (lo["first_season"].as_i64(), lo["last_season"].as_i64()),
        (Some(1966), Some(1975))
    );
    assert_eq!(
        (hi["first_season"].as_i64(), hi["last_season"].as_i64()),
        (Some(1932), Some(1941))
    );
    close(f(&lo["exponent"]), 1.680, 5e-4, "lowest window");
    close(f(&hi["exponent"]), 1.996, 5e-4, "highest window");
    let full = eras(&["--window", "10"]);
    let c = &full["change_test"];
    assert_eq!(c["exponent_changed"], true);
    close(f(&c["f_statistic"]), 1.65, 5e-3, "F");
    close(f(&c["p_value"]), 2.4e-6, 5e-8, "p");
    let chosen = &full["recommendation"]["chosen"];
    assert_eq!(chosen["first_season"], 2015);
    close(
        f(&chosen["std_error"]),
        0.049,
        5e-4,
        "recommended span's SE",
    );
}
