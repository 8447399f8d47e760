//! Hostile and messy input through the binary: the corpus in tests/bad-input/ (outcomes in its
//! EXPECTED.md), `--skip-invalid` accounting, the line-length and row limits, and inputs that must
//! never be overwritten. Every failure must exit 2 and name the file, the line and the problem;
//! nothing may panic, and no row may vanish without being listed.
//!
//! The teams and numbers in these files are invented, for robustness tests only.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use assert_cmd::Command;

fn corpus_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/bad-input")
}

fn corpus(name: &str) -> String {
    corpus_dir().join(name).display().to_string()
}

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

/// Run the binary; a panic is a failure whatever the exit code.
fn runcal(args: &[&str]) -> Run {
    runcal_in(None, args)
}

fn runcal_in(dir: Option<&Path>, args: &[&str]) -> Run {
    let mut cmd = Command::cargo_bin("runcal").unwrap();
    if let Some(d) = dir {
        cmd.current_dir(d);
    }
    let out = cmd.args(args).output().unwrap();
    let run = Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    };
    assert!(
        !run.stderr.contains("panicked"),
        "runcal {args:?} panicked:\n{}",
        run.stderr
    );
    run
}

/// Run the binary with `text` on standard input.
fn runcal_stdin(args: &[&str], text: &str) -> Run {
    let out = Command::cargo_bin("runcal")
        .unwrap()
        .args(args)
        .write_stdin(text)
        .output()
        .unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn json(run: &Run) -> serde_json::Value {
    serde_json::from_str(&run.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON ({e}):\n{}", run.stdout))
}

fn counts(run: &Run) -> (u64, u64) {
    let v = json(run);
    (
        v["rows_used"].as_u64().unwrap(),
        v["rows_rejected"].as_u64().unwrap(),
    )
}

/// Expect exit 2 with an error naming `place` (FILE or FILE:LINE) and `words`, and no output.
#[track_caller]
fn assert_refused(run: &Run, place: &str, words: &str) {
    assert_eq!(run.code, 2, "expected exit 2; stderr:\n{}", run.stderr);
    let line = run
        .stderr
        .lines()
        .find(|l| l.starts_with("runcal: error: "))
        .unwrap_or_else(|| panic!("no error line in stderr:\n{}", run.stderr));
    assert!(line.contains(place), "error does not name {place}: {line}");
    assert!(line.contains(words), "error lacks '{words}': {line}");
    assert!(
        run.stdout.is_empty(),
        "output despite the error:\n{}",
        run.stdout
    );
}

/// Rows of a `--format csv` fit report, by header.
fn csv_rows(run: &Run) -> Vec<std::collections::HashMap<String, String>> {
    assert_eq!(run.code, 0, "stderr:\n{}", run.stderr);
    let mut rdr = csv::Reader::from_reader(run.stdout.as_bytes());
    let headers = rdr.headers().unwrap().clone();
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            headers
                .iter()
                .zip(r.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

#[derive(Debug)]
enum Plain {
    Accept(u64),
    RejectAt(u64),
    RejectFile,
}

#[derive(Debug)]
enum Skip {
    Counts { used: u64, rejected: u64 },
    Reject,
}

#[derive(Debug)]
struct Case {
    file: String,
    plain: Plain,
    skip: Skip,
    words: String,
}

fn parse_plain(cell: &str) -> Plain {
    let words: Vec<&str> = cell.split_whitespace().collect();
    match words.as_slice() {
        ["accept", n] => Plain::Accept(n.parse().unwrap()),
        ["reject"] => Plain::RejectFile,
        ["reject", at] => Plain::RejectAt(at.strip_prefix(':').unwrap().parse().unwrap()),
        _ => panic!("EXPECTED.md: cannot read plain outcome '{cell}'"),
    }
}

fn parse_skip(cell: &str) -> Skip {
    let words: Vec<&str> = cell.split_whitespace().collect();
    match words.as_slice() {
        ["reject"] => Skip::Reject,
        [u, "used,", r, "rejected"] => Skip::Counts {
            used: u.parse().unwrap(),
            rejected: r.parse().unwrap(),
        },
        _ => panic!("EXPECTED.md: cannot read skip-invalid outcome '{cell}'"),
    }
}

/// The table of tests/bad-input/EXPECTED.md.
fn manifest() -> Vec<Case> {
    let text = std::fs::read_to_string(corpus_dir().join("EXPECTED.md")).unwrap();
    text.lines()
        .filter(|l| l.starts_with("| `"))
        .map(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            assert_eq!(cells.len(), 6, "EXPECTED.md: a row needs 4 cells: {l}");
            Case {
                file: cells[1].trim_matches('`').to_string(),
                plain: parse_plain(cells[2]),
                skip: parse_skip(cells[3]),
                words: cells[4].to_string(),
            }
        })
        .collect()
}

/// Data records in a file as a csv reader sees them (ragged ones included), for the accounting check.
fn data_records(path: &str) -> u64 {
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(true)
        .from_path(path)
        .unwrap();
    let mut record = csv::ByteRecord::new();
    let mut n = 0;
    while rdr.read_byte_record(&mut record).unwrap() {
        n += 1;
    }
    n
}

/// Check one corpus file; describe every mismatch.
fn check_case(case: &Case) -> Vec<String> {
    let mut problems = Vec::new();
    let path = corpus(&case.file);
    let games = case.file.starts_with("games-");
    let mut args = vec!["fit", path.as_str(), "--format", "json"];
    if games {
        args.push("--games");
    }
    let plain = runcal(&args);
    args.push("--skip-invalid");
    let skip = runcal(&args);
    let mut check = |ok: bool, what: String| {
        if !ok {
            problems.push(format!("{}: {what}", case.file));
        }
    };
    for (mode, run) in [("plain", &plain), ("skip-invalid", &skip)] {
        check(
            run.stderr.contains(&case.words),
            format!("{mode} stderr lacks '{}':\n{}", case.words, run.stderr),
        );
        // Control characters of the input are shown escaped, never passed to the terminal.
        check(
            !run.stderr.chars().any(|c| c.is_control() && c != '\n'),
            format!(
                "{mode} stderr holds a raw control character: {:?}",
                run.stderr
            ),
        );
    }

    let error_line = plain
        .stderr
        .lines()
        .find(|l| l.starts_with("runcal: error: "))
        .unwrap_or_default()
        .to_string();
    match case.plain {
        Plain::Accept(n) => {
            check(
                plain.code == 0,
                format!("plain exit {}: {}", plain.code, plain.stderr),
            );
            if plain.code == 0 {
                check(
                    counts(&plain) == (n, 0),
                    format!("plain counts {:?}, expected ({n}, 0)", counts(&plain)),
                );
            }
        }
        Plain::RejectAt(line) => {
            check(
                plain.code == 2,
                format!("plain exit {}, expected 2", plain.code),
            );
            let place = format!("{path}:{line}:");
            check(
                error_line.contains(&place),
                format!("error does not name {place}: '{error_line}'"),
            );
            check(
                plain.stdout.is_empty(),
                "output despite the error".to_string(),
            );
        }
        Plain::RejectFile => {
            check(
                plain.code == 2,
                format!("plain exit {}, expected 2", plain.code),
            );
            check(
                error_line.contains(&path),
                format!("error does not name the file: '{error_line}'"),
            );
            check(
                plain.stdout.is_empty(),
                "output despite the error".to_string(),
            );
        }
    }

    match case.skip {
        Skip::Counts { used, rejected } => {
            check(
                skip.code == 0,
                format!("skip-invalid exit {}: {}", skip.code, skip.stderr),
            );
            if skip.code == 0 {
                let got = counts(&skip);
                check(
                    got == (used, rejected),
                    format!("skip-invalid counts {got:?}, expected ({used}, {rejected})"),
                );
            }
            // Each rejected row is listed with its file and line.
            let listed: Vec<&str> = skip
                .stderr
                .lines()
                .filter(|l| l.starts_with(&format!("skipped: {path}:")))
                .collect();
            check(
                listed.len() as u64 == rejected,
                format!(
                    "{} rows listed as skipped, expected {rejected}:\n{}",
                    listed.len(),
                    skip.stderr
                ),
            );
            for l in &listed {
                let rest = &l[format!("skipped: {path}:").len()..];
                let digits: String = rest.chars().take_while(char::is_ascii_digit).collect();
                check(
                    !digits.is_empty(),
                    format!("skipped row without a line: {l}"),
                );
            }
            // The row that stops a plain run is one of those listed.
            if let Plain::RejectAt(line) = case.plain {
                let place = format!("skipped: {path}:{line}:");
                check(
                    listed.iter().any(|l| l.starts_with(&place)),
                    format!("line {line} is not among the skipped rows"),
                );
            }
            if !games {
                let records = data_records(&path);
                check(
                    used + rejected == records,
                    format!("{used} used + {rejected} rejected != {records} data records"),
                );
            }
        }
        Skip::Reject => {
            check(
                skip.code == 2,
                format!("skip-invalid exit {}, expected 2", skip.code),
            );
            check(
                skip.stderr.contains(&path),
                "skip-invalid error does not name the file".to_string(),
            );
        }
    }
    problems
}

#[test]
fn every_corpus_file_has_an_expected_outcome() {
    let listed: BTreeSet<String> = manifest().into_iter().map(|c| c.file).collect();
    let present: BTreeSet<String> = std::fs::read_dir(corpus_dir())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".csv"))
        .collect();
    assert!(
        present.len() >= 30,
        "corpus has only {} files",
        present.len()
    );
    assert_eq!(
        listed, present,
        "EXPECTED.md and the files in tests/bad-input/ differ"
    );
}

#[test]
fn corpus_outcomes_match_the_manifest() {
    let problems: Vec<String> = manifest().iter().flat_map(check_case).collect();
    assert!(problems.is_empty(), "{}", problems.join("\n\n"));
}

#[test]
fn skip_invalid_lists_and_counts_every_bad_row() {
    let path = corpus("season-several-bad.csv");
    // Without --skip-invalid the first bad row (line 3) stops the run, and only it is reported.
    let strict = runcal(&["fit", &path, "--format", "json"]);
    assert_refused(
        &strict,
        &format!("{path}:3:"),
        "expected a number, found 'seven'",
    );
    assert_eq!(
        strict.stderr.lines().filter(|l| l.contains(&path)).count(),
        1
    );

    let skip = runcal(&["fit", &path, "--format", "json", "--skip-invalid"]);
    assert_eq!(skip.code, 0, "{}", skip.stderr);
    // Lines 3 (text count), 5 (ragged), 6 (duplicate of line 2), 7 (negative runs), 9 (no games).
    let mut lines: Vec<u64> = skip
        .stderr
        .lines()
        .filter_map(|l| l.strip_prefix(&format!("skipped: {path}:")))
        .map(|rest| rest.split(':').next().unwrap().parse().unwrap())
        .collect();
    lines.sort_unstable();
    assert_eq!(lines, vec![3, 5, 6, 7, 9], "{}", skip.stderr);
    for reason in [
        "expected a number, found 'seven'",
        "expected 7 fields like the header, found 5",
        "duplicate team-season 2020 East Aces",
        "expected a non-negative number, found '-5'",
        "W+L+T is 0",
    ] {
        assert!(
            skip.stderr.contains(reason),
            "no '{reason}' in:\n{}",
            skip.stderr
        );
    }
    // 9 data rows: 4 good, 5 bad; nothing unaccounted for.
    assert_eq!(counts(&skip), (4, 5));
    assert_eq!(data_records(&path), 9);

    // The table and luck reports count the rejections too.
    let table = runcal(&["fit", &path, "--skip-invalid"]);
    assert_eq!(table.code, 0);
    assert!(
        table.stdout.contains("4 team-seasons used, 5 rejected"),
        "{}",
        table.stdout
    );
    let luck = runcal(&["luck", &path, "--skip-invalid", "--format", "json"]);
    assert_eq!(luck.code, 0, "{}", luck.stderr);
    assert_eq!(json(&luck)["rows_rejected"].as_u64(), Some(5));

    // The rows used are exactly the good ones, with their numbers intact (the first Aces row, not
    // its duplicate).
    let rows = csv_rows(&runcal(&[
        "fit",
        &path,
        "--skip-invalid",
        "--format",
        "csv",
    ]));
    let teams: BTreeSet<&str> = rows.iter().map(|r| r["team"].as_str()).collect();
    assert_eq!(teams, BTreeSet::from(["Aces", "Bats", "Cubs", "Hens"]));
    let aces = rows.iter().find(|r| r["team"] == "Aces").unwrap();
    assert_eq!(
        (
            &*aces["wins"],
            &*aces["losses"],
            &*aces["runs_scored"],
            &*aces["runs_allowed"]
        ),
        ("10", "6", "80", "60")
    );
}

#[test]
fn quoted_fields_keep_their_commas_quotes_and_newlines() {
    let rows = csv_rows(&runcal(&[
        "fit",
        &corpus("season-quoted.csv"),
        "--format",
        "csv",
    ]));
    let teams: BTreeSet<&str> = rows.iter().map(|r| r["team"].as_str()).collect();
    assert_eq!(
        teams,
        BTreeSet::from(["Aces, the \"first\"", "Bats\nof the North", "Cubs"])
    );
    assert!(rows.iter().all(|r| r["league"] == "East"));
    let bats = rows.iter().find(|r| r["team"].starts_with("Bats")).unwrap();
    assert_eq!(
        (&*bats["runs_scored"], &*bats["runs_allowed"]),
        ("60", "80")
    );
}

#[test]
fn byte_order_marks_and_crlf_stay_out_of_values() {
    for name in ["season-bom.csv", "season-crlf.csv"] {
        let rows = csv_rows(&runcal(&["fit", &corpus(name), "--format", "csv"]));
        let got: Vec<(&str, &str, &str, &str)> = rows
            .iter()
            .map(|r| {
                (
                    r["season"].as_str(),
                    r["team"].as_str(),
                    r["runs_scored"].as_str(),
                    r["runs_allowed"].as_str(),
                )
            })
            .collect();
        let mut got = got;
        got.sort();
        assert_eq!(
            got,
            vec![
                ("2020", "Aces", "80", "60"),
                ("2020", "Bats", "60", "80"),
                ("2020", "Cubs", "70", "71"),
            ],
            "{name}"
        );
    }
}

/// Team totals (team, W, L, RS, RA) from a game log's `--format csv` report.
fn game_totals(file: &str) -> Vec<(String, String, String, String, String)> {
    let rows = csv_rows(&runcal(&[
        "fit",
        "--games",
        &corpus(file),
        "--format",
        "csv",
    ]));
    let mut t: Vec<_> = rows
        .iter()
        .map(|r| {
            (
                r["team"].clone(),
                r["wins"].clone(),
                r["losses"].clone(),
                r["runs_scored"].clone(),
                r["runs_allowed"].clone(),
            )
        })
        .collect();
    t.sort();
    t
}

#[test]
fn game_logs_aggregate_exactly() {
    let s = |v: &str| v.to_string();
    // Summed by hand from the six games in games-bom-crlf.csv.
    assert_eq!(
        game_totals("games-bom-crlf.csv"),
        vec![
            (s("Aces"), s("3"), s("1"), s("17"), s("10")),
            (s("Bats"), s("1"), s("3"), s("13"), s("22")),
            (s("Cubs"), s("2"), s("2"), s("17"), s("15")),
        ]
    );
    // The same six games, plus the second game of a doubleheader that Bats won 3–2 at Cubs.
    assert_eq!(
        game_totals("games-doubleheader.csv"),
        vec![
            (s("Aces"), s("3"), s("1"), s("17"), s("10")),
            (s("Bats"), s("2"), s("3"), s("16"), s("24")),
            (s("Cubs"), s("2"), s("3"), s("19"), s("18")),
        ]
    );
}

#[test]
fn na_is_a_league_not_a_missing_value() {
    let path = corpus("season-league-na.csv");
    let rows = csv_rows(&runcal(&["fit", &path, "--format", "csv"]));
    let mut leagues: Vec<&str> = rows.iter().map(|r| r["league"].as_str()).collect();
    leagues.sort_unstable();
    assert_eq!(leagues, vec!["East", "NA", "NA"]);
    let only_na = runcal(&["fit", &path, "--league", "NA", "--format", "json"]);
    assert_eq!(only_na.code, 0, "{}", only_na.stderr);
    assert_eq!(counts(&only_na), (2, 0));
}

/// A team-season file whose third line holds a team name of `name_len` bytes.
fn file_with_long_line(dir: &Path, name_len: usize) -> String {
    let mut text = String::from("season,team,w,l,rs,ra\n2020,Aces,10,6,80,60\n2020,");
    text.push_str(&"B".repeat(name_len));
    text.push_str(",6,10,60,80\n2020,Cubs,8,8,70,71\n");
    let path = dir.join("long.csv");
    std::fs::write(&path, text).unwrap();
    path.display().to_string()
}

#[test]
fn a_ten_megabyte_line_is_refused_at_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let path = file_with_long_line(dir.path(), 10_000_000);
    for extra in [None, Some("--skip-invalid")] {
        let mut args = vec!["fit", path.as_str(), "--format", "json"];
        args.extend(extra);
        let run = runcal(&args);
        // 1048576 bytes = 1 MiB, the default limit (DEFAULT_MAX_LINE_BYTES in src/data/input.rs).
        assert_refused(&run, &format!("{path}:3:"), "longer than 1048576 bytes");
    }
    // The same in a game log.
    let games = dir.path().join("games.csv");
    let mut text = String::from("date,home,away,home_score,away_score\n2021-04-01,Aces,Bats,5,3\n");
    text.push_str("2021-04-02,Aces,");
    text.push_str(&"C".repeat(10_000_000));
    text.push_str(",1,2\n");
    std::fs::write(&games, text).unwrap();
    let games = games.display().to_string();
    let run = runcal(&["fit", "--games", &games, "--skip-invalid"]);
    assert_refused(&run, &format!("{games}:3:"), "longer than 1048576 bytes");
}

#[test]
fn a_line_just_under_the_limit_is_accepted() {
    let dir = tempfile::tempdir().unwrap();
    let path = file_with_long_line(dir.path(), 1_000_000);
    let run = runcal(&["fit", &path, "--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(counts(&run), (3, 0));
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path.display().to_string()
}

#[test]
fn max_rows_refuses_larger_inputs() {
    let dir = tempfile::tempdir().unwrap();
    let seasons = write(
        dir.path(),
        "five.csv",
        "season,team,w,l,rs,ra\n2020,Aces,10,6,80,60\n2020,Bats,6,10,60,80\n2020,Cubs,8,8,70,71\n\
         2020,Dogs,9,7,75,70\n2020,Elks,7,9,66,70\n",
    );
    let over = runcal(&["fit", &seasons, "--max-rows", "4", "--format", "json"]);
    assert_refused(&over, &seasons, "more than 4 rows");
    assert!(over.stderr.contains("--max-rows"), "{}", over.stderr);
    let at = runcal(&["fit", &seasons, "--max-rows", "5", "--format", "json"]);
    assert_eq!(at.code, 0, "{}", at.stderr);
    assert_eq!(counts(&at), (5, 0));

    // Rows that fail to parse count toward the limit too: --skip-invalid is no way around it.
    let ragged = write(
        dir.path(),
        "ragged.csv",
        "season,team,w,l,rs,ra\n2020,Aces,10,6,80,60\n2020,x\n2020,x\n2020,Bats,6,10,60,80\n\
         2020,Cubs,8,8,70,71\n",
    );
    let run = runcal(&["fit", &ragged, "--max-rows", "4", "--skip-invalid"]);
    assert_refused(&run, &ragged, "more than 4 rows");

    let games = write(
        dir.path(),
        "games.csv",
        "date,home,away,home_score,away_score\n2021-04-01,Aces,Bats,5,3\n2021-04-02,Bats,Cubs,6,4\n\
         2021-04-03,Cubs,Aces,2,1\n2021-04-04,Aces,Cubs,7,2\n",
    );
    let run = runcal(&["fit", "--games", &games, "--max-rows", "3"]);
    assert_refused(&run, &games, "more than 3 rows");
}

#[test]
fn run_totals_too_large_to_count_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    // Games of 10^15 − 1 runs: the largest 64-bit count, 2^64 − 1, holds 18 446 of them, so the
    // next game (one line below the header per game) is the one refused.
    let per_game: u64 = 999_999_999_999_999;
    let fit = u64::MAX / per_game;
    let mut text = String::from("date,home,away,home_score,away_score,game\n");
    for g in 1..=fit + 50 {
        text.push_str(&format!("2021-04-01,Aces,Bats,{per_game},1,{g}\n"));
    }
    let one = write(dir.path(), "huge.csv", &text);
    let run = runcal(&["fit", "--games", &one]);
    assert_refused(&run, &format!("{one}:{}:", fit + 2), "too large to count");

    // Each file alone fits in a count; together they do not.
    let mut half = String::from("date,home,away,home_score,away_score,game\n");
    for g in 1..=10_000 {
        half.push_str(&format!("2021-04-01,Aces,Bats,999999999999999,1,{g}\n"));
    }
    let a = write(dir.path(), "a.csv", &half);
    let b = write(
        dir.path(),
        "b.csv",
        &half.replace("2021-04-01", "2021-04-02"),
    );
    let run = runcal(&["fit", "--games", &a, &b]);
    assert_refused(&run, &b, "too large to count");
}

#[test]
fn bad_rows_on_standard_input_are_reported_as_stdin() {
    let text = "season,team,w,l,rs,ra\n2020,Aces,10,6,80,60\n2020,Bats,6,10,sixty,80\n";
    let run = runcal_stdin(&["fit", "-", "--format", "json"], text);
    assert_refused(
        &run,
        "<stdin>:3:",
        "column 'rs': expected a number, found 'sixty'",
    );
}

#[test]
fn outputs_never_overwrite_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let original = std::fs::read(corpus("season-short.csv")).unwrap();
    let input = dir.path().join("a.csv");
    std::fs::write(&input, &original).unwrap();
    let abs = input.display().to_string();
    let games_original = std::fs::read(corpus("games-bom-crlf.csv")).unwrap();
    let games = dir.path().join("g.csv");
    std::fs::write(&games, &games_original).unwrap();
    let mut attempts: Vec<Vec<String>> = Vec::new();
    let v = |args: &[&str]| args.iter().map(|s| s.to_string()).collect::<Vec<String>>();
    for target in ["a.csv", "./a.csv", abs.as_str()] {
        attempts.push(v(&["fit", "a.csv", "--output", target]));
        attempts.push(v(&[
            "fit",
            abs.as_str(),
            "--format",
            "json",
            "--output",
            target,
        ]));
    }
    attempts.push(v(&["fit", "a.csv", "--save-profile", "a.csv"]));
    attempts.push(v(&["fit", "a.csv", "--plot", "a.csv"]));
    attempts.push(v(&["luck", "a.csv", "--output", "a.csv"]));
    attempts.push(v(&["fit", "--games", "g.csv", "--output", "g.csv"]));
    // A second input is protected like the first.
    attempts.push(v(&[
        "fit", "--games", "g.csv", "g.csv", "--output", "./g.csv",
    ]));
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(&input, dir.path().join("link.csv")).unwrap();
        attempts.push(v(&["fit", "link.csv", "--output", "a.csv"]));
        attempts.push(v(&["fit", "a.csv", "--output", "link.csv"]));
    }
    for args in &attempts {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let run = runcal_in(Some(dir.path()), &args);
        assert_eq!(
            run.code, 2,
            "runcal {args:?} exited {}: {}",
            run.code, run.stderr
        );
        assert!(
            run.stderr.contains("refusing to write"),
            "{args:?}: {}",
            run.stderr
        );
        assert_eq!(
            std::fs::read(&input).unwrap(),
            original,
            "runcal {args:?} changed a.csv"
        );
        assert_eq!(
            std::fs::read(&games).unwrap(),
            games_original,
            "runcal {args:?} changed g.csv"
        );
    }
    // A different file is written, and the input is still untouched.
    let run = runcal_in(
        Some(dir.path()),
        &["fit", "a.csv", "--format", "json", "--output", "b.json"],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let written: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("b.json")).unwrap()).unwrap();
    assert_eq!(written["rows_used"].as_u64(), Some(4));
    assert_eq!(std::fs::read(&input).unwrap(), original);
}

/// A FIFO in `dir` and a thread that writes `text` through it once a reader opens it. The reader
/// may stop early: a broken pipe is then the writer's expected end.
#[cfg(unix)]
fn fifo_with(dir: &Path, name: &str, text: String) -> (PathBuf, std::thread::JoinHandle<()>) {
    let fifo = dir.join(name);
    let status = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(status.success());
    let target = fifo.clone();
    let writer = std::thread::spawn(move || {
        let _ = std::fs::write(target, text);
    });
    (fifo, writer)
}

const SMALL_LOG: &str = "date,home,away,home_score,away_score
2021-04-01,Aces,Bats,3,2
2021-04-01,Cubs,Dogs,5,4
2021-04-02,Bats,Cubs,1,0
2021-04-02,Dogs,Aces,2,6
2021-04-03,Aces,Cubs,1,4
2021-04-03,Bats,Dogs,7,3
";

#[test]
fn a_quoted_field_split_into_short_lines_is_refused_past_the_field_limit() {
    let dir = tempfile::tempdir().unwrap();
    // 2 MB of quoted name in 100-byte lines: every line is short, the field is not.
    let mut text = String::from("date,home,away,home_score,away_score\n2021-04-01,Aces,Bats,3,2\n");
    text.push_str("2021-04-02,\"");
    for _ in 0..20_000 {
        text.push_str(&"x".repeat(99));
        text.push('\n');
    }
    text.push_str("\",Cubs,1,0\n");
    let path = write(dir.path(), "field.csv", &text);
    for extra in [None, Some("--skip-invalid")] {
        let mut args = vec!["fit", "--games", path.as_str()];
        args.extend(extra);
        // 1048576 bytes = 1 MiB, DEFAULT_MAX_FIELD_BYTES in src/data/input.rs.
        assert_refused(
            &runcal(&args),
            &format!("{path}:3:"),
            "a quoted field opens here and runs past 1048576 bytes",
        );
    }
}

#[test]
fn one_game_log_given_twice_is_a_duplicate_across_files() {
    let dir = tempfile::tempdir().unwrap();
    let a = write(dir.path(), "week1.csv", SMALL_LOG);
    let b = write(
        dir.path(),
        "week1-2.csv",
        &format!("{SMALL_LOG}2021-04-04,Dogs,Aces,2,6\n"),
    );
    let run = runcal(&["fit", "--games", &a, &b]);
    assert_refused(
        &run,
        &format!("{b}:2:"),
        &format!("duplicate game 2021-04-01 Bats at Aces (first at {a}:2)"),
    );
    let run = runcal(&[
        "fit",
        "--games",
        &a,
        &a,
        "--skip-invalid",
        "--format",
        "json",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // Every game of the second copy is a duplicate: 4 teams, 6 rejected games.
    assert_eq!(counts(&run), (4, 6));
}

#[cfg(unix)]
#[test]
fn a_game_log_through_a_fifo_or_stdin_is_read_in_one_pass() {
    let dir = tempfile::tempdir().unwrap();
    // Dates go back (04-02, then 04-01 again) and a game repeats: the duplicate check must see it
    // without reading the input twice.
    let text = format!("{SMALL_LOG}2021-04-01,Aces,Bats,3,2\n");
    let (fifo, writer) = fifo_with(dir.path(), "games.fifo", text.clone());
    let fifo_path = fifo.display().to_string();
    let run = runcal(&[
        "fit",
        "--games",
        &fifo_path,
        "--skip-invalid",
        "--format",
        "json",
    ]);
    writer.join().unwrap();
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(counts(&run), (4, 1));
    assert!(
        run.stderr.contains(&format!(
            "{fifo_path}:8: column 'date': duplicate game 2021-04-01 Bats at Aces (first at line 2)"
        )),
        "{}",
        run.stderr
    );
    let run = runcal_stdin(&["fit", "--games", "-", "--format", "json"], &text);
    assert_refused(&run, "<stdin>:8:", "column 'date': duplicate game");
}

#[test]
fn one_column_cannot_play_two_roles() {
    let dir = tempfile::tempdir().unwrap();
    let path = write(
        dir.path(),
        "s.csv",
        "season,team,w,l,runs_scored,ra\n2020,Aces,10,6,80,60\n2020,Bats,6,10,60,80\n",
    );
    let run = runcal(&["fit", &path, "--map", "wins=runs_scored"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("--map wins=runs_scored: a column 'runs_scored' plays runs_scored already"),
        "{}",
        run.stderr
    );
    let run = runcal(&["fit", &path, "--map", "wins=w", "--map", "losses=W"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("--map wins=w and --map losses=W give one column two roles"),
        "{}",
        run.stderr
    );
}

/// A log whose first date comes back after four later dates.
fn log_with_a_date_far_back() -> String {
    format!(
        "{SMALL_LOG}2021-04-04,Cubs,Aces,2,1\n2021-04-05,Dogs,Bats,3,5\n2021-04-01,Aces,Bats,3,2\n"
    )
}

#[test]
fn a_date_beyond_the_held_games_rereads_a_file() {
    let dir = tempfile::tempdir().unwrap();
    let path = write(dir.path(), "far.csv", &log_with_a_date_far_back());
    let opts = runcal::data::LoadOptions {
        skip_invalid: true,
        // Two games held: 2021-04-01 is let go long before it comes back on line 10.
        max_held_games: 2,
        ..Default::default()
    };
    let ds = runcal::data::load(std::slice::from_ref(&path), true, &opts).unwrap();
    let lines: Vec<Option<u64>> = ds.rejected.iter().map(|r| r.at.line).collect();
    assert_eq!(lines, [Some(10)], "{:?}", ds.rejected);
    assert!(ds.rejected[0].reason.contains("first at line 2"));
}

#[cfg(unix)]
#[test]
fn a_date_beyond_the_held_games_on_a_pipe_is_refused_with_advice() {
    let dir = tempfile::tempdir().unwrap();
    let (fifo, writer) = fifo_with(dir.path(), "far.fifo", log_with_a_date_far_back());
    let opts = runcal::data::LoadOptions {
        max_held_games: 2,
        ..Default::default()
    };
    let path = fifo.display().to_string();
    let err = runcal::data::load(std::slice::from_ref(&path), true, &opts).unwrap_err();
    writer.join().unwrap();
    let msg = err.to_string();
    assert!(
        msg.starts_with(&format!("{path}:10: column 'date': ")),
        "{msg}"
    );
    assert!(msg.contains("sort the game log by date"), "{msg}");
}

#[test]
fn distinct_team_names_are_bounded() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("date,home,away,home_score,away_score\n");
    for i in 0..30 {
        text.push_str(&format!("2021-04-01,H{i},A{i},3,2\n"));
    }
    let path = write(dir.path(), "many.csv", &text);
    let opts = runcal::data::LoadOptions {
        max_names: 20,
        ..Default::default()
    };
    let err = runcal::data::load(std::slice::from_ref(&path), true, &opts).unwrap_err();
    // Names 21 and 22 are H10 and A10, on line 12.
    assert!(
        err.to_string().starts_with(&format!(
            "{path}:12: column 'home': more than 20 distinct team names"
        )),
        "{err}"
    );
}
