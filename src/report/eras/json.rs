//! `runcal.eras/1`: the era report as one JSON object. Field order is the contract's key order; a
//! changed meaning needs a version bump.

use serde::Serialize;

use super::EraReport;
use crate::eras::{self, ChangeTest, History, Window, WindowFit, span::SpanFit};
use crate::report::json::{Num, Pair};

pub const SCHEMA: &str = "runcal.eras/1";

#[derive(Serialize)]
struct HistoryJson {
    first_season: i32,
    last_season: i32,
    team_seasons: usize,
    runs_per_game: Num,
    exponent: Num,
    exponent_se: Num,
    z: Num,
    z_se: Num,
}

impl From<&History> for HistoryJson {
    fn from(h: &History) -> HistoryJson {
        HistoryJson {
            first_season: h.first,
            last_season: h.last,
            team_seasons: h.rows,
            runs_per_game: Num(h.runs_per_game),
            exponent: Num(h.exponent),
            exponent_se: Num(h.exponent_se),
            z: Num(h.z),
            z_se: Num(h.z_se),
        }
    }
}

#[derive(Serialize)]
struct WindowJson {
    first_season: i32,
    last_season: i32,
    seasons: usize,
    team_seasons: usize,
    fitted: bool,
    runs_per_game: Num,
    exponent: Option<Num>,
    std_error: Option<Num>,
    std_error_binomial: Option<Num>,
    dispersion: Option<Num>,
    converged: Option<bool>,
    normal_ci: Option<Pair>,
    ci: Option<Pair>,
    bootstrap_seed: Option<u64>,
    implied_exponent_history_z: Option<Num>,
    gap_history_z: Option<Num>,
    gap_history_z_se: Option<Num>,
    implied_exponent_published_z: Option<Num>,
    gap_published_z: Option<Num>,
    gap_published_z_se: Option<Num>,
}

impl From<&Window> for WindowJson {
    fn from(w: &Window) -> WindowJson {
        let f = w.fit.as_ref();
        let get = |pick: fn(&WindowFit) -> f64| f.map(|f| Num(pick(f)));
        WindowJson {
            first_season: w.first,
            last_season: w.last,
            seasons: w.seasons,
            team_seasons: w.rows,
            fitted: f.is_some(),
            runs_per_game: Num(w.runs_per_game),
            exponent: get(|f| f.exponent),
            std_error: get(|f| f.std_error),
            std_error_binomial: get(|f| f.std_error_binomial),
            dispersion: get(|f| f.dispersion),
            converged: f.map(|f| f.converged),
            normal_ci: f.map(|f| Pair(f.normal_interval.0, f.normal_interval.1)),
            ci: f.and_then(|f| f.interval).map(|(lo, hi)| Pair(lo, hi)),
            bootstrap_seed: f.and_then(|f| f.bootstrap_seed),
            implied_exponent_history_z: get(|f| f.implied_history),
            gap_history_z: get(|f| f.gap_history),
            gap_history_z_se: get(|f| f.gap_history_se),
            implied_exponent_published_z: get(|f| f.implied_published),
            gap_published_z: get(|f| f.gap_published),
            gap_published_z_se: get(|f| f.gap_published_se),
        }
    }
}

#[derive(Serialize)]
struct ChangeJson {
    by: &'static str,
    method: &'static str,
    groups: usize,
    groups_left_out: usize,
    team_seasons: usize,
    common_exponent: Num,
    deviance_change: Num,
    df_change: usize,
    df_residual: usize,
    dispersion: Num,
    f_statistic: Num,
    p_value: Num,
    p_value_binomial_lr: Num,
    level: f64,
    exponent_changed: bool,
}

impl From<&ChangeTest> for ChangeJson {
    fn from(c: &ChangeTest) -> ChangeJson {
        ChangeJson {
            by: c.by.name(),
            method: "quasi-likelihood F",
            groups: c.groups,
            groups_left_out: c.groups_left_out,
            team_seasons: c.rows,
            common_exponent: Num(c.common_exponent),
            deviance_change: Num(c.deviance_change),
            df_change: c.df_change,
            df_residual: c.df_residual,
            dispersion: Num(c.dispersion),
            f_statistic: Num(c.f_statistic),
            p_value: Num(c.p_value),
            p_value_binomial_lr: Num(c.p_value_binomial),
            level: c.level,
            exponent_changed: c.rejects,
        }
    }
}

#[derive(Serialize)]
struct SpanJson {
    first_season: i32,
    last_season: i32,
    seasons: usize,
    team_seasons: usize,
    exponent: Num,
    std_error: Num,
    difference_from_latest: Num,
    difference_se: Num,
    consistent: bool,
}

impl From<&SpanFit> for SpanJson {
    fn from(s: &SpanFit) -> SpanJson {
        SpanJson {
            first_season: s.first,
            last_season: s.last,
            seasons: s.seasons,
            team_seasons: s.rows,
            exponent: Num(s.exponent),
            std_error: Num(s.std_error),
            difference_from_latest: Num(s.difference),
            difference_se: Num(s.difference_se),
            consistent: s.consistent,
        }
    }
}

#[derive(Serialize)]
struct RecommendationJson {
    rule: &'static str,
    target_se: f64,
    meets_target: bool,
    chosen: Option<SpanJson>,
    latest: Option<SpanJson>,
    candidates: Vec<SpanJson>,
}

/// The whole `runcal.eras/1` object.
#[derive(Serialize)]
pub struct ErasJson<'a> {
    schema: &'static str,
    rows_used: usize,
    rows_rejected: usize,
    input: &'static str,
    model: &'static str,
    loss: &'static str,
    window: usize,
    windows_kind: &'static str,
    min_group: usize,
    ci_level: Option<f64>,
    bootstrap_resamples: Option<usize>,
    published_z: f64,
    history: HistoryJson,
    windows: Vec<WindowJson>,
    change_test: Option<ChangeJson>,
    change_test_skipped: Option<&'a str>,
    recommendation: RecommendationJson,
    caution: &'static str,
}

pub fn render(r: &EraReport) -> ErasJson<'_> {
    let a = &r.analysis;
    let rec = &a.recommendation;
    ErasJson {
        schema: SCHEMA,
        rows_used: r.rows_used,
        rows_rejected: r.rows_rejected,
        input: if r.from_games { "games" } else { "seasons" },
        model: "pythagorean",
        loss: "logloss",
        window: a.window,
        windows_kind: a.kind.name(),
        min_group: a.min_group,
        ci_level: a.ci_level,
        bootstrap_resamples: a.resamples,
        published_z: eras::PUBLISHED_Z,
        history: (&a.history).into(),
        windows: a.windows.iter().map(WindowJson::from).collect(),
        change_test: a.change.as_ref().map(ChangeJson::from),
        change_test_skipped: a.change_skipped.as_deref(),
        recommendation: RecommendationJson {
            rule: eras::span::RULE,
            target_se: rec.target_se,
            meets_target: rec.meets_target,
            chosen: rec.chosen().map(SpanJson::from),
            latest: rec.latest.as_ref().map(SpanJson::from),
            candidates: rec.candidates.iter().map(SpanJson::from).collect(),
        },
        caution: eras::CAUTION,
    }
}
