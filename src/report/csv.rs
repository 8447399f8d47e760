//! CSV printers. Text cells that a spreadsheet would run as a formula are neutralised.

use std::borrow::Cow;

use super::{FitReport, TeamLine};
use crate::error::Error;

/// Prefix a text cell that starts like a formula (`=`, `+`, `-`, `@`, tab, CR) with a quote, so that a
/// spreadsheet shows it as text (OWASP's advice for CSV injection).
pub fn safe(text: &str) -> Cow<'_, str> {
    match text.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r') => Cow::Owned(format!("'{text}")),
        _ => Cow::Borrowed(text),
    }
}

/// A number cell; empty for non-finite or absent values.
pub fn cell(v: Option<f64>) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x}"),
        _ => String::new(),
    }
}

pub fn finish(w: csv::Writer<Vec<u8>>) -> Result<Vec<u8>, Error> {
    w.into_inner()
        .map_err(|e| Error::Serialize(format!("csv output: {e}")))
}

pub fn write_err(e: csv::Error) -> Error {
    Error::Serialize(format!("csv output: {e}"))
}

/// The record columns every per-team CSV starts with.
const TEAM_HEADER: [&str; 10] = [
    "season",
    "league",
    "team",
    "games",
    "wins",
    "losses",
    "ties",
    "runs_scored",
    "runs_allowed",
    "win_pct",
];

fn team_cells(t: &TeamLine) -> Vec<String> {
    vec![
        t.season.to_string(),
        safe(t.league.as_deref().unwrap_or_default()).into_owned(),
        safe(&t.team).into_owned(),
        t.games.to_string(),
        t.wins.to_string(),
        t.losses.to_string(),
        t.ties.to_string(),
        cell(Some(t.runs_scored)),
        cell(Some(t.runs_allowed)),
        cell(Some(t.win_pct)),
    ]
}

pub fn fit(r: &FitReport) -> Result<Vec<u8>, Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let extra = [
        "model",
        "exponent",
        "expected_win_pct",
        "expected_wins",
        "luck_wins",
    ];
    w.write_record(TEAM_HEADER.iter().chain(&extra))
        .map_err(write_err)?;
    let model = r.calibration.teams_kind.name();
    for t in &r.calibration.teams {
        let mut row = team_cells(t);
        row.extend([
            model.to_string(),
            cell(t.exponent),
            cell(Some(t.expected_win_pct)),
            cell(Some(t.expected_wins)),
            cell(Some(t.luck_wins)),
        ]);
        w.write_record(&row).map_err(write_err)?;
    }
    finish(w)
}

/// Every parameter name over all models, for the comparison CSV's one column per parameter.
fn all_param_names() -> Vec<&'static str> {
    let mut names: Vec<&'static str> = Vec::new();
    for k in crate::model::ModelKind::ALL {
        for n in k.param_names() {
            if !names.contains(n) {
                names.push(n);
            }
        }
    }
    names
}

/// The model comparison of `runcal fit` (`--comparison-csv`): one row per fit and reference, ranked
/// (in group order with `--by`), one column per parameter, its standard error and bootstrap
/// interval, then the metrics. Empty cells where a model has no such parameter or value.
pub fn fit_comparison(r: &FitReport) -> Result<Vec<u8>, Error> {
    let c = &r.calibration;
    let names = all_param_names();
    let mut header: Vec<String> = ["rank", "group", "model", "status", "team_seasons"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    for n in &names {
        header.push(format!("param_{n}"));
        header.push(format!("std_error_{n}"));
        header.push(format!("ci_low_{n}"));
        header.push(format!("ci_high_{n}"));
    }
    header.extend(
        [
            "ci_level",
            "logloss",
            "mae",
            "rmse",
            "rmse_wins",
            "bias",
            "runs_per_win",
            "implied_exponent_low",
            "implied_exponent_high",
            "aic",
            "delta_qaic",
        ]
        .iter()
        .map(|s| s.to_string()),
    );
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&header).map_err(write_err)?;
    let order: Vec<usize> = if r.grouped {
        (0..c.fits.len()).collect()
    } else {
        c.ranking.clone()
    };
    for (pos, &i) in order.iter().enumerate() {
        let f = &c.fits[i];
        let mut row = vec![
            if r.grouped {
                String::new()
            } else {
                (pos + 1).to_string()
            },
            f.group
                .as_ref()
                .map_or(String::new(), |g| safe(&g.to_string()).into_owned()),
            f.model.kind.name().to_string(),
            if f.fitted { "fitted" } else { "reference" }.to_string(),
            f.rows.to_string(),
        ];
        let own = f.model.kind.param_names();
        for n in &names {
            let j = own.iter().position(|o| o == n);
            let at = |v: Option<&Vec<f64>>| cell(j.and_then(|j| v.and_then(|v| v.get(j).copied())));
            row.push(cell(j.map(|j| f.model.params[j])));
            row.push(at(f.std_errors.as_ref().map(|s| &s.corrected)));
            let ci = j.and_then(|j| {
                f.intervals
                    .as_ref()
                    .and_then(|iv| iv.params.get(j).copied())
            });
            row.push(cell(ci.map(|c| c.0)));
            row.push(cell(ci.map(|c| c.1)));
        }
        let m = &f.metrics;
        let implied = f.implied_span();
        let delta_qaic = c.delta_qaic(f);
        row.extend([
            cell(f.intervals.as_ref().map(|iv| iv.level)),
            cell(Some(m.logloss)),
            cell(Some(m.mae)),
            cell(Some(m.rmse)),
            cell(Some(m.rmse_wins)),
            cell(Some(m.bias)),
            cell(Some(f.runs_per_win)),
            cell(implied.map(|x| x.0)),
            cell(implied.map(|x| x.1)),
            cell(f.criteria.map(|k| k.aic)),
            cell(if r.grouped { None } else { delta_qaic }),
        ]);
        w.write_record(&row).map_err(write_err)?;
    }
    finish(w)
}

pub fn backtest(r: &super::BacktestReport) -> Result<Vec<u8>, Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "rank",
        "model",
        "fitted",
        "mae",
        "rmse",
        "rmse_wins",
        "logloss",
        "folds",
    ])
    .map_err(write_err)?;
    for (i, s) in r.scores.iter().enumerate() {
        let fitted = matches!(s.candidate, crate::fit::backtest::Candidate::Fit(_));
        w.write_record([
            (i + 1).to_string(),
            s.candidate.label(),
            fitted.to_string(),
            cell(Some(s.metrics.mae)),
            cell(Some(s.metrics.rmse)),
            cell(Some(s.metrics.rmse_wins)),
            cell(Some(s.metrics.logloss)),
            s.folds.len().to_string(),
        ])
        .map_err(write_err)?;
    }
    finish(w)
}

pub fn check(r: &super::CheckReport) -> Result<Vec<u8>, Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(["rule", "threshold", "value", "passed", "detail"])
        .map_err(write_err)?;
    for x in &r.rules {
        w.write_record([
            x.rule.clone(),
            cell(Some(x.threshold)),
            cell(Some(x.value)),
            x.passed.to_string(),
            safe(&x.detail).into_owned(),
        ])
        .map_err(write_err)?;
    }
    finish(w)
}

/// The simulated team-seasons, as a team-season table runcal reads back.
pub fn simulate(r: &super::SimulateReport<'_>) -> Result<Vec<u8>, Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    // The per-team columns less ties (simulated games have none) and win%.
    let header = TEAM_HEADER
        .iter()
        .filter(|h| !matches!(**h, "ties" | "win_pct"));
    w.write_record(header).map_err(write_err)?;
    let league = safe(&r.design.league);
    for row in &r.rows {
        w.write_record([
            row.season.to_string(),
            league.clone().into_owned(),
            safe(&crate::simulate::club_name(row.team)).into_owned(),
            row.games.to_string(),
            row.wins.to_string(),
            row.losses.to_string(),
            row.runs_scored.to_string(),
            row.runs_allowed.to_string(),
        ])
        .map_err(write_err)?;
    }
    finish(w)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_like_text_is_quoted() {
        assert_eq!(safe("=HYPERLINK(\"x\")"), "'=HYPERLINK(\"x\")");
        assert_eq!(safe("+1"), "'+1");
        assert_eq!(safe("-Team"), "'-Team");
        assert_eq!(safe("@SUM"), "'@SUM");
        assert_eq!(safe("Harbor Gulls"), "Harbor Gulls");
    }
}
