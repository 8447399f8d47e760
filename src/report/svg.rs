//! SVG charts (plotters). Drawing only: the curves and points arrive computed.

use plotters::prelude::*;

use crate::error::Error;
use crate::luck::{LuckLine, TeamLine};

fn draw_err(path: &str) -> impl Fn(String) -> Error + '_ {
    move |msg| Error::Write {
        file: path.to_string(),
        source: std::io::Error::other(msg),
    }
}

/// A loss curve over one parameter, with the optimum.
#[derive(Debug, Clone)]
pub struct LossCurve {
    pub param: String,
    pub loss: String,
    pub points: Vec<(f64, f64)>,
    pub optimum: (f64, f64),
}

fn bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
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

/// Render to a string first, then write atomically.
fn save(
    path: &str,
    width: u32,
    height: u32,
    draw: impl FnOnce(DrawingArea<SVGBackend, plotters::coord::Shift>) -> Result<(), String>,
) -> Result<(), Error> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE)
            .map_err(|e| draw_err(path)(e.to_string()))?;
        draw(root.clone()).map_err(draw_err(path))?;
        root.present().map_err(|e| draw_err(path)(e.to_string()))?;
    }
    crate::output::write_atomic(path, svg.as_bytes())
}

/// Loss against the parameter (left) and a histogram of residual wins (right).
pub fn write_fit_plot(path: &str, curve: &LossCurve, teams: &[TeamLine]) -> Result<(), Error> {
    save(path, 1100, 480, |root| {
        let (left, right) = root.split_horizontally(550);
        let e = |e: DrawingAreaErrorKind<std::io::Error>| e.to_string();
        let (x0, x1) = bounds(curve.points.iter().map(|p| p.0));
        let (y0, y1) = bounds(curve.points.iter().map(|p| p.1));
        let mut chart = ChartBuilder::on(&left)
            .caption(
                format!("{} against {}", curve.loss, curve.param),
                ("sans-serif", 20),
            )
            .margin(15)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc(curve.param.as_str())
            .y_desc(curve.loss.as_str())
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

        let residuals: Vec<f64> = teams.iter().map(|t| t.luck_wins).collect();
        let (r0, r1) = bounds(residuals.iter().copied());
        let bins = 24usize;
        let width = (r1 - r0) / bins as f64;
        let mut counts = vec![0u32; bins];
        for r in &residuals {
            let b = (((r - r0) / width) as usize).min(bins - 1);
            counts[b] += 1;
        }
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
    })
}

/// Actual against expected win% with the identity line; the most extreme teams labelled.
pub fn write_luck_plot(path: &str, lines: &[LuckLine]) -> Result<(), Error> {
    save(path, 760, 680, |root| {
        let e = |e: DrawingAreaErrorKind<std::io::Error>| e.to_string();
        let all = lines
            .iter()
            .flat_map(|l| [l.line.win_pct, l.line.expected_win_pct]);
        let (lo, hi) = bounds(all);
        let mut chart = ChartBuilder::on(&root)
            .caption("win% against expected win%", ("sans-serif", 22))
            .margin(20)
            .x_label_area_size(45)
            .y_label_area_size(60)
            .build_cartesian_2d(lo..hi, lo..hi)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc("expected win%")
            .y_desc("actual win%")
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(
                [(lo, lo), (hi, hi)],
                BLACK.mix(0.5).stroke_width(1),
            ))
            .map_err(e)?
            .label("actual = expected")
            .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], BLACK));
        chart
            .draw_series(lines.iter().map(|l| {
                Circle::new(
                    (l.line.expected_win_pct, l.line.win_pct),
                    4,
                    BLUE.mix(0.7).filled(),
                )
            }))
            .map_err(e)?;
        // Lines arrive sorted by luck: label the three most ahead and the three most behind.
        let n = lines.len();
        let labelled: Vec<&LuckLine> = if n <= 6 {
            lines.iter().collect()
        } else {
            lines[..3].iter().chain(&lines[n - 3..]).collect()
        };
        chart
            .draw_series(labelled.iter().map(|l| {
                Text::new(
                    format!(
                        "{} {} ({:+.1})",
                        l.line.team, l.line.season, l.line.luck_wins
                    ),
                    (l.line.expected_win_pct, l.line.win_pct),
                    ("sans-serif", 13).into_font(),
                )
            }))
            .map_err(e)?;
        chart
            .configure_series_labels()
            .border_style(BLACK)
            .background_style(WHITE)
            .position(SeriesLabelPosition::UpperLeft)
            .draw()
            .map_err(e)?;
        Ok(())
    })
}
