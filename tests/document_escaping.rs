//! The weekly document's escaping: hostile club names (`<script>`, `&`, quotes, pipes, backticks,
//! right-to-left, emoji) stay text in HTML, Markdown and SVG.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::path::Path;

use common::runcal;

const PROFILE: &str = "demo-data/meridian-profile.json";

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
