//! The era report as CSV: one row per window (the change test and the recommendation are in the
//! table and the JSON).

use super::EraReport;
use crate::error::Error;
use crate::report::csv::{cell, finish, safe, write_err};

const HEADER: [&str; 19] = [
    "windows_kind",
    "first_season",
    "last_season",
    "seasons",
    "team_seasons",
    "fitted",
    "runs_per_game",
    "exponent",
    "std_error",
    "std_error_binomial",
    "dispersion",
    "ci_low",
    "ci_high",
    "implied_exponent_history_z",
    "gap_history_z",
    "gap_history_z_se",
    "implied_exponent_published_z",
    "gap_published_z",
    "gap_published_z_se",
];

pub fn render(r: &EraReport) -> Result<Vec<u8>, Error> {
    let a = &r.analysis;
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(HEADER).map_err(write_err)?;
    for win in &a.windows {
        let f = win.fit.as_ref();
        let get = |pick: fn(&crate::eras::WindowFit) -> f64| cell(f.map(pick));
        let iv = f.and_then(|f| f.interval);
        w.write_record([
            safe(a.kind.name()).into_owned(),
            win.first.to_string(),
            win.last.to_string(),
            win.seasons.to_string(),
            win.rows.to_string(),
            f.is_some().to_string(),
            cell(Some(win.runs_per_game)),
            get(|f| f.exponent),
            get(|f| f.std_error),
            get(|f| f.std_error_binomial),
            get(|f| f.dispersion),
            cell(iv.map(|i| i.0)),
            cell(iv.map(|i| i.1)),
            get(|f| f.implied_history),
            get(|f| f.gap_history),
            get(|f| f.gap_history_se),
            get(|f| f.implied_published),
            get(|f| f.gap_published),
            get(|f| f.gap_published_se),
        ])
        .map_err(write_err)?;
    }
    finish(w)
}
