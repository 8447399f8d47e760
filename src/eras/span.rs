//! Which seasons to calibrate on: the shortest-consistent-span rule.
//!
//! Candidates are the spans ending at the latest season (the last 1, 2, 3, … seasons). A span is
//! consistent with the latest seasons (the last `--window` seasons) when its exponent is within two
//! standard errors of theirs; for nested samples the variance of the difference of two efficient
//! estimates is the difference of their variances (Hausman, Econometrica 46(6), 1978), so the
//! standard error is sqrt(|SE_span² − SE_latest²|). The rule picks the shortest consistent span whose
//! standard error is at most `--target-se`; when none reaches the target, the consistent span with the
//! smallest standard error, flagged as missing the target.

use std::collections::BTreeMap;

use super::Options;
use crate::data::Table;

/// The rule's name as the output and the README give it.
pub const RULE: &str = "shortest consistent recent span";

/// How many standard errors of difference still count as consistent (common practice: about 95%).
pub const CONSISTENT_WITHIN: f64 = 2.0;

/// One candidate span ending at the latest season.
#[derive(Debug, Clone, PartialEq)]
pub struct SpanFit {
    pub first: i32,
    pub last: i32,
    pub seasons: usize,
    pub rows: usize,
    pub exponent: f64,
    pub std_error: f64,
    /// Exponent minus the latest seasons' exponent, and its nested-sample standard error.
    pub difference: f64,
    pub difference_se: f64,
    pub consistent: bool,
}

/// The rule's outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct Recommendation {
    pub target_se: f64,
    /// The last `--window` seasons' fit, the reference every span is compared with.
    pub latest: Option<SpanFit>,
    /// Every fitted candidate, shortest first.
    pub candidates: Vec<SpanFit>,
    /// The chosen span's index in `candidates`.
    pub chosen: Option<usize>,
    /// Whether the chosen span's standard error reaches the target.
    pub meets_target: bool,
}

impl Recommendation {
    pub fn chosen(&self) -> Option<&SpanFit> {
        self.chosen.and_then(|i| self.candidates.get(i))
    }
}

/// Fit the last `k` seasons.
fn fit_last(
    t: &Table,
    by_season: &BTreeMap<i32, Vec<usize>>,
    seasons: &[i32],
    k: usize,
    min_group: usize,
) -> Option<(i32, i32, usize, f64, f64)> {
    let first = seasons[seasons.len() - k];
    let last = *seasons.last()?;
    let idx = super::rows_between(by_season, first, last);
    if idx.len() < min_group {
        return None;
    }
    let (f, _) = super::exponent_fit(t, &idx)?;
    let se = f.std_errors.as_ref()?.corrected[0];
    Some((first, last, idx.len(), f.model.params[0], se))
}

/// Apply the rule.
pub fn recommend(
    t: &Table,
    by_season: &BTreeMap<i32, Vec<usize>>,
    opts: &Options,
) -> Recommendation {
    let seasons: Vec<i32> = by_season.keys().copied().collect();
    let mut out = Recommendation {
        target_se: opts.target_se,
        latest: None,
        candidates: Vec::new(),
        chosen: None,
        meets_target: false,
    };
    let n = opts.window.min(seasons.len());
    if n == 0 {
        return out;
    }
    let Some((_, _, _, x_ref, se_ref)) = fit_last(t, by_season, &seasons, n, opts.min_group) else {
        return out;
    };
    for k in 1..=seasons.len() {
        let Some((first, last, rows, x, se)) = fit_last(t, by_season, &seasons, k, opts.min_group)
        else {
            continue;
        };
        let difference = x - x_ref;
        let difference_se = (se * se - se_ref * se_ref).abs().sqrt();
        let span = SpanFit {
            first,
            last,
            seasons: k,
            rows,
            exponent: x,
            std_error: se,
            difference,
            difference_se,
            consistent: k == n || difference.abs() <= CONSISTENT_WITHIN * difference_se,
        };
        if k == n {
            out.latest = Some(span.clone());
        }
        out.candidates.push(span);
    }
    let consistent = || {
        out.candidates
            .iter()
            .enumerate()
            .filter(|(_, s)| s.consistent)
    };
    out.chosen = consistent()
        .find(|(_, s)| s.std_error <= opts.target_se)
        .map(|(i, _)| i);
    out.meets_target = out.chosen.is_some();
    if out.chosen.is_none() {
        out.chosen = consistent()
            .min_by(|a, b| a.1.std_error.total_cmp(&b.1.std_error))
            .map(|(i, _)| i);
    }
    out
}
