//! Human-readable tables (comfy-table). Layout only; every number arrives computed.

use comfy_table::{CellAlignment, Table, presets};

use super::{FitReport, Grid, TeamLine, num, pct, record, signed};
use crate::fit::ModelFit;

/// An empty table in the house style.
fn styled() -> Table {
    let mut t = Table::new();
    t.load_style(presets::UTF8_FULL_CONDENSED.with_rounded_corners());
    t
}

/// A table in the house style; numeric columns (all but the first `text_cols`) right-aligned.
pub fn new_table(header: &[&str], text_cols: usize) -> Table {
    let mut t = styled();
    t.set_header(header.iter().copied());
    for (i, col) in t.column_iter_mut().enumerate() {
        if i >= text_cols {
            col.set_cell_alignment(CellAlignment::Right);
        }
    }
    t
}

/// A table from named columns: `left` columns are left-aligned, and a column named in `fold` whose
/// cells are all equal is left out and returned as (name, value) for the caption.
pub fn folded_table(
    header: &[&str],
    rows: &[Vec<String>],
    left: &[&str],
    fold: &[&str],
) -> (Table, Vec<(String, String)>) {
    grid_table(&Grid {
        header: Grid::names(header),
        rows: rows.to_vec(),
        text: Grid::names(left),
        fold: Grid::names(fold),
    })
}

/// A grid as a terminal table, its constant foldable columns returned for the caption.
pub fn grid_table(grid: &Grid) -> (Table, Vec<(String, String)>) {
    let (g, folded) = grid.folded();
    let mut t = styled();
    t.set_header(g.header.iter());
    for r in &g.rows {
        t.add_row(r.iter());
    }
    for (i, col) in t.column_iter_mut().enumerate() {
        if !g.is_text(i) {
            col.set_cell_alignment(CellAlignment::Right);
        }
    }
    (t, folded)
}

/// A model and its values, short: `pythagorean, exponent 1.9273`.
pub fn model_label(m: &crate::model::Model) -> String {
    let p: Vec<String> = m
        .kind
        .param_names()
        .iter()
        .zip(&m.params)
        .map(|(n, v)| format!("{n} {v:.4}"))
        .collect();
    format!("{}, {}", m.kind, p.join(", "))
}

/// Parameter values as `exponent 1.9273`.
pub fn params(f: &ModelFit) -> String {
    f.model
        .kind
        .param_names()
        .iter()
        .zip(&f.model.params)
        .map(|(n, v)| format!("{n} {v:.4}"))
        .collect::<Vec<_>>()
        .join(", ")
}

fn uncertainty(f: &ModelFit) -> Vec<String> {
    let names = f.model.kind.param_names();
    let mut lines = Vec::new();
    for (i, name) in names.iter().enumerate() {
        let mut parts = Vec::new();
        if let Some(se) = &f.std_errors {
            parts.push(format!(
                "std. error {:.4} (quasi-binomial; binomial {:.4}, dispersion {:.3})",
                se.corrected[i], se.binomial[i], se.dispersion
            ));
        }
        if let Some(iv) = &f.intervals {
            let (lo, hi) = iv.params[i];
            parts.push(format!(
                "{:.0}% bootstrap interval [{lo:.4}, {hi:.4}] from {} resamples",
                iv.level * 100.0,
                iv.resamples
            ));
        }
        if !parts.is_empty() {
            lines.push(format!(
                "  {} {name} = {:.4}: {}",
                f.model.kind,
                f.model.params[i],
                parts.join("; ")
            ));
        }
    }
    lines
}

/// A fit's percentile bootstrap interval per parameter, `1.8712–1.9803`, or `-` without one.
fn bootstrap_cell(f: &ModelFit) -> String {
    f.intervals.as_ref().map_or("-".to_string(), |iv| {
        iv.params
            .iter()
            .map(|(lo, hi)| format!("{lo:.4}–{hi:.4}"))
            .collect::<Vec<_>>()
            .join(", ")
    })
}

fn exponent_range(f: &ModelFit) -> String {
    f.implied_span()
        .map_or("-".to_string(), |(lo, hi)| format!("{lo:.2}–{hi:.2}"))
}

pub fn fit(r: &FitReport) -> String {
    let mut out = String::new();
    let seasons = r
        .seasons
        .map(|(a, b)| {
            if a == b {
                format!(", season {a}")
            } else {
                format!(", seasons {a}–{b}")
            }
        })
        .unwrap_or_default();
    out.push_str(&format!(
        "runcal fit: {} team-seasons used, {} rejected{seasons}; ranked by {}\n",
        r.rows_used,
        r.rows_rejected,
        r.loss.name()
    ));
    if r.grouped {
        out.push_str(&grouped(r));
    } else {
        out.push_str(&comparison(r));
    }
    let c = &r.calibration;
    for f in c.fits.iter().filter(|f| f.fitted && !r.grouped) {
        for line in uncertainty(f) {
            out.push_str(&line);
            out.push('\n');
        }
        if !f.converged {
            out.push_str(&format!(
                "  warning: {} did not report convergence after {} iterations\n",
                f.model.kind, f.iterations
            ));
        }
    }
    if !c.ahead.is_empty() {
        let model = match &c.teams_model {
            Some(m) => model_label(m),
            None => format!("each group's own {} fit", c.teams_kind),
        };
        out.push_str(&performers(&c.ahead, &c.behind, &model));
    }
    out
}

fn comparison(r: &FitReport) -> String {
    let loss = r.loss.name();
    let per_win = format!("{}/win", r.unit.plural());
    let header = [
        "rank",
        "model",
        "parameters",
        "status",
        "params fitted",
        "logloss",
        "mae",
        "rmse",
        "rmse (wins)",
        "bias",
        per_win.as_str(),
        "implied exponent span",
        "AIC",
        "ΔQAIC",
    ];
    let mut t = new_table(&header, 4);
    let c = &r.calibration;
    let ranked: Vec<&ModelFit> = c.ranking.iter().map(|&i| &c.fits[i]).collect();
    let delta_qaic = |f: &ModelFit| c.delta_qaic(f).map_or("-".to_string(), |d| num(d, 2));
    for (i, f) in ranked.iter().enumerate() {
        let status = if f.fitted {
            "fitted".to_string()
        } else {
            "reference".to_string()
        };
        let k = if f.fitted {
            f.model.params.len().to_string()
        } else {
            "0".to_string()
        };
        t.add_row(vec![
            (i + 1).to_string(),
            f.model.kind.to_string(),
            params(f),
            status,
            k,
            num(f.metrics.logloss, 6),
            num(f.metrics.mae, 5),
            num(f.metrics.rmse, 5),
            num(f.metrics.rmse_wins, 2),
            signed(f.metrics.bias, 5),
            num(f.runs_per_win, 2),
            exponent_range(f),
            f.criteria.map_or("-".to_string(), |k| num(k.aic, 1)),
            delta_qaic(f),
        ]);
    }
    let mut s = t.to_string();
    s.push('\n');
    s.push_str(
        "in-sample ranking; `runcal backtest` compares models on seasons they were not fitted to\n",
    );
    if let (Some(first), Some(second), Some(margin)) = (ranked.first(), ranked.get(1), c.margin) {
        s.push_str(&format!(
            "lowest {loss}: {} ({}), ahead of {} ({}) by {margin:.2e}\n",
            first.model.kind,
            params(first),
            second.model.kind,
            params(second),
        ));
    }
    if let Some(cmp) = &c.comparison {
        s.push_str(&format!(
            "model choice: {}\n  rule: {}\n",
            cmp.verdict, cmp.rule
        ));
    }
    for f in ranked.iter().filter(|f| !f.weak_identification.is_empty()) {
        for flag in &f.weak_identification {
            s.push_str(&format!("  weakly determined: {}: {flag}\n", f.model.kind));
        }
    }
    s
}

fn grouped(r: &FitReport) -> String {
    let per_win = format!("{}/win", r.unit.plural());
    let header = [
        "group",
        "model",
        "parameters",
        "std. error",
        "team-seasons",
        "logloss",
        "mae",
        "rmse",
        per_win.as_str(),
        "note",
    ];
    let c = &r.calibration;
    // With --bootstrap, each group's percentile interval sits beside its standard error.
    let boot_level = c
        .fits
        .iter()
        .find_map(|f| f.intervals.as_ref().map(|iv| iv.level));
    let mut header: Vec<String> = header.iter().map(|h| h.to_string()).collect();
    if let Some(level) = boot_level {
        header.insert(4, format!("{:.0}% bootstrap interval", level * 100.0));
    }
    let header: Vec<&str> = header.iter().map(String::as_str).collect();
    let mut t = new_table(&header, 3);
    for row in &c.group_rows {
        let cells = match row {
            crate::fit::calibrate::GroupRow::Fitted(i) => {
                let f = &c.fits[*i];
                let g = f
                    .group
                    .as_ref()
                    .map(ToString::to_string)
                    .unwrap_or_else(|| "all".into());
                let note = if !f.converged {
                    "not converged"
                } else if !f.weak_identification.is_empty() {
                    "weakly determined"
                } else {
                    ""
                };
                let mut cells = vec![
                    g,
                    f.model.kind.to_string(),
                    params(f),
                    f.std_errors.as_ref().map_or("-".to_string(), |se| {
                        se.corrected
                            .iter()
                            .map(|v| format!("{v:.4}"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    }),
                    f.rows.to_string(),
                    num(f.metrics.logloss, 6),
                    num(f.metrics.mae, 5),
                    num(f.metrics.rmse, 5),
                    num(f.runs_per_win, 2),
                    note.to_string(),
                ];
                if boot_level.is_some() {
                    cells.insert(4, bootstrap_cell(f));
                }
                cells
            }
            crate::fit::calibrate::GroupRow::TooSmall(g, n) => {
                let mut cells = vec![g.to_string(), "-".into(), "-".into(), "-".into()];
                if boot_level.is_some() {
                    cells.push("-".into());
                }
                cells.push(n.to_string());
                cells.extend(std::iter::repeat_n("-".to_string(), 4));
                cells.push("too small to fit".into());
                cells
            }
            crate::fit::calibrate::GroupRow::NotFitted(i) => {
                let u = &c.unfitted[*i];
                let mut cells = vec![u.group.to_string(), u.model.to_string(), "-".into()];
                cells.push("-".into());
                if boot_level.is_some() {
                    cells.push("-".into());
                }
                cells.push(u.rows.to_string());
                cells.extend(std::iter::repeat_n("-".to_string(), 4));
                cells.push(format!("not fitted: {}", u.reason));
                cells
            }
        };
        t.add_row(cells);
    }
    let mut s = t.to_string();
    s.push('\n');
    s
}

/// The largest over- and under-performers against a model, as the core listed them.
pub fn performers(ahead: &[TeamLine], behind: &[TeamLine], model: &str) -> String {
    let mut s = String::new();
    let header = [
        "season",
        "league",
        "team",
        "record",
        "win%",
        "expected win%",
        "expected wins",
        "wins over expected",
    ];
    for (title, slice) in [
        ("Most wins above their scoring", ahead),
        ("Most wins below their scoring", behind),
    ] {
        let rows: Vec<Vec<String>> = slice
            .iter()
            .map(|line| {
                vec![
                    line.season.to_string(),
                    line.league.clone().unwrap_or_else(|| "-".into()),
                    line.team.clone(),
                    record(line.wins, line.losses, line.ties),
                    pct(line.win_pct),
                    pct(line.expected_win_pct),
                    num(line.expected_wins, 1),
                    signed(line.luck_wins, 1),
                ]
            })
            .collect();
        let (t, _) = folded_table(&header, &rows, &["season", "league", "team"], &["league"]);
        s.push_str(&format!("\n{title} ({model}):\n{t}\n"));
    }
    s
}

pub fn backtest(r: &super::BacktestReport) -> String {
    let mut out = format!(
        "runcal backtest: {} team-seasons, {} rejected; scheme {}; ranked by out-of-sample {}\n",
        r.rows_used,
        r.rows_rejected,
        r.scheme.name(),
        r.loss.name()
    );
    let mut t = new_table(
        &[
            "rank",
            "model",
            "status",
            "held-out seasons",
            "logloss",
            "mae",
            "rmse",
            "rmse (wins)",
            "behind best",
            "paired SE",
            "folds won",
            "told apart?",
        ],
        3,
    );
    let standings = r.comparison.as_ref().map_or(&[][..], |c| &c.standings[..]);
    for (i, s) in r.scores.iter().enumerate() {
        let told_apart = match standings.get(i) {
            Some(_) if i == 0 => "best",
            Some(st) if st.indistinguishable_from_best => "no",
            Some(_) => "yes",
            None => "-",
        };
        let status = match s.candidate {
            crate::fit::backtest::Candidate::Fit(_) => "refitted per fold",
            crate::fit::backtest::Candidate::Fixed(_) => "reference",
        };
        t.add_row(vec![
            (i + 1).to_string(),
            s.candidate.label(),
            status.to_string(),
            s.folds.len().to_string(),
            num(s.metrics.logloss, 6),
            num(s.metrics.mae, 5),
            num(s.metrics.rmse, 5),
            num(s.metrics.rmse_wins, 2),
            format!("{:.2e}", s.margin),
            s.margin_se
                .map_or("-".to_string(), |se| format!("{se:.2e}")),
            format!("{} of {}", s.folds_won, s.folds.len()),
            told_apart.to_string(),
        ]);
    }
    out.push_str(&t.to_string());
    out.push('\n');
    if let (Some(a), Some(b), Some(margin)) = (r.scores.first(), r.scores.get(1), r.margin) {
        out.push_str(&format!(
            "lowest out-of-sample {}: {}, ahead of {} by {margin:.2e}\n",
            r.loss.name(),
            a.candidate.label(),
            b.candidate.label(),
        ));
    }
    if let Some(c) = &r.comparison {
        out.push_str(&format!(
            "model choice: {}\n  rule: {}\n",
            c.verdict, c.rule
        ));
    }
    out
}

pub fn check(r: &super::CheckReport) -> String {
    let mut out = format!(
        "runcal check: {} team-seasons ({} rejected) against {}\n",
        r.rows_used, r.rows_rejected, r.profile
    );
    let mut t = new_table(
        &["rule", "threshold", "value", "result", "what was measured"],
        1,
    );
    for x in &r.rules {
        t.add_row(vec![
            x.rule.clone(),
            format!("{}", x.threshold),
            num(x.value, 4),
            if x.passed {
                "pass".to_string()
            } else {
                "FAIL".to_string()
            },
            x.detail.clone(),
        ]);
    }
    if let Some(col) = t.column_mut(4) {
        col.set_cell_alignment(CellAlignment::Left);
    }
    out.push_str(&t.to_string());
    out.push('\n');
    out.push_str(&r.verdict);
    out.push('\n');
    out
}

/// The simulated team-seasons, readable.
pub fn simulate(r: &super::SimulateReport<'_>) -> String {
    let mut t = new_table(
        &["season", "team", "games", "record", "runs", "runs allowed"],
        2,
    );
    for row in &r.rows {
        t.add_row(vec![
            row.season.to_string(),
            crate::simulate::club_name(row.team),
            row.games.to_string(),
            record(row.wins, row.losses, 0),
            row.runs_scored.to_string(),
            row.runs_allowed.to_string(),
        ]);
    }
    format!("{t}\n")
}
