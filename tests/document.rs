//! The weekly document (`runcal digest`): its numbers against two separate `runcal luck` runs, HTML
//! validity, hostile club names in HTML, Markdown and SVG, the stylesheet's contrast, bad options.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::path::Path;

use common::runcal;
use serde_json::Value;

const GAMES: &str = "demo-data/meridian-2026-games.csv";
const PROFILE: &str = "demo-data/meridian-profile.json";

fn json_of(args: &[&str]) -> Value {
    let out = runcal().args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn luck_at(date: &str) -> Value {
    json_of(&[
        "luck",
        GAMES,
        "--games",
        "--profile",
        PROFILE,
        "--as-of",
        date,
        "--format",
        "json",
    ])
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
    let d = json_of(&[
        "digest",
        GAMES,
        "--profile",
        PROFILE,
        "--as-of",
        "2026-07-15",
        "--format",
        "json",
    ]);
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
    assert!(movers.len() <= 6);
    assert_eq!(d["caution"], runcal::CAUTION);
}

#[test]
fn compare_to_picks_any_earlier_date() {
    let d = json_of(&[
        "digest",
        GAMES,
        "--profile",
        PROFILE,
        "--as-of",
        "2026-08-01",
        "--compare-to",
        "2026-06-01",
        "--format",
        "json",
    ]);
    assert_eq!(d["luck_before"], luck_at("2026-06-01"));
    assert_eq!(d["luck"], luck_at("2026-08-01"));
}

#[test]
fn a_first_week_has_no_comparison_and_says_so() {
    let out = runcal()
        .args([
            "digest",
            GAMES,
            "--profile",
            PROFILE,
            "--as-of",
            "2026-04-03",
            "--format",
            "markdown",
            "-o",
        ])
        .arg(tempfile::tempdir().unwrap().path().join("w.md"))
        .assert()
        .success();
    drop(out);
    let d = json_of(&[
        "digest",
        GAMES,
        "--profile",
        PROFILE,
        "--as-of",
        "2026-04-03",
        "--format",
        "json",
    ]);
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
    let out = runcal()
        .args([
            "digest",
            GAMES,
            "--profile",
            PROFILE,
            "--as-of",
            "2026-07-15",
        ])
        .output()
        .unwrap();
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

/// Hostile names for the clubs of a small game log.
const HOSTILE: [&str; 6] = [
    "<script>alert(1)</script>",
    "Ampersand & \"Quoted\" 'Single'",
    "Pipe | Club",
    "Back`tick`s *and* _marks_",
    "نادي الصقور",
    "🦊 Foxes",
];

fn hostile_log(dir: &Path) -> String {
    let mut w = csv::Writer::from_path(dir.join("hostile.csv")).unwrap();
    w.write_record(["date", "home", "away", "home_score", "away_score"])
        .unwrap();
    let mut day = 1;
    for round in 0..4 {
        for (i, home) in HOSTILE.iter().enumerate() {
            let away = HOSTILE[(i + 1 + round) % HOSTILE.len()];
            if *home == away {
                continue;
            }
            let (hs, aws) = (3 + (i + round) % 4, 2 + (i * 3 + round) % 5);
            let aws = if aws == hs { aws + 1 } else { aws };
            w.write_record([
                format!("2026-04-{day:02}"),
                home.to_string(),
                away.to_string(),
                hs.to_string(),
                aws.to_string(),
            ])
            .unwrap();
        }
        day += 4;
    }
    w.flush().unwrap();
    dir.join("hostile.csv").display().to_string()
}

fn digest_file(log: &str, out: &Path, format: &str) {
    runcal()
        .args([
            "digest",
            log,
            "--profile",
            PROFILE,
            "--as-of",
            "2026-04-15",
            "--format",
            format,
            "-o",
        ])
        .arg(out)
        .assert()
        .success();
}

#[test]
fn hostile_names_stay_text_in_html() {
    let dir = tempfile::tempdir().unwrap();
    let log = hostile_log(dir.path());
    let page = dir.path().join("w.html");
    digest_file(&log, &page, "html");
    let html = std::fs::read_to_string(&page).unwrap();
    let doc = scraper::Html::parse_document(&html);
    assert_eq!(doc.errors, Vec::<std::borrow::Cow<str>>::new());
    let sel = |s: &str| scraper::Selector::parse(s).unwrap();
    assert_eq!(doc.select(&sel("script")).count(), 0, "no script element");
    let mut names: Vec<String> = doc
        .select(&sel("#luck-table tbody th"))
        .map(|th| th.text().collect())
        .collect();
    names.sort();
    let mut expected: Vec<String> = HOSTILE.iter().map(|s| s.to_string()).collect();
    expected.sort();
    // Each name reads back exactly as written, once.
    assert_eq!(names, expected);
    // Right-to-left names are isolated from the text around them.
    assert!(html.contains("<bdi>نادي الصقور</bdi>"));
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
}

#[test]
fn hostile_names_stay_text_in_markdown_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    let log = hostile_log(dir.path());
    let md_path = dir.path().join("w.md");
    digest_file(&log, &md_path, "markdown");
    let md = std::fs::read_to_string(&md_path).unwrap();
    assert!(!md.contains("<script"), "no raw HTML");
    assert!(md.contains("&lt;script&gt;alert\\(1\\)") || md.contains("&lt;script&gt;alert(1)"));
    assert!(md.contains("Pipe \\| Club"));
    assert!(md.contains("Back\\`tick\\`s \\*and\\* \\_marks\\_"));
    // Every table row has as many unescaped pipes as its header row.
    let unescaped = |line: &str| {
        let b = line.as_bytes();
        (0..b.len())
            .filter(|&i| b[i] == b'|' && (i == 0 || b[i - 1] != b'\\'))
            .count()
    };
    let mut rows = 0;
    for block in md.split("\n\n") {
        let lines: Vec<&str> = block.lines().filter(|l| l.starts_with('|')).collect();
        if let Some(head) = lines.first() {
            for l in &lines {
                assert_eq!(unescaped(l), unescaped(head), "{l}");
                rows += 1;
            }
        }
    }
    assert!(rows > 3 * HOSTILE.len());
    // The charts beside it, referenced by name.
    for chart in ["w-luck.svg", "w-outlook.svg"] {
        assert!(md.contains(&format!("]({chart})")), "{chart} referenced");
        let svg = std::fs::read_to_string(dir.path().join(chart)).unwrap();
        assert!(!svg.contains("<script"), "{chart}");
        assert!(!svg.contains("& "), "{chart}: bare ampersand");
        assert!(svg.contains("runcal reports descriptive statistics."));
        assert!(svg.contains("games through 2026-04-15"));
    }
    let outlook = std::fs::read_to_string(dir.path().join("w-outlook.svg")).unwrap();
    assert!(outlook.contains("&lt;script&gt;"));
    assert!(outlook.contains("Ampersand &amp; &quot;Quoted&quot; &apos;Single&apos;"));
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
    let fit = json_of(&["fit", "demo-data/meridian-league.csv", "--format", "json"]);
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
