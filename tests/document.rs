//! The weekly document (`runcal digest`): its numbers against two separate `runcal luck` runs, HTML
//! validity, hostile club names in HTML, Markdown and SVG, the stylesheet's contrast, bad options.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use common::runcal;
use serde_json::Value;

const GAMES: &str = "demo-data/meridian-2026-games.csv";
const PROFILE: &str = "demo-data/meridian-profile.json";

/// `runcal digest` on the demo league as of `date`, with `extra` options.
fn digest(date: &str, extra: &[&str]) -> assert_cmd::Command {
    let mut c = runcal();
    c.args(["digest", GAMES, "--profile", PROFILE, "--as-of", date])
        .args(extra);
    c
}

fn json_of(mut cmd: assert_cmd::Command) -> Value {
    let out = cmd.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn luck_at(date: &str) -> Value {
    let mut c = runcal();
    c.args([
        "luck",
        GAMES,
        "--games",
        "--profile",
        PROFILE,
        "--as-of",
        date,
    ]);
    c.args(["--format", "json"]);
    json_of(c)
}

fn team<'a>(luck: &'a Value, name: &str) -> &'a Value {
    luck["teams"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["team"] == name)
        .unwrap_or_else(|| panic!("{name} missing"))
}

#[test]
fn week_over_week_equals_two_separate_luck_runs() {
    let d = json_of(digest("2026-07-15", &["--format", "json"]));
    assert_eq!(d["schema"], "runcal.digest/1");
    assert_eq!(d["compare_to"], "2026-07-08", "a week before by default");
    let now = luck_at("2026-07-15");
    let before = luck_at("2026-07-08");
    // The embedded reports are the luck command's own output at each date, byte for byte.
    assert_eq!(d["luck"], now);
    assert_eq!(d["luck_before"], before);
    let week = d["week"].as_array().unwrap();
    assert_eq!(week.len(), now["teams"].as_array().unwrap().len());
    for w in week {
        let name = w["team"].as_str().unwrap();
        let (a, b) = (team(&now, name), team(&before, name));
        let woe = &w["wins_over_expected"];
        let (gap_a, gap_b) = (&a["gap"]["luck_wins"], &b["gap"]["luck_wins"]);
        assert_eq!(&woe["after"], gap_a, "{name}");
        assert_eq!(&woe["before"], gap_b, "{name}");
        // Exact: the change is the difference of the two reported numbers.
        let diff = gap_a.as_f64().unwrap() - gap_b.as_f64().unwrap();
        assert_eq!(woe["change"].as_f64().unwrap(), diff, "{name}");
        let proj = &w["projected_wins"];
        assert_eq!(proj["after"], a["outlook"]["projected_wins"], "{name}");
        assert_eq!(proj["before"], b["outlook"]["projected_wins"], "{name}");
        assert_eq!(w["games_after"], a["evidence"]["games"]);
        assert_eq!(w["games_before"], b["evidence"]["games"]);
    }
    // Ordered by the change in wins over expected, largest gain first.
    let changes: Vec<f64> = week
        .iter()
        .map(|w| w["wins_over_expected"]["change"].as_f64().unwrap())
        .collect();
    assert!(changes.windows(2).all(|p| p[0] >= p[1]), "{changes:?}");
    // Movers: the largest absolute changes of each measure, at most three each.
    let movers = d["movers"].as_array().unwrap();
    let largest = changes.iter().map(|c| c.abs()).fold(0.0, f64::max);
    let first = movers
        .iter()
        .find(|m| m["measure"] == "wins_over_expected")
        .unwrap();
    assert_eq!(first["change"].as_f64().unwrap().abs(), largest);
    // Three measures: wins vs expected, projected wins, first-place chance.
    assert!(movers.len() <= 3 * runcal::digest::MOVERS_PER_MEASURE);
    assert_eq!(d["caution"], runcal::CAUTION);
}

#[test]
fn compare_to_picks_any_earlier_date() {
    let d = json_of(digest(
        "2026-08-01",
        &["--compare-to", "2026-06-01", "--format", "json"],
    ));
    assert_eq!(d["luck_before"], luck_at("2026-06-01"));
    assert_eq!(d["luck"], luck_at("2026-08-01"));
}

#[test]
fn a_first_week_has_no_comparison_and_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let md = dir.path().join("w.md");
    digest("2026-04-03", &["--format", "markdown", "-o"])
        .arg(&md)
        .assert()
        .success();
    let text = std::fs::read_to_string(&md).unwrap();
    assert!(
        text.contains("No games had been played by 2026-03-27"),
        "{text}"
    );
    let d = json_of(digest("2026-04-03", &["--format", "json"]));
    assert_eq!(d["luck_before"], Value::Null);
    assert!(
        d["week"]
            .as_array()
            .unwrap()
            .iter()
            .all(|w| w["wins_over_expected"].is_null())
    );
    assert_eq!(d["movers"], serde_json::json!([]));
}

#[test]
fn demo_html_parses_without_errors_and_is_self_contained() {
    let out = digest("2026-07-15", &[]).output().unwrap();
    assert!(out.status.success());
    let html = String::from_utf8(out.stdout).unwrap();
    let doc = scraper::Html::parse_document(&html);
    // html5ever records every parse error (unclosed or misnested tags, bad attributes): a broken
    // page has some, this one none.
    assert!(
        !scraper::Html::parse_document("<!DOCTYPE html><p><b>x</p></i>")
            .errors
            .is_empty()
    );
    assert_eq!(doc.errors, Vec::<std::borrow::Cow<str>>::new());
    let sel = |s: &str| scraper::Selector::parse(s).unwrap();
    assert_eq!(doc.select(&sel("script")).count(), 0);
    assert_eq!(doc.select(&sel("link")).count(), 0);
    assert_eq!(doc.select(&sel("style")).count(), 1);
    assert_eq!(doc.select(&sel("figure svg")).count(), 2);
    for attr in ["src", "href"] {
        assert_eq!(doc.select(&sel(&format!("[{attr}]"))).count(), 0, "{attr}");
    }
    assert!(!html.contains("url("), "no fetched resources in the styles");
    let caution: String = doc
        .select(&sel(".caution"))
        .next()
        .unwrap()
        .text()
        .collect();
    assert!(caution.contains(runcal::CAUTION));
    for section in [
        "week",
        "luck",
        "change",
        "outlook",
        "calibration",
        "methods",
    ] {
        assert_eq!(
            doc.select(&sel(&format!("h2#{section}"))).count(),
            1,
            "{section}"
        );
    }
    // The calibration names the model, the profile's data fingerprint, the game log's and the version.
    let facts: String = doc
        .select(&sel("dl.facts"))
        .next()
        .unwrap()
        .text()
        .collect();
    for needle in [
        "pythagorean, exponent 1.9242",
        "fnv1a64:4109a5fc71bcc009",
        "demo-data/meridian-2026-games.csv (fnv1a64:",
        "2026-07-15",
        "2026-07-08",
        env!("CARGO_PKG_VERSION"),
    ] {
        assert!(facts.contains(needle), "{needle} in {facts}");
    }
}

/// WCAG 2.1 relative luminance of an sRGB colour `#rrggbb`.
fn luminance(hex: &str) -> f64 {
    let c = |i: usize| {
        let v = f64::from(u8::from_str_radix(&hex[i..i + 2], 16).unwrap()) / 255.0;
        if v <= 0.04045 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * c(1) + 0.7152 * c(3) + 0.0722 * c(5)
}

fn contrast(a: &str, b: &str) -> f64 {
    let (la, lb) = (luminance(a), luminance(b));
    (la.max(lb) + 0.05) / (la.min(lb) + 0.05)
}

#[test]
fn stylesheet_colours_pass_wcag_aa() {
    // WCAG 2.1 definitions: white on black is 21:1, and #767676 on white is the lightest grey that
    // reaches 4.5:1 (a worked example the W3C's techniques cite).
    assert!((contrast("#ffffff", "#000000") - 21.0).abs() < 1e-9);
    assert!(contrast("#767676", "#ffffff") >= 4.5 && contrast("#777777", "#ffffff") < 4.5);
    let css = runcal::report::document::html::CSS;
    let var = |name: &str| {
        let at = css
            .find(&format!("--{name}:"))
            .unwrap_or_else(|| panic!("--{name}"));
        css[at..]
            .split(':')
            .nth(1)
            .unwrap()
            .split(';')
            .next()
            .unwrap()
            .trim()
            .to_string()
    };
    // Text on every background it is drawn on: 4.5:1 (success criterion 1.4.3, level AA).
    for (fg, bg) in [
        ("ink", "paper"),
        ("ink", "band"),
        ("muted", "paper"),
        ("muted", "band"),
        ("accent", "paper"),
        ("up", "paper"),
        ("up", "band"),
        ("down", "paper"),
        ("down", "band"),
        ("caution-ink", "caution-paper"),
    ] {
        let r = contrast(&var(fg), &var(bg));
        assert!(r >= 4.5, "--{fg} on --{bg}: {r:.2}:1");
    }
    // Rules and the caution's edge are graphics: 3:1 (criterion 1.4.11).
    for (fg, bg) in [("rule", "paper"), ("caution-edge", "caution-paper")] {
        let r = contrast(&var(fg), &var(bg));
        assert!(r >= 3.0, "--{fg} on --{bg}: {r:.2}:1");
    }
}

#[test]
fn bad_options_are_usage_errors() {
    let dir = tempfile::tempdir().unwrap();
    let base = ["digest", GAMES, "--profile", PROFILE];
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec!["--as-of", "2026-07-15", "--compare-to", "2026-07-15"],
            "must be earlier",
        ),
        (
            vec!["--as-of", "2026-07-15", "--compare-to", "2026-08-01"],
            "must be earlier",
        ),
        (
            vec!["--as-of", "2026-07-15", "--format", "markdown"],
            "--output",
        ),
        (
            vec!["--as-of", "2025-01-01"],
            "no games on or before 2025-01-01",
        ),
        (vec!["--as-of", "2026-02-30"], "ISO 8601"),
    ];
    for (extra, message) in cases {
        runcal()
            .args(base)
            .args(&extra)
            .assert()
            .code(2)
            .stderr(predicates::str::contains(message));
    }
    for input in ["-", "/dev/null"] {
        runcal()
            .args([
                "digest",
                input,
                "--profile",
                PROFILE,
                "--as-of",
                "2026-07-15",
            ])
            .assert()
            .code(2)
            .stderr(predicates::str::contains("regular file"));
    }
    runcal()
        .args(["digest"])
        .arg(dir.path())
        .args(["--profile", PROFILE, "--as-of", "2026-07-15"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("regular file"));
    // A named pipe could be read only once.
    let fifo = dir.path().join("games.fifo");
    if std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .is_ok_and(|s| s.success())
    {
        runcal()
            .args(["digest"])
            .arg(&fifo)
            .args(["--profile", PROFILE, "--as-of", "2026-07-15"])
            .assert()
            .code(2)
            .stderr(predicates::str::contains("regular file"));
    }
    // A game log with a header and no games: nothing to report, said so.
    let empty = dir.path().join("empty.csv");
    std::fs::write(&empty, "date,home,away,home_score,away_score\n").unwrap();
    runcal()
        .args(["digest"])
        .arg(&empty)
        .args(["--profile", PROFILE, "--as-of", "2026-07-15"])
        .assert()
        .code(2);
    // The document never replaces an input, the profile included.
    runcal()
        .args(base)
        .args(["--as-of", "2026-07-15", "-o", PROFILE])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("refusing"));
}

#[test]
fn caution_travels_with_every_output_of_luck_or_projections() {
    // JSON: a `caution` key right after the schema.
    let luck = luck_at("2026-07-15");
    assert_eq!(luck["caution"], runcal::CAUTION);
    let mut fit = runcal();
    fit.args(["fit", "demo-data/meridian-league.csv", "--format", "json"]);
    let fit = json_of(fit);
    assert_eq!(fit["caution"], runcal::CAUTION);
    // CSV: the first line on stderr, even with -q, and none in the CSV itself.
    for args in [
        vec![
            "luck",
            GAMES,
            "--games",
            "--profile",
            PROFILE,
            "--format",
            "csv",
            "-q",
        ],
        vec!["fit", "demo-data/meridian-league.csv", "--format", "csv"],
    ] {
        let out = runcal().args(&args).output().unwrap();
        assert!(out.status.success());
        let stderr = String::from_utf8(out.stderr).unwrap();
        assert_eq!(
            stderr.lines().next(),
            Some(format!("note: {}", runcal::CAUTION).as_str()),
            "{args:?}"
        );
        let csv = String::from_utf8(out.stdout).unwrap();
        assert!(!csv.contains("wagering"), "{args:?}");
    }
    // Table output keeps its own closing line; no stderr note there.
    let out = runcal()
        .args(["luck", GAMES, "--games", "--profile", PROFILE, "-q"])
        .output()
        .unwrap();
    assert!(out.stderr.is_empty());
}

/// `runcal outlook` on the demo log as of `date` with the demo divisions: team → chance of first.
fn outlook_first_place(date: &str) -> std::collections::BTreeMap<String, f64> {
    let mut c = runcal();
    c.args(["outlook", GAMES, "--profile", PROFILE, "--as-of", date])
        .args([
            "--groups",
            "demo-data/meridian-divisions.csv",
            "--format",
            "json",
        ]);
    let v = json_of(c);
    v["clubs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["team"].as_str().unwrap().to_string(),
                c["chance_first"].as_f64().unwrap(),
            )
        })
        .collect()
}

#[test]
fn first_place_chances_and_their_change_equal_two_separate_outlook_runs() {
    let d = json_of(digest(
        "2026-07-15",
        &[
            "--groups",
            "demo-data/meridian-divisions.csv",
            "--format",
            "json",
        ],
    ));
    let (now, then) = (
        outlook_first_place("2026-07-15"),
        outlook_first_place("2026-07-08"),
    );
    assert_eq!(now.len(), 14);
    for o in d["outlook"].as_array().unwrap() {
        let team = o["team"].as_str().unwrap();
        assert_eq!(
            o["first_place_chance"].as_f64().unwrap(),
            now[team],
            "{team}"
        );
    }
    for w in d["week"].as_array().unwrap() {
        let team = w["team"].as_str().unwrap();
        let c = &w["first_place_chance"];
        assert_eq!(c["before"].as_f64().unwrap(), then[team], "{team}");
        assert_eq!(c["after"].as_f64().unwrap(), now[team], "{team}");
    }
    // Every group's chances sum to one (ties for first share the credit).
    let groups =
        std::fs::read_to_string(common::repo().join("demo-data/meridian-divisions.csv")).unwrap();
    let mut sums: std::collections::BTreeMap<String, f64> = Default::default();
    for line in groups.lines().skip(1) {
        let (team, group) = line.split_once(',').unwrap();
        *sums.entry(group.to_string()).or_default() += now[team];
    }
    assert!(sums.len() >= 2, "{sums:?}");
    for (g, s) in &sums {
        assert!((s - 1.0).abs() < 1e-9, "group {g} sums to {s}");
    }
    // Changes of five points or more are movers, named in the page's words.
    let movers: Vec<&Value> = d["movers"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|m| m["measure"] == "first_place_chance")
        .collect();
    assert!(!movers.is_empty());
    assert!(
        movers
            .iter()
            .all(|m| m["change"].as_f64().unwrap().abs() >= 0.05)
    );
    let page = digest(
        "2026-07-15",
        &["--groups", "demo-data/meridian-divisions.csv"],
    )
    .output()
    .unwrap();
    let page = String::from_utf8(page.stdout).unwrap();
    assert!(
        page.contains("first-place chance rose by"),
        "mover sentence"
    );
    assert!(page.contains("first-place chance"), "outlook column");
}

#[test]
fn a_bad_groups_file_is_an_error_naming_it() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("groups.csv");
    common::mkfifo(&fifo);
    let out = digest("2026-07-15", &["--groups", fifo.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("groups.csv"), "{err}");
    let empty = dir.path().join("empty.csv");
    std::fs::write(&empty, "").unwrap();
    let out = digest("2026-07-15", &["--groups", empty.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = digest("2026-07-15", &["--simulations", "0"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    // A groups file that leaves clubs out (and names a hostile one) is an error, as in `outlook`.
    let partial = dir.path().join("partial.csv");
    std::fs::write(&partial, "team,group\n<script>x</script>,A\n").unwrap();
    let out = digest("2026-07-15", &["--groups", partial.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("has no group in"), "{err}");
}
