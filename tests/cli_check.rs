//! The CI gate, exit codes, atomic output and command-line manners.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::{repo, runcal};
use predicates::str::contains;
use serde_json::Value;

/// A profile fitted in the test on the demo history, and a directory for new season files.
fn setup() -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let profile = dir.path().join("league.json");
    runcal()
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "-q",
            "--save-profile",
        ])
        .arg(&profile)
        .assert()
        .success();
    (dir, profile)
}

fn simulate(dir: &std::path::Path, name: &str, exponent: &str, seed: &str) -> std::path::PathBuf {
    let out = dir.join(name);
    runcal()
        .args([
            "simulate",
            "--teams",
            "14",
            "--seasons",
            "4",
            "--games",
            "140",
            "--exponent",
            exponent,
            "--seed",
            seed,
            "-q",
            "--out",
        ])
        .arg(&out)
        .assert()
        .success();
    out
}

#[test]
fn a_season_like_the_history_passes_every_rule() {
    let (dir, profile) = setup();
    let new = simulate(dir.path(), "new.csv", "1.83", "11");
    let out = runcal()
        .args([
            "check",
            "--format",
            "json",
            "--max-mae",
            "0.05",
            "--max-rmse",
            "0.06",
            "--max-logloss",
            "0.7",
            "--profile",
        ])
        .arg(&profile)
        .arg(&new)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["schema"], "runcal.check/1");
    assert_eq!(v["passed"], true);
    let rules: Vec<&str> = v["rules"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["rule"].as_str().unwrap())
        .collect();
    assert_eq!(
        rules,
        ["max_mae", "max_rmse", "max_logloss", "max_drift:exponent"]
    );
    for r in v["rules"].as_array().unwrap() {
        assert_eq!(r["passed"], true);
        assert!(r["value"].as_f64().unwrap() <= r["threshold"].as_f64().unwrap());
    }
}

#[test]
fn a_drifted_league_fails_with_exit_1_and_says_why() {
    let (dir, profile) = setup();
    // Scores with Weibull shape 2.6 instead of 1.83: the refitted exponent moves far away.
    let new = simulate(dir.path(), "drifted.csv", "2.6", "12");
    runcal()
        .args(["check", "--profile"])
        .arg(&profile)
        .arg(&new)
        .assert()
        .code(1)
        .stdout(contains("FAILED: max_drift:exponent"))
        .stdout(contains("FAIL"));
}

#[test]
fn an_error_bound_alone_can_fail_the_gate() {
    let (dir, profile) = setup();
    let new = simulate(dir.path(), "new.csv", "1.83", "13");
    let out = runcal()
        .args([
            "check",
            "--no-drift",
            "--max-mae",
            "0.001",
            "--format",
            "json",
            "--profile",
        ])
        .arg(&profile)
        .arg(&new)
        .assert()
        .code(1)
        .stderr(contains("FAILED: max_mae"))
        .get_output()
        .stdout
        .clone();
    let v: Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["passed"], false);
    assert_eq!(v["rules"][0]["rule"], "max_mae");
    assert_eq!(v["rules"][0]["passed"], false);
}

#[test]
fn the_drift_rule_can_use_a_bootstrap_interval_when_the_profile_has_no_standard_error() {
    let dir = tempfile::tempdir().unwrap();
    let profile = dir.path().join("mae.json");
    // An MAE fit has no analytic standard error; its bootstrap interval stands in.
    runcal()
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "-q",
            "--loss",
            "mae",
            "--bootstrap",
            "200",
            "--seed",
            "3",
            "--save-profile",
        ])
        .arg(&profile)
        .assert()
        .success();
    let new = simulate(dir.path(), "new.csv", "1.83", "14");
    runcal()
        .args(["check", "--profile"])
        .arg(&profile)
        .arg(&new)
        .assert()
        .code(0)
        .stdout(contains("max_drift:exponent"));
    let no_se = dir.path().join("plain-mae.json");
    runcal()
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "-q",
            "--loss",
            "mae",
            "--save-profile",
        ])
        .arg(&no_se)
        .assert()
        .success();
    runcal()
        .args(["check", "--profile"])
        .arg(&no_se)
        .arg(&new)
        .assert()
        .code(2)
        .stderr(contains("--max-drift needs the profile's standard errors"));
}

#[test]
fn exit_codes_are_0_1_2() {
    runcal()
        .args(["fit", "demo-data/meridian-league.csv", "-q"])
        .assert()
        .code(0);
    runcal()
        .args(["fit", "no-such-file.csv"])
        .assert()
        .code(2)
        .stderr(contains("no-such-file.csv"));
    runcal()
        .args(["fit", "--loss", "nonsense", "demo-data/meridian-league.csv"])
        .assert()
        .code(2);
    runcal()
        .args(["check", "demo-data/meridian-league.csv"])
        .assert()
        .code(2)
        .stderr(contains("--profile"));
    // A check that runs and fails is exit code 1, not 2.
    let (dir, profile) = setup();
    let drifted = simulate(dir.path(), "drifted.csv", "2.6", "12");
    runcal()
        .args(["check", "-q", "--profile"])
        .arg(&profile)
        .arg(&drifted)
        .assert()
        .code(1);
    runcal()
        .arg("--help")
        .assert()
        .code(0)
        .stdout(contains("Exit codes: 0 success, 1 a check failed"));
    runcal().arg("--version").assert().code(0);
}

#[test]
fn every_command_help_shows_a_real_example() {
    for cmd in ["fit", "luck", "backtest", "check", "simulate"] {
        runcal()
            .args([cmd, "--help"])
            .assert()
            .code(0)
            .stdout(contains("Example:"))
            .stdout(contains(format!("runcal {cmd} ")));
    }
}

#[test]
fn output_files_are_written_whole_and_never_over_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fit.json");
    runcal()
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "-q",
            "--format",
            "json",
            "--output",
        ])
        .arg(&out)
        .assert()
        .success();
    let v: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    assert_eq!(v["schema"], "runcal.fit/2");

    // A run that fails leaves an existing output untouched and no temporary files behind.
    let before = std::fs::read(&out).unwrap();
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "season,team,w,l,rs,ra\n2026,A,x,1,2,3\n").unwrap();
    runcal()
        .args(["fit", "-q", "--format", "json", "--output"])
        .arg(&out)
        .arg(&bad)
        .assert()
        .code(2);
    assert_eq!(std::fs::read(&out).unwrap(), before);
    let fresh = dir.path().join("fresh.json");
    runcal()
        .args(["fit", "-q", "--output"])
        .arg(&fresh)
        .arg(&bad)
        .assert()
        .code(2);
    assert!(!fresh.exists());
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(Result::ok)
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "temporary files left: {leftovers:?}");

    // Refuses to write over one of its own inputs, whatever the format.
    let input = dir.path().join("league.csv");
    std::fs::copy(repo().join("demo-data/meridian-league.csv"), &input).unwrap();
    let original = std::fs::read(&input).unwrap();
    runcal()
        .args(["fit", "-q", "--output"])
        .arg(&input)
        .arg(&input)
        .assert()
        .code(2)
        .stderr(contains("input"));
    runcal()
        .args(["fit", "-q", "--save-profile"])
        .arg(&input)
        .arg(&input)
        .assert()
        .code(2);
    assert_eq!(std::fs::read(&input).unwrap(), original);
}

#[test]
fn standard_input_is_read_with_a_dash() {
    let data = std::fs::read(repo().join("demo-data/meridian-league.csv")).unwrap();
    let out = runcal()
        .args(["fit", "-", "-q", "--format", "json"])
        .write_stdin(data)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["rows_used"], 350);
}

#[test]
fn identical_input_gives_byte_identical_output() {
    for args in [
        vec![
            "fit",
            "demo-data/meridian-league.csv",
            "--model",
            "all",
            "--format",
            "json",
            "-q",
        ],
        vec![
            "luck",
            "demo-data/meridian-2026-games.csv",
            "--games",
            "--profile",
            "demo-data/meridian-profile.json",
            "--format",
            "csv",
        ],
        vec![
            "backtest",
            "demo-data/meridian-league.csv",
            "--format",
            "json",
        ],
    ] {
        let a = runcal()
            .args(&args)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        let b = runcal()
            .args(&args)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        assert_eq!(a, b, "{args:?}");
    }
}

#[test]
fn completions_and_man_page_are_generated() {
    runcal()
        .args(["completions", "bash"])
        .assert()
        .success()
        .stdout(contains("runcal"));
    runcal()
        .args(["completions", "zsh"])
        .assert()
        .success()
        .stdout(contains("#compdef runcal"));
    runcal()
        .arg("man")
        .assert()
        .success()
        .stdout(contains(".TH runcal"));
}

#[test]
fn quiet_silences_warnings_and_verbose_adds_diagnostics() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("odd.csv");
    // Games (12) differ from W+L+T (10): accepted with a warning.
    std::fs::write(
        &file,
        "season,team,g,w,l,rs,ra\n2026,A,12,6,4,50,40\n2026,B,12,4,6,40,50\n",
    )
    .unwrap();
    runcal()
        .args(["fit", "--exponent", "2"])
        .arg(&file)
        .assert()
        .success()
        .stderr(contains(
            "warning: 2 team-seasons have games different from W+L+T",
        ));
    runcal()
        .args(["fit", "--exponent", "2", "-q"])
        .arg(&file)
        .assert()
        .success()
        .stderr(predicates::str::is_empty());
    runcal()
        .args(["fit", "demo-data/meridian-league.csv", "-v"])
        .assert()
        .success()
        .stderr(contains("debug: pythagorean"));
}

#[test]
fn league_balance_rules_fail_a_corrupted_season_file() {
    // 2021 of this file has a mistyped record: 338 wins against 310 losses, 3000 runs scored
    // against 2940 allowed; in a complete league table both sides are equal (common practice).
    let (_dir, profile) = setup();
    let bad = common::repo().join("tests/bad-input/season-unbalanced.csv");
    runcal()
        .args(["check"])
        .arg(&bad)
        .args(["--profile"])
        .arg(&profile)
        .args(["--no-drift", "--max-mae", "1", "--max-imbalance", "0.005"])
        .args(["--format", "json"])
        .assert()
        .code(1)
        .stdout(contains("\"rule\": \"league_wins_balance\""))
        .stdout(contains("\"rule\": \"league_runs_balance\""));
    // Without the option the gate passes on its other rules, and warns.
    runcal()
        .args(["check"])
        .arg(&bad)
        .args(["--profile"])
        .arg(&profile)
        .args(["--no-drift", "--max-mae", "1"])
        .assert()
        .code(0)
        .stderr(contains(
            "season 2021: the 4 teams' wins (338) and losses (310) do not balance",
        ));
    // The simulated demo history balances exactly: every game has a winner and a loser.
    runcal()
        .args(["check", "demo-data/meridian-league.csv", "--profile"])
        .arg(&profile)
        .args(["--no-drift", "--max-imbalance", "0"])
        .assert()
        .code(0);
}

/// The Databank's `--map` options (tests/data/databank-teams.csv, Baseball Databank 2021.2).
const DATABANK: [&str; 9] = [
    "tests/data/databank-teams.csv",
    "--map",
    "season=yearID",
    "--map",
    "league=lgID",
    "--map",
    "team=teamID",
    "--map",
    "runs_scored=R",
];

fn check_json(profile: &std::path::Path) -> (i32, Value) {
    let out = runcal()
        .arg("check")
        .args(DATABANK)
        .args([
            "--seasons",
            "2007-2020",
            "-q",
            "--format",
            "json",
            "--profile",
        ])
        .arg(profile)
        .output()
        .unwrap();
    (
        out.status.code().unwrap(),
        serde_json::from_slice(&out.stdout).unwrap(),
    )
}

#[test]
fn pythagenport_drift_is_tested_jointly_and_an_old_profile_falls_back_to_one_at_a_time() {
    let dir = tempfile::tempdir().unwrap();
    let profile = dir.path().join("port.json");
    runcal()
        .arg("fit")
        .args(DATABANK)
        .args(["--seasons", "1980-2006", "--model", "pythagenport", "-q"])
        .arg("--save-profile")
        .arg(&profile)
        .assert()
        .success();
    // Refitted on 2007–2020, (a, b) moves from (0.03, 1.90) to (2.26, −0.36): along the valley
    // that corr(a, b) ≈ −0.999 draws, yet far enough across it that the Wald statistic on the
    // summed covariance (12.9) exceeds the χ²₂ quantile at 2Φ(3) − 1, 11.829
    // (scipy.stats.chi2.ppf(0.9973002039367398, 2)).
    let (code, v) = check_json(&profile);
    assert_eq!(code, 1, "{v}");
    let rules = v["rules"].as_array().unwrap();
    assert_eq!(rules.len(), 1, "{v}");
    assert_eq!(rules[0]["rule"], "max_drift:joint");
    assert!((rules[0]["threshold"].as_f64().unwrap() - 11.829).abs() < 1e-3);
    assert!(rules[0]["value"].as_f64().unwrap() > 11.829);
    assert_eq!(rules[0]["passed"], false);
    // A profile saved before the covariance existed loads, and each parameter alone passes.
    let mut old: Value = serde_json::from_slice(&std::fs::read(&profile).unwrap()).unwrap();
    old.as_object_mut().unwrap().remove("covariance");
    let old_path = dir.path().join("old.json");
    std::fs::write(&old_path, serde_json::to_vec(&old).unwrap()).unwrap();
    let (code, v) = check_json(&old_path);
    assert_eq!(code, 0, "{v}");
    let names: Vec<&str> = v["rules"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["rule"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["max_drift:a", "max_drift:b"]);
}

#[test]
fn a_single_rule_gate_passes_in_the_singular() {
    // --no-drift with one error bound: one rule, and the verdict says "the one rule".
    let (dir, profile) = setup();
    let new = simulate(dir.path(), "same.csv", "1.9", "21");
    let out = common::ok(
        runcal()
            .args(["check", "--no-drift", "--max-mae", "0.5", "--profile"])
            .arg(&profile)
            .arg(&new),
    );
    let all = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(all.contains("PASSED: the one rule holds"), "{all}");
    assert!(!all.contains("all 1 rules"), "{all}");
}

#[test]
fn backtest_reports_the_rmse_in_wins() {
    // RMSE in wins = RMSE in win% × mean season length of the held-out team-seasons (140 here).
    let v: Value = serde_json::from_slice(
        &runcal()
            .args(["backtest", &common::demo_path(), "--format", "json", "-q"])
            .assert()
            .success()
            .get_output()
            .stdout,
    )
    .unwrap();
    for m in v["models"].as_array().unwrap() {
        common::close(
            common::f(&m["rmse_wins"]),
            common::f(&m["rmse"]) * 140.0,
            1e-9,
            "rmse_wins",
        );
    }
    let table = runcal()
        .args(["backtest", &common::demo_path(), "-q"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let table = String::from_utf8(table).unwrap();
    assert!(table.contains("rmse (wins)"), "{table}");
}
