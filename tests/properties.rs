//! Property tests of the loaders and the fitters.
//!
//! - Arbitrary bytes never panic: a file loads, or fails with a typed error that names it.
//! - Generated season files and game logs, full of the usual defects, load exactly: every good row
//!   arrives with its values unchanged, every bad one is rejected at its physical line, and
//!   `--skip-invalid` (here `LoadOptions::skip_invalid`) only changes whether the first rejection
//!   stops the load.
//! - Extreme but well-formed tables (0 runs, 10^9 runs, one-game seasons, all-tie seasons, one team,
//!   exponents at the ends of the solver's bracket) give finite results or a clear error.
//!
//! Each property runs 64 cases unless the standard proptest variable says otherwise, so CI stays
//! quick while a deeper search is one variable away:
//!
//! ```text
//! PROPTEST_CASES=5000 cargo test --release --test properties
//! ```
//!
//! The teams and numbers here are invented, for robustness tests only.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

use std::collections::{BTreeMap, HashSet};
use std::io::Write;

use proptest::prelude::*;
use proptest::sample::select;
use runcal::data::{self, Dataset, LoadOptions, Table, TeamSeason, TiePolicy, Weighting};
use runcal::error::{DataError, FitError, Location};
use runcal::fit::{self, Loss, loss, solve, stderr};
use runcal::model::ModelKind;

/// 64 cases, or as many as `PROPTEST_CASES` asks for (with the other `PROPTEST_*` settings).
fn config() -> ProptestConfig {
    let mut c = ProptestConfig::default();
    if std::env::var_os("PROPTEST_CASES").is_none() {
        c.cases = 64;
    }
    // A failure prints its shrunk input; no regression files are written into the tree.
    c.failure_persistence = None;
    c
}

const LOSSES: [Loss; 3] = [Loss::Mae, Loss::Rmse, Loss::Logloss];

/// Write bytes to a fresh temporary file; the file lives as long as the handle.
fn temp_file(bytes: &[u8]) -> (tempfile::NamedTempFile, String) {
    let mut f = tempfile::NamedTempFile::new().unwrap();
    f.write_all(bytes).unwrap();
    f.flush().unwrap();
    let path = f.path().display().to_string();
    (f, path)
}

fn options(skip_invalid: bool) -> LoadOptions {
    LoadOptions {
        skip_invalid,
        ..LoadOptions::default()
    }
}

/// A load error must say what went wrong and, when it is about a file, which one.
fn check_error(e: &DataError, path: &str) -> Result<(), TestCaseError> {
    let text = e.to_string();
    prop_assert!(!text.trim().is_empty());
    match e {
        DataError::Usage(_) | DataError::NoRows { .. } => {}
        _ => prop_assert!(text.contains(path), "error does not name {path}: {text}"),
    }
    if let DataError::Rejected(r) = e
        && let Some(line) = r.at.line
    {
        prop_assert!(line >= 1);
    }
    Ok(())
}

/// What every accepted row must satisfy, whatever the input was.
fn check_rows(ds: &Dataset) -> Result<(), TestCaseError> {
    for r in &ds.rows {
        prop_assert!(r.decisions() > 0, "row without games: {r:?}");
        prop_assert!(r.games > 0);
        prop_assert!(r.runs_scored.is_finite() && r.runs_scored >= 0.0);
        prop_assert!(r.runs_allowed.is_finite() && r.runs_allowed >= 0.0);
        prop_assert!(r.runs_scored > 0.0 || r.runs_allowed > 0.0);
        prop_assert!(!r.team.trim().is_empty());
        prop_assert!(r.at.line.is_some_and(|l| l >= 2), "{:?}", r.at);
    }
    for r in &ds.rejected {
        prop_assert!(!r.reason.is_empty());
        prop_assert!(r.at.line.is_some_and(|l| l >= 2), "{r}");
    }
    Ok(())
}

/// Fit every model by every loss; each must be finite or a clear error.
fn check_fits(t: &Table) -> Result<(), TestCaseError> {
    for kind in ModelKind::ALL {
        for l in LOSSES {
            check_fit(t, kind, l)?;
        }
    }
    Ok(())
}

fn finite_metrics(m: &loss::Metrics) -> bool {
    [m.mae, m.rmse, m.logloss, m.bias, m.max_abs, m.rmse_wins]
        .iter()
        .all(|v| v.is_finite())
}

fn check_fit(t: &Table, kind: ModelKind, l: Loss) -> Result<(), TestCaseError> {
    match fit::fit_model(t, kind, l) {
        Ok(f) => {
            let p = &f.model.params;
            prop_assert!(p.iter().all(|v| v.is_finite()), "{kind}/{l}: params {p:?}");
            if kind != ModelKind::Pythagenport {
                // Fitted on a log scale: always positive.
                prop_assert!(p[0] > 0.0, "{kind}/{l}: params {p:?}");
            }
            let m = &f.metrics;
            prop_assert!(finite_metrics(m), "{kind}/{l} at {p:?}: {m:?}");
            prop_assert!(m.mae >= 0.0 && m.logloss >= 0.0);
            let slack = 1e-12;
            prop_assert!(
                m.mae <= m.rmse + slack && m.rmse <= m.max_abs + slack,
                "{m:?}"
            );
            if kind != ModelKind::Linear {
                // Win expectations from the Pythagorean family lie in [0, 1].
                prop_assert!(m.max_abs <= 1.0 + slack, "{m:?}");
            }
            // Infinite when the exponent at the average run environment underflows to 0 (runs then
            // buy no wins), but never undefined.
            prop_assert!(
                !f.runs_per_win.is_nan(),
                "{kind}/{l} at {p:?}: runs per win is NaN"
            );
            // The fit is no worse than where the solver started (up to the solver's tolerance: a
            // mean absolute error that is 0 at the start can be 1e-12 at a point 1e-11 away).
            let at_fit = loss::loss_value(t, kind, p, l, None);
            let at_start = loss::loss_value(t, kind, &kind.start(), l, None);
            prop_assert!(at_fit.is_finite());
            prop_assert!(
                at_fit <= at_start + 1e-9,
                "{kind}/{l}: {at_fit} at {p:?} is worse than {at_start} at the start"
            );
            if let Some(se) = &f.std_errors {
                prop_assert!(se.dispersion.is_finite() && se.dispersion >= 0.0, "{se:?}");
                for s in se.binomial.iter().chain(&se.corrected) {
                    prop_assert!(s.is_finite() && *s >= 0.0, "{kind}: {se:?}");
                }
            }
            if let Some(se) = stderr::std_errors(t, kind, p) {
                prop_assert!(
                    se.binomial.iter().all(|s| s.is_finite() && *s > 0.0),
                    "{se:?}"
                );
            }
        }
        Err(e) => {
            let text = e.to_string();
            prop_assert!(
                text.contains(kind.name()) || matches!(e, FitError::Invalid(_)),
                "{text}"
            );
            prop_assert!(!text.trim().is_empty());
        }
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Arbitrary bytes.

const SEASON_HEADER: &[u8] = b"season,league,team,w,l,t,g,rs,ra\n";
const GAME_HEADER: &[u8] = b"date,home,away,home_score,away_score,game,league\n";

/// Bytes that CSV and number parsing care about, in random order.
fn soup() -> impl Strategy<Value = Vec<u8>> {
    let alphabet: Vec<u8> = b",,,,\"\n\n\r 0123456789-.eE+aNnIifx\xff\xef\xbb\xbf\t".to_vec();
    prop::collection::vec(select(alphabet), 0..600)
}

fn load_both(path: &str, games: bool) -> (Result<Dataset, DataError>, Result<Dataset, DataError>) {
    let strict = data::load(&[path.to_string()], games, &options(false));
    let skip = data::load(&[path.to_string()], games, &options(true));
    (strict, skip)
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn any_bytes_load_or_fail_cleanly(bytes in prop::collection::vec(any::<u8>(), 0..800)) {
        let (_f, path) = temp_file(&bytes);
        for games in [false, true] {
            let (strict, skip) = load_both(&path, games);
            for r in [&strict, &skip] {
                match r {
                    Ok(ds) => check_rows(ds)?,
                    Err(e) => check_error(e, &path)?,
                }
            }
        }
    }

    #[test]
    fn soup_after_a_season_header_loads_and_fits(body in soup()) {
        let mut bytes = SEASON_HEADER.to_vec();
        bytes.extend(&body);
        let (_f, path) = temp_file(&bytes);
        let (strict, skip) = load_both(&path, false);
        // With a good header and --skip-invalid, bad rows are set aside: the load itself succeeds.
        let skip = skip.map_err(|e| TestCaseError::fail(format!("skip-invalid load failed: {e}")))?;
        check_rows(&skip)?;
        match strict {
            Ok(ds) => {
                prop_assert!(skip.rejected.is_empty());
                prop_assert_eq!(ds.rows, skip.rows.clone());
            }
            Err(DataError::Rejected(r)) => prop_assert_eq!(Some(&r), skip.rejected.first()),
            Err(e) => return Err(TestCaseError::fail(format!("unexpected error {e}"))),
        }
        if !skip.rows.is_empty() {
            check_fits(&Table::new(&skip.rows, TiePolicy::Half, Weighting::None))?;
        }
    }

    #[test]
    fn soup_after_a_game_log_header_loads_and_fits(body in soup()) {
        let mut bytes = GAME_HEADER.to_vec();
        bytes.extend(&body);
        let (_f, path) = temp_file(&bytes);
        let (strict, skip) = load_both(&path, true);
        let skip = skip.map_err(|e| TestCaseError::fail(format!("skip-invalid load failed: {e}")))?;
        check_rows(&skip)?;
        match strict {
            Ok(ds) => {
                prop_assert!(skip.rejected.is_empty());
                prop_assert_eq!(ds.rows, skip.rows.clone());
            }
            Err(DataError::Rejected(r)) => prop_assert_eq!(Some(&r), skip.rejected.first()),
            Err(e) => return Err(TestCaseError::fail(format!("unexpected error {e}"))),
        }
        if !skip.rows.is_empty() {
            check_fits(&Table::new(&skip.rows, TiePolicy::Half, Weighting::Games))?;
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Generated season files with known contents.

/// One cell as written, and the value it must load as (`None`: the row must be rejected).
#[derive(Debug, Clone)]
struct Field<T> {
    text: Vec<u8>,
    value: Option<T>,
}

fn good<T>(text: impl Into<Vec<u8>>, value: T) -> Field<T> {
    Field {
        text: text.into(),
        value: Some(value),
    }
}

fn bad<T>(text: impl Into<Vec<u8>>) -> Field<T> {
    Field {
        text: text.into(),
        value: None,
    }
}

/// A CSV cell: quoted when it must be (or when `force`), with quotes doubled.
fn cell(text: &[u8], force: bool) -> Vec<u8> {
    if force
        || text
            .iter()
            .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'))
    {
        let mut out = vec![b'"'];
        for &b in text {
            if b == b'"' {
                out.push(b'"');
            }
            out.push(b);
        }
        out.push(b'"');
        out
    } else {
        text.to_vec()
    }
}

fn bad_count() -> impl Strategy<Value = String> {
    select(vec![
        "-1", "NaN", "inf", "1e400", "", "7.5", "x", "1e16", "\u{661}",
    ])
    .prop_map(str::to_string)
}

/// Wins, losses or ties: small or ordinary whole numbers in several spellings, now and then garbage.
fn count_field(blank_is_zero: bool) -> impl Strategy<Value = Field<u64>> {
    let n = prop_oneof![0u64..=3, 0u64..=200];
    prop_oneof![
        30 => (n, 0..4u8).prop_map(|(n, style)| {
            let text = match style {
                0 => n.to_string(),
                1 => format!("{n}.0"),
                2 => format!(" {n} "),
                _ => format!("{n}e0"),
            };
            good(text, n)
        }),
        1 => bad_count().prop_map(move |t| if blank_is_zero && t.is_empty() { good("", 0) } else { bad(t) }),
    ]
}

fn games_field() -> impl Strategy<Value = Field<u64>> {
    prop_oneof![
        30 => (1u64..=200).prop_map(|n| good(n.to_string(), n)),
        1 => prop_oneof![bad_count(), Just("0".to_string())].prop_map(bad),
    ]
}

fn runs_field() -> impl Strategy<Value = Field<f64>> {
    let v = prop_oneof![
        Just(0.0),
        (0u32..3000).prop_map(f64::from),
        (0u32..12_000).prop_map(|k| f64::from(k) / 4.0),
        (1u64..2_000_000_000).prop_map(|k| k as f64),
        Just(1e15),
    ];
    prop_oneof![
        30 => (v, any::<bool>()).prop_map(|(v, sci)| good(if sci { format!("{v:e}") } else { format!("{v}") }, v)),
        1 => select(vec!["-5", "-0.5", "NaN", "inf", "-inf", "1e400", "1e308", "1.5e15", "", "abc", "1,5"]).prop_map(bad),
    ]
}

fn season_field() -> impl Strategy<Value = Field<i32>> {
    prop_oneof![
        30 => (prop_oneof![2019i32..=2021, 1871i32..=2030], any::<bool>())
            .prop_map(|(y, pad)| good(if pad { format!(" {y} ") } else { y.to_string() }, y)),
        1 => select(vec!["20x", "2020.5", "", "99999999999", "MMXX"]).prop_map(bad),
    ]
}

fn league_field() -> impl Strategy<Value = Field<String>> {
    prop_oneof![
        30 => select(vec!["", "NA", "AL", "East, North", "Liga \u{d1}", "\"Q\" League"])
            .prop_map(|l| good(l, l.to_string())),
        1 => Just(bad(b"Caf\xe9".to_vec())),
    ]
}

const TEAMS: [&str; 8] = [
    "Aces",
    "Bats, Inc.",
    "Cubs \"C\"",
    "Dogs\nof War",
    "\u{c9}lan",
    "Fox",
    "Gnus",
    "Hens",
];

fn team_field() -> impl Strategy<Value = Field<String>> {
    prop_oneof![
        30 => select(TEAMS.to_vec()).prop_map(|t| good(t, t.to_string())),
        1 => prop_oneof![Just(b"".to_vec()), Just(b"T\xff".to_vec()), Just(b"   ".to_vec())].prop_map(bad),
    ]
}

#[derive(Debug, Clone)]
struct SeasonRow {
    season: Field<i32>,
    league: Field<String>,
    team: Field<String>,
    wins: Field<u64>,
    losses: Field<u64>,
    ties: Field<u64>,
    games: Field<u64>,
    rs: Field<f64>,
    ra: Field<f64>,
    /// −1: a field short, +1: a field too many.
    ragged: i8,
    blank_before: usize,
    quote_all: bool,
}

fn season_row() -> impl Strategy<Value = SeasonRow> {
    (
        season_field(),
        league_field(),
        team_field(),
        count_field(false),
        count_field(false),
        count_field(true),
        games_field(),
        runs_field(),
        runs_field(),
        prop_oneof![40 => Just(0i8), 1 => Just(-1i8), 1 => Just(1i8)],
        prop_oneof![8 => Just(0usize), 1 => 1usize..3],
        prop::bool::weighted(0.1),
    )
        .prop_map(
            |(
                season,
                league,
                team,
                wins,
                losses,
                ties,
                games,
                rs,
                ra,
                ragged,
                blank_before,
                quote_all,
            )| SeasonRow {
                season,
                league,
                team,
                wins,
                losses,
                ties,
                games,
                rs,
                ra,
                ragged,
                blank_before,
                quote_all,
            },
        )
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Col {
    Season,
    League,
    Team,
    Wins,
    Losses,
    Ties,
    Games,
    Rs,
    Ra,
}

/// Header spellings the loader must recognise (generic aliases, any case and spacing).
fn header_of(col: Col, pick: usize) -> &'static str {
    let names: &[&str] = match col {
        Col::Season => &["season", "Year", "YR"],
        Col::League => &["lg", "League"],
        Col::Team => &["team", "Club", "Team Name"],
        Col::Wins => &["W", "wins", "Won"],
        Col::Losses => &["L", "losses"],
        Col::Ties => &["T", "ties", "Draws"],
        Col::Games => &["G", "GP", "games played"],
        Col::Rs => &["RS", "runs scored", "PF", "Goals For"],
        Col::Ra => &["RA", "runs_allowed", "PA", "goals against"],
    };
    names[pick % names.len()]
}

#[derive(Debug, Clone)]
struct SeasonFile {
    cols: Vec<Col>,
    header_pick: usize,
    rows: Vec<SeasonRow>,
    crlf: bool,
    bom: bool,
    final_newline: bool,
}

fn season_file() -> impl Strategy<Value = SeasonFile> {
    let cols =
        (any::<bool>(), any::<bool>(), any::<bool>()).prop_flat_map(|(league, ties, games)| {
            let mut c = vec![
                Col::Season,
                Col::Team,
                Col::Wins,
                Col::Losses,
                Col::Rs,
                Col::Ra,
            ];
            if league {
                c.push(Col::League);
            }
            if ties {
                c.push(Col::Ties);
            }
            if games {
                c.push(Col::Games);
            }
            Just(c).prop_shuffle()
        });
    (
        cols,
        0usize..12,
        prop::collection::vec(season_row(), 0..25),
        any::<bool>(),
        any::<bool>(),
        prop::bool::weighted(0.8),
    )
        .prop_map(
            |(cols, header_pick, rows, crlf, bom, final_newline)| SeasonFile {
                cols,
                header_pick,
                rows,
                crlf,
                bom,
                final_newline,
            },
        )
}

/// What loading a generated season file must give.
struct SeasonExpect {
    bytes: Vec<u8>,
    rows: Vec<TeamSeason>,
    /// Lines of the rejected rows, in the order they are reported: bad rows as read, then duplicates.
    rejected_lines: Vec<u64>,
}

impl SeasonFile {
    fn expect(&self, path: &str) -> SeasonExpect {
        let nl: &[u8] = if self.crlf { b"\r\n" } else { b"\n" };
        let mut bytes = Vec::new();
        if self.bom {
            bytes.extend(b"\xef\xbb\xbf");
        }
        let headers: Vec<&str> = self
            .cols
            .iter()
            .enumerate()
            .map(|(i, &c)| header_of(c, self.header_pick + i))
            .collect();
        bytes.extend(headers.join(",").as_bytes());
        let (mut rows, mut bad_lines, mut dup_lines) = (Vec::new(), Vec::new(), Vec::new());
        let mut seen = HashSet::new();
        let mut line = 1u64;
        for (i, r) in self.rows.iter().enumerate() {
            bytes.extend(nl);
            line += 1;
            for _ in 0..r.blank_before {
                bytes.extend(nl);
                line += 1;
            }
            let row_line = line;
            let mut cells: Vec<Vec<u8>> = self
                .cols
                .iter()
                .map(|c| {
                    let text = match c {
                        Col::Season => &r.season.text,
                        Col::League => &r.league.text,
                        Col::Team => &r.team.text,
                        Col::Wins => &r.wins.text,
                        Col::Losses => &r.losses.text,
                        Col::Ties => &r.ties.text,
                        Col::Games => &r.games.text,
                        Col::Rs => &r.rs.text,
                        Col::Ra => &r.ra.text,
                    };
                    cell(text, r.quote_all)
                })
                .collect();
            match r.ragged {
                -1 => {
                    cells.pop();
                }
                1 => cells.push(b"9".to_vec()),
                _ => {}
            }
            let text = cells.join(&b","[..]);
            line += text.iter().filter(|&&b| b == b'\n').count() as u64;
            bytes.extend(&text);
            if i + 1 == self.rows.len() && self.final_newline {
                bytes.extend(nl);
            }

            let has = |c: Col| self.cols.contains(&c);
            let value = || -> Option<TeamSeason> {
                if r.ragged != 0 {
                    return None;
                }
                let season = r.season.value?;
                let league = if has(Col::League) {
                    r.league.value.clone()?
                } else {
                    String::new()
                };
                let team = r.team.value.clone()?;
                let wins = r.wins.value?;
                let losses = r.losses.value?;
                let ties = if has(Col::Ties) { r.ties.value? } else { 0 };
                let rs = r.rs.value?;
                let ra = r.ra.value?;
                let decisions = wins + losses + ties;
                if decisions == 0 || (rs == 0.0 && ra == 0.0) {
                    return None;
                }
                let games = if has(Col::Games) {
                    r.games.value?
                } else {
                    decisions
                };
                // More decisions than games played, beyond two forfeits, is a row error.
                if decisions > games + 2 {
                    return None;
                }
                Some(TeamSeason {
                    season,
                    league: (!league.is_empty()).then_some(league),
                    team,
                    wins,
                    losses,
                    ties,
                    runs_scored: rs,
                    runs_allowed: ra,
                    games,
                    one_run: None,
                    at: Location {
                        file: path.to_string(),
                        line: Some(row_line),
                        column: None,
                    },
                })
            };
            match value() {
                None => bad_lines.push(row_line),
                Some(row) => {
                    if seen.insert((row.season, row.league.clone(), row.team.clone())) {
                        rows.push(row);
                    } else {
                        dup_lines.push(row_line);
                    }
                }
            }
        }
        if self.rows.is_empty() && self.final_newline {
            bytes.extend(nl);
        }
        bad_lines.extend(dup_lines);
        SeasonExpect {
            bytes,
            rows,
            rejected_lines: bad_lines,
        }
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn season_files_load_exactly(file in season_file()) {
        let (_f, path) = temp_file(b"");
        let want = file.expect(&path);
        std::fs::write(&path, &want.bytes).unwrap();
        let (strict, skip) = load_both(&path, false);
        let skip = skip.map_err(|e| TestCaseError::fail(format!("skip-invalid load failed: {e}")))?;
        prop_assert_eq!(&skip.rows, &want.rows);
        let lines: Vec<u64> = skip.rejected.iter().map(|r| r.at.line.unwrap_or(0)).collect();
        prop_assert_eq!(&lines, &want.rejected_lines, "rejections: {:#?}", skip.rejected);
        // Nothing lost: every data row is used or rejected.
        prop_assert_eq!(skip.rows.len() + skip.rejected.len(), file.rows.len());
        let odd = skip.rows.iter().any(|r| r.games != r.decisions());
        prop_assert_eq!(odd, skip.warnings.iter().any(|w| w.contains("different from W+L+T")));
        match strict {
            Ok(ds) => {
                prop_assert!(want.rejected_lines.is_empty());
                prop_assert_eq!(ds.rows, want.rows);
            }
            Err(DataError::Rejected(r)) => prop_assert_eq!(Some(&r), skip.rejected.first()),
            Err(e) => return Err(TestCaseError::fail(format!("unexpected error {e}"))),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Generated game logs with known totals.

const POOL: [&str; 5] = ["Aces", "Bats", "Cubs", "Dogs, Inc.", "\u{c9}lan"];

#[derive(Debug, Clone)]
struct GameRow {
    /// Day of April 2021.
    day: Field<u8>,
    home: Field<usize>,
    away: Field<usize>,
    home_score: Field<u64>,
    away_score: Field<u64>,
    season: Field<i32>,
    league: String,
    game: Field<u64>,
    blank_before: usize,
}

fn score_field() -> impl Strategy<Value = Field<u64>> {
    prop_oneof![
        30 => prop_oneof![10 => 0u64..=12, 1 => Just(1_000_000_000u64)].prop_map(|n| good(n.to_string(), n)),
        1 => select(vec!["-3", "x", "2.5", "", "NaN"]).prop_map(bad),
    ]
}

fn team_index() -> impl Strategy<Value = Field<usize>> {
    prop_oneof![
        30 => (0..POOL.len()).prop_map(|i| good(POOL[i], i)),
        1 => Just(bad("")),
    ]
}

fn game_row() -> impl Strategy<Value = GameRow> {
    (
        prop_oneof![
            30 => (1u8..=10).prop_map(|d| good(format!("2021-04-{d:02}"), d)),
            1 => select(vec!["2021-02-30", "2021-4-1", "", "20210401", "2021-13-01"]).prop_map(bad),
        ],
        team_index(),
        team_index(),
        score_field(),
        score_field(),
        prop_oneof![30 => prop_oneof![Just(2021), Just(2022)].prop_map(|y| good(y.to_string(), y)), 1 => Just(bad("x"))],
        select(vec!["", "NA", "East"]).prop_map(str::to_string),
        prop_oneof![30 => (1u64..=2).prop_map(|g| good(g.to_string(), g)), 1 => select(vec!["x", "-1", ""]).prop_map(bad)],
        prop_oneof![8 => Just(0usize), 1 => 1usize..3],
    )
        .prop_map(|(day, home, away, home_score, away_score, season, league, game, blank_before)| GameRow {
            day,
            home,
            away,
            home_score,
            away_score,
            season,
            league,
            game,
            blank_before,
        })
}

#[derive(Debug, Clone)]
struct GameFile {
    rows: Vec<GameRow>,
    with_season: bool,
    with_league: bool,
    with_game: bool,
    crlf: bool,
    as_of: Option<u8>,
}

fn game_file() -> impl Strategy<Value = GameFile> {
    (
        prop::collection::vec(game_row(), 0..40),
        any::<bool>(),
        any::<bool>(),
        any::<bool>(),
        any::<bool>(),
        any::<bool>(),
        prop::option::weighted(0.3, 1u8..=10),
    )
        .prop_map(
            |(mut rows, sorted, with_season, with_league, with_game, crlf, as_of)| {
                // Logs usually come in date order (one duplicate check per day); shuffled ones take the
                // loader's other path.
                if sorted {
                    rows.sort_by_key(|r| r.day.value);
                }
                GameFile {
                    rows,
                    with_season,
                    with_league,
                    with_game,
                    crlf,
                    as_of,
                }
            },
        )
}

#[derive(Default)]
struct Acc {
    games: u64,
    wins: u64,
    losses: u64,
    ties: u64,
    rs: u64,
    ra: u64,
    one_run: (u64, u64),
    first_line: u64,
}

struct GameExpect {
    bytes: Vec<u8>,
    rows: Vec<TeamSeason>,
    rejected_lines: Vec<u64>,
    /// Rows with both scores empty, and games after the as-of date.
    unplayed: u64,
}

impl GameFile {
    fn expect(&self, path: &str) -> GameExpect {
        let nl: &[u8] = if self.crlf { b"\r\n" } else { b"\n" };
        let mut header = vec!["date", "home", "away", "home_score", "away_score"];
        if self.with_season {
            header.push("season");
        }
        if self.with_league {
            header.push("league");
        }
        if self.with_game {
            header.push("game");
        }
        let mut bytes = header.join(",").into_bytes();
        let mut line = 1u64;
        let mut bad_lines = Vec::new();
        let mut seen = HashSet::new();
        let mut totals: BTreeMap<(i32, Option<String>, String), Acc> = BTreeMap::new();
        let mut unplayed = 0;
        for r in &self.rows {
            bytes.extend(nl);
            line += 1;
            for _ in 0..r.blank_before {
                bytes.extend(nl);
                line += 1;
            }
            let mut cells = vec![
                cell(&r.day.text, false),
                cell(&r.home.text, false),
                cell(&r.away.text, false),
                cell(&r.home_score.text, false),
                cell(&r.away_score.text, false),
            ];
            if self.with_season {
                cells.push(cell(&r.season.text, false));
            }
            if self.with_league {
                cells.push(cell(r.league.as_bytes(), false));
            }
            if self.with_game {
                cells.push(cell(&r.game.text, false));
            }
            bytes.extend(cells.join(&b","[..]));

            let parsed = (|| {
                let day = r.day.value?;
                let (home, away) = (r.home.value?, r.away.value?);
                if home == away {
                    return None;
                }
                let season = if self.with_season {
                    r.season.value?
                } else {
                    2021
                };
                let game = if self.with_game { r.game.value? } else { 0 };
                // Both scores empty: a game not played yet, set aside (not an error).
                if r.home_score.text.is_empty() && r.away_score.text.is_empty() {
                    return Some(None);
                }
                let (hs, aw) = (r.home_score.value?, r.away_score.value?);
                Some(Some((day, home, away, hs, aw, season, game)))
            })();
            let Some(parsed) = parsed else {
                bad_lines.push(line);
                continue;
            };
            let Some((day, home, away, hs, aw, season, game)) = parsed else {
                unplayed += 1;
                continue;
            };
            if !seen.insert((day, home, away, game)) {
                bad_lines.push(line);
                continue;
            }
            if self.as_of.is_some_and(|cut| day > cut) {
                unplayed += 1;
                continue;
            }
            let league = (self.with_league && !r.league.is_empty()).then(|| r.league.clone());
            for (team, scored, allowed) in [(home, hs, aw), (away, aw, hs)] {
                let acc = totals
                    .entry((season, league.clone(), POOL[team].to_string()))
                    .or_insert_with(|| Acc {
                        first_line: line,
                        ..Acc::default()
                    });
                acc.games += 1;
                acc.rs += scored;
                acc.ra += allowed;
                if scored > allowed {
                    acc.wins += 1;
                    acc.one_run.0 += u64::from(scored - allowed == 1);
                } else if scored < allowed {
                    acc.losses += 1;
                    acc.one_run.1 += u64::from(allowed - scored == 1);
                } else {
                    acc.ties += 1;
                }
            }
        }
        if !self.rows.is_empty() {
            bytes.extend(nl);
        }
        let mut rows = Vec::new();
        for ((season, league, team), a) in totals {
            if a.rs == 0 && a.ra == 0 {
                bad_lines.push(a.first_line);
                continue;
            }
            rows.push(TeamSeason {
                season,
                league,
                team,
                wins: a.wins,
                losses: a.losses,
                ties: a.ties,
                runs_scored: a.rs as f64,
                runs_allowed: a.ra as f64,
                games: a.games,
                one_run: Some(a.one_run),
                at: Location {
                    file: path.to_string(),
                    line: Some(a.first_line),
                    column: None,
                },
            });
        }
        GameExpect {
            bytes,
            rows,
            rejected_lines: bad_lines,
            unplayed,
        }
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn game_logs_aggregate_exactly(file in game_file()) {
        let (_f, path) = temp_file(b"");
        let want = file.expect(&path);
        std::fs::write(&path, &want.bytes).unwrap();
        let as_of = file.as_of.map(|d| jiff::civil::date(2021, 4, d as i8));
        let with_as_of = |skip_invalid| LoadOptions { as_of, ..options(skip_invalid) };
        let paths = [path.clone()];
        let skip = data::load(&paths, true, &with_as_of(true))
            .map_err(|e| TestCaseError::fail(format!("skip-invalid load failed: {e}")))?;
        prop_assert_eq!(&skip.rows, &want.rows);
        let lines: Vec<u64> = skip.rejected.iter().map(|r| r.at.line.unwrap_or(0)).collect();
        prop_assert_eq!(&lines, &want.rejected_lines, "rejections: {:#?}", skip.rejected);
        prop_assert_eq!(skip.unplayed_games, want.unplayed);
        // Every game is won by one side and lost by the other, or tied by both (teams set aside for
        // scoring nothing only tied).
        let sum = |f: fn(&TeamSeason) -> u64| skip.rows.iter().map(f).sum::<u64>();
        prop_assert_eq!(sum(|r| r.wins), sum(|r| r.losses));
        match data::load(&paths, true, &with_as_of(false)) {
            Ok(ds) => {
                prop_assert!(want.rejected_lines.is_empty());
                prop_assert_eq!(ds.rows, want.rows);
            }
            Err(DataError::Rejected(r)) => prop_assert_eq!(Some(&r), skip.rejected.first()),
            Err(e) => return Err(TestCaseError::fail(format!("unexpected error {e}"))),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Fitters on extreme but well-formed tables.

fn row(i: usize, wins: u64, losses: u64, ties: u64, rs: f64, ra: f64) -> TeamSeason {
    TeamSeason {
        season: 2020,
        league: None,
        team: format!("T{i}"),
        wins,
        losses,
        ties,
        runs_scored: rs,
        runs_allowed: ra,
        games: wins + losses + ties,
        one_run: None,
        at: Location {
            file: "generated".to_string(),
            line: Some(i as u64 + 2),
            column: None,
        },
    }
}

/// Records of one team: one-game, ordinary and very long seasons; ties now and then, or only ties.
fn record(all_ties: bool) -> impl Strategy<Value = (u64, u64, u64)> {
    prop_oneof![Just(1u64), 1u64..=200, Just(1_000_000u64)]
        .prop_flat_map(|g| (Just(g), 0..=g))
        .prop_flat_map(|(g, w)| {
            (
                Just(g),
                Just(w),
                prop_oneof![3 => Just(0u64), 1 => 0..=(g - w)],
            )
        })
        .prop_map(move |(g, w, t)| {
            if all_ties {
                (0, 0, g)
            } else {
                (w, g - w - t, t)
            }
        })
}

/// Runs at one of three scales (a few, a season's worth, 10^9), zero on one side now and then.
fn runs(scale: u8) -> impl Strategy<Value = (f64, f64)> {
    let side = move || -> BoxedStrategy<f64> {
        match scale {
            0 => (0u32..50).prop_map(f64::from).boxed(),
            1 => (300u32..1000).prop_map(f64::from).boxed(),
            _ => (700_000_000u64..1_300_000_000)
                .prop_map(|v| v as f64)
                .boxed(),
        }
    };
    (side(), side()).prop_map(|(rs, ra)| {
        if rs == 0.0 && ra == 0.0 {
            (rs, 1.0)
        } else {
            (rs, ra)
        }
    })
}

fn extreme_table() -> impl Strategy<Value = Vec<TeamSeason>> {
    (1usize..=12, 0u8..3, prop::bool::weighted(0.15)).prop_flat_map(|(n, scale, all_ties)| {
        prop::collection::vec((record(all_ties), runs(scale)), n).prop_map(|teams| {
            teams
                .into_iter()
                .enumerate()
                .map(|(i, ((w, l, t), (rs, ra)))| row(i, w, l, t, rs, ra))
                .collect()
        })
    })
}

/// The ends of the exponent bracket the solver searches (ln x in ±9.2, src/fit/solve.rs).
const BRACKET_ENDS: [f64; 2] = [1.0103e-4, 9897.0];

proptest! {
    #![proptest_config(config())]

    #[test]
    fn extreme_tables_fit_finitely_or_refuse(rows in extreme_table(), by_games in any::<bool>()) {
        let weighting = if by_games { Weighting::Games } else { Weighting::None };
        check_fits(&Table::new(&rows, TiePolicy::Half, weighting))?;
    }

    #[test]
    fn excluding_ties_keeps_fits_finite(rows in extreme_table()) {
        let mut ds = Dataset { rows, ..Dataset::default() };
        data::table::decided_rows(&mut ds, TiePolicy::Exclude, true).unwrap();
        prop_assert!(ds.rows.iter().all(|r| r.wins + r.losses > 0));
        if !ds.rows.is_empty() {
            check_fits(&Table::new(&ds.rows, TiePolicy::Exclude, Weighting::None))?;
        }
    }

    #[test]
    fn scoring_at_the_bracket_ends_is_finite(rows in extreme_table()) {
        let t = Table::new(&rows, TiePolicy::Half, Weighting::None);
        for x in BRACKET_ENDS {
            let m = loss::metrics(&t, ModelKind::Pythagorean, &[x], None);
            prop_assert!(finite_metrics(&m), "exponent {x}: {m:?}");
            for l in LOSSES {
                prop_assert!(loss::loss_value(&t, ModelKind::Pythagorean, &[x], l, None).is_finite());
            }
            if let Some(se) = stderr::std_errors(&t, ModelKind::Pythagorean, &[x]) {
                prop_assert!(se.binomial[0].is_finite() && se.corrected[0].is_finite(), "{se:?}");
            }
        }
    }

    /// Win records drawn exactly from a known exponent (a billion games a team, 10^9 runs) give that
    /// exponent back under every loss, from near the bracket's low end to far above common values.
    #[test]
    fn a_known_exponent_is_recovered(
        ln_x in (0.01f64).ln()..(1000.0f64).ln(),
        spread in prop::collection::vec(-1.0f64..1.0, 6..16),
    ) {
        let x = ln_x.exp();
        // Keep x·ln(RS/RA) within ±6 so that every win% stays informative (not 0 or 1).
        let reach = (6.0 / x).min(0.5);
        let g = 1_000_000_000u64;
        let rows: Vec<TeamSeason> = spread
            .iter()
            .enumerate()
            .map(|(i, s)| {
                let l = s * reach;
                let (rs, ra) = (1e9 * (l / 2.0).exp(), 1e9 * (-l / 2.0).exp());
                let p = 1.0 / (1.0 + (-x * (rs / ra).ln()).exp());
                let w = (g as f64 * p).round() as u64;
                row(i, w, g - w, 0, rs, ra)
            })
            .collect();
        prop_assume!(rows.iter().any(|r| r.runs_scored != r.runs_allowed));
        let t = Table::new(&rows, TiePolicy::Half, Weighting::None);
        for l in LOSSES {
            let f = fit::fit_model(&t, ModelKind::Pythagorean, l)
                .map_err(|e| TestCaseError::fail(format!("{l}: {e}")))?;
            let got = f.model.params[0];
            prop_assert!((got / x - 1.0).abs() < 1e-3, "{l}: fitted {got}, true {x}");
        }
    }

    /// The bracket search finds any interior minimum and refuses one beyond its reach.
    #[test]
    fn the_bracket_holds_interior_minima(m in -9.0f64..9.0, u0 in -8.0f64..8.0) {
        let f = |u: f64| (u - m) * (u - m);
        let (lo, hi, _) = solve::bracket(&f, u0).map_err(TestCaseError::fail)?;
        prop_assert!(lo < m && m < hi, "[{lo}, {hi}] misses {m}");
    }

    /// Past ln x = ±9.2 the search gives up, naming the direction.
    #[test]
    fn the_bracket_refuses_minima_beyond_its_ends(m in 9.4f64..60.0, sign in prop::bool::ANY, u0 in -3.0f64..3.0) {
        let m = if sign { m } else { -m };
        let f = |u: f64| (u - m) * (u - m);
        let err = solve::bracket(&f, u0).unwrap_err();
        prop_assert!(err.contains("keeps falling toward"), "{err}");
        let toward: f64 = err.split("toward ").nth(1).unwrap().split(';').next().unwrap().parse().unwrap();
        // e^±9.2, printed to four figures.
        prop_assert!(if sign { toward == 9.897e3 } else { toward == 1.010e-4 }, "{err}");
    }
}

#[test]
fn a_flat_loss_is_named_as_flat() {
    let err = solve::bracket(&|_| 0.25, 0.7).unwrap_err();
    assert!(err.contains("does not change"), "{err}");
}

#[test]
fn a_loss_that_flattens_at_the_edge_still_keeps_falling() {
    // Falls until u = 4, then flat: as a log-loss does once every prediction reaches 0 or 1.
    let err = solve::bracket(&|u: f64| (4.0 - u).max(0.0), 0.7).unwrap_err();
    assert!(err.contains("keeps falling toward"), "{err}");
}

/// Every team with more runs won every game: any larger exponent fits better.
#[test]
fn records_in_run_order_have_no_finite_exponent() {
    let rows = vec![
        row(0, 10, 0, 0, 90.0, 60.0),
        row(1, 0, 10, 0, 60.0, 90.0),
        row(2, 10, 0, 0, 75.0, 70.0),
    ];
    let t = Table::new(&rows, TiePolicy::Half, Weighting::None);
    let err = fit::fit_model(&t, ModelKind::Pythagorean, Loss::Logloss).unwrap_err();
    assert!(err.to_string().contains("keeps falling toward"), "{err}");
}

/// All ties: the best exponent is 0 (every team a .500 team), below the bracket.
#[test]
fn all_tie_seasons_have_no_positive_exponent() {
    let rows = vec![
        row(0, 0, 0, 10, 90.0, 60.0),
        row(1, 0, 0, 10, 60.0, 90.0),
        row(2, 0, 0, 10, 75.0, 70.0),
    ];
    let t = Table::new(&rows, TiePolicy::Half, Weighting::None);
    for l in LOSSES {
        let err = fit::fit_model(&t, ModelKind::Pythagorean, l).unwrap_err();
        let text = err.to_string();
        assert!(text.contains("keeps falling toward"), "{l}: {text}");
        let toward: f64 = text
            .split("toward ")
            .nth(1)
            .unwrap()
            .split(';')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert!(toward < 1e-3, "{l}: {text}");
    }
}

proptest! {
    #![proptest_config(config())]

    /// No control character or bidirectional override survives the escaping every message passes
    /// through, and text without them is left as it was.
    #[test]
    fn escaped_messages_hold_no_control_characters(s in any::<String>()) {
        let e = runcal::error::escape_controls(&s);
        let hostile = |c: char| c.is_control() || ('\u{202a}'..='\u{202e}').contains(&c) || ('\u{2066}'..='\u{2069}').contains(&c);
        prop_assert!(!e.chars().any(hostile), "{e:?}");
        if !s.chars().any(hostile) && !s.contains('\u{200e}') && !s.contains('\u{200f}') {
            prop_assert_eq!(e.as_ref(), s.as_str());
        }
    }

    /// The projection's quantile, exact or by the normal approximation, lies in [0, n] and never
    /// falls as the level rises, however long the season.
    #[test]
    fn projection_quantiles_are_ordered_and_bounded(
        n in prop_oneof![0u64..30_000, 30_000u64..1_000_000_000_000u64],
        a in 0.5f64..500.0,
        b in 0.5f64..500.0,
    ) {
        let lo = runcal::luck::beta_binomial_quantile(n, a, b, 0.1);
        let mid = runcal::luck::beta_binomial_quantile(n, a, b, 0.5);
        let hi = runcal::luck::beta_binomial_quantile(n, a, b, 0.9);
        prop_assert!(lo <= mid && mid <= hi && hi <= n, "{lo} {mid} {hi} of {n}");
    }
}
