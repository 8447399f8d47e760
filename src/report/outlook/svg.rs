//! The outlook chart: one row per club, the share of simulated seasons ending at each win total as
//! bars, the 10th–90th percentile range as a line and the median as a dot. Drawing only.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::OutlookReport;
use crate::error::Error;

/// Colours of the groups, in order (distinct in print and for the common colour-vision deficiencies).
const GROUP_COLOURS: [RGBColor; 6] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
    RGBColor(230, 159, 0),
];

const ROW: u32 = 34;
const TOP: u32 = 96;
const BOTTOM: u32 = 70;
const WIDTH: u32 = 1000;

/// Control characters would make the SVG invalid XML; plotters escapes the markup characters.
fn printable(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { '\u{fffd}' } else { c })
        .collect()
}

/// Break a long note into lines of at most `width` characters.
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = vec![String::new()];
    for word in text.split_whitespace() {
        let last = lines.last_mut().map_or(0, |l| l.chars().count());
        if last > 0 && last + 1 + word.chars().count() > width {
            lines.push(String::new());
        }
        if let Some(l) = lines.last_mut() {
            if !l.is_empty() {
                l.push(' ');
            }
            l.push_str(word);
        }
    }
    lines
}

/// 10000 as "10,000".
fn thousands(v: u64) -> String {
    let digits = v.to_string();
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// Render the chart as SVG text.
pub fn render(r: &OutlookReport) -> Result<String, Error> {
    let clubs: Vec<_> = r.clubs().collect();
    let n = clubs.len().max(1);
    // The axis spans every win total some simulated season reached.
    let reached = |c: &&crate::outlook::ClubOutlook| {
        let first = c.distribution.iter().position(|&s| s > 0.0).unwrap_or(0);
        let last = c.distribution.iter().rposition(|&s| s > 0.0).unwrap_or(0);
        (c.wins + first as u64, c.wins + last as u64)
    };
    let lo = clubs.iter().map(|c| reached(c).0).min().unwrap_or(0);
    let hi = clubs.iter().map(|c| reached(c).1).max().unwrap_or(1);
    let target = r.outlook.settings.target_wins;
    let x0 = lo.min(target.unwrap_or(lo)).saturating_sub(1) as f64 - 0.5;
    let x1 = hi.max(target.unwrap_or(hi)) as f64 + 1.5;
    let key = "Bars: share of simulated seasons ending with that many wins. Line: 10th to 90th \
percentile; dot: median. First: chance of finishing first in the group (ties share the credit).";
    let notes: Vec<String> = wrap(key, 120)
        .into_iter()
        .chain(wrap(crate::outlook::CAUTION, 120))
        .collect();
    let bottom = BOTTOM + 17 * notes.len() as u32;
    // Bars are scaled by the tallest share of all clubs, so that rows compare.
    let tallest = clubs
        .iter()
        .flat_map(|c| c.distribution.iter().copied())
        .fold(0.0f64, f64::max)
        .max(1e-12);
    let height = TOP + bottom + ROW * n as u32;
    let groups: Vec<&str> = r.outlook.groups.iter().map(|g| g.name.as_str()).collect();
    let colour = |group: &str| {
        let i = groups.iter().position(|g| *g == group).unwrap_or(0);
        GROUP_COLOURS[i % GROUP_COLOURS.len()]
    };
    let mut svg = String::new();
    let fail = |e: String| Error::Write {
        file: "outlook chart".to_string(),
        source: std::io::Error::other(e),
    };
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
        let e = |e: DrawingAreaErrorKind<std::io::Error>| fail(e.to_string());
        root.fill(&WHITE).map_err(e)?;
        let title = format!(
            "Final wins: {} simulated seasons of the {}",
            thousands(r.outlook.settings.simulations),
            r.cut()
        );
        root.draw(&Text::new(
            printable(&title),
            (20, 18),
            ("sans-serif", 22).into_font(),
        ))
        .map_err(e)?;
        let draw = if r.outlook.settings.draw_strength {
            "strengths drawn from their posteriors"
        } else {
            "strengths held fixed (chances overconfident)"
        };
        let target_note = target.map_or(String::new(), |t| format!("; red line: {t} wins"));
        let sub = format!(
            "{} ({}); home sides win {}; {draw}{target_note}",
            super::model_label(&r.model),
            super::source_text(&r.source),
            super::pct(r.outlook.home_win_pct)
        );
        root.draw(&Text::new(
            printable(&sub),
            (20, 48),
            ("sans-serif", 15).into_font().color(&BLACK.mix(0.7)),
        ))
        .map_err(e)?;
        let (plot, foot) = root.split_vertically(height - bottom + 40);
        let mut chart = ChartBuilder::on(&plot)
            .margin_top(TOP as i32 - 20)
            .margin_right(30)
            .x_label_area_size(40)
            .y_label_area_size(300)
            .build_cartesian_2d(x0..x1, 0.0..n as f64)
            .map_err(e)?;
        chart
            .configure_mesh()
            .disable_y_mesh()
            .y_labels(0)
            .x_desc("final wins")
            .x_label_formatter(&|v| format!("{v:.0}"))
            .light_line_style(BLACK.mix(0.06))
            .draw()
            .map_err(e)?;
        for (i, c) in clubs.iter().enumerate() {
            let base = (n - 1 - i) as f64 + 0.12;
            let col = colour(&c.group);
            let bars = c.distribution.iter().enumerate().filter(|(_, s)| **s > 0.0);
            chart
                .draw_series(bars.map(|(j, &share)| {
                    let w = (c.wins + j as u64) as f64;
                    let top = base + 0.78 * share / tallest;
                    Rectangle::new([(w - 0.45, base), (w + 0.45, top)], col.mix(0.55).filled())
                }))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(PathElement::new(
                    [(c.low.wins as f64, base), (c.high.wins as f64, base)],
                    BLACK.stroke_width(3),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Circle::new(
                    (c.median.wins as f64, base),
                    4,
                    BLACK.filled(),
                )))
                .map_err(e)?;
            let (_, y) = chart.backend_coord(&(x0, base + 0.3));
            let group = if groups.len() > 1 {
                format!("{}, ", c.group)
            } else {
                String::new()
            };
            let first = match c.chance_first {
                p if p > 0.0 && p < 0.005 => "<1%".to_string(),
                p => format!("{:.0}%", 100.0 * p),
            };
            let label = format!("{}  ({group}first {first})", c.team);
            plot.draw(&Text::new(
                printable(&label),
                (300 - 10, y),
                ("sans-serif", 14)
                    .into_font()
                    .color(&col)
                    .pos(Pos::new(HPos::Right, VPos::Center)),
            ))
            .map_err(e)?;
        }
        if let Some(t) = target {
            chart
                .draw_series(std::iter::once(PathElement::new(
                    [(t as f64, 0.0), (t as f64, n as f64)],
                    RED.mix(0.7).stroke_width(2),
                )))
                .map_err(e)?;
        }
        for (k, line) in notes.iter().enumerate() {
            foot.draw(&Text::new(
                line.clone(),
                (20, 10 + 17 * k as i32),
                ("sans-serif", 13).into_font().color(&BLACK.mix(0.75)),
            ))
            .map_err(e)?;
        }
        root.present().map_err(e)?;
    }
    Ok(svg)
}
