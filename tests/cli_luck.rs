//! Game logs, saved calibrations and the weekly luck report.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use assert_cmd::Command;
use common::{DEMO_WEEKLY_JSON, close, f, runcal};
use serde_json::Value;

fn json(cmd: &mut Command) -> Value {
    serde_json::from_slice(&cmd.assert().success().get_output().stdout).unwrap()
}

/// Five games among three clubs, standings worked out by hand below.
const SMALL_LOG: &str = "\
date,home,away,home_score,away_score
2026-04-01,Harbor,Mill,5,4
2026-04-02,Mill,Quarry,2,7
2026-04-03,Quarry,Harbor,3,3
2026-04-04,Harbor,Quarry,1,6
2026-04-05,Mill,Harbor,8,7
";

#[test]
fn game_logs_aggregate_into_hand_computed_standings() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("games.csv");
    std::fs::write(&log, SMALL_LOG).unwrap();
    let v = json(
        runcal()
            .args([
                "luck", "--games", "--format", "json", "-q", "--model", "linear",
            ])
            .arg(&log),
    );
    let team = |name: &str| {
        v["teams"]
            .as_array()
            .unwrap()
            .iter()
            .find(|t| t["team"] == name)
            .unwrap()
            .clone()
    };
    // Harbor: beat Mill 5-4 (one-run win), tied Quarry 3-3, lost to Quarry 1-6, lost at Mill 7-8
    // (one-run loss): 1-2-1, RS 5+3+1+7 = 16, RA 4+3+6+8 = 21.
    let h = team("Harbor");
    assert_eq!(
        (
            h["evidence"]["wins"].as_u64(),
            h["evidence"]["losses"].as_u64(),
            h["evidence"]["ties"].as_u64()
        ),
        (Some(1), Some(2), Some(1))
    );
    assert_eq!(
        (
            f(&h["evidence"]["runs_scored"]),
            f(&h["evidence"]["runs_allowed"])
        ),
        (16.0, 21.0)
    );
    assert_eq!(
        (
            h["evidence"]["one_run_wins"].as_u64(),
            h["evidence"]["one_run_losses"].as_u64()
        ),
        (Some(1), Some(1))
    );
    assert_eq!(h["evidence"]["games"], 4);
    // Mill: lost 4-5 at Harbor (one run), lost 2-7 to Quarry, beat Harbor 8-7 (one run): 1-2,
    // RS 4+2+8 = 14, RA 5+7+7 = 19.
    let m = team("Mill");
    assert_eq!(
        (
            m["evidence"]["wins"].as_u64(),
            m["evidence"]["losses"].as_u64(),
            m["evidence"]["ties"].as_u64()
        ),
        (Some(1), Some(2), Some(0))
    );
    assert_eq!(
        (
            f(&m["evidence"]["runs_scored"]),
            f(&m["evidence"]["runs_allowed"])
        ),
        (14.0, 19.0)
    );
    assert_eq!(
        (
            m["evidence"]["one_run_wins"].as_u64(),
            m["evidence"]["one_run_losses"].as_u64()
        ),
        (Some(1), Some(1))
    );
    // Quarry: won 7-2 at Mill, tied 3-3, won 6-1 at Harbor: 2-0-1, RS 16, RA 6, no one-run games.
    let q = team("Quarry");
    assert_eq!(
        (
            q["evidence"]["wins"].as_u64(),
            q["evidence"]["losses"].as_u64(),
            q["evidence"]["ties"].as_u64()
        ),
        (Some(2), Some(0), Some(1))
    );
    assert_eq!(
        (
            f(&q["evidence"]["runs_scored"]),
            f(&q["evidence"]["runs_allowed"])
        ),
        (16.0, 6.0)
    );
    assert_eq!(
        (
            q["evidence"]["one_run_wins"].as_u64(),
            q["evidence"]["one_run_losses"].as_u64()
        ),
        (Some(0), Some(0))
    );
    // A tie counts half: Quarry's win% is (2 + 0.5)/3.
    close(
        f(&q["evidence"]["win_pct"]),
        2.5 / 3.0,
        1e-12,
        "win% with a tie",
    );
}

#[test]
fn as_of_cuts_the_season_at_a_date() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("games.csv");
    std::fs::write(&log, SMALL_LOG).unwrap();
    let v = json(
        runcal()
            .args([
                "luck",
                "--games",
                "--format",
                "json",
                "-q",
                "--as-of",
                "2026-04-02",
                "--exponent",
                "2",
            ])
            .arg(&log),
    );
    // Through 2 April: Harbor 1-0 (5-4), Mill 0-2 (4-5, 2-7), Quarry 1-0 (7-2).
    let teams = v["teams"].as_array().unwrap();
    let record = |name: &str| {
        let t = teams.iter().find(|t| t["team"] == name).unwrap();
        (
            t["evidence"]["wins"].as_u64().unwrap(),
            t["evidence"]["losses"].as_u64().unwrap(),
            f(&t["evidence"]["runs_scored"]),
            f(&t["evidence"]["runs_allowed"]),
        )
    };
    assert_eq!(teams.len(), 3);
    assert_eq!(record("Harbor"), (1, 0, 5.0, 4.0));
    assert_eq!(record("Mill"), (0, 2, 6.0, 12.0));
    assert_eq!(record("Quarry"), (1, 0, 7.0, 2.0));
    assert_eq!(v["as_of"], "2026-04-02");
}

#[test]
fn profile_round_trip_gives_the_same_expected_wins_as_fitting_in_process() {
    let dir = tempfile::tempdir().unwrap();
    let profile = dir.path().join("profile.json");
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
    let p: Value = serde_json::from_str(&std::fs::read_to_string(&profile).unwrap()).unwrap();
    assert_eq!(p["schema"], "runcal.profile/1");
    assert_eq!(p["fitted_on"]["rows"], 350);
    assert_eq!(p["fitted_on"]["seasons"], serde_json::json!([2001, 2025]));
    assert_eq!(p["season_games"], 140);
    assert!(
        p["fitted_on"]["fingerprint"]
            .as_str()
            .unwrap()
            .starts_with("fnv1a64:")
    );
    assert!(p["runcal_version"].is_string() && p["created"].is_string());

    let with_profile = json(
        runcal()
            .args([
                "luck",
                "demo-data/meridian-league.csv",
                "--format",
                "json",
                "-q",
                "--profile",
            ])
            .arg(&profile),
    );
    let in_process = json(runcal().args([
        "luck",
        "demo-data/meridian-league.csv",
        "--format",
        "json",
        "-q",
    ]));
    assert_eq!(with_profile["params"], in_process["params"]);
    let a = with_profile["teams"].as_array().unwrap();
    let b = in_process["teams"].as_array().unwrap();
    assert_eq!(a.len(), 350);
    for (x, y) in a.iter().zip(b) {
        assert_eq!(x["team"], y["team"]);
        assert_eq!(
            x["evidence"]["expected_wins"],
            y["evidence"]["expected_wins"]
        );
    }
}

#[test]
fn weekly_report_on_the_demo_game_log_ranks_with_z_p_one_run_and_projection() {
    let v = json(runcal().args(DEMO_WEEKLY_JSON));
    assert_eq!(v["schema"], "runcal.luck/2");
    assert!(
        v["caution"]
            .as_str()
            .unwrap()
            .contains("not wagering or financial advice")
    );
    assert_eq!(v["model"], "pythagorean");
    // The profile's dispersion (Pearson χ²/df of its log-loss fit) sets the noise model.
    assert_eq!(v["noise"]["model"], "quasi-binomial");
    assert_eq!(v["noise"]["source"], "profile");
    let phi = f(&v["noise"]["dispersion"]);
    close(phi, 0.386_965_048_231_558_86, 1e-15, "dispersion");
    let teams = v["teams"].as_array().unwrap();
    assert_eq!(teams.len(), 14);
    let luck: Vec<f64> = teams.iter().map(|t| f(&t["gap"]["luck_wins"])).collect();
    assert!(
        luck.windows(2).all(|w| w[0] >= w[1]),
        "sorted by luck, most ahead first"
    );
    for t in teams {
        let (w, n, p) = (
            f(&t["evidence"]["wins"]) + f(&t["evidence"]["ties"]) / 2.0,
            f(&t["evidence"]["wins"]) + f(&t["evidence"]["losses"]) + f(&t["evidence"]["ties"]),
            f(&t["evidence"]["expected_win_pct"]),
        );
        close(
            f(&t["gap"]["luck_z"]),
            (w - n * p) / (phi * n * p * (1.0 - p)).sqrt(),
            1e-9,
            "z",
        );
        close(
            f(&t["gap"]["luck_p"]),
            runcal::luck::two_sided_p(f(&t["gap"]["luck_z"])),
            1e-12,
            "p",
        );
        assert!(t["evidence"]["one_run_wins"].is_u64() && t["evidence"]["one_run_losses"].is_u64());
        // Integer endpoints chosen for the mass nearest the nominal 80% (it was 82–85% with the
        // 10%/90% percent points).
        assert_eq!(f(&t["outlook"]["range_level"]), 0.8);
        let mass = f(&t["outlook"]["range_mass"]);
        assert!((mass - 0.8).abs() < 0.03, "mass {mass}");
        let interval = t["outlook"]["range"].as_array().unwrap();
        let proj = f(&t["outlook"]["projected_wins"]);
        assert!(f(&interval[0]) <= proj && proj <= f(&interval[1]));
        assert_eq!(
            t["outlook"]["remaining_games"].as_u64().unwrap()
                + t["evidence"]["games"].as_u64().unwrap(),
            140
        );
    }
    assert_eq!(v["outlook"]["season_games"], 140);
    // The demo's top club is 2.5 residual SD ahead: flagged by |z| ≥ 2, but not beyond chance
    // after Holm's adjustment over the 14 clubs ranked.
    let top = &teams[0]["gap"];
    assert!(f(&top["luck_z"]) > 2.5 && top["signal"] == "ahead", "{top}");
    assert_eq!(top["beyond_chance"], false);
    assert_eq!(v["multiplicity"]["method"], "holm");
    assert_eq!(v["multiplicity"]["teams"], 14);
}

#[test]
fn top_shows_the_extremes_but_holm_adjusts_over_the_whole_ranking() {
    // Holm (1979): the family is every hypothesis tested. Showing only the two most extreme clubs
    // must not shrink it, or the selection itself would pass for evidence.
    let run = |extra: &[&str]| {
        let mut args = DEMO_WEEKLY_JSON.to_vec();
        args.extend_from_slice(extra);
        json(runcal().args(&args))
    };
    let all = run(&[]);
    let top = run(&["--top", "1"]);
    let shown = top["teams"].as_array().unwrap();
    assert_eq!(shown.len(), 2, "one most ahead, one most behind");
    assert_eq!(top["multiplicity"]["teams"], all["multiplicity"]["teams"]);
    assert_eq!(top["multiplicity"]["teams"], 14);
    let by_team = |v: &Value, name: &Value| {
        v["teams"]
            .as_array()
            .unwrap()
            .iter()
            .find(|t| &t["team"] == name)
            .unwrap()["gap"]
            .clone()
    };
    for t in shown {
        let whole = by_team(&all, &t["team"]);
        assert_eq!(t["gap"]["holm_p"], whole["holm_p"], "{}", t["team"]);
        assert_eq!(t["gap"]["beyond_chance"], whole["beyond_chance"]);
    }
    // Over only the two shown, the top club's adjusted p would be at most twice its raw p.
    let (raw, adjusted) = (f(&shown[0]["gap"]["luck_p"]), f(&shown[0]["gap"]["holm_p"]));
    assert!(adjusted > 2.0 * raw, "{raw} -> {adjusted}");
}

#[test]
fn large_luck_is_flagged_in_words() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("standings.csv");
    // A club that wins 70 of 100 while scoring as many runs as it allows: the binomial z
    // (--dispersion 1) is (70 − 50)/5 = +4.
    std::fs::write(&file, "season,team,w,l,rs,ra\n2026,Lucky,70,30,400,400\n2026,Even,50,50,420,380\n2026,Plain,45,55,380,420\n").unwrap();
    let mut cmd = runcal();
    cmd.args(["luck", "-q", "--model", "pythagorean", "--dispersion", "1"])
        .arg(&file);
    let out = String::from_utf8(cmd.assert().success().get_output().stdout.clone()).unwrap();
    let lucky = out.lines().find(|l| l.contains("Lucky")).unwrap();
    assert!(lucky.contains("well ahead of scoring"), "{lucky}");
    assert!(out.contains("not wagering or financial advice"));
}

#[test]
fn csv_cells_that_look_like_formulas_are_neutralised() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("standings.csv");
    std::fs::write(&file, "season,team,w,l,rs,ra\n2026,=HYPERLINK(\"x\"),60,40,450,400\n2026,@Club,40,60,400,450\n2026,Plain,50,50,420,420\n").unwrap();
    let mut cmd = runcal();
    cmd.args(["luck", "-q", "--format", "csv"]).arg(&file);
    let out = String::from_utf8(cmd.assert().success().get_output().stdout.clone()).unwrap();
    assert!(out.contains("'=HYPERLINK"), "{out}");
    assert!(out.contains("'@Club"));
    assert!(!out.lines().any(|l| {
        l.split(',')
            .any(|c| c.starts_with('=') || c.starts_with('@'))
    }));
}

#[test]
fn bad_profiles_are_explained() {
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("p.json");
    std::fs::write(&bad, r#"{"schema": "runcal.profile/9"}"#).unwrap();
    runcal()
        .args(["luck", "demo-data/meridian-league.csv", "--profile"])
        .arg(&bad)
        .assert()
        .code(2)
        .stderr(predicates::str::contains(
            "profile schema 'runcal.profile/9' is not supported",
        ));
    std::fs::write(&bad, "not json").unwrap();
    runcal()
        .args(["luck", "demo-data/meridian-league.csv", "--profile"])
        .arg(&bad)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("not valid JSON"));
    std::fs::write(
        &bad,
        r#"{"schema": "runcal.profile/1", "model": "pythagorean"}"#,
    )
    .unwrap();
    runcal()
        .args(["luck", "demo-data/meridian-league.csv", "--profile"])
        .arg(&bad)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("not a runcal profile"));
}

#[test]
fn bad_game_rows_are_rejected_with_their_line() {
    let dir = tempfile::tempdir().unwrap();
    let cases = [
        ("2026-02-30,A,B,1,2", "expected an ISO 8601 date"),
        ("2026-04-01,A,A,1,2", "playing itself"),
        ("2026-04-01,A,B,-1,2", "non-negative"),
        ("2026-04-01,A,B,1,2\n2026-04-01,A,B,1,2", "duplicate game"),
    ];
    for (rows, reason) in cases {
        let file = dir.path().join("log.csv");
        std::fs::write(
            &file,
            format!("date,home,away,home_score,away_score\n2026-03-31,A,B,3,1\n{rows}\n"),
        )
        .unwrap();
        let line = if reason == "duplicate game" {
            ":4"
        } else {
            ":3"
        };
        runcal()
            .args(["luck", "--games"])
            .arg(&file)
            .assert()
            .code(2)
            .stderr(predicates::str::contains(reason))
            .stderr(predicates::str::contains(format!("log.csv{line}")));
    }
}

#[test]
fn luck_plot_is_an_svg_with_labelled_extremes() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("luck.svg");
    runcal()
        .args([
            "luck",
            "demo-data/meridian-2026-games.csv",
            "--games",
            "--profile",
            "demo-data/meridian-profile.json",
            "-q",
            "--plot",
        ])
        .arg(&svg)
        .assert()
        .success();
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.starts_with("<svg"));
    assert!(text.contains("above line: ahead of runs"));
    assert!(
        text.contains("\u{2069} (+") && text.contains("\u{2069} (-"),
        "extreme teams are labelled with their wins over expected"
    );
    // The title names the calibration; the ticks are written as the tables write win% (.600).
    assert!(text.contains("Wins against scoring"));
    assert!(text.contains("calibration demo-data/meridian-profile.json"));
    assert!(
        text.contains(">\n.600\n<") || text.contains(">.600<"),
        "win% ticks as .600"
    );
    assert!(!text.contains("0.600"));
    // The caution is the chart's footnote.
    assert!(text.contains("runcal reports descriptive statistics."));
}

// ---- guards on the applied calibration (issue: everyday use) ----

const DEMO_GAMES: &str = "demo-data/meridian-2026-games.csv";
const DEMO_PROFILE: &str = "demo-data/meridian-profile.json";

/// `runcal luck` on the demo season's log with the demo profile, for more args.
fn demo_luck() -> Command {
    let mut c = runcal();
    c.args(["luck", "--games", DEMO_GAMES, "--profile", DEMO_PROFILE]);
    c
}

#[test]
fn a_finished_season_shows_final_records_and_no_projection() {
    // The demo log's last game is 18 August; every club has played its 140 games by then.
    let out = common::ok(demo_luck().args(["--as-of", "2026-12-01"]));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(
        stdout.contains("games through 2026-08-18 (as of 2026-12-01)"),
        "{stdout}"
    );
    assert!(stdout.contains("season complete"), "{stdout}");
    assert!(!stdout.contains("final wins"), "{stdout}");
    let v = json(demo_luck().args(["--as-of", "2026-12-01", "--format", "json", "-q"]));
    assert_eq!(v["season_complete"], true);
    assert_eq!(v["games_through"], "2026-08-18");
    assert!(v["outlook"].is_null());
    assert!(
        v["teams"]
            .as_array()
            .unwrap()
            .iter()
            .all(|t| t["outlook"].is_null() && t["evidence"]["games"] == 140)
    );
}

#[test]
fn season_games_below_games_played_is_an_error() {
    let err = demo_luck()
        .args(["--as-of", "2026-06-01", "--season-games", "30"])
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    let err = String::from_utf8(err).unwrap();
    assert!(
        err.contains("--season-games 30 is smaller than the 62 games"),
        "{err}"
    );
}

/// A basketball-like log (about 200 points a game) against the demo's baseball-like profile.
fn high_scoring_log(dir: &std::path::Path) -> std::path::PathBuf {
    let mut s = String::from("date,home,away,home_score,away_score\n");
    let clubs = ["Aster", "Birch", "Cedar", "Dogwood"];
    for round in 0..4u32 {
        let day = round + 1;
        for (i, h) in clubs.iter().enumerate() {
            for (j, a) in clubs.iter().enumerate() {
                if i != j {
                    let hs = 100 + (i as u32 * 7 + round * 3) % 17;
                    let aw = 98 + (j as u32 * 5 + round * 11) % 19;
                    s.push_str(&format!("2026-01-{day:02},{h},{a},{hs},{aw}\n"));
                }
            }
        }
    }
    let p = dir.join("hoops.csv");
    std::fs::write(&p, s).unwrap();
    p
}

#[test]
fn a_profile_far_from_the_data_warns_and_fails_on_request() {
    let dir = tempfile::tempdir().unwrap();
    let log = high_scoring_log(dir.path());
    let out = common::ok(
        runcal()
            .args(["luck", "--games", "--profile", DEMO_PROFILE])
            .arg(&log),
    );
    let err = String::from_utf8(out.stderr).unwrap();
    // Both run environments are named: the data's and the profile's 9.2.
    assert!(err.contains("warning:") && err.contains("9.2"), "{err}");
    let out = runcal()
        .args([
            "luck",
            "--games",
            "--profile",
            DEMO_PROFILE,
            "--fail-on-mismatch",
        ])
        .arg(&log)
        .assert()
        .failure()
        .get_output()
        .clone();
    assert!(out.stdout.is_empty(), "no report when failing");
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(err.contains("9.2"), "{err}");
    // --fail-on-mismatch only means something against a profile.
    runcal()
        .args(["luck", "--games", "--fail-on-mismatch"])
        .arg(&log)
        .assert()
        .code(2);
}

#[test]
fn a_partial_season_too_short_to_fit_falls_back_to_the_published_exponent() {
    // One game per club on opening day: no exponent can be fitted with any precision.
    let out = common::ok(runcal().args(["luck", "--games", DEMO_GAMES, "--as-of", "2026-04-01"]));
    let stdout = String::from_utf8(out.stdout).unwrap();
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        stdout.lines().next().unwrap().contains("published"),
        "{stdout}"
    );
    assert!(err.contains("published PythagenPat"), "{err}");
    let v = json(
        runcal()
            .args(["luck", "--games", DEMO_GAMES, "--as-of", "2026-04-01"])
            .args(["--format", "json", "-q"]),
    );
    assert_eq!(v["model"], "pythagenpat");
    assert_eq!(v["source"], "published");
    // The PythagenPat z as commonly quoted (0.287; see README Methods for its source).
    assert!((f(&v["params"]["z"]) - 0.287).abs() < 1e-12);
}

#[test]
fn without_a_profile_the_heading_says_the_fit_is_on_the_data_at_hand() {
    let out = common::ok(runcal().args(["luck", "--games", DEMO_GAMES, "--as-of", "2026-06-01"]));
    let first = String::from_utf8(out.stdout).unwrap();
    let first = first.lines().next().unwrap().to_string();
    assert!(
        first.contains("fitted on these data alone, no --profile"),
        "{first}"
    );
    assert!(first.contains("games through 2026-06-01"), "{first}");
}

#[test]
fn constant_columns_are_hoisted_only_when_the_shown_rows_share_them() {
    // 2019-2020, both leagues: neither season nor league is constant over the ranking.
    let out = common::ok(common::databank_cmd("luck").args([
        "--seasons",
        "2019-2020",
        "--top",
        "2",
        "-q",
    ]));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(!stdout.contains("season: "), "{stdout}");
    assert!(!stdout.contains("league: "), "{stdout}");
    assert!(stdout.contains("4 of 60 team-seasons shown"), "{stdout}");
    // One season of one league: both are hoisted above the table.
    let out = common::ok(common::databank_cmd("luck").args([
        "--seasons",
        "2019",
        "--league",
        "AL",
        "--top",
        "2",
        "-q",
    ]));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(stdout.contains("season: 2019"), "{stdout}");
    assert!(stdout.contains("league: AL"), "{stdout}");
}

#[test]
fn the_unit_word_labels_tables_charts_and_the_document_but_not_json_keys() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("luck.svg");
    let out = demo_luck()
        .args(["--as-of", "2026-06-01", "--unit", "points", "-q", "--plot"])
        .arg(&svg)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let table = String::from_utf8(out).unwrap();
    assert!(table.contains("point diff/game"), "{table}");
    assert!(table.contains("points for–against"), "{table}");
    assert!(table.contains("one-point record"), "{table}");
    assert!(!table.contains("runs"), "{table}");
    let chart = std::fs::read_to_string(&svg).unwrap();
    assert!(chart.contains("expected win% (from points)"), "{chart}");
    // JSON keys stay as they are whatever the unit.
    let v = json(demo_luck().args([
        "--as-of",
        "2026-06-01",
        "--unit",
        "goals",
        "--format",
        "json",
        "-q",
    ]));
    assert!(v["teams"][0]["evidence"]["runs_scored"].is_number());
    // fit and the weekly document.
    let fit = runcal()
        .args(["fit", &common::demo_path(), "--unit", "goals"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let fit = String::from_utf8(fit).unwrap();
    assert!(
        fit.contains("goals/win") && !fit.contains("runs/win"),
        "{fit}"
    );
    let page = dir.path().join("week.html");
    runcal()
        .args([
            "digest",
            DEMO_GAMES,
            "--profile",
            DEMO_PROFILE,
            "--as-of",
            "2026-06-01",
        ])
        .args(["--unit", "points", "-q", "--output"])
        .arg(&page)
        .assert()
        .success();
    let page = std::fs::read_to_string(&page).unwrap();
    assert!(page.contains("points scored and allowed"), "methods note");
    assert!(page.contains("point diff/game"), "luck table");
    assert!(!page.contains("runs scored and allowed"));
}

#[test]
fn an_as_of_before_the_first_game_names_as_of_not_the_filters() {
    let out = runcal()
        .args(["luck", "--games", DEMO_GAMES, "--as-of", "2026-03-01"])
        .assert()
        .code(2)
        .get_output()
        .clone();
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(err.contains("were after --as-of"), "{err}");
    assert!(!err.contains("--seasons/--league"), "{err}");
}

#[test]
fn wording_says_team_seasons_and_has_no_doubled_parentheses() {
    let luck = demo_luck()
        .args(["--as-of", "2026-06-01"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let luck = String::from_utf8(luck).unwrap();
    assert!(
        luck.contains("over the 14 team-seasons ranked with a z"),
        "{luck}"
    );
    assert!(!luck.contains(" teams shown"), "{luck}");
    let fitted = runcal()
        .args(["luck", "--games", DEMO_GAMES, "--as-of", "2026-06-01"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    // The heading names the source once, without parentheses inside parentheses (the footnote's
    // formula has its own nested ones).
    let fitted = String::from_utf8(fitted).unwrap();
    let heading = fitted.lines().next().unwrap();
    assert!(
        !heading.contains("((") && !heading.contains("))"),
        "{heading}"
    );
    let fit = runcal()
        .args(["fit", &common::demo_path(), "--model", "pythagenpat"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let fit = String::from_utf8(fit).unwrap();
    assert!(fit.contains("implied exponent span"), "{fit}");
    assert!(!fit.contains("exponent range"), "{fit}");
}
