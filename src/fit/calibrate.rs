//! `calibrate`: everything `runcal fit` computes, as one call from a plan to a plain result.
//! Groups, bootstrap intervals, references (each scored once), the ranking, the margin, the fit a
//! profile saves, the over- and under-performers and the chart's data are all decided here, so the
//! command is glue and the report layer only renders.

use std::borrow::Cow;

use super::{Group, GroupBy, Loss, LossCurve, ModelFit, bootstrap};
use crate::data::{Table, TeamSeason};
use crate::error::Error;
use crate::luck::{self, Histogram, TeamLine};
use crate::model::{Model, ModelKind};

/// What to fit and what to compute beside it.
#[derive(Debug, Clone)]
pub struct Plan<'a> {
    /// Models to fit, in the order the user named them (the first is the one a profile saves).
    pub models: Vec<ModelKind>,
    pub loss: Loss,
    /// Score this Pythagorean exponent instead of fitting.
    pub exponent: Option<f64>,
    pub by: Option<GroupBy>,
    /// Groups with fewer team-seasons than this are listed but not fitted.
    pub min_group: usize,
    /// Unfitted models to score beside the fits (the user's, after the standard ones).
    pub references: Vec<Model>,
    /// Include the published references (`standard_references`).
    pub standard_references: bool,
    pub bootstrap: Option<bootstrap::Options<'a>>,
    /// How many over- and under-performers to list.
    pub top: usize,
    /// Compute a line per team-season (the table, the CSV and the chart show them; JSON does not).
    pub team_lines: bool,
    /// Compute the chart's data.
    pub chart: bool,
}

/// One row of the grouped table, in group order.
#[derive(Debug, Clone, PartialEq)]
pub enum GroupRow {
    /// An index into `Calibration::fits`.
    Fitted(usize),
    /// A group too small to fit, with its row count.
    TooSmall(Group, usize),
    /// A group a model could not be fitted to (index into `Calibration::unfitted`).
    NotFitted(usize),
}

/// A group a model could not be fitted to, and why; the other groups go on without it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct UnfittedGroup {
    pub group: Group,
    pub model: ModelKind,
    pub rows: usize,
    pub reason: String,
}

/// The data of the fit chart: the loss along the primary model's first parameter and the
/// histogram of wins above expected.
#[derive(Debug, Clone, PartialEq)]
pub struct FitChart {
    pub curve: LossCurve,
    /// The group the curve was computed on (`--by`), or `None` for all rows.
    pub group: Option<Group>,
    pub residuals: Histogram,
}

/// Everything `runcal fit` reports.
#[derive(Debug, Clone)]
pub struct Calibration {
    /// Fitted models (ranked by the loss, or in group order with `--by`), then references (ranked).
    pub fits: Vec<ModelFit>,
    /// Every fit, best first by the loss (indices into `fits`).
    pub ranking: Vec<usize>,
    /// How far the second of `ranking` trails the first, in the loss.
    pub margin: Option<f64>,
    pub too_small: Vec<(Group, usize)>,
    /// Groups (with `--by`) a model could not be fitted to.
    pub unfitted: Vec<UnfittedGroup>,
    /// The grouped table's rows in group order (empty without `--by`).
    pub group_rows: Vec<GroupRow>,
    /// Every team-season under its own fit (each group's own with `--by`).
    pub teams: Vec<TeamLine>,
    /// The model the team lines use; `None` with `--by`, where each group has its own fit of
    /// `teams_kind`.
    pub teams_model: Option<Model>,
    pub teams_kind: ModelKind,
    /// The most wins above and below expected, most extreme first.
    pub ahead: Vec<TeamLine>,
    pub behind: Vec<TeamLine>,
    /// The fit a profile saves: the first model named, fitted on all rows (`None` with `--by` or
    /// `--exponent`).
    pub saved: Option<usize>,
    pub chart: Option<FitChart>,
    /// Whether the data can tell the fitted models apart (log-loss fits over all rows, two or
    /// more models): ranked by the loss, told apart by QAIC (see [`super::compare`]).
    pub comparison: Option<super::Comparison>,
    /// Fits on too few team-seasons to inform (see [`WEAK_FIT_MARGIN`]), in words.
    pub warnings: Vec<String>,
}

impl Calibration {
    /// A fitted model's QAIC distance from the best, from the model comparison (`None` for a
    /// reference, or without a comparison).
    pub fn delta_qaic(&self, f: &ModelFit) -> Option<f64> {
        let standings = self.comparison.as_ref()?;
        standings
            .standings
            .iter()
            .find(|s| f.fitted && s.label == f.model.kind.name())
            .and_then(|s| s.delta_qaic)
    }
}

/// A fit needs at least its parameter count plus this many team-seasons to say anything about a
/// league (our choice of "a handful"): fewer, and the fitted values mostly follow noise.
pub const WEAK_FIT_MARGIN: usize = 5;

/// Warnings for fits on fewer team-seasons than parameters + [`WEAK_FIT_MARGIN`].
fn weak_fits(fits: &[ModelFit]) -> Vec<String> {
    fits.iter()
        .filter(|f| f.fitted && f.rows < f.model.params.len() + WEAK_FIT_MARGIN)
        .map(|f| {
            let on = match f.rows {
                1 => "one team-season".to_string(),
                n => format!("{n} team-seasons"),
            };
            let group = f
                .group
                .as_ref()
                .map_or(String::new(), |g| format!(" (group {g})"));
            let k = f.model.params.len();
            let params = if k == 1 { "parameter" } else { "parameters" };
            format!(
                "{}{group} is fitted on {on}, fewer than the {} ({k} {params} + {WEAK_FIT_MARGIN}) a fit needs: the fit is not informative (its values mostly follow noise); fit on more team-seasons",
                f.model.kind,
                k + WEAK_FIT_MARGIN
            )
        })
        .collect()
}

/// Fit, score and rank as the plan says. `rows` and `table` are the same rows in the same order.
pub fn calibrate(
    rows: &[TeamSeason],
    table: &Table,
    plan: &Plan<'_>,
) -> Result<Calibration, Error> {
    let mut fits: Vec<ModelFit> = Vec::new();
    let mut too_small = Vec::new();
    let mut unfitted = Vec::new();
    let mut group_rows = Vec::new();
    let mut teams = Vec::new();
    // The primary fit's rows (a group's with --by) for the chart.
    // Borrowed when it is the whole table: a game log's table can be megabytes.
    let mut primary: Option<(Model, Option<Group>, Cow<'_, Table>)> = None;
    let mut comparison = None;

    if let Some(x) = plan.exponent {
        let model = Model::new(ModelKind::Pythagorean, vec![x]);
        fits.push(super::score_model(table, model.clone(), plan.loss));
        primary = Some((model, None, Cow::Borrowed(table)));
    } else if let Some(by) = plan.by {
        for (group, idx) in super::group_rows(rows, by) {
            if idx.len() < plan.min_group {
                group_rows.push(GroupRow::TooSmall(group.clone(), idx.len()));
                too_small.push((group, idx.len()));
                continue;
            }
            let sub = table.subset(&idx);
            let sub_rows: Vec<TeamSeason> = idx.iter().map(|&i| rows[i].clone()).collect();
            let each = with_intervals(&sub, &sub_rows, &plan.models, plan);
            for (j, (f, &kind)) in each.into_iter().zip(&plan.models).enumerate() {
                // One group that cannot be fitted is named and marked; the others go on.
                let mut f = match f {
                    Ok(f) => f,
                    Err(e) => {
                        group_rows.push(GroupRow::NotFitted(unfitted.len()));
                        unfitted.push(UnfittedGroup {
                            group: group.clone(),
                            model: kind,
                            rows: idx.len(),
                            reason: e.to_string(),
                        });
                        continue;
                    }
                };
                f.group = Some(group.clone());
                if j == 0 {
                    if plan.team_lines {
                        teams.extend(luck::team_lines(&sub_rows, &sub, &f.model));
                    }
                    if primary.is_none() {
                        primary = Some((
                            f.model.clone(),
                            Some(group.clone()),
                            Cow::Owned(sub.clone()),
                        ));
                    }
                }
                group_rows.push(GroupRow::Fitted(fits.len()));
                fits.push(f);
            }
        }
        if primary.is_none() {
            // The first failure's reason: often every group fails for the same one.
            let first = unfitted.first().map_or(String::new(), |u| {
                format!(" (the first, group {} {}: {})", u.group, u.model, u.reason)
            });
            return Err(Error::Usage(format!(
                "no group could be fitted: {} with fewer than --min-group {} team-seasons, {} that failed to fit{first}",
                too_small.len(),
                plan.min_group,
                unfitted.len()
            )));
        }
    } else {
        for f in with_intervals(table, rows, &plan.models, plan) {
            fits.push(f?);
        }
        let first = fits
            .first()
            .map(|f| (f.model.clone(), None, Cow::Borrowed(table)));
        primary = first;
        super::rank(&mut fits);
        comparison = super::compare::in_sample(&fits);
    }
    let Some((primary, primary_group, primary_table)) = primary else {
        return Err(Error::Usage(
            "no model to fit (--model is empty)".to_string(),
        ));
    };
    let saved = (plan.exponent.is_none() && plan.by.is_none())
        .then(|| {
            fits.iter()
                .position(|f| f.fitted && plan.models.first() == Some(&f.model.kind))
        })
        .flatten();

    if plan.by.is_none() {
        fits.extend(references(table, plan));
        if plan.team_lines {
            teams = luck::team_lines(rows, table, &primary);
        }
    }
    let mut ranking: Vec<usize> = (0..fits.len()).collect();
    ranking.sort_by(|&a, &b| fits[a].loss_value().total_cmp(&fits[b].loss_value()));
    let margin = match (ranking.first(), ranking.get(1)) {
        (Some(&a), Some(&b)) if plan.by.is_none() => {
            Some(fits[b].loss_value() - fits[a].loss_value())
        }
        _ => None,
    };
    let (ahead, behind) = luck::extremes(&teams, plan.top);
    let chart = plan.chart.then(|| FitChart {
        curve: super::loss_curve(&primary_table, &primary, plan.loss),
        group: primary_group,
        residuals: luck::histogram(&teams.iter().map(|t| t.luck_wins).collect::<Vec<_>>(), 24),
    });
    let warnings = weak_fits(&fits);
    Ok(Calibration {
        fits,
        ranking,
        margin,
        too_small,
        unfitted,
        group_rows,
        teams,
        teams_kind: primary.kind,
        teams_model: plan.by.is_none().then_some(primary),
        ahead,
        behind,
        saved,
        chart,
        comparison,
        warnings,
    })
}

/// Each model fitted, and with --bootstrap its intervals, all from one set of resamples (see
/// [`bootstrap::run_all`]); one result per model, in order.
fn with_intervals(
    table: &Table,
    rows: &[TeamSeason],
    kinds: &[ModelKind],
    plan: &Plan<'_>,
) -> Vec<Result<ModelFit, Error>> {
    let mut fitted: Vec<Result<ModelFit, Error>> = kinds
        .iter()
        .map(|&kind| super::fit_model(table, kind, plan.loss).map_err(Error::from))
        .collect();
    let Some(opts) = &plan.bootstrap else {
        return fitted;
    };
    let ok: Vec<ModelFit> = fitted
        .iter()
        .filter_map(|f| f.as_ref().ok())
        .cloned()
        .collect();
    if ok.is_empty() {
        return fitted;
    }
    let results = match bootstrap::run_all(table, rows, &ok, opts) {
        Ok(each) => each,
        Err(e) => vec![Err(e); ok.len()],
    };
    let mut results = results.into_iter();
    for f in &mut fitted {
        if f.is_ok()
            && let Some(r) = results.next()
        {
            match r {
                Ok(iv) => {
                    if let Ok(m) = f {
                        m.intervals = Some(iv);
                    }
                }
                Err(e) => *f = Err(e.into()),
            }
        }
    }
    fitted
}

/// The published references and the user's, each scored once, ranked.
fn references(table: &Table, plan: &Plan<'_>) -> Vec<ModelFit> {
    let standard = if plan.standard_references {
        super::standard_references()
    } else {
        Vec::new()
    };
    let mut refs: Vec<ModelFit> = Vec::new();
    for m in standard.into_iter().chain(plan.references.iter().cloned()) {
        if !refs.iter().any(|r| r.model == m) {
            refs.push(super::score_model(table, m, plan.loss));
        }
    }
    super::rank(&mut refs);
    refs
}
