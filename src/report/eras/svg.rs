//! The era chart: the window exponent with its 95% band and PythagenPat's implied exponents (top), the
//! windows' runs per game (bottom). Drawing only; every point arrives computed.

use plotters::prelude::*;

use super::{EraReport, span};
use crate::eras;
use crate::error::Error;
use crate::report::svg::{Frame, bounds, render};

const BAND: RGBColor = RGBColor(158, 202, 225);
const EXPONENT: RGBColor = RGBColor(8, 81, 156);
const IMPLIED_HISTORY: RGBColor = RGBColor(217, 95, 2);
const IMPLIED_PUBLISHED: RGBColor = RGBColor(117, 112, 179);
const RUNS: RGBColor = RGBColor(64, 64, 64);

type Area<'a> = DrawingArea<SVGBackend<'a>, plotters::coord::Shift>;

fn text_err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// An axis range at least `span` wide, about the same centre.
fn widen((lo, hi): (f64, f64), span: f64) -> (f64, f64) {
    if hi - lo >= span {
        (lo, hi)
    } else {
        let mid = (lo + hi) / 2.0;
        (mid - span / 2.0, mid + span / 2.0)
    }
}

/// The chart as an SVG document.
pub fn chart(r: &EraReport) -> Result<Vec<u8>, Error> {
    let a = &r.analysis;
    // Points sit at each window's last season: the value at Y describes the window ending in Y.
    let fitted: Vec<(f64, &eras::WindowFit)> = a
        .windows
        .iter()
        .filter_map(|w| w.fit.as_ref().map(|f| (f64::from(w.last), f)))
        .collect();
    let runs: Vec<(f64, f64)> = a
        .windows
        .iter()
        .map(|w| (f64::from(w.last), w.runs_per_game))
        .collect();
    let band = |f: &eras::WindowFit| f.interval.unwrap_or(f.normal_interval);
    let band_name = match a.ci_level {
        Some(level) => format!("{:.0}% bootstrap interval", level * 100.0),
        None => "95%, ±1.96 standard errors".to_string(),
    };
    let title = format!(
        "Pythagorean exponent, {} {}-season windows, {}",
        a.kind.name(),
        a.window,
        span(a.history.first, a.history.last)
    );
    let frame = Frame {
        title,
        subtitle: format!(
            "{} team-seasons; each point is the window ending that season; band: {band_name}; \
             neighbouring windows share seasons",
            r.rows_used
        ),
    };
    let svg = render(1000, 680, &frame, |root: Area| {
        let (top, bottom) = root.split_vertically(430);
        // At least a season either side, so a single window still has an axis.
        let (x0, x1) = widen(bounds(runs.iter().map(|p| p.0)), 2.0);
        // Tick labels are whole seasons: never more labels than seasons on the axis.
        let x_labels = ((x1 - x0).floor() as usize + 1).clamp(2, 12);
        let (y0, y1) = bounds(fitted.iter().flat_map(|(_, f)| {
            let (lo, hi) = band(f);
            [lo, hi, f.implied_history, f.implied_published]
        }));
        // Headroom above the data for the legend, so that it covers no line.
        let y1 = y1 + 0.35 * (y1 - y0);
        let mut chart = ChartBuilder::on(&top)
            .margin_left(20)
            .margin_right(30)
            .margin_top(10)
            .x_label_area_size(36)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(text_err)?;
        chart
            .configure_mesh()
            .x_labels(x_labels)
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| format!("{v:.2}"))
            .y_desc("exponent")
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(text_err)?;
        let mut outline: Vec<(f64, f64)> = fitted.iter().map(|(x, f)| (*x, band(f).1)).collect();
        outline.extend(fitted.iter().rev().map(|(x, f)| (*x, band(f).0)));
        chart
            .draw_series(std::iter::once(Polygon::new(
                outline,
                BAND.mix(0.6).filled(),
            )))
            .map_err(text_err)?
            .label(format!("window exponent, band: {band_name}"))
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], BAND.filled()));
        chart
            .draw_series(LineSeries::new(
                fitted.iter().map(|(x, f)| (*x, f.exponent)),
                EXPONENT.stroke_width(2),
            ))
            .map_err(text_err)?
            .label("window exponent (log-loss fit)")
            .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], EXPONENT.stroke_width(2)));
        // Few windows: mark each one, its band as a bar, so that a single window is still visible.
        if fitted.len() <= 30 {
            chart
                .draw_series(fitted.iter().map(|(x, f)| {
                    let (lo, hi) = band(f);
                    PathElement::new([(*x, lo), (*x, hi)], BAND.stroke_width(6))
                }))
                .map_err(text_err)?;
            chart
                .draw_series(
                    fitted
                        .iter()
                        .map(|(x, f)| Circle::new((*x, f.exponent), 3, EXPONENT.filled())),
                )
                .map_err(text_err)?;
        }
        for (colour, label, pick) in [
            (
                IMPLIED_HISTORY,
                format!(
                    "implied by PythagenPat, z {:.3} (whole history)",
                    a.history.z
                ),
                (|f: &eras::WindowFit| f.implied_history) as fn(&eras::WindowFit) -> f64,
            ),
            (
                IMPLIED_PUBLISHED,
                format!(
                    "implied by PythagenPat, z {} (published)",
                    eras::PUBLISHED_Z
                ),
                |f: &eras::WindowFit| f.implied_published,
            ),
        ] {
            chart
                .draw_series(DashedLineSeries::new(
                    fitted.iter().map(|(x, f)| (*x, pick(f))),
                    8,
                    5,
                    colour.stroke_width(2),
                ))
                .map_err(text_err)?
                .label(label)
                .legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 20, y)], colour.stroke_width(2))
                });
            if fitted.len() <= 30 {
                chart
                    .draw_series(
                        fitted
                            .iter()
                            .map(|(x, f)| Circle::new((*x, pick(f)), 3, colour.filled())),
                    )
                    .map_err(text_err)?;
            }
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .border_style(BLACK.mix(0.4))
            .background_style(WHITE.mix(0.9))
            .label_font(("sans-serif", 14))
            .draw()
            .map_err(text_err)?;

        // At least one run of range, so that a few hundredths do not look like a change of era.
        let (r0, r1) = widen(bounds(runs.iter().map(|p| p.1)), 1.0);
        let mut lower = ChartBuilder::on(&bottom)
            .margin_left(20)
            .margin_right(30)
            .margin_top(10)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, r0..r1)
            .map_err(text_err)?;
        lower
            .configure_mesh()
            .x_labels(x_labels)
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| format!("{v:.2}"))
            .x_desc("last season of the window")
            .y_desc(format!("{} per game (both teams)", r.unit.plural()))
            .light_line_style(WHITE.mix(0.0))
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(text_err)?;
        lower
            .draw_series(LineSeries::new(runs.iter().copied(), RUNS.stroke_width(2)))
            .map_err(text_err)?;
        if runs.len() <= 30 {
            lower
                .draw_series(runs.iter().map(|&p| Circle::new(p, 3, RUNS.filled())))
                .map_err(text_err)?;
        }
        Ok(())
    })?;
    Ok(svg.into_bytes())
}
