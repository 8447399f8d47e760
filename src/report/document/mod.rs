//! The weekly document, laid out once. Its sections, tables, charts and sentences are written here
//! against [`Markup`]; HTML and Markdown each supply the primitives (headings, paragraphs, tables,
//! figures) and their own escaping. Everything arrives computed in a [`Digest`].

pub mod html;
pub mod json;
pub mod markdown;

use super::outlook::percent;
use super::svg::{self, Frame, OutlookBar};
use super::{Grid, num, record, signed};
use crate::digest::{Change, Digest, Measure};
use crate::error::Error;

/// A piece of running text: plain words, or a club's name (kept apart from the text around it, so
/// a right-to-left name cannot reorder the sentence).
#[derive(Debug, Clone, PartialEq)]
pub enum Span {
    Text(String),
    Name(String),
}

fn text(s: impl Into<String>) -> Span {
    Span::Text(s.into())
}

/// A chart: its short name (Markdown writes it to `STEM-NAME.svg`), the SVG and a caption.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    pub name: &'static str,
    pub svg: String,
    pub caption: String,
}

/// What a markup format supplies. The layout calls these in reading order.
pub trait Markup {
    fn title(&mut self, title: &str, lede: &str);
    fn heading(&mut self, id: &str, text: &str);
    fn paragraph(&mut self, spans: &[Span]);
    fn list(&mut self, items: &[Vec<Span>]);
    /// Name–value pairs.
    fn facts(&mut self, facts: &[(&str, String)]);
    /// A table; `id` names it for links (and tests).
    fn table(&mut self, id: &str, caption: &str, grid: &Grid);
    fn figure(&mut self, chart: &Chart);
    fn caution(&mut self, text: &str);
    fn footer(&mut self, text: &str);
}

/// The document as bytes, with any chart files it refers to (name, bytes).
#[derive(Debug, Clone, PartialEq)]
pub struct Rendered {
    pub main: Vec<u8>,
    pub files: Vec<(String, Vec<u8>)>,
}

/// The title: the league the clubs share, when they share one.
fn title_of(d: &Digest) -> String {
    let mut leagues = d.current.lines.iter().map(|l| l.line.league.as_deref());
    let through = format!("games through {}", d.current.as_of);
    match leagues.next() {
        Some(Some(first)) if leagues.all(|l| l == Some(first)) => {
            format!("{first}: luck and outlook, {through}")
        }
        _ => format!("Luck and outlook, {through}"),
    }
}

fn calibration_facts(d: &Digest, unit: super::Unit) -> Vec<(&'static str, String)> {
    let c = &d.calibration;
    let mut facts = vec![
        ("model", super::table::model_label(&c.model)),
        (
            "calibration",
            format!(
                "{} (fitted on seasons {}–{}, data fingerprint {}, written by runcal {})",
                c.profile,
                c.fitted_seasons[0],
                c.fitted_seasons[1],
                c.fitted_fingerprint,
                c.profile_version
            ),
        ),
    ];
    for s in &d.sources {
        facts.push(("game log", format!("{} ({})", s.path, s.fingerprint)));
    }
    facts.push(("games through", d.current.as_of.to_string()));
    facts.push(("compared with", d.compare_to.to_string()));
    facts.push(("season length", format!("{} games", c.season_games)));
    facts.push((
        "noise model",
        format!(
            "{}, dispersion {} ({})",
            d.current.settings.noise.model,
            num(d.current.settings.noise.dispersion, 3),
            d.current.settings.noise.source.describe()
        ),
    ));
    if let Some(o) = d.current.settings.outlook {
        facts.push((
            "regression toward .500",
            format!(
                "{} games (of the {}-based win%)",
                num(o.regression_games, 1),
                unit.singular()
            ),
        ));
    }
    facts.push(("runcal version", d.runcal_version.to_string()));
    facts
}

fn mover_sentences(d: &Digest) -> Vec<Vec<Span>> {
    d.movers
        .iter()
        .map(|m| {
            let c = &m.change;
            // The tables write wins vs expected with its sign, projected wins without, and the
            // first-place chance as a percentage (its change in percentage points).
            let (what, value): (&str, fn(f64) -> String) = match m.measure {
                Measure::WinsOverExpected => ("wins vs expected", |v| signed(v, 1)),
                Measure::ProjectedWins => ("projected wins", |v| num(v, 1)),
                Measure::FirstPlace => ("first-place chance", percent),
            };
            let by = match m.measure {
                Measure::FirstPlace => format!("{} points", num(100.0 * c.change.abs(), 1)),
                _ => num(c.change.abs(), 1),
            };
            let verb = if c.change > 0.0 { "rose" } else { "fell" };
            vec![
                Span::Name(m.club.team.clone()),
                text(format!(
                    ": {what} {verb} by {by} (from {} to {}).",
                    value(c.before),
                    value(c.after)
                )),
            ]
        })
        .collect()
}

/// Then, now and the change; `value` writes then and now the way the luck table does.
fn change_cells(c: Option<Change>, value: fn(f64) -> String) -> [String; 3] {
    match c {
        Some(c) => [value(c.before), value(c.after), signed(c.change, 1)],
        None => ["-".into(), "-".into(), "-".into()],
    }
}

fn week_grid(d: &Digest) -> Grid {
    Grid {
        header: Grid::names(&[
            "season",
            "league",
            "team",
            "games then",
            "games now",
            "wins vs expected then",
            "wins vs expected now",
            "change in wins vs expected",
            "projected wins then",
            "projected wins now",
            "change in projection",
            "first-place chance then",
            "first-place chance now",
            "change in first-place chance (points)",
        ]),
        rows: d
            .changes
            .iter()
            .map(|c| {
                let mut row = vec![
                    c.club.season.to_string(),
                    c.club.league.clone().unwrap_or_else(|| "-".into()),
                    c.club.team.clone(),
                    c.games_before.to_string(),
                    c.games_after.to_string(),
                ];
                row.extend(change_cells(c.wins_over_expected, |v| signed(v, 1)));
                row.extend(change_cells(c.projected_wins, |v| num(v, 1)));
                row.extend(match c.first_place {
                    Some(f) => [
                        percent(f.before),
                        percent(f.after),
                        signed(100.0 * f.change, 1),
                    ],
                    None => ["-".into(), "-".into(), "-".into()],
                });
                row
            })
            .collect(),
        text: Grid::names(&["season", "league", "team"]),
        fold: Grid::names(&["season", "league"]),
    }
}

fn outlook_grid(d: &Digest) -> Grid {
    Grid {
        header: Grid::names(&[
            "season",
            "league",
            "team",
            "record",
            "games left",
            "projected wins",
            "80% range",
            "first-place chance",
        ]),
        rows: d
            .outlook
            .iter()
            .map(|o| {
                vec![
                    o.club.season.to_string(),
                    o.club.league.clone().unwrap_or_else(|| "-".into()),
                    o.club.team.clone(),
                    record(o.wins, o.losses, o.ties),
                    o.remaining.to_string(),
                    num(o.projected_wins, 1),
                    format!("{}–{}", num(o.range.0, 0), num(o.range.1, 0)),
                    o.first_place.map_or("-".to_string(), percent),
                ]
            })
            .collect(),
        text: Grid::names(&["season", "league", "team"]),
        fold: Grid::names(&["season", "league"]),
    }
}

/// The document's charts, drawn from the digest.
pub fn charts(d: &Digest, unit: super::Unit) -> Result<Vec<Chart>, Error> {
    let subtitle = super::table::model_label(&d.calibration.model);
    let luck = svg::luck_chart(
        &d.current.lines,
        &d.luck_labels,
        &Frame {
            title: format!("Wins against scoring, games through {}", d.current.as_of),
            subtitle: subtitle.clone(),
        },
        unit,
    )?;
    let mut out = vec![Chart {
        name: "luck",
        svg: luck,
        caption: format!(
            "Each dot is a club: actual win% against the win% its {} predict. Clubs above the line have won more than their scoring predicts; the labels give wins vs expected.",
            unit.plural()
        ),
    }];
    if !d.outlook.is_empty() {
        let bars: Vec<OutlookBar> = d
            .outlook
            .iter()
            .map(|o| OutlookBar {
                team: o.club.team.clone(),
                projected_wins: o.projected_wins,
                range: o.range,
            })
            .collect();
        let frame = Frame {
            title: format!("Projected final wins, games through {}", d.current.as_of),
            subtitle: format!("{subtitle}; {}-game season", d.calibration.season_games),
        };
        out.push(Chart {
            name: "outlook",
            svg: svg::outlook_chart(&bars, &frame)?,
            caption: "Each row is a club: the dot is its projected final wins, the bar the range that holds the final total four times in five.".to_string(),
        });
    }
    Ok(out)
}

/// The methods note; `{many}` and `{one}` stand for the unit's words (runs, run).
const METHODS: &[&str] = &[
    "Expected win% comes from each club's {many} scored and allowed under the saved calibration (the model and parameters named below, fitted on the seasons it names). Wins vs expected is actual wins (ties as half) minus games decided times expected win%.",
    "The gap in SD divides wins vs expected by its noise, the square root of dispersion × games decided × p̂(1 − p̂): win records scatter around their scoring with less than coin-flip variance, and the calibration's dispersion says how much less. A club 2 SD or more from its scoring is marked in the luck table, and called beyond chance when its p-value, adjusted by Holm's method over every club ranked, stays small. Over a short stretch most gaps are noise.",
    "The outlook adds to the wins so far the remaining games times the {one}-based win% regressed toward .500 by the calibration's regression games; its range comes from a beta-binomial distribution with the same centre, and the luck table gives the probability the range actually holds.",
    "The first-place chance is the share of 10,000 simulated rest-of-seasons (the simulation of runcal outlook: each club's {one}-based strength drawn from its posterior, log5 matchups over the games left in the log, the league's home edge) in which the club finishes first in its group, ties sharing the credit. The projected wins and their range above come from the simpler projection of the luck table, which ignores who is left to play.",
    "Week-over-week columns repeat the same calculation with only the games played on or before the comparison date; nothing is stored between weeks.",
];

/// Lay the whole document out on one markup format.
pub fn lay_out(d: &Digest, charts: &[Chart], unit: super::Unit, m: &mut dyn Markup) {
    m.title(
        &title_of(d),
        &format!(
            "Compared with {}; calibration {}.",
            d.compare_to,
            super::table::model_label(&d.calibration.model)
        ),
    );
    m.caution(d.caution);

    m.heading("week", "This week");
    match &d.previous {
        None => m.paragraph(&[text(format!(
            "No games had been played by {}, so there is no week-over-week change yet.",
            d.compare_to
        ))]),
        Some(_) if d.movers.is_empty() => m.paragraph(&[text(format!(
            "No club's wins vs expected or projection moved by {} win or more since {}.",
            num(crate::digest::SMALLEST_MOVE * 2.0, 1),
            d.compare_to
        ))]),
        Some(_) => {
            m.paragraph(&[text(format!("The biggest changes since {}:", d.compare_to))]);
            m.list(&mover_sentences(d));
        }
    }

    m.heading("luck", "Luck table");
    m.table(
        "luck-table",
        "Clubs ordered by wins vs expected: most ahead of their scoring first.",
        &super::luck::grid(&luck_report(d, &d.current, unit)),
    );
    if let Some(c) = charts.iter().find(|c| c.name == "luck") {
        m.figure(c);
    }

    m.heading("change", "Week over week");
    m.table(
        "change-table",
        &format!(
            "Then: games through {}; now: games through {}. Ordered by the change in wins vs expected.",
            d.compare_to, d.current.as_of
        ),
        &week_grid(d),
    );

    m.heading("outlook", "Rest-of-season outlook");
    if d.outlook.is_empty() {
        m.paragraph(&[text(
            "No projection: the calibration gives no season length.",
        )]);
    } else {
        m.table(
            "outlook-table",
            "Projected final wins, most first, with the 80% range.",
            &outlook_grid(d),
        );
        if let Some(c) = charts.iter().find(|c| c.name == "outlook") {
            m.figure(c);
        }
    }

    m.heading("calibration", "Calibration used");
    m.facts(
        &calibration_facts(d, unit)
            .iter()
            .map(|(k, v)| (*k, v.clone()))
            .collect::<Vec<_>>(),
    );

    m.heading("methods", "Methods");
    for p in METHODS {
        let p = p
            .replace("{many}", unit.plural())
            .replace("{one}", unit.singular());
        m.paragraph(&[text(p)]);
    }
    m.footer(&format!(
        "Made by runcal {} from {} club-seasons ({} rows rejected).",
        d.runcal_version, d.current.rows_used, d.current.rows_rejected
    ));
}

/// The document's formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DocFormat {
    Html,
    Markdown,
    Json,
}

/// A snapshot as the luck report it equals.
fn luck_report(d: &Digest, s: &crate::digest::Snapshot, unit: super::Unit) -> super::LuckReport {
    super::LuckReport {
        model: d.calibration.model.clone(),
        source: super::ModelSource::Profile(d.calibration.profile.clone()),
        rows_used: s.rows_used,
        rows_rejected: s.rows_rejected,
        as_of: Some(s.as_of),
        last_played: s.last_played,
        finished: s.settings.finished,
        ranked: s.ranked,
        noise: s.settings.noise,
        outlook: s.settings.outlook,
        teams: s.lines.clone(),
        // The document ranks every club: the family is the lines themselves.
        family: crate::luck::Family::over(&s.lines),
        chart_labels: None,
        unit,
    }
}

/// Render the document. Markdown's chart files are named after `stem` (the document's file name
/// without its extension) and returned beside it.
pub fn render(
    d: &Digest,
    format: DocFormat,
    stem: &str,
    unit: super::Unit,
) -> Result<Rendered, Error> {
    match format {
        DocFormat::Json => {
            let now = luck_report(d, &d.current, unit);
            let before = d.previous.as_ref().map(|s| luck_report(d, s, unit));
            Ok(Rendered {
                main: super::json::to_bytes(&json::digest(d, &now, before.as_ref()))?,
                files: Vec::new(),
            })
        }
        DocFormat::Html => {
            let mut page = html::Page::new();
            lay_out(d, &charts(d, unit)?, unit, &mut page);
            Ok(Rendered {
                main: page.finish(),
                files: Vec::new(),
            })
        }
        DocFormat::Markdown => {
            let mut doc = markdown::Document::new(stem);
            lay_out(d, &charts(d, unit)?, unit, &mut doc);
            let (main, files) = doc.finish();
            Ok(Rendered { main, files })
        }
    }
}
