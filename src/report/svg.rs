//! SVG charts (plotters). Drawing only: the curves and points arrive computed.

use plotters::prelude::*;

use crate::error::Error;
use crate::fit::calibrate::FitChart;
use crate::luck::LuckLine;
use plotters::style::text_anchor::{HPos, Pos, VPos};

fn draw_err(msg: String) -> Error {
    Error::Serialize(format!("chart: {msg}"))
}

pub(crate) fn bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.05).max(1e-9);
    (lo - pad, hi + pad)
}

/// What every chart says around its drawing: a title, a second line naming the calibration and the
/// date, and the caution as a footnote.
#[derive(Debug, Clone, PartialEq)]
pub struct Frame {
    pub title: String,
    pub subtitle: String,
}

impl Frame {
    /// The luck chart's frame: the date the games run through and the calibration applied.
    pub fn luck(
        model: &crate::model::Model,
        source: &super::ModelSource,
        as_of: Option<crate::data::gamelog::Date>,
    ) -> Frame {
        let source = source.short();
        Frame {
            title: match as_of {
                Some(d) => format!("Wins against scoring, games through {d}"),
                None => "Wins against scoring".to_string(),
            },
            subtitle: format!("{} ({source})", super::table::model_label(model)),
        }
    }

    /// The fit chart's frame: the model, its optimum and the data it was fitted on.
    pub fn fit(model: &str, chart: &FitChart, rows: usize, seasons: Option<(i32, i32)>) -> Frame {
        let seasons = match seasons {
            Some((a, b)) if a == b => format!(", season {a}"),
            Some((a, b)) => format!(", seasons {a}–{b}"),
            None => String::new(),
        };
        let group = chart
            .group
            .as_ref()
            .map_or(String::new(), |g| format!(" (group {g})"));
        Frame {
            title: format!("Fit of {model} by {}{group}", chart.curve.loss),
            subtitle: format!(
                "{} {:.4} at the optimum; {rows} team-seasons{seasons}",
                chart.curve.param, chart.curve.optimum.0
            ),
        }
    }
}

const TITLE_HEIGHT: u32 = 58;
const FOOTNOTE_LINE: u32 = 15;
/// Characters per footnote line at the footnote's size, for a chart of `width` pixels.
fn footnote_chars(width: u32) -> usize {
    (width as usize / 7).max(40)
}

/// Text as a chart shows it: control characters (which XML forbids) become U+FFFD.
pub fn visible(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { '\u{fffd}' } else { c })
        .collect()
}

/// A name isolated from the text around it, so a right-to-left name cannot reorder its label.
pub fn isolated(name: &str) -> String {
    format!("\u{2068}{}\u{2069}", visible(name))
}

/// Words wrapped into lines of at most `width` characters (a longer word stands alone).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    for word in text.split_whitespace() {
        match lines.last_mut() {
            Some(l) if l.chars().count() + 1 + word.chars().count() <= width => {
                l.push(' ');
                l.push_str(word);
            }
            _ => lines.push(word.to_string()),
        }
    }
    lines
}

/// Draw a framed chart into an SVG string.
pub fn render(
    width: u32,
    height: u32,
    frame: &Frame,
    draw: impl FnOnce(DrawingArea<SVGBackend, plotters::coord::Shift>) -> Result<(), String>,
) -> Result<String, Error> {
    let fail = draw_err;
    let note = wrap(crate::CAUTION, footnote_chars(width));
    let foot = FOOTNOTE_LINE * note.len() as u32 + 10;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height + TITLE_HEIGHT + foot))
            .into_drawing_area();
        let e = |e: DrawingAreaErrorKind<std::io::Error>| fail(e.to_string());
        root.fill(&WHITE).map_err(e)?;
        let (top, rest) = root.split_vertically(TITLE_HEIGHT);
        let (body, bottom) = rest.split_vertically(height);
        let ink = RGBColor(0x1a, 0x1a, 0x1a);
        let grey = RGBColor(0x4a, 0x4a, 0x4a);
        top.draw_text(
            &visible(&frame.title),
            &("sans-serif", 18)
                .into_font()
                .style(FontStyle::Bold)
                .color(&ink),
            (14, 10),
        )
        .map_err(e)?;
        top.draw_text(
            &visible(&frame.subtitle),
            &("sans-serif", 14).into_font().color(&grey),
            (14, 36),
        )
        .map_err(e)?;
        for (i, line) in note.iter().enumerate() {
            bottom
                .draw_text(
                    line,
                    &("sans-serif", 13).into_font().color(&grey),
                    (14, 4 + FOOTNOTE_LINE as i32 * i as i32),
                )
                .map_err(e)?;
        }
        draw(body).map_err(fail)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}

/// Decimals for tick labels over `lo..hi`: plotters draws about ten ticks on a round step, so the
/// labels need the step's first significant digit (a range of 0.0009 gets 4 decimals).
pub fn tick_decimals(lo: f64, hi: f64) -> usize {
    let span = (hi - lo).abs();
    if !(span.is_finite() && span > 0.0) {
        return 2;
    }
    let step = span / 10.0;
    (-step.log10().floor()).clamp(0.0, 12.0) as usize
}

/// Loss against the parameter (left) and a histogram of residual wins (right).
pub fn fit_chart(data: &FitChart, frame: &Frame) -> Result<Vec<u8>, Error> {
    let curve = &data.curve;
    let svg = render(1100, 480, frame, |root| {
        let (left, right) = root.split_horizontally(550);
        let e = |e: DrawingAreaErrorKind<std::io::Error>| e.to_string();
        let (x0, x1) = bounds(curve.points.iter().map(|p| p.0));
        let (y0, y1) = bounds(curve.points.iter().map(|p| p.1));
        let mut chart = ChartBuilder::on(&left)
            .caption(
                match &data.group {
                    Some(g) => format!("{} against {} (group {g})", curve.loss, curve.param),
                    None => format!("{} against {}", curve.loss, curve.param),
                },
                ("sans-serif", 20),
            )
            .margin(15)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(e)?;
        // Tick labels as fixed decimals enough to tell neighbouring ticks apart over the range shown.
        let (dx, dy) = (tick_decimals(x0, x1), tick_decimals(y0, y1));
        chart
            .configure_mesh()
            .x_desc(curve.param.as_str())
            .y_desc(curve.loss.as_str())
            .x_label_formatter(&|v| format!("{v:.dx$}"))
            .y_label_formatter(&|v| format!("{v:.dy$}"))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(
                curve.points.iter().copied(),
                BLUE.stroke_width(2),
            ))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Circle::new(curve.optimum, 6, RED.filled())))
            .map_err(e)?
            .label(format!("optimum {:.4}", curve.optimum.0))
            .legend(|(x, y)| Circle::new((x, y), 5, RED.filled()));
        chart
            .configure_series_labels()
            .border_style(BLACK)
            .background_style(WHITE)
            .draw()
            .map_err(e)?;

        let h = &data.residuals;
        let (r0, width) = (h.start, h.width);
        let r1 = r0 + width * h.counts.len() as f64;
        let counts = &h.counts;
        let top = counts.iter().copied().max().unwrap_or(1).max(1);
        let mut hist = ChartBuilder::on(&right)
            .caption(
                "wins above expected (actual − expected)",
                ("sans-serif", 20),
            )
            .margin(15)
            .x_label_area_size(40)
            .y_label_area_size(50)
            .build_cartesian_2d(r0..r1, 0u32..top + top / 10 + 1)
            .map_err(e)?;
        hist.configure_mesh()
            .x_label_formatter(&|v| super::signed(*v, 1))
            .x_desc("wins")
            .y_desc("team-seasons")
            .draw()
            .map_err(e)?;
        hist.draw_series(counts.iter().enumerate().map(|(i, &c)| {
            let a = r0 + i as f64 * width;
            Rectangle::new([(a, 0), (a + width, c)], BLUE.mix(0.5).filled())
        }))
        .map_err(e)?;
        Ok(())
    })?;
    Ok(svg.into_bytes())
}

/// Actual against expected win% with the identity line; the teams at `labels` named.
pub fn luck_chart(
    lines: &[LuckLine],
    labels: &[usize],
    frame: &Frame,
    unit: super::Unit,
) -> Result<String, Error> {
    render(480, 470, frame, |root| {
        let e = |e: DrawingAreaErrorKind<std::io::Error>| e.to_string();
        let all = lines
            .iter()
            .flat_map(|l| [l.line.win_pct, l.line.expected_win_pct]);
        let (lo, hi) = bounds(all);
        let mut chart = ChartBuilder::on(&root)
            .margin(16)
            .x_label_area_size(48)
            .y_label_area_size(64)
            .build_cartesian_2d(lo..hi, lo..hi)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| super::pct(*v))
            .y_label_formatter(&|v| super::pct(*v))
            .label_style(("sans-serif", 16))
            .x_desc(format!("expected win% (from {})", unit.plural()))
            .y_desc(format!(
                "actual win% (above line: ahead of {})",
                unit.plural()
            ))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(
                [(lo, lo), (hi, hi)],
                RGBColor(0x59, 0x59, 0x59).stroke_width(1),
            ))
            .map_err(e)?;
        chart
            .draw_series(
                lines.iter().map(|l| {
                    Circle::new((l.line.expected_win_pct, l.line.win_pct), 5, POINT.filled())
                }),
            )
            .map_err(e)?;
        let labelled: Vec<&LuckLine> = labels.iter().filter_map(|&i| lines.get(i)).collect();
        let mid = (lo + hi) / 2.0;
        chart
            .draw_series(labelled.iter().map(|l| {
                // Labels point inward, so that none runs off the plot's edge.
                let (h, dx) = if l.line.expected_win_pct > mid {
                    (HPos::Right, -9)
                } else {
                    (HPos::Left, 9)
                };
                let style = ("sans-serif", 15)
                    .into_font()
                    .into_text_style(&root)
                    .pos(Pos::new(h, VPos::Center));
                EmptyElement::at((l.line.expected_win_pct, l.line.win_pct))
                    + Text::new(
                        format!(
                            "{} ({})",
                            isolated(&l.line.team),
                            super::signed(l.line.luck_wins, 1)
                        ),
                        (dx, 0),
                        style,
                    )
            }))
            .map_err(e)?;
        Ok(())
    })
}

/// The points' colour: 7:1 against white (WCAG AA asks 3:1 for graphics).
const POINT: RGBColor = RGBColor(0x1f, 0x4e, 0x9a);

/// The ranges' colour: 4:1 against white, lighter than the points drawn on them.
const RANGE: RGBColor = RGBColor(0x5b, 0x7f, 0xb8);

/// One club's projected final wins and 80% range, in the order given (most wins first).
#[derive(Debug, Clone, PartialEq)]
pub struct OutlookBar {
    pub team: String,
    pub projected_wins: f64,
    pub range: (f64, f64),
}

/// Projected final wins with their ranges, one row per club.
pub fn outlook_chart(bars: &[OutlookBar], frame: &Frame) -> Result<String, Error> {
    let rows = bars.len().max(1) as u32;
    render(480, 70 + 30 * rows, frame, |root| {
        let e = |e: DrawingAreaErrorKind<std::io::Error>| e.to_string();
        let (lo, hi) = bounds(bars.iter().flat_map(|b| [b.range.0, b.range.1]));
        let n = bars.len() as f64;
        let mut chart = ChartBuilder::on(&root)
            .margin(16)
            .x_label_area_size(48)
            .y_label_area_size(175)
            .build_cartesian_2d(lo.floor()..hi.ceil(), -0.5..n - 0.5)
            .map_err(e)?;
        let name_at = |v: &f64| {
            let i = v.round();
            if (v - i).abs() > 1e-6 || i < 0.0 {
                return String::new();
            }
            bars.get((n - 1.0 - i) as usize)
                .map(|b| isolated(&b.team))
                .unwrap_or_default()
        };
        chart
            .configure_mesh()
            .disable_y_mesh()
            .y_labels(bars.len().max(1))
            .y_label_formatter(&name_at)
            .x_label_formatter(&|v| super::num(*v, 0))
            .label_style(("sans-serif", 16))
            .x_desc("final wins: projected (dot), 80% range (bar)")
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(e)?;
        // Row i counts from the top, so the club with the most projected wins leads.
        let y = |i: usize| n - 1.0 - i as f64;
        chart
            .draw_series(bars.iter().enumerate().map(|(i, b)| {
                PathElement::new(
                    [(b.range.0, y(i)), (b.range.1, y(i))],
                    RANGE.stroke_width(6),
                )
            }))
            .map_err(e)?;
        chart
            .draw_series(
                bars.iter()
                    .enumerate()
                    .map(|(i, b)| Circle::new((b.projected_wins, y(i)), 6, POINT.filled())),
            )
            .map_err(e)?;
        Ok(())
    })
}
