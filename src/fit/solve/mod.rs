//! Fitting: argmin problems over our loss functions. The log-loss of the Pythagorean and
//! Pythagenport models (logistic regressions without intercept, convex in their parameters) is
//! minimised by Newton's method on a problem with the exact gradient and Hessian ([`newton`]); every
//! other model and loss, and any Newton run that shows trouble, goes to argmin's derivative-free
//! solvers ([`derivative_free`]): Brent on an automatically found bracket ([`bracket`]) for one
//! parameter, Nelder–Mead with restarts for two. A log-loss optimum found without derivatives is
//! then polished by Newton: a loss value locates its optimum only to about √ε, the score's root
//! to rounding. The linear log-loss, which is convex only between the points where a row reaches
//! the clamp, is searched stretch by stretch for its lowest minimum ([`pieces`]).

pub mod bracket;
pub mod derivative_free;
pub mod newton;
pub mod pieces;

use argmin::core::{TerminationReason, TerminationStatus};

pub use bracket::bracket;

use super::loss::{Loss, loss_value};
use crate::data::Table;
use crate::error::FitError;
use crate::model::ModelKind;

/// The result of one fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub params: Vec<f64>,
    pub loss: f64,
    pub iterations: u64,
    pub converged: bool,
}

/// What to fit and on which rows.
#[derive(Debug, Clone, Copy)]
pub struct Problem<'a> {
    pub table: &'a Table,
    pub kind: ModelKind,
    pub loss: Loss,
    /// Row multiplicities (bootstrap); `None` means each row once.
    pub counts: Option<&'a [f64]>,
}

impl Problem<'_> {
    /// The loss at `params`.
    pub fn value(&self, params: &[f64]) -> f64 {
        loss_value(self.table, self.kind, params, self.loss, self.counts)
    }

    /// Row `i`'s multiplicity.
    #[inline]
    pub fn count(&self, i: usize) -> f64 {
        self.counts.map_or(1.0, |c| c[i])
    }
}

/// Fit a model. `start` overrides the usual starting values (the bootstrap starts at the full fit).
pub fn fit(p: Problem<'_>, start: Option<&[f64]>) -> Result<Outcome, FitError> {
    let start: Vec<f64> = start.map_or_else(|| p.kind.start(), <[f64]>::to_vec);
    if p.loss == Loss::Logloss
        && let Some(out) = newton::minimise(p, &start)
    {
        return Ok(out);
    }
    let mut out = match p.kind {
        ModelKind::Pythagenport => derivative_free::fit_two(p, &start)?,
        _ => derivative_free::fit_one(p, start[0])?,
    };
    // The linear log-loss has a local minimum past each row that reaches the clamp: the lowest of
    // them is the fit, wherever Brent started (see [`pieces`]).
    if p.kind == ModelKind::Linear && p.loss == Loss::Logloss {
        out = pieces::global(p, &out);
    }
    if p.loss == Loss::Logloss
        && let Some(polished) = newton::polish(p, &out)
    {
        return Ok(polished);
    }
    Ok(out)
}

/// Whether argmin stopped because the solver converged.
pub(crate) fn converged(status: &TerminationStatus) -> bool {
    matches!(
        status,
        TerminationStatus::Terminated(TerminationReason::SolverConverged)
            | TerminationStatus::Terminated(TerminationReason::TargetCostReached)
    )
}
