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
    pub const ALL: [Scheme; 2] = [Scheme::LeaveOneSeasonOut, Scheme::Rolling];

    pub fn name(self) -> &'static str {
        match self {
            Scheme::LeaveOneSeasonOut => "leave-one-season-out",
            Scheme::Rolling => "rolling",
        }
    }

    /// One line on how seasons are held out (for help texts).
    pub fn help(self) -> &'static str {
        match self {
            Scheme::LeaveOneSeasonOut => "fit on every other season, score each season in turn",
            Scheme::Rolling => "fit on all seasons before Y, score Y",
        }
    }
}

impl std::fmt::Display for Scheme {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl std::str::FromStr for Scheme {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Scheme::ALL
            .into_iter()
            .find(|r| r.name() == s.trim())
            .ok_or_else(|| format!("unknown scheme '{s}' (leave-one-season-out or rolling)"))
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
    /// Pooled loss minus the best candidate's (0 for the best).
    pub margin: f64,
    /// Paired standard error of the margin: sd of the per-fold loss differences from the best,
    /// over √folds (`None` for the best, or with fewer than two folds).
    pub margin_se: Option<f64>,
    /// Folds in which this candidate's loss is the lowest (ties count for each tied candidate).
    pub folds_won: usize,
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
            margin: 0.0,
            margin_se: None,
            folds_won: 0,
        });
    }
    out.sort_by(|a, b| {
        loss.of(&a.metrics)
            .total_cmp(&loss.of(&b.metrics))
            .then_with(|| a.candidate.label().cmp(&b.candidate.label()))
    });
    margins(&mut out, loss);
    Ok(out)
}

/// Fill each ranked score's margin over the best, its paired standard error and its folds won.
/// Every candidate is scored on the same folds, in the same order.
fn margins(scores: &mut [CandidateScore], loss: Loss) {
    let Some(best) = scores.first().cloned() else {
        return;
    };
    let best_loss = loss.of(&best.metrics);
    let folds = best.folds.len();
    let lowest: Vec<f64> = (0..folds)
        .map(|f| {
            scores
                .iter()
                .map(|s| s.folds[f].loss)
                .fold(f64::INFINITY, f64::min)
        })
        .collect();
    for (i, s) in scores.iter_mut().enumerate() {
        s.margin = loss.of(&s.metrics) - best_loss;
        s.folds_won = (0..folds).filter(|&f| s.folds[f].loss <= lowest[f]).count();
        if i == 0 || folds < 2 {
            continue;
        }
        let d: Vec<f64> = (0..folds)
            .map(|f| s.folds[f].loss - best.folds[f].loss)
            .collect();
        let mean = d.iter().sum::<f64>() / folds as f64;
        let var = d.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (folds - 1) as f64;
        s.margin_se = Some((var / folds as f64).sqrt());
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::Weighting;
    use crate::fit::testdata::databank;

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

    #[test]
    fn rolling_backtest_reports_paired_margins_and_a_recommendation() {
        let (t, rows) = databank(Some("1980-2006"), Weighting::None);
        let candidates = [
            Candidate::Fit(ModelKind::Pythagorean),
            Candidate::Fit(ModelKind::Pythagenport),
            Candidate::Fixed(Model::new(ModelKind::Pythagorean, vec![1.0])),
        ];
        let scores = run(&rows, &t, &candidates, Loss::Logloss, Scheme::Rolling, 10).unwrap();
        let folds = scores[0].folds.len();
        assert_eq!(folds, 17);
        assert_eq!(scores[0].margin, 0.0);
        assert_eq!(scores.iter().map(|s| s.folds_won).sum::<usize>(), folds);
        // Exponent 1 is far worse than any fitted exponent (common practice: MLB exponents near
        // 1.8-2): more than four paired standard errors behind, so told apart and never recommended.
        let worst = scores.last().unwrap();
        assert_eq!(worst.candidate.label(), "pythagorean:1");
        assert!(worst.margin > 4.0 * worst.margin_se.unwrap(), "{worst:?}");
        let c = crate::fit::compare::backtest(&scores, Loss::Logloss).unwrap();
        assert!(!c.standings[2].indistinguishable_from_best);
        // The two fitted models differ by noise within one era: the simpler one is recommended.
        assert!(c.standings[1].indistinguishable_from_best, "{c:?}");
        assert!(c.cannot_tell_apart);
        assert_eq!(c.recommendation, "pythagorean");
        assert!(c.verdict.contains("cannot tell"));
    }
}
