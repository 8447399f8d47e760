//! JSON printers. The `schema` field carries the contract's version; change a shape only with a bump.

use serde_json::{Map, Value, json};

use super::{FitReport, TeamLine};
use crate::fit::{Metrics, ModelFit};

/// Non-finite numbers become null (JSON has no NaN).
pub fn number(v: f64) -> Value {
    if v.is_finite() { json!(v) } else { Value::Null }
}

fn named(names: &[&str], values: &[f64]) -> Value {
    let mut m = Map::new();
    for (n, v) in names.iter().zip(values) {
        m.insert((*n).to_string(), number(*v));
    }
    Value::Object(m)
}

pub fn metrics(m: &Metrics) -> Value {
    json!({
        "mae": number(m.mae), "rmse": number(m.rmse), "logloss": number(m.logloss),
        "bias": number(m.bias), "max_abs": number(m.max_abs), "rmse_wins": number(m.rmse_wins),
    })
}

pub fn model_fit(f: &ModelFit) -> Value {
    let names = f.model.kind.param_names();
    let mut o = Map::new();
    o.insert("model".into(), json!(f.model.kind.name()));
    o.insert("loss".into(), json!(f.loss.name()));
    o.insert(
        "group".into(),
        f.group.as_ref().map_or(Value::Null, |g| json!(g)),
    );
    o.insert("fitted".into(), json!(f.fitted));
    o.insert("rows".into(), json!(f.rows));
    o.insert("params".into(), named(names, &f.model.params));
    match &f.std_errors {
        Some(se) => {
            o.insert("std_errors".into(), named(names, &se.corrected));
            o.insert("std_errors_binomial".into(), named(names, &se.binomial));
            o.insert("dispersion".into(), number(se.dispersion));
        }
        None => {
            o.insert("std_errors".into(), Value::Null);
        }
    }
    match &f.intervals {
        Some(iv) => {
            let mut ci = Map::new();
            for (n, (lo, hi)) in names.iter().zip(&iv.params) {
                ci.insert((*n).to_string(), json!([number(*lo), number(*hi)]));
            }
            o.insert("ci".into(), Value::Object(ci));
            o.insert("ci_level".into(), json!(iv.level));
            let mut mci = Map::new();
            for (n, (lo, hi)) in &iv.metrics {
                mci.insert((*n).to_string(), json!([number(*lo), number(*hi)]));
            }
            o.insert("metrics_ci".into(), Value::Object(mci));
            o.insert("bootstrap_sd".into(), named(names, &iv.params_sd));
            o.insert("bootstrap_resamples".into(), json!(iv.resamples));
            o.insert("bootstrap_failed".into(), json!(iv.failed));
        }
        None => {
            o.insert("ci".into(), Value::Null);
            o.insert("ci_level".into(), Value::Null);
        }
    }
    o.insert("metrics".into(), metrics(&f.metrics));
    o.insert("runs_per_win".into(), number(f.runs_per_win));
    o.insert("average_rpg".into(), number(f.average_rpg));
    o.insert(
        "exponent_range".into(),
        f.exponent_range
            .map_or(Value::Null, |(lo, hi)| json!([number(lo), number(hi)])),
    );
    o.insert("iterations".into(), json!(f.iterations));
    o.insert("converged".into(), json!(f.converged));
    Value::Object(o)
}

pub fn team_line(t: &TeamLine) -> Value {
    json!({
        "season": t.season, "league": t.league, "team": t.team, "games": t.games,
        "wins": t.wins, "losses": t.losses, "ties": t.ties,
        "runs_scored": number(t.runs_scored), "runs_allowed": number(t.runs_allowed),
        "win_pct": number(t.win_pct), "expected_win_pct": number(t.expected_win_pct),
        "expected_wins": number(t.expected_wins), "luck_wins": number(t.luck_wins),
        "exponent": t.exponent.map_or(Value::Null, number),
    })
}

pub fn fit(r: &FitReport) -> Value {
    json!({
        "schema": "runcal.fit/1",
        "rows_used": r.rows_used,
        "rows_rejected": r.rows_rejected,
        "loss": r.loss.name(),
        "fits": r.fits.iter().map(model_fit).collect::<Vec<_>>(),
        "too_small_groups": r.too_small.iter().map(|(g, n)| json!({"group": g, "rows": n})).collect::<Vec<_>>(),
    })
}

fn params_of(m: &crate::model::Model) -> Value {
    named(m.kind.param_names(), &m.params)
}

pub fn luck(r: &super::LuckReport) -> Value {
    let teams: Vec<Value> = r
        .teams
        .iter()
        .map(|l| {
            let t = &l.line;
            let (orw, orl) = l.one_run.map_or((Value::Null, Value::Null), |(w, lo)| (json!(w), json!(lo)));
            let (proj, interval, regressed, remaining) = match &l.projection {
                Some(p) => (
                    number(p.projected_wins),
                    json!([number(p.interval.0), number(p.interval.1)]),
                    number(p.regressed_win_pct),
                    json!(p.remaining),
                ),
                None => (Value::Null, Value::Null, Value::Null, Value::Null),
            };
            json!({
                "season": t.season, "league": t.league, "team": t.team, "games": t.games,
                "wins": t.wins, "losses": t.losses, "ties": t.ties,
                "runs_scored": number(t.runs_scored), "runs_allowed": number(t.runs_allowed),
                "win_pct": number(t.win_pct), "expected_win_pct": number(t.expected_win_pct),
                "expected_wins": number(t.expected_wins), "luck_wins": number(t.luck_wins),
                "luck_z": l.luck_z.map_or(Value::Null, number), "luck_p": l.luck_p.map_or(Value::Null, number),
                "one_run_wins": orw, "one_run_losses": orl,
                "remaining_games": remaining, "regressed_win_pct": regressed,
                "projected_wins": proj, "projected_interval": interval,
            })
        })
        .collect();
    json!({
        "schema": "runcal.luck/1",
        "model": r.model.kind.name(),
        "params": params_of(&r.model),
        "source": match &r.source { super::ModelSource::Profile(p) => json!({"profile": p}), super::ModelSource::Fitted => json!("fitted"), super::ModelSource::Given => json!("given") },
        "rows_used": r.rows_used,
        "rows_rejected": r.rows_rejected,
        "as_of": r.as_of.map(|d| d.to_string()),
        "season_games": r.season_games,
        "regression_games": r.regression_games.map_or(Value::Null, number),
        "projection_interval_level": 0.8,
        "teams": teams,
    })
}

pub fn backtest(r: &super::BacktestReport) -> Value {
    use crate::fit::backtest::Candidate;
    let models: Vec<Value> = r
        .scores
        .iter()
        .map(|s| {
            let (fitted, params) = match &s.candidate {
                Candidate::Fit(_) => (true, Value::Null),
                Candidate::Fixed(m) => (false, params_of(m)),
            };
            let model = match &s.candidate {
                Candidate::Fit(k) => k.name(),
                Candidate::Fixed(m) => m.kind.name(),
            };
            json!({
                "model": model, "label": s.candidate.label(), "fitted": fitted, "params": params,
                "mae": number(s.metrics.mae), "rmse": number(s.metrics.rmse), "logloss": number(s.metrics.logloss),
                "folds": s.folds.len(),
                "fold_details": s.folds.iter().map(|f| json!({
                    "season": f.season, "train_rows": f.train_rows, "test_rows": f.test_rows,
                    "params": named(match &s.candidate { Candidate::Fit(k) => k.param_names(), Candidate::Fixed(m) => m.kind.param_names() }, &f.params),
                    "loss": number(f.loss),
                })).collect::<Vec<_>>(),
            })
        })
        .collect();
    let best = r.scores.first().map(|s| s.candidate.label());
    let margin = match (r.scores.first(), r.scores.get(1)) {
        (Some(a), Some(b)) => number(r.loss.of(&b.metrics) - r.loss.of(&a.metrics)),
        _ => Value::Null,
    };
    json!({
        "schema": "runcal.backtest/1",
        "scheme": r.scheme.name(),
        "loss": r.loss.name(),
        "rows_used": r.rows_used,
        "rows_rejected": r.rows_rejected,
        "models": models,
        "best": best,
        "margin": margin,
    })
}

pub fn check(r: &super::CheckReport) -> Value {
    json!({
        "schema": "runcal.check/1",
        "passed": r.passed,
        "verdict": r.verdict,
        "profile": r.profile,
        "rows_used": r.rows_used,
        "rows_rejected": r.rows_rejected,
        "rules": r.rules.iter().map(|x| json!({
            "rule": x.rule, "threshold": number(x.threshold), "value": number(x.value), "passed": x.passed, "detail": x.detail,
        })).collect::<Vec<_>>(),
    })
}
