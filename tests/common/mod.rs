//! Shared helpers for the integration tests.
#![allow(dead_code)]

use std::path::PathBuf;

use runcal::data::{self, Dataset, LoadOptions, SeasonRange, Table, TiePolicy, Weighting};

/// The runcal binary, run from the repository root.
pub fn runcal() -> assert_cmd::Command {
    let mut c = assert_cmd::Command::cargo_bin("runcal").unwrap();
    c.current_dir(repo());
    c
}

/// Run a command that must succeed; its output (stdout and stderr).
pub fn ok(cmd: &mut assert_cmd::Command) -> std::process::Output {
    cmd.assert().success().get_output().clone()
}

pub fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The demo league's team-season history (fictional clubs, simulated).
pub fn demo_path() -> String {
    repo()
        .join("demo-data/meridian-league.csv")
        .display()
        .to_string()
}

/// Make a FIFO at `path` (with the system's mkfifo).
pub fn mkfifo(path: &std::path::Path) {
    let ok = std::process::Command::new("mkfifo")
        .arg(path)
        .status()
        .is_ok_and(|s| s.success());
    assert!(ok, "mkfifo {}", path.display());
}

/// The Baseball Databank Teams table (CC BY-SA 3.0), trimmed by tests/reference/extract_databank.py.
pub fn databank_path() -> String {
    repo()
        .join("tests/data/databank-teams.csv")
        .display()
        .to_string()
}

/// The `--map` options the Databank's headers need.
pub const DATABANK_MAPS: [&str; 4] = [
    "season=yearID",
    "league=lgID",
    "team=teamID",
    "runs_scored=R",
];

/// `runcal SUB <databank> --map …`: a command on the Databank table with its maps, for more args.
pub fn databank_cmd(sub: &str) -> assert_cmd::Command {
    let mut cmd = runcal();
    cmd.arg(sub).arg(databank_path());
    for m in DATABANK_MAPS {
        cmd.args(["--map", m]);
    }
    cmd
}

pub fn databank(seasons: Option<&str>) -> Dataset {
    let opts = LoadOptions {
        maps: DATABANK_MAPS.iter().map(|m| m.parse().unwrap()).collect(),
        seasons: seasons.map(|s| s.parse::<SeasonRange>().unwrap()),
        ..LoadOptions::default()
    };
    data::load(&[databank_path()], false, &opts).unwrap()
}

pub fn table(ds: &Dataset, weighting: Weighting) -> Table {
    Table::new(&ds.rows, TiePolicy::Half, weighting)
}

/// Values computed by tests/reference/reference.py with scipy and statsmodels.
pub fn reference() -> serde_json::Value {
    let text =
        std::fs::read_to_string(repo().join("tests/reference/reference_values.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

pub fn f(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

#[track_caller]
pub fn close(actual: f64, expected: f64, tol: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= tol,
        "{what}: {actual} differs from {expected} by {:e} (tolerance {tol:e})",
        (actual - expected).abs()
    );
}

/// `luck` on the demo game log as of mid-July with the demo profile, as JSON: the weekly report
/// several tests read.
#[allow(dead_code)] // not every test binary uses every helper
pub const DEMO_WEEKLY_JSON: [&str; 9] = [
    "luck",
    "demo-data/meridian-2026-games.csv",
    "--games",
    "--profile",
    "demo-data/meridian-profile.json",
    "--as-of",
    "2026-07-15",
    "--format",
    "json",
];
