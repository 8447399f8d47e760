//! `runcal outlook` from the command line: the demo, determinism, and hostile input.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::runcal;
use predicates::prelude::*;

const TO_DATE: &str = "demo-data/meridian-2026-to-date.csv";
const SCHEDULE: &str = "demo-data/meridian-2026-schedule.csv";
const DIVISIONS: &str = "demo-data/meridian-divisions.csv";
const PROFILE: &str = "demo-data/meridian-profile.json";

fn demo_args() -> Vec<&'static str> {
    vec![
        "outlook",
        TO_DATE,
        "--schedule",
        SCHEDULE,
        "--groups",
        DIVISIONS,
        "--profile",
        PROFILE,
        "--simulations",
        "2000",
    ]
}

fn write(dir: &tempfile::TempDir, name: &str, text: &str) -> String {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p.display().to_string()
}

#[test]
fn same_bytes_for_one_and_two_threads() {
    let run = |threads: &str, format: &str| {
        let mut args = demo_args();
        args.extend(["--format", format]);
        runcal()
            .env("RAYON_NUM_THREADS", threads)
            .args(&args)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone()
    };
    for format in ["json", "csv"] {
        assert_eq!(run("1", format), run("2", format), "{format}");
    }
}

#[test]
fn schedule_and_as_of_paths_agree_and_json_carries_the_caution() {
    let from_schedule = runcal()
        .args(demo_args())
        .args(["--format", "json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let from_as_of = runcal()
        .args([
            "outlook",
            "demo-data/meridian-2026-games.csv",
            "--as-of",
            "2026-07-15",
            "--groups",
            DIVISIONS,
            "--profile",
            PROFILE,
            "--simulations",
            "2000",
            "--format",
            "json",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    // The same log with the later games' scores left empty: its unplayed rows.
    let dir = tempfile::tempdir().unwrap();
    let log =
        std::fs::read_to_string(common::repo().join("demo-data/meridian-2026-games.csv")).unwrap();
    let blanked: String = log
        .lines()
        .map(|line| {
            let f: Vec<&str> = line.split(',').collect();
            if f[2] > "2026-07-15" && f[2].starts_with("2026") {
                format!("{}\n", f[..5].join(",") + ",,")
            } else {
                format!("{line}\n")
            }
        })
        .collect();
    let blanked = write(&dir, "unplayed.csv", &blanked);
    let from_empty_scores = runcal()
        .args([
            "outlook",
            &blanked,
            "--groups",
            DIVISIONS,
            "--profile",
            PROFILE,
        ])
        .args(["--simulations", "2000", "--format", "json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let c: serde_json::Value = serde_json::from_slice(&from_empty_scores).unwrap();
    let a: serde_json::Value = serde_json::from_slice(&from_schedule).unwrap();
    let b: serde_json::Value = serde_json::from_slice(&from_as_of).unwrap();
    assert_eq!(a["schema"], "runcal.outlook/1");
    assert!(a["caution"].as_str().unwrap().contains("not wagering"));
    // The same 238 games left, found two ways, give the same simulation.
    assert_eq!(a["games_left"], 238);
    assert_eq!(a["clubs"], b["clubs"]);
    assert_eq!(a["schedule"]["scheduled_in_log"], 742);
    assert_eq!(b["schedule"]["log_after_as_of"], 238);
    assert_eq!(a["clubs"], c["clubs"]);
    assert_eq!(c["schedule"]["log_unplayed"], 238);
}

#[test]
fn a_finished_season_is_deterministic() {
    let run = |seed: &str| {
        runcal()
            .args([
                "outlook",
                "demo-data/meridian-2026-games.csv",
                "--profile",
                PROFILE,
                "--groups",
                DIVISIONS,
                "--simulations",
                "50",
                "--seed",
                seed,
                "--format",
                "csv",
            ])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone()
    };
    let out = String::from_utf8(run("1")).unwrap();
    assert_eq!(out, String::from_utf8(run("77")).unwrap());
    assert!(out.lines().skip(1).all(|l| l.contains(",0,")), "{out}");
}

#[test]
fn hostile_sizes_are_refused_with_exit_2() {
    for n in ["-5", "0", "1000001", "1e9", "99999999999999999999"] {
        let mut args = demo_args();
        args.pop();
        args.push(n);
        runcal().args(&args).assert().code(2);
    }
}

#[test]
fn empty_and_header_only_schedules() {
    let dir = tempfile::tempdir().unwrap();
    let empty = write(&dir, "empty.csv", "");
    runcal()
        .args([
            "outlook",
            TO_DATE,
            "--profile",
            PROFILE,
            "--schedule",
            &empty,
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("the file is empty"));
    // A header and no rows: nothing left to play, which is a finished season, not an error.
    let header = write(&dir, "header.csv", "date,home,away\n");
    runcal()
        .args([
            "outlook",
            TO_DATE,
            "--profile",
            PROFILE,
            "--schedule",
            &header,
        ])
        .args(["--simulations", "10"])
        .assert()
        .success()
        .stdout(predicate::str::contains("none (the season is over)"));
}

/// Run the demo to date with one extra file option; the assertion on the outcome.
fn with_file(option: &str, path: &str) -> assert_cmd::assert::Assert {
    runcal()
        .args(["outlook", TO_DATE, "--profile", PROFILE, option, path])
        .args(["--simulations", "10", "--format", "json"])
        .assert()
}

#[test]
fn schedule_problems_name_the_file_and_line() {
    let dir = tempfile::tempdir().unwrap();
    let refused = [
        (
            "s.csv",
            "date,home,away\n2026-08-01,Dunmore Lanterns,Ironvale Rams\n2026-08-02,Nowhere Nine,Ironvale Rams\n",
            "s.csv:3",
            "'Nowhere Nine' has no played games",
        ),
        (
            "t.csv",
            "date,home,away\n2026-08-01,Dunmore Lanterns,Ironvale Rams\n2026-08-01,Dunmore Lanterns,Ironvale Rams\n",
            "t.csv:3",
            "duplicate game 2026-08-01 Ironvale Rams at Dunmore Lanterns (first at",
        ),
        (
            "c.csv",
            "date,home,away\n2026-08-01,Dunmore Lanterns,\u{1b}]0;x\u{7}Rams\n",
            "c.csv:2",
            "control character",
        ),
    ];
    for (name, text, at, reason) in refused {
        let path = write(&dir, name, text);
        with_file("--schedule", &path)
            .code(2)
            .stderr(predicate::str::contains(at).and(predicate::str::contains(reason)));
    }
    // With a game number the same pairing twice on one day is a doubleheader.
    let doubleheader = write(
        &dir,
        "d.csv",
        "date,home,away,game\n2026-08-01,Dunmore Lanterns,Ironvale Rams,1\n2026-08-01,Dunmore Lanterns,Ironvale Rams,2\n",
    );
    with_file("--schedule", &doubleheader)
        .success()
        .stdout(predicate::str::contains("\"games_left\": 2"));
    let groups = write(&dir, "g.csv", "team,group\nDunmore Lanterns,Upland\n");
    with_file("--groups", &groups)
        .code(2)
        .stderr(predicate::str::contains("has no group in"));
}

#[cfg(unix)]
#[test]
fn pipes_and_fifos_are_refused_without_waiting() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("fifo.csv");
    assert!(
        std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap()
            .success()
    );
    let fifo = fifo.display().to_string();
    for args in [
        vec![
            "outlook",
            TO_DATE,
            "--profile",
            PROFILE,
            "--schedule",
            &fifo,
        ],
        vec!["outlook", &fifo, "--profile", PROFILE],
        vec!["outlook", "-", "--profile", PROFILE],
    ] {
        runcal()
            .args(&args)
            .timeout(std::time::Duration::from_secs(20))
            .assert()
            .code(2)
            .stderr(predicate::str::contains("not a regular file"));
    }
}

#[test]
fn hostile_team_names_stay_text_in_svg_and_csv() {
    let dir = tempfile::tempdir().unwrap();
    let mut log = String::from("date,home,away,home_score,away_score\n");
    let names = [
        "<script>alert(1)</script>",
        "=HYPERLINK(\"x\")",
        "עברית | 🦀",
    ];
    for day in 1..=9 {
        let (h, a) = (names[day % 3], names[(day + 1) % 3]);
        log.push_str(&format!(
            "2026-05-{day:02},\"{}\",\"{}\",{},{}\n",
            h.replace('"', "\"\""),
            a.replace('"', "\"\""),
            3 + day % 4,
            2 + day % 3
        ));
    }
    log.push_str("2026-06-01,\"<script>alert(1)</script>\",\"עברית | 🦀\",,\n");
    let log = write(&dir, "log.csv", &log);
    let svg = dir.path().join("chart.svg").display().to_string();
    let csv = runcal()
        .args([
            "outlook",
            &log,
            "--exponent",
            "1.83",
            "--regress-games",
            "50",
        ])
        .args([
            "--simulations",
            "200",
            "--skip-invalid",
            "--plot",
            &svg,
            "--format",
            "csv",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let csv = String::from_utf8(csv).unwrap();
    assert!(csv.contains("'=HYPERLINK"), "{csv}");
    let svg = std::fs::read_to_string(&svg).unwrap();
    assert!(svg.contains("&lt;script&gt;") && !svg.contains("<script>"));
}

#[test]
fn outputs_never_overwrite_inputs() {
    runcal()
        .args(demo_args())
        .args(["-o", DIVISIONS])
        .assert()
        .code(2);
    runcal()
        .args(demo_args())
        .args(["--plot", PROFILE])
        .assert()
        .code(2);
}

#[test]
fn demo_outlook_files_are_what_the_demo_script_makes() {
    // demo-data/make-demo.sh: the games through 15 July and the schedule (date, home, away) are cut
    // from the committed season log.
    let read = |p: &str| std::fs::read_to_string(common::repo().join(p)).unwrap();
    let log = read("demo-data/meridian-2026-games.csv");
    let mut to_date = String::new();
    let mut schedule = String::new();
    for (i, line) in log.lines().enumerate() {
        let f: Vec<&str> = line.split(',').collect();
        if i == 0 || f[2] <= "2026-07-15" {
            to_date.push_str(line);
            to_date.push('\n');
        }
        schedule.push_str(&format!("{},{},{}\n", f[2], f[3], f[4]));
    }
    assert!(read(TO_DATE) == to_date, "{TO_DATE} differs from its cut");
    assert!(
        read(SCHEDULE) == schedule,
        "{SCHEDULE} differs from its cut"
    );
    assert_eq!(read(DIVISIONS).lines().count(), 15);
}
