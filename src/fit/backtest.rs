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

/// Seasons held out under a scheme, each with its training and test row indices.
pub fn folds(
    rows: &[TeamSeason],
    scheme: Scheme,
    min_train: usize,
) -> Vec<(i32, Vec<usize>, Vec<usize>)> {
    let mut seasons: Vec<i32> = rows.iter().map(|r| r.season).collect();
    seasons.sort_unstable();
    seasons.dedup();
    let mut out = Vec::new();
    for (pos, &y) in seasons.iter().enumerate() {
        let train: Vec<usize> = match scheme {
            Scheme::LeaveOneSeasonOut => (0..rows.len()).filter(|&i| rows[i].season != y).collect(),
            Scheme::Rolling => {
                if pos < min_train {
                    continue;
                }
                (0..rows.len()).filter(|&i| rows[i].season < y).collect()
            }
        };
        let test: Vec<usize> = (0..rows.len()).filter(|&i| rows[i].season == y).collect();
        if !train.is_empty() {
            out.push((y, train, test));
        }
    }
    out
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
        return Err(FitError::Invalid(format!(
            "no season can be held out: {} needs at least {} earlier season(s) of training data",
            scheme.name(),
            if scheme == Scheme::Rolling {
                min_train.max(1)
            } else {
                1
            }
        )));
    }
    let mut out = Vec::new();
    for c in candidates {
        let results: Vec<Result<FoldPredictions, FitError>> = folds
            .par_iter()
            .map(|(season, train, test)| {
                let params = match c {
                    Candidate::Fit(kind) => {
                        let sub = t.subset(train);
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
                        season: *season,
                        train_rows: train.len(),
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
