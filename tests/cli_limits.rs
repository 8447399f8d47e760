//! Sizes, parameter domains and saved calibrations checked up front: each refusal exits 2 with a
//! message naming the option or field, before any work; nothing panics, aborts or hangs.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::path::Path;
use std::time::Duration;

use common::{repo, runcal};

fn demo() -> String {
    common::demo_path()
}

fn demo_profile() -> serde_json::Value {
    let text = std::fs::read_to_string(repo().join("demo-data/meridian-profile.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// Run and expect exit 2 with `words` on stderr and no panic.
#[track_caller]
fn refused(args: &[&str], words: &str) {
    let out = runcal().args(args).output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
    assert!(
        err.contains(words),
        "{args:?}: stderr lacks '{words}':\n{err}"
    );
    assert!(!err.contains("panicked"), "{err}");
}

#[test]
fn simulate_refuses_sizes_and_parameters_outside_its_limits() {
    for (args, words) in [
        (
            "--seasons 1000000000000",
            "--seasons must lie from 1 to 100000",
        ),
        ("--teams 100000000000", "--teams must lie from 1 to 10000"),
        (
            "--teams 5000 --seasons 5000",
            "at most 5000000 team-seasons",
        ),
        (
            "--runs-per-game 1e300",
            "--runs-per-game must be positive and at most 1000",
        ),
        ("--first-season 2147483647", "leave the years 1–9999"),
        ("--first-season 9999 --game-log", "leave the years 1–9999"),
        (
            "--first-season 9999 --seasons 1 --games 300 --game-log",
            "the last game would be played after 9999-12-31",
        ),
        (
            "--truth pythagorean:-2",
            "pythagorean exponent must be positive",
        ),
        ("--truth pythagorean:2 --rpg-range 1-inf", "finite bounds"),
        (
            "--truth pythagorean:2 --rpg-range 1-1e9",
            "--rpg-range must be",
        ),
        (
            "--exponent -1",
            "--exponent (the Weibull shape) must lie from 0.5 to 20",
        ),
        ("--talent-sd 50", "--talent-sd must lie from 0 to 1"),
    ] {
        let mut a = vec!["simulate"];
        a.extend(args.split_whitespace());
        refused(&a, words);
    }
}

#[test]
fn simulate_checks_even_teams_before_sizes() {
    refused(
        &["simulate", "--teams", "3", "--seasons", "1000000000"],
        "--teams must be an even number",
    );
}

#[test]
fn option_values_outside_their_domain_are_refused() {
    let d = demo();
    for (args, words) in [
        (
            vec!["fit", &d, "--bootstrap", "1000000000"],
            "at most 100000",
        ),
        (
            vec!["fit", &d, "--exponent", "-1"],
            "expected a positive number, got '-1'",
        ),
        (
            vec!["fit", &d, "--ci-level", "1.5", "--bootstrap", "10"],
            "expected a level between 0 and 1",
        ),
        (
            vec!["fit", &d, "--reference", "pythagorean:-1"],
            "pythagorean exponent must be positive",
        ),
        (
            vec!["fit", &d, "--reference", "pythagenport:1.5,-3"],
            "non-positive exponent",
        ),
        (
            vec!["luck", &d, "--top", "9223372036854775808"],
            "at most 1000000",
        ),
        (
            vec!["luck", &d, "--exponent", "-1"],
            "expected a positive number",
        ),
        (
            vec!["luck", &d, "--regress-games", "-5"],
            "expected a non-negative number",
        ),
        (
            vec!["luck", &d, "--season-games", "1000000000000"],
            "from 1 to 1000000",
        ),
        (vec!["luck", &d, "--season-games", "0"], "from 1 to 1000000"),
    ] {
        refused(&args, words);
    }
    let p = repo()
        .join("demo-data/meridian-profile.json")
        .display()
        .to_string();
    refused(
        &["check", &d, "--profile", &p, "--max-mae", "-1"],
        "expected a non-negative number",
    );
    refused(
        &["check", &d, "--profile", &p, "--max-drift", "-3"],
        "expected a positive number",
    );
}

#[test]
fn top_larger_than_the_table_lists_every_team() {
    let out = runcal()
        .args([
            "luck",
            &demo(),
            "--top",
            "1000000",
            "--format",
            "json",
            "-q",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["teams"].as_array().unwrap().len(), 350);
}

#[test]
fn a_million_game_season_projects_at_once() {
    // Beyond 20,000 remaining games the interval comes from the normal approximation, so a
    // 1,000,000-game season costs no more than a 162-game one.
    let out = runcal()
        .args([
            "luck",
            &demo(),
            "--season-games",
            "1000000",
            "--format",
            "json",
            "-q",
        ])
        .timeout(Duration::from_secs(60))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let t = &v["teams"][0]["outlook"];
    let (lo, hi) = (
        t["range"][0].as_f64().unwrap(),
        t["range"][1].as_f64().unwrap(),
    );
    // The normal approximation's range holds its level.
    assert!((t["range_mass"].as_f64().unwrap() - 0.8).abs() < 1e-3);
    assert!(lo < hi && hi <= 1_000_000.0, "{lo} {hi}");
}

fn write_profile(dir: &Path, v: &serde_json::Value) -> String {
    let p = dir.join("p.json");
    std::fs::write(&p, serde_json::to_string_pretty(v).unwrap()).unwrap();
    p.display().to_string()
}

#[test]
fn every_profile_field_is_checked_on_load() {
    let dir = tempfile::tempdir().unwrap();
    let cases: Vec<(&str, serde_json::Value, &str)> = vec![
        (
            "/params/exponent",
            serde_json::json!(-1.9),
            "pythagorean exponent must be positive",
        ),
        (
            "/params/exponent",
            serde_json::json!(0.0),
            "pythagorean exponent must be positive",
        ),
        (
            "/runs_per_win",
            serde_json::json!(0.0),
            "\"runs_per_win\" must be a positive number",
        ),
        (
            "/regression_games",
            serde_json::json!(-4.0),
            "\"regression_games\" must be a non-negative",
        ),
        (
            "/run_based_regression_games",
            serde_json::json!(-1.0),
            "\"run_based_regression_games\"",
        ),
        (
            "/std_errors/exponent",
            serde_json::json!(-0.1),
            "\"std_errors.exponent\" must be a non-negative",
        ),
        (
            "/std_errors_binomial/exponent",
            serde_json::json!(-0.1),
            "\"std_errors_binomial.exponent\"",
        ),
        (
            "/dispersion",
            serde_json::json!(0.0),
            "\"dispersion\" must be a positive number",
        ),
        (
            "/season_games",
            serde_json::json!(1_000_000_000_000u64),
            "\"season_games\" is 1000000000000",
        ),
        (
            "/average_rpg",
            serde_json::json!(-9.0),
            "\"average_rpg\" must be a positive number",
        ),
    ];
    for (pointer, value, words) in cases {
        let mut v = demo_profile();
        *v.pointer_mut(pointer).unwrap() = value;
        let p = write_profile(dir.path(), &v);
        refused(
            &[
                "check",
                &demo(),
                "--profile",
                &p,
                "--max-mae",
                "1",
                "--no-drift",
            ],
            words,
        );
        refused(&["luck", &demo(), "--profile", &p], words);
    }
}

#[test]
fn a_profile_interval_is_ordered_and_its_level_inside_zero_one() {
    // Before: a ci_level of 1.5 and no standard errors made `check` panic in the normal quantile.
    let dir = tempfile::tempdir().unwrap();
    let mut v = demo_profile();
    v["std_errors"] = serde_json::Value::Null;
    v["ci"] = serde_json::json!({"exponent": [1.8, 2.0]});
    v["ci_level"] = serde_json::json!(1.5);
    let p = write_profile(dir.path(), &v);
    refused(
        &["check", &demo(), "--profile", &p],
        "\"ci_level\" must lie between 0 and 1",
    );
    v["ci_level"] = serde_json::json!(0.95);
    v["ci"] = serde_json::json!({"exponent": [2.0, 1.8]});
    let p = write_profile(dir.path(), &v);
    refused(&["check", &demo(), "--profile", &p], "lower <= upper");
}

#[test]
fn a_profile_with_a_byte_order_mark_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("bom.json");
    let mut bytes = b"\xef\xbb\xbf".to_vec();
    bytes.extend(std::fs::read(repo().join("demo-data/meridian-profile.json")).unwrap());
    std::fs::write(&p, bytes).unwrap();
    runcal()
        .args(["luck", &demo(), "--profile", &p.display().to_string(), "-q"])
        .assert()
        .success();
}

#[test]
fn a_profile_that_is_not_a_small_regular_file_is_refused() {
    refused(
        &["luck", &demo(), "--profile", "/dev/zero"],
        "not a regular file",
    );
    let dir = tempfile::tempdir().unwrap();
    refused(
        &[
            "luck",
            &demo(),
            "--profile",
            &dir.path().display().to_string(),
        ],
        "not a regular file",
    );
    let big = dir.path().join("big.json");
    std::fs::write(&big, vec![b' '; (1 << 20) + 1]).unwrap();
    refused(
        &["luck", &demo(), "--profile", &big.display().to_string()],
        "larger than 1024 KiB",
    );
    // A FIFO with no writer would block an open() for ever: it is refused without opening it.
    let fifo = dir.path().join("fifo.json");
    common::mkfifo(&fifo);
    let out = runcal()
        .args(["luck", &demo(), "--profile", &fifo.display().to_string()])
        .timeout(Duration::from_secs(30))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("not a regular file"));
}

#[test]
fn a_by_group_that_cannot_be_fitted_is_named_marked_and_the_rest_go_on() {
    // In 2021 every winner outscored its opponents and won every game: the log-loss falls for ever
    // as the exponent grows (perfect separation, no maximum-likelihood estimate).
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("sep.csv");
    std::fs::write(
        &f,
        "season,team,w,l,rs,ra\n2020,Aces,90,72,800,700\n2020,Bats,72,90,700,800\n\
         2020,Cubs,81,81,740,751\n2020,Dogs,81,81,751,740\n2021,Aces,10,0,60,40\n\
         2021,Bats,0,10,40,60\n2021,Cubs,10,0,50,45\n2021,Dogs,0,10,45,50\n",
    )
    .unwrap();
    let out = runcal()
        .args([
            "fit",
            &f.display().to_string(),
            "--by",
            "season",
            "--min-group",
            "1",
        ])
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("group 2021: cannot fit pythagorean"), "{err}");
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["fits"].as_array().unwrap().len(), 1);
    assert_eq!(v["fits"][0]["group"]["season"], 2020);
    assert_eq!(v["unfitted_groups"][0]["group"]["season"], 2021);
    assert_eq!(v["unfitted_groups"][0]["rows"], 4);
}

#[test]
fn when_no_group_can_be_fitted_the_first_reason_is_given() {
    // Season resampling inside one-season groups has nothing to draw from: every group and model
    // fails the same way, and the error says how (25 demo seasons x 4 models).
    let demo = common::demo_path();
    refused(
        &[
            "fit",
            &demo,
            "--by",
            "season",
            "--model",
            "all",
            "--bootstrap",
            "20",
            "--resample",
            "season",
        ],
        "no group could be fitted: 0 with fewer than --min-group 8 team-seasons, 100 that failed to fit (the first, group 2001 pythagorean: --resample season needs at least 2 seasons)",
    );
}

#[test]
fn leave_one_season_out_on_one_season_says_why() {
    let one = repo().join("tests/bad-input/season-short.csv");
    refused(
        &["backtest", &one.display().to_string()],
        "leave-one-season-out needs at least two seasons (one to hold out, one to fit on); the data hold one season (2020)",
    );
}

#[test]
fn control_characters_never_reach_the_terminal_raw() {
    // A file name with an OSC title sequence, and a header with a NUL and an ESC in it, both echoed
    // by error messages: stderr shows them as \x1b, \x07, \x00.
    let dir = tempfile::tempdir().unwrap();
    let name = dir.path().join("evil\x1b]0;owned\x07.csv");
    let out = runcal()
        .args(["fit", &name.display().to_string()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(!out.stderr.iter().any(|&b| b == 0x1b || b == 0x07 || b == 0));
    assert!(String::from_utf8_lossy(&out.stderr).contains("evil\\x1b]0;owned\\x07.csv"));
    let f = dir.path().join("nul.csv");
    std::fs::write(
        &f,
        "season,team,w,l,rs,ra,no\x00te\x1b[2J\n2020,Aces,9,7,80,70,x\n",
    )
    .unwrap();
    let out = runcal()
        .args(["fit", &f.display().to_string(), "--map", "wins=missing"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(
        !out.stderr.iter().any(|&b| b == 0x1b || b == 0),
        "{:?}",
        out.stderr
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("no\\x00te\\x1b[2J"));
}
