//! Newton's method on the log-loss of the exponent models, as an argmin problem that implements
//! `CostFunction`, `Gradient` and `Hessian` from the model's own derivatives
//! ([`crate::model::logit_derivatives`]). For the Pythagorean and
//! Pythagenport models the log-loss is a logistic regression without intercept (x·ln(RS/RA) is
//! linear in the parameters), so it is convex and Newton converges in a handful of steps where
//! Brent or Nelder–Mead need tens to hundreds of loss evaluations along the long valley that
//! Pythagenport's (a, b) form. Any sign of trouble returns `None` and a derivative-free solver
//! takes over.

use std::cell::RefCell;

use argmin::core::{CostFunction, Error as ArgminError, Gradient, Hessian};

use super::{Outcome, Problem};
use crate::model::{ModelKind, Row, logit_derivatives, predict};

/// The total negative log-likelihood of a (weighted) table, with its exact derivatives.
/// Gradient −Σ c·(W − n·p̂)·g; Hessian Σ c·[n·p̂(1−p̂)·g·gᵀ − (W − n·p̂)·∂g], where g is the
/// row's ∂logit(p̂)/∂θ. Rows without a likelihood slope (p̂ of exactly 0 or 1) add nothing.
pub struct LogLikelihood<'a> {
    problem: Problem<'a>,
    /// The last point's gradient and Hessian: both come from one pass over the rows, and Newton
    /// asks for the Hessian at the point whose gradient it just read.
    last: RefCell<Option<Derivatives>>,
}

#[derive(Clone)]
struct Derivatives {
    at: Vec<f64>,
    gradient: Vec<f64>,
    hessian: Vec<Vec<f64>>,
}

impl<'a> LogLikelihood<'a> {
    pub fn new(problem: Problem<'a>) -> LogLikelihood<'a> {
        LogLikelihood {
            problem,
            last: RefCell::new(None),
        }
    }

    fn derivatives(&self, theta: &[f64]) -> Derivatives {
        if let Some(d) = self.last.borrow().as_ref()
            && d.at == theta
        {
            return d.clone();
        }
        let (p, k) = (&self.problem, theta.len());
        let t = p.table;
        let mut gradient = vec![0.0; k];
        let mut hessian = vec![vec![0.0; k]; k];
        for i in 0..t.len() {
            let c = p.count(i);
            if c == 0.0 {
                continue;
            }
            let Some(d) = logit_derivatives(p.kind, theta, &Row::of(t, i)) else {
                continue;
            };
            let (q, g, h) = (d.p, d.gradient, d.hessian);
            let n = c * t.decisions[i];
            let residual = c * t.wins[i] - n * q;
            let v = n * q * (1.0 - q);
            for a in 0..k {
                gradient[a] -= residual * g[a];
                for b in 0..k {
                    hessian[a][b] += v * g[a] * g[b] - residual * h[a][b];
                }
            }
        }
        let d = Derivatives {
            at: theta.to_vec(),
            gradient,
            hessian,
        };
        *self.last.borrow_mut() = Some(d.clone());
        d
    }

    /// Whether every counted row's p̂ stays clear of the log-loss clamp, where the loss stops being
    /// the smooth function whose derivatives are computed here.
    fn off_the_clamp(&self, theta: &[f64]) -> bool {
        let (p, t) = (&self.problem, self.problem.table);
        (0..t.len()).all(|i| {
            let q = predict(p.kind, theta, &Row::of(t, i));
            p.count(i) == 0.0 || (q > 1e-9 && q < 1.0 - 1e-9)
        })
    }
}

impl CostFunction for LogLikelihood<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, theta: &Vec<f64>) -> Result<f64, ArgminError> {
        Ok(self.problem.value(theta))
    }
}

impl Gradient for LogLikelihood<'_> {
    type Param = Vec<f64>;
    type Gradient = Vec<f64>;
    fn gradient(&self, theta: &Vec<f64>) -> Result<Vec<f64>, ArgminError> {
        Ok(self.derivatives(theta).gradient)
    }
}

impl Hessian for LogLikelihood<'_> {
    type Param = Vec<f64>;
    type Hessian = Vec<Vec<f64>>;
    fn hessian(&self, theta: &Vec<f64>) -> Result<Vec<Vec<f64>>, ArgminError> {
        Ok(self.derivatives(theta).hessian)
    }
}

/// The Newton step −H⁻¹·∇ for one or two parameters; `None` when H is not safely positive
/// definite (for two parameters, nearly singular: the covariates nearly proportional, as with a
/// single run environment, so the optimum is a whole line, which Nelder–Mead handles).
fn step(gradient: &[f64], hessian: &[Vec<f64>]) -> Option<Vec<f64>> {
    if !gradient.iter().all(|g| g.is_finite()) {
        return None;
    }
    match gradient.len() {
        1 => {
            let h = hessian[0][0];
            (h > 0.0).then(|| vec![-gradient[0] / h])
        }
        2 => {
            let (haa, hab, hbb) = (hessian[0][0], hessian[0][1], hessian[1][1]);
            let det = haa * hbb - hab * hab;
            if det.is_nan() || det <= 1e-10 * haa * hbb || haa <= 0.0 {
                return None;
            }
            let (ga, gb) = (gradient[0], gradient[1]);
            Some(vec![
                (hab * gb - hbb * ga) / det,
                (hab * ga - haa * gb) / det,
            ])
        }
        _ => None,
    }
}

/// Newton's method from `start` on any problem with a gradient and a Hessian: the parameters and
/// the iterations taken, once every step is within 1e-12 of its parameter (relative, or absolute
/// below 1). `None` on a non-finite or rejected (`valid`) iterate, or after 50 steps.
pub fn newton<P>(
    problem: &P,
    start: &[f64],
    valid: impl Fn(&[f64]) -> bool,
) -> Option<(Vec<f64>, u64)>
where
    P: Gradient<Param = Vec<f64>, Gradient = Vec<f64>>
        + Hessian<Param = Vec<f64>, Hessian = Vec<Vec<f64>>>,
{
    let mut theta = start.to_vec();
    for iter in 1..=50u64 {
        let gradient = problem.gradient(&theta).ok()?;
        let hessian = problem.hessian(&theta).ok()?;
        let delta = step(&gradient, &hessian)?;
        for (v, d) in theta.iter_mut().zip(&delta) {
            *v += d;
        }
        if !theta.iter().all(|v| v.is_finite()) || !valid(&theta) {
            return None;
        }
        if theta
            .iter()
            .zip(&delta)
            .all(|(v, d)| d.abs() <= 1e-12 * v.abs().max(1.0))
        {
            return Some((theta, iter));
        }
    }
    None
}

/// The log-loss optimum of the Pythagorean model (exponent kept positive) or the Pythagenport
/// model (never with a zero-run side in the data, whose prediction jumps where x changes sign; never
/// ending at the clamp or worse than the start). `None` for the other models and on any trouble.
pub fn minimise(p: Problem<'_>, start: &[f64]) -> Option<Outcome> {
    let problem = LogLikelihood::new(p);
    let (params, iterations) = match p.kind {
        ModelKind::Pythagorean => newton(&problem, start, |x| x[0] > 0.0)?,
        ModelKind::Pythagenport => {
            if p.table.ln_ratio.iter().any(|l| !l.is_finite()) {
                return None;
            }
            let (params, iterations) = newton(&problem, start, |_| true)?;
            // A safeguard like Nelder–Mead's: never end worse than the start.
            if !problem.off_the_clamp(&params) || p.value(&params) > p.value(start) {
                return None;
            }
            (params, iterations)
        }
        ModelKind::Pythagenpat | ModelKind::Linear => return None,
    };
    Some(Outcome {
        loss: p.value(&params),
        params,
        iterations,
        converged: true,
    })
}

/// Newton steps from a derivative-free log-loss optimum (PythagenPat and the linear model, whose
/// log-loss need not be convex, or a Pythagenport fit Newton could not start): kept when they
/// converge near it (within 1e-4, relative) to a loss no higher than it, to rounding.
pub fn polish(p: Problem<'_>, found: &Outcome) -> Option<Outcome> {
    let problem = LogLikelihood::new(p);
    let positive = |th: &[f64]| p.kind == ModelKind::Pythagenport || th[0] > 0.0;
    let (params, iterations) = newton(&problem, &found.params, positive)?;
    let near = params
        .iter()
        .zip(&found.params)
        .all(|(a, b)| (a - b).abs() <= 1e-4 * b.abs().max(1e-3));
    let loss = p.value(&params);
    (near && loss <= found.loss + 1e-14 * found.loss.abs()).then(|| Outcome {
        params,
        loss,
        iterations: found.iterations + iterations,
        converged: true,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::Loss;
    use crate::fit::solve::derivative_free::fit_two;
    use crate::fit::testdata::databank;

    #[test]
    fn pythagenport_newton_finds_the_nelder_mead_optimum() {
        for seasons in [None, Some("1980-2006")] {
            let (t, _) = databank(seasons, crate::data::Weighting::None);
            let p = Problem {
                table: &t,
                kind: ModelKind::Pythagenport,
                loss: Loss::Logloss,
                counts: None,
            };
            let start = ModelKind::Pythagenport.start();
            let newton = minimise(p, &start).expect("Newton converges");
            let simplex = fit_two(p, &start).unwrap();
            // The same optimum: equal losses to rounding (the valley is flat enough that the
            // parameters themselves agree only to about 1e-5 on the full history).
            assert!(
                (newton.loss - simplex.loss).abs() <= 1e-13 * simplex.loss,
                "{newton:?} vs {simplex:?}"
            );
            assert!(newton.iterations < 20);
        }
    }

    #[test]
    fn gradient_and_hessian_match_central_differences_for_every_model() {
        let (t, _) = databank(Some("1980-2006"), crate::data::Weighting::None);
        for (kind, theta) in [
            (ModelKind::Pythagorean, vec![1.9]),
            (ModelKind::Pythagenpat, vec![0.28]),
            (ModelKind::Pythagenport, vec![0.5, 1.4]),
            (ModelKind::Linear, vec![9.5]),
        ] {
            let p = Problem {
                table: &t,
                kind,
                loss: Loss::Logloss,
                counts: None,
            };
            let problem = LogLikelihood::new(p);
            let total = |th: &[f64]| p.value(th) * t.decisions.iter().sum::<f64>();
            let g = problem.gradient(&theta).unwrap();
            let h = problem.hessian(&theta).unwrap();
            for a in 0..theta.len() {
                let e = 1e-5 * theta[a].abs();
                let shifted = |s: f64| {
                    let mut th = theta.clone();
                    th[a] += s * e;
                    th
                };
                // Central differences (textbook): O(e²) truncation, here far below 1e-5 relative.
                let fd = (total(&shifted(1.0)) - total(&shifted(-1.0))) / (2.0 * e);
                assert!(
                    (fd - g[a]).abs() <= 1e-5 * g[a].abs().max(1.0),
                    "{kind} ∇{a}: {fd} vs {}",
                    g[a]
                );
                let (gp, gm) = (
                    problem.gradient(&shifted(1.0)).unwrap(),
                    problem.gradient(&shifted(-1.0)).unwrap(),
                );
                for b in 0..theta.len() {
                    let fd = (gp[b] - gm[b]) / (2.0 * e);
                    assert!(
                        (fd - h[a][b]).abs() <= 1e-5 * h[a][b].abs(),
                        "{kind} H{a}{b}: {fd} vs {}",
                        h[a][b]
                    );
                }
            }
        }
    }
}
