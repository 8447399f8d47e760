//! Every command's JSON against committed files, so that a change of shape is always deliberate.
//! `UPDATE_SNAPSHOTS=1 cargo test --test snapshots` rewrites them; review the diff before committing.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use assert_cmd::Command;
use common::{DEMO_WEEKLY_JSON, repo};

fn check(name: &str, args: &[&str]) {
    let mut c = Command::cargo_bin("runcal").unwrap();
    c.current_dir(repo())
        .env("SOURCE_DATE_EPOCH", "1796083200")
        .args(args);
    let out = c.assert().success().get_output().stdout.clone();
    compare(name, &out);
}

fn compare(name: &str, got: &[u8]) {
    let path = repo().join("tests/snapshots").join(name);
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, got).unwrap();
        return;
    }
    let want = std::fs::read(&path).unwrap_or_else(|_| {
        panic!(
            "missing snapshot {}; run with UPDATE_SNAPSHOTS=1",
            path.display()
        )
    });
    if want != got {
        let (w, g) = (String::from_utf8_lossy(&want), String::from_utf8_lossy(got));
        let first = w
            .lines()
            .zip(g.lines())
            .position(|(a, b)| a != b)
            .unwrap_or(w.lines().count().min(g.lines().count()));
        panic!(
            "{name} changed at line {}:\n  snapshot: {}\n  now:      {}\n(UPDATE_SNAPSHOTS=1 rewrites it if the change is deliberate)",
            first + 1,
            w.lines().nth(first).unwrap_or("<end>"),
            g.lines().nth(first).unwrap_or("<end>")
        );
    }
}

#[test]
fn fit_json() {
    check(
        "fit.json",
        &[
            "fit",
            "demo-data/meridian-league.csv",
            "--model",
            "all",
            "--format",
            "json",
            "-q",
        ],
    );
}

#[test]
fn fit_bootstrap_json() {
    check(
        "fit-bootstrap.json",
        &[
            "fit",
            "demo-data/meridian-league.csv",
            "--bootstrap",
            "200",
            "--seed",
            "4",
            "--no-references",
            "--format",
            "json",
            "-q",
        ],
    );
}

#[test]
fn fit_by_season_json() {
    check(
        "fit-by-season.json",
        &[
            "fit",
            "demo-data/meridian-league.csv",
            "--by",
            "season",
            "--seasons",
            "2020-2025",
            "--format",
            "json",
            "-q",
        ],
    );
}

#[test]
fn luck_json() {
    check("luck.json", &DEMO_WEEKLY_JSON);
}

#[test]
fn digest_json() {
    let games = "demo-data/meridian-2026-games.csv";
    let profile = "demo-data/meridian-profile.json";
    check(
        "digest.json",
        &[
            "digest",
            games,
            "--profile",
            profile,
            "--as-of",
            "2026-07-15",
            "--format",
            "json",
        ],
    );
}

#[test]
fn backtest_json() {
    check(
        "backtest.json",
        &[
            "backtest",
            "demo-data/meridian-league.csv",
            "--scheme",
            "rolling",
            "--min-train",
            "20",
            "--format",
            "json",
        ],
    );
}

#[test]
fn check_json() {
    check(
        "check.json",
        &[
            "check",
            "demo-data/meridian-league.csv",
            "--profile",
            "demo-data/meridian-profile.json",
            "--max-mae",
            "0.03",
            "--format",
            "json",
        ],
    );
}

#[test]
fn simulate_json() {
    check(
        "simulate.json",
        &[
            "simulate",
            "--teams",
            "4",
            "--seasons",
            "2",
            "--games",
            "6",
            "--seed",
            "3",
            "--format",
            "json",
        ],
    );
}

/// The profile `runcal fit` saves for the demo history, with the creation time pinned.
fn demo_profile() -> Vec<u8> {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("profile.json");
    let mut c = Command::cargo_bin("runcal").unwrap();
    c.current_dir(repo())
        .env("SOURCE_DATE_EPOCH", "1796083200")
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "-q",
            "--save-profile",
        ])
        .arg(&path)
        .assert()
        .success();
    std::fs::read(&path).unwrap()
}

#[test]
fn profile_json() {
    compare("profile.json", &demo_profile());
}

#[test]
fn committed_demo_profile_is_current() {
    // demo-data/meridian-profile.json is what make-demo.sh writes: refitting gives the same file.
    let committed = std::fs::read(repo().join("demo-data/meridian-profile.json")).unwrap();
    assert!(demo_profile() == committed, "rerun demo-data/make-demo.sh");
}

#[test]
fn eras_json() {
    check(
        "eras.json",
        &[
            "eras",
            "demo-data/meridian-league.csv",
            "--window",
            "10",
            "--bootstrap",
            "100",
            "--format",
            "json",
            "-q",
        ],
    );
}

#[test]
fn outlook_json() {
    check(
        "outlook.json",
        &[
            "outlook",
            "demo-data/meridian-2026-to-date.csv",
            "--schedule",
            "demo-data/meridian-2026-schedule.csv",
            "--groups",
            "demo-data/meridian-divisions.csv",
            "--profile",
            "demo-data/meridian-profile.json",
            "--simulations",
            "500",
            "--target-wins",
            "80",
            "--format",
            "json",
            "-q",
        ],
    );
}
