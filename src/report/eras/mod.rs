//! `runcal eras`: the era-drift report in every format. The numbers arrive computed in
//! `eras::EraAnalysis`; these files lay them out.

pub mod csv;
pub mod json;
pub mod svg;
pub mod table;

use super::Report;
use crate::eras::EraAnalysis;
use crate::error::Error;

/// The result of `runcal eras`.
#[derive(Debug, Clone)]
pub struct EraReport {
    pub rows_used: usize,
    pub rows_rejected: usize,
    /// The inputs were game logs aggregated into team-seasons.
    pub from_games: bool,
    pub analysis: EraAnalysis,
    pub unit: crate::report::Unit,
}

impl Report for EraReport {
    fn table(&self) -> String {
        table::render(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        crate::report::json::to_bytes(&json::render(self))
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::render(self)
    }
    fn svg(&self) -> Option<Result<Vec<u8>, Error>> {
        Some(svg::chart(self))
    }
}

/// A season span as the trade writes it: 1996–2006, or 2006 alone.
pub fn span(first: i32, last: i32) -> String {
    if first == last {
        first.to_string()
    } else {
        format!("{first}–{last}")
    }
}

/// A p-value for reading: three decimals, or "< 0.001".
pub fn p_value(p: f64) -> String {
    if !p.is_finite() {
        "-".to_string()
    } else if p < 0.001 {
        "< 0.001".to_string()
    } else {
        format!("= {p:.3}")
    }
}
