//! SVG charts (plotters). Drawing only: the curves and points arrive computed.

use plotters::prelude::*;

use crate::error::Error;
use crate::fit::calibrate::FitChart;
use crate::luck::LuckLine;

fn draw_err(msg: String) -> Error {
    Error::Serialize(format!("chart: {msg}"))
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

/// Draw into an SVG document in memory.
fn render(
    width: u32,
    height: u32,
    draw: impl FnOnce(DrawingArea<SVGBackend, plotters::coord::Shift>) -> Result<(), String>,
) -> Result<Vec<u8>, Error> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| draw_err(e.to_string()))?;
        draw(root.clone()).map_err(draw_err)?;
        root.present().map_err(|e| draw_err(e.to_string()))?;
    }
    Ok(svg.into_bytes())
}

/// Loss against the parameter (left) and a histogram of residual wins (right).
pub fn fit_chart(data: &FitChart) -> Result<Vec<u8>, Error> {
    let curve = &data.curve;
    render(1100, 480, |root| {
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

/// Actual against expected win% with the identity line; the teams at `labels` named.
pub fn luck_chart(lines: &[LuckLine], labels: &[usize]) -> Result<Vec<u8>, Error> {
    render(760, 680, |root| {
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
        let labelled: Vec<&LuckLine> = labels.iter().filter_map(|&i| lines.get(i)).collect();
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
