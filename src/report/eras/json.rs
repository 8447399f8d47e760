//! `runcal.eras/1`: the era report as one JSON object (keys in this order; a changed meaning needs
//! a version bump).

use serde_json::{Value, json};

use super::EraReport;
use crate::eras::{self, ChangeTest, Window, span::SpanFit};
use crate::report::json::number;

pub const SCHEMA: &str = "runcal.eras/1";

fn pair(v: Option<(f64, f64)>) -> Value {
    v.map_or(Value::Null, |(lo, hi)| json!([number(lo), number(hi)]))
}

fn window(w: &Window) -> Value {
    let f = w.fit.as_ref();
    let get = |pick: fn(&eras::WindowFit) -> f64| f.map_or(Value::Null, |f| number(pick(f)));
    json!({
        "first_season": w.first,
        "last_season": w.last,
        "seasons": w.seasons,
        "team_seasons": w.rows,
        "fitted": f.is_some(),
        "runs_per_game": number(w.runs_per_game),
        "exponent": get(|f| f.exponent),
        "std_error": get(|f| f.std_error),
        "std_error_binomial": get(|f| f.std_error_binomial),
        "dispersion": get(|f| f.dispersion),
        "converged": f.map(|f| f.converged),
        "normal_ci": pair(f.map(|f| f.normal_interval)),
        "ci": pair(f.and_then(|f| f.interval)),
        "bootstrap_seed": f.and_then(|f| f.bootstrap_seed),
        "implied_exponent_history_z": get(|f| f.implied_history),
        "gap_history_z": get(|f| f.gap_history),
        "gap_history_z_se": get(|f| f.gap_history_se),
        "implied_exponent_published_z": get(|f| f.implied_published),
        "gap_published_z": get(|f| f.gap_published),
        "gap_published_z_se": get(|f| f.gap_published_se),
    })
}

fn change(c: &ChangeTest) -> Value {
    json!({
        "by": c.by.name(),
        "method": "quasi-likelihood F",
        "groups": c.groups,
        "groups_left_out": c.groups_left_out,
        "team_seasons": c.rows,
        "common_exponent": number(c.common_exponent),
        "deviance_change": number(c.deviance_change),
        "df_change": c.df_change,
        "df_residual": c.df_residual,
        "dispersion": number(c.dispersion),
        "f_statistic": number(c.f_statistic),
        "p_value": number(c.p_value),
        "p_value_binomial_lr": number(c.p_value_binomial),
        "level": c.level,
        "exponent_changed": c.rejects,
    })
}

fn span_fit(s: &SpanFit) -> Value {
    json!({
        "first_season": s.first,
        "last_season": s.last,
        "seasons": s.seasons,
        "team_seasons": s.rows,
        "exponent": number(s.exponent),
        "std_error": number(s.std_error),
        "difference_from_latest": number(s.difference),
        "difference_se": number(s.difference_se),
        "consistent": s.consistent,
    })
}

pub fn render(r: &EraReport) -> Value {
    let a = &r.analysis;
    let h = &a.history;
    let rec = &a.recommendation;
    json!({
        "schema": SCHEMA,
        "rows_used": r.rows_used,
        "rows_rejected": r.rows_rejected,
        "input": if r.from_games { "games" } else { "seasons" },
        "model": "pythagorean",
        "loss": "logloss",
        "window": a.window,
        "windows_kind": a.kind.name(),
        "min_group": a.min_group,
        "ci_level": a.ci_level,
        "bootstrap_resamples": a.resamples,
        "published_z": eras::PUBLISHED_Z,
        "history": {
            "first_season": h.first,
            "last_season": h.last,
            "team_seasons": h.rows,
            "runs_per_game": number(h.runs_per_game),
            "exponent": number(h.exponent),
            "exponent_se": number(h.exponent_se),
            "z": number(h.z),
            "z_se": number(h.z_se),
        },
        "windows": a.windows.iter().map(window).collect::<Vec<_>>(),
        "change_test": a.change.as_ref().map_or(Value::Null, change),
        "change_test_skipped": a.change_skipped,
        "recommendation": {
            "rule": eras::span::RULE,
            "target_se": rec.target_se,
            "meets_target": rec.meets_target,
            "chosen": rec.chosen().map_or(Value::Null, span_fit),
            "latest": rec.latest.as_ref().map_or(Value::Null, span_fit),
            "candidates": rec.candidates.iter().map(span_fit).collect::<Vec<_>>(),
        },
        "caution": eras::CAUTION,
    })
}
