//! Rendering only: plain result structs in, bytes out. One file per format; nothing here computes a
//! statistic.

pub mod csv;
pub mod document;
pub mod eras;
pub mod grid;
pub mod json;
pub mod luck;
pub mod outlook;
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

/// A command's result that every format can print. Each method renders bytes; none computes.
pub trait Report {
    fn table(&self) -> String;
    fn json(&self) -> Result<Vec<u8>, Error>;
    fn csv(&self) -> Result<Vec<u8>, Error>;
    /// The report's chart (`--plot`), for reports that have one.
    fn svg(&self) -> Option<Result<Vec<u8>, Error>> {
        None
    }
}

/// Render a report in the chosen format.
pub fn render(report: &dyn Report, format: Format) -> Result<Vec<u8>, Error> {
    match format {
        Format::Table => Ok(report.table().into_bytes()),
        Format::Json => report.json(),
        Format::Csv => report.csv(),
    }
}

pub use crate::luck::TeamLine;
pub use grid::Grid;

/// "1 team-season", "60 team-seasons".
pub fn count(n: usize, one: &str, many: &str) -> String {
    if n == 1 {
        format!("1 {one}")
    } else {
        format!("{n} {many}")
    }
}

/// How far the games run: "games through 2026-08-18 (as of 2026-09-30)" when the last game counted
/// is earlier than the cut asked for, "games through 2026-08-18" otherwise; `None` with neither.
pub fn games_through(
    last_played: Option<crate::data::gamelog::Date>,
    as_of: Option<crate::data::gamelog::Date>,
) -> Option<String> {
    match (last_played, as_of) {
        (Some(l), Some(a)) if l < a => Some(format!("games through {l} (as of {a})")),
        (Some(l), _) => Some(format!("games through {l}")),
        (None, Some(a)) => Some(format!("no games on or before {a}")),
        (None, None) => None,
    }
}

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

/// What a score counts, for the words of tables, charts and the document (`--unit`); JSON keys
/// and CSV headers keep `runs` whatever the unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Unit {
    #[default]
    Runs,
    Points,
    Goals,
}

impl Unit {
    /// `runs`, `points`, `goals`.
    pub fn plural(self) -> &'static str {
        match self {
            Unit::Runs => "runs",
            Unit::Points => "points",
            Unit::Goals => "goals",
        }
    }
    /// `run`, `point`, `goal` (as in run differential, one-run games, run-based).
    pub fn singular(self) -> &'static str {
        match self {
            Unit::Runs => "run",
            Unit::Points => "point",
            Unit::Goals => "goal",
        }
    }
}

/// The result of `runcal fit`.
#[derive(Debug, Clone)]
pub struct FitReport {
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub loss: crate::fit::Loss,
    pub seasons: Option<(i32, i32)>,
    pub grouped: bool,
    pub calibration: crate::fit::calibrate::Calibration,
    pub unit: Unit,
}

impl Report for FitReport {
    fn table(&self) -> String {
        table::fit(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        json::to_bytes(&json::fit(self))
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::fit(self)
    }
    fn svg(&self) -> Option<Result<Vec<u8>, Error>> {
        let c = &self.calibration;
        c.chart.as_ref().map(|chart| {
            let frame = svg::Frame::fit(c.teams_kind.name(), chart, self.rows_used, self.seasons);
            svg::fit_chart(chart, &frame)
        })
    }
}

pub use crate::applied::ModelSource;

/// The result of `runcal luck`.
#[derive(Debug, Clone)]
pub struct LuckReport {
    pub model: crate::model::Model,
    pub source: ModelSource,
    pub rows_used: usize,
    pub rows_rejected: usize,
    pub as_of: Option<crate::data::gamelog::Date>,
    /// The date of the last game counted (game logs).
    pub last_played: Option<crate::data::gamelog::Date>,
    /// Set when the season is over: the season length every team has played.
    pub finished: Option<u64>,
    /// What the whole ranking shares, before `--top` kept its extremes.
    pub ranked: crate::luck::Ranked,
    /// The luck z's noise model.
    pub noise: crate::luck::Noise,
    /// Season length, run-based regression constant and range level of the projections.
    pub outlook: Option<crate::luck::Outlook>,
    pub teams: Vec<crate::luck::LuckLine>,
    /// What the Holm adjustment ran over: the whole ranking, before `--top`.
    pub family: crate::luck::Family,
    /// Positions in `teams` that the chart labels (`--plot`); `None` without a chart.
    pub chart_labels: Option<Vec<usize>>,
    pub unit: Unit,
}

impl Report for LuckReport {
    fn table(&self) -> String {
        luck::table(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        luck::json(self)
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        luck::csv(self)
    }
    fn svg(&self) -> Option<Result<Vec<u8>, Error>> {
        self.chart_labels.as_ref().map(|labels| {
            let frame = svg::Frame::luck(&self.model, &self.source, self.as_of);
            svg::luck_chart(&self.teams, labels, &frame, self.unit).map(String::into_bytes)
        })
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
    /// How far the second trails the best, in the loss.
    pub margin: Option<f64>,
    /// Paired margins, folds won and whether the data can tell the models apart.
    pub comparison: Option<crate::fit::Comparison>,
}

impl Report for BacktestReport {
    fn table(&self) -> String {
        table::backtest(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        json::to_bytes(&json::backtest(self))
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
    fn json(&self) -> Result<Vec<u8>, Error> {
        json::to_bytes(&json::check(self))
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::check(self)
    }
}

/// The team-seasons of `runcal simulate` (the game log is streamed by the command itself).
#[derive(Debug, Clone)]
pub struct SimulateReport<'a> {
    pub design: &'a crate::simulate::Design,
    pub rows: Vec<crate::simulate::SeasonRow>,
}

impl Report for SimulateReport<'_> {
    fn table(&self) -> String {
        table::simulate(self)
    }
    fn json(&self) -> Result<Vec<u8>, Error> {
        json::to_bytes(&json::simulate(self))
    }
    fn csv(&self) -> Result<Vec<u8>, Error> {
        csv::simulate(self)
    }
}
