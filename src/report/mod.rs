//! Rendering only: plain result structs in, bytes out. One file per format; nothing here computes a
//! statistic.

pub mod csv;
pub mod json;
pub mod svg;
pub mod table;

use crate::error::Error;

/// Output format.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Table,
    Json,
    Csv,
}

/// A command's result that every format can print.
pub trait Report {
    fn table(&self) -> String;
    fn json(&self) -> serde_json::Value;
    fn csv(&self) -> Result<Vec<u8>, Error>;
}

/// Render a report in the chosen format.
pub fn render(report: &dyn Report, format: Format) -> Result<Vec<u8>, Error> {
    Ok(match format {
        Format::Table => report.table().into_bytes(),
        Format::Json => {
            let mut s = serde_json::to_string_pretty(&report.json())
                .map_err(|e| Error::Usage(e.to_string()))?;
            s.push('\n');
            s.into_bytes()
        }
        Format::Csv => report.csv()?,
    })
}

pub use crate::luck::TeamLine;

/// Records as "W-L" or "W-L-T".
pub fn record(w: u64, l: u64, t: u64) -> String {
    if t > 0 {
        format!("{w}-{l}-{t}")
    } else {
        format!("{w}-{l}")
    }
}

/// Win% the way the trade writes it: .543 (1.000 for perfect records).
pub fn pct(p: f64) -> String {
    let s = format!("{p:.3}");
    s.strip_prefix('0').map(str::to_string).unwrap_or(s)
}

/// A number with a fixed count of significant decimals, `-` for non-finite values.
pub fn num(v: f64, decimals: usize) -> String {
    if v.is_finite() {
        format!("{v:.decimals$}")
    } else {
        "-".to_string()
    }
}

/// Signed with an explicit +.
pub fn signed(v: f64, decimals: usize) -> String {
    if v.is_finite() {
        format!("{v:+.decimals$}")
    } else {
        "-".to_string()
    }
}

/// The result of `runcal fit`.
#[derive(Debug, Clone)]
pub struct FitReport {
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub loss: crate::fit::Loss,
    pub seasons: Option<(i32, i32)>,
    /// Fitted models (ranked by the loss), then unfitted references (ranked).
    pub fits: Vec<crate::fit::ModelFit>,
    /// Groups with fewer rows than `--min-group`, with their row counts.
    pub too_small: Vec<(crate::fit::Group, usize)>,
    pub grouped: bool,
    /// Every team-season under the primary fit (each group's own fit with `--by`).
    pub teams: Vec<TeamLine>,
    /// The model the team lines use.
    pub primary: Option<crate::model::Model>,
    pub top: usize,
}

impl Report for FitReport {
    fn table(&self) -> String {
        table::fit(self)
    }
    fn json(&self) -> serde_json::Value {
        json::fit(self)
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::fit(self)
    }
}

/// Where the luck report's model came from.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelSource {
    Profile(String),
    Fitted,
    /// Given on the command line (`--exponent`).
    Given,
}

/// The result of `runcal luck`.
#[derive(Debug, Clone)]
pub struct LuckReport {
    pub model: crate::model::Model,
    pub source: ModelSource,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub as_of: Option<crate::data::gamelog::Date>,
    pub season_games: Option<u64>,
    pub regression_games: Option<f64>,
    pub teams: Vec<crate::luck::LuckLine>,
}

impl Report for LuckReport {
    fn table(&self) -> String {
        table::luck(self)
    }
    fn json(&self) -> serde_json::Value {
        json::luck(self)
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::luck(self)
    }
}

/// The result of `runcal backtest`, ranked best first.
#[derive(Debug, Clone)]
pub struct BacktestReport {
    pub scheme: crate::fit::backtest::Scheme,
    pub loss: crate::fit::Loss,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub scores: Vec<crate::fit::backtest::CandidateScore>,
}

impl Report for BacktestReport {
    fn table(&self) -> String {
        table::backtest(self)
    }
    fn json(&self) -> serde_json::Value {
        json::backtest(self)
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::backtest(self)
    }
}

/// The result of `runcal check`.
#[derive(Debug, Clone)]
pub struct CheckReport {
    pub profile: String,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub passed: bool,
    pub verdict: String,
    pub rules: Vec<crate::gate::Rule>,
}

impl Report for CheckReport {
    fn table(&self) -> String {
        table::check(self)
    }
    fn json(&self) -> serde_json::Value {
        json::check(self)
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::check(self)
    }
}
