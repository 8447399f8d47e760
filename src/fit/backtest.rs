//! Out-of-sample tests: fit on some seasons, score the held-out ones, pool the predictions.

use rayon::prelude::*;

use super::loss::{Loss, Metrics, metrics};
use super::solve::{self, Problem};
use crate::data::{Table, TeamSeason};
use crate::error::FitError;
use crate::model::{Model, ModelKind, Row, predict};

/// How seasons are held out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheme {
    /// Fit on every other season, score each season in turn.
    LeaveOneSeasonOut,
    /// Fit on all seasons before Y, score Y ("calibrate before the season").
    Rolling,
}

impl Scheme {
    pub fn name(self) -> &'static str {
        match self {
            Scheme::LeaveOneSeasonOut => "leave-one-season-out",
            Scheme::Rolling => "rolling",
        }
    }
}

/// A candidate: a model to fit on each training set, or a fixed reference.
#[derive(Debug, Clone, PartialEq)]
pub enum Candidate {
    Fit(ModelKind),
    Fixed(Model),
}

impl Candidate {
    pub fn label(&self) -> String {
        match self {
            Candidate::Fit(k) => k.name().to_string(),
            Candidate::Fixed(m) => m.label(),
        }
    }
}

/// One held-out season.
#[derive(Debug, Clone, PartialEq)]
pub struct Fold {
    pub season: i32,
    pub train_rows: usize,
    pub test_rows: usize,
    pub params: Vec<f64>,
    pub loss: f64,
}

/// A fold with the held-out rows and their predictions.
type FoldPredictions = (Fold, Vec<usize>, Vec<f64>);

/// How far the second candidate trails the best (scores ranked best first), in the loss.
pub fn margin(scores: &[CandidateScore], loss: Loss) -> Option<f64> {
    match (scores.first(), scores.get(1)) {
        (Some(a), Some(b)) => Some(loss.of(&b.metrics) - loss.of(&a.metrics)),
        _ => None,
    }
}

/// A candidate's pooled out-of-sample result.
#[derive(Debug, Clone, PartialEq)]
pub struct CandidateScore {
    pub candidate: Candidate,
    pub metrics: Metrics,
    pub folds: Vec<Fold>,
}

/// One held-out season: its rows, and which rows train the fit (listed only when the fold runs,
/// so memory stays linear in rows however many seasons there are).
#[derive(Debug, Clone, PartialEq)]
pub struct FoldPlan {
    pub season: i32,
    pub test: Vec<usize>,
    pub train_rows: usize,
    scheme: Scheme,
}

impl FoldPlan {
    /// The training rows' indices.
    pub fn train(&self, rows: &[TeamSeason]) -> Vec<usize> {
        let keep = |s: i32| match self.scheme {
            Scheme::LeaveOneSeasonOut => s != self.season,
            Scheme::Rolling => s < self.season,
        };
        (0..rows.len()).filter(|&i| keep(rows[i].season)).collect()
    }
}

/// Seasons held out under a scheme, each with its test rows and the size of its training set.
pub fn folds(rows: &[TeamSeason], scheme: Scheme, min_train: usize) -> Vec<FoldPlan> {
    let mut by_season: std::collections::BTreeMap<i32, Vec<usize>> = Default::default();
    for (i, r) in rows.iter().enumerate() {
        by_season.entry(r.season).or_default().push(i);
    }
    let mut out = Vec::new();
    let mut before = 0;
    for (pos, (season, test)) in by_season.into_iter().enumerate() {
        let n_test = test.len();
        let train_rows = match scheme {
            Scheme::LeaveOneSeasonOut => rows.len() - n_test,
            Scheme::Rolling => before,
        };
        before += n_test;
        if train_rows == 0 || (scheme == Scheme::Rolling && pos < min_train) {
            continue;
        }
        out.push(FoldPlan {
            season,
            test,
            train_rows,
            scheme,
        });
    }
    out
}

/// Why no season could be held out, in the user's terms.
fn no_folds(rows: &[TeamSeason], scheme: Scheme, min_train: usize) -> FitError {
    let mut seasons: Vec<i32> = rows.iter().map(|r| r.season).collect();
    seasons.sort_unstable();
    seasons.dedup();
    let held = match seasons.as_slice() {
        [one] => format!("one season ({one})"),
        s => format!("{} seasons", s.len()),
    };
    FitError::Invalid(match scheme {
        Scheme::LeaveOneSeasonOut => format!(
            "leave-one-season-out needs at least two seasons (one to hold out, one to fit on); the data hold {held}"
        ),
        Scheme::Rolling => format!(
            "rolling with --min-train {min_train} needs more than {} season(s); the data hold {held}",
            min_train.max(1)
        ),
    })
}

/// Run a backtest for every candidate. Folds run in parallel; order is that of the seasons.
pub fn run(
    rows: &[TeamSeason],
    t: &Table,
    candidates: &[Candidate],
    loss: Loss,
    scheme: Scheme,
    min_train: usize,
) -> Result<Vec<CandidateScore>, FitError> {
    let folds = folds(rows, scheme, min_train);
    if folds.is_empty() {
        return Err(no_folds(rows, scheme, min_train));
    }
    let mut out = Vec::new();
    for c in candidates {
        let results: Vec<Result<FoldPredictions, FitError>> = folds
            .par_iter()
            .map(|plan| {
                let test = &plan.test;
                let params = match c {
                    Candidate::Fit(kind) => {
                        let sub = t.subset(&plan.train(rows));
                        solve::fit(
                            Problem {
                                table: &sub,
                                kind: *kind,
                                loss,
                                counts: None,
                            },
                            None,
                        )?
                        .params
                    }
                    Candidate::Fixed(m) => m.params.clone(),
                };
                let kind = match c {
                    Candidate::Fit(k) => *k,
                    Candidate::Fixed(m) => m.kind,
                };
                let test_table = t.subset(test);
                let preds: Vec<f64> = test
                    .iter()
                    .map(|&i| predict(kind, &params, &Row::of(t, i)))
                    .collect();
                let fold_loss = loss.of(&metrics(&test_table, kind, &params, None));
                Ok((
                    Fold {
                        season: plan.season,
                        train_rows: plan.train_rows,
                        test_rows: test.len(),
                        params,
                        loss: fold_loss,
                    },
                    test.clone(),
                    preds,
                ))
            })
            .collect();
        let mut pooled_idx = Vec::new();
        let mut pooled_pred = Vec::new();
        let mut fold_list = Vec::new();
        for r in results {
            let (fold, idx, preds) = r?;
            pooled_idx.extend(idx);
            pooled_pred.extend(preds);
            fold_list.push(fold);
        }
        let pooled = t.subset(&pooled_idx);
        out.push(CandidateScore {
            candidate: c.clone(),
            metrics: super::loss::metrics_of_predictions(&pooled, &pooled_pred),
            folds: fold_list,
        });
    }
    out.sort_by(|a, b| {
        loss.of(&a.metrics)
            .total_cmp(&loss.of(&b.metrics))
            .then_with(|| a.candidate.label().cmp(&b.candidate.label()))
    });
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rows(seasons: i32, teams: usize) -> Vec<TeamSeason> {
        (0..seasons)
            .flat_map(|s| {
                (0..teams).map(move |team| crate::simulate::SeasonRow {
                    season: 2000 + s,
                    team,
                    games: 10,
                    wins: 4 + team as u64 % 3,
                    losses: 6 - team as u64 % 3,
                    runs_scored: 40,
                    runs_allowed: 44,
                })
            })
            .map(|r| r.team_season(None))
            .collect()
    }

    #[test]
    fn fold_plans_hold_each_row_once_whatever_the_number_of_seasons() {
        // Memory linear in rows: 2,000 seasons of 2 teams keep 4,000 indices, not 2,000 × 4,000.
        let rows = rows(2000, 2);
        let plans = folds(&rows, Scheme::LeaveOneSeasonOut, 0);
        assert_eq!(plans.len(), 2000);
        assert_eq!(
            plans.iter().map(|p| p.test.len()).sum::<usize>(),
            rows.len()
        );
        let p = &plans[7];
        let train = p.train(&rows);
        assert_eq!(train.len(), p.train_rows);
        assert!(train.iter().all(|&i| rows[i].season != p.season));
        let rolling = folds(&rows, Scheme::Rolling, 3);
        assert_eq!(rolling[0].season, 2003);
        assert_eq!(rolling[0].train(&rows).len(), 6);
    }

    #[test]
    fn one_season_cannot_be_held_out_and_says_so() {
        let rows = rows(1, 4);
        let e = no_folds(&rows, Scheme::LeaveOneSeasonOut, 0).to_string();
        assert!(
            e.contains("needs at least two seasons") && e.contains("one season (2000)"),
            "{e}"
        );
    }
}
