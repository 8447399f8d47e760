//! Fitting: argmin problems over our loss functions. One-parameter models use Brent's method on a
//! bracket found automatically; the two-parameter model uses Nelder–Mead. The Pythagorean log-loss
//! (a logistic regression without intercept, convex in the exponent) takes Newton steps first.

use argmin::core::{
    CostFunction, Error as ArgminError, Executor, State, TerminationReason, TerminationStatus,
};
use argmin::solver::brent::BrentOpt;
use argmin::solver::neldermead::NelderMead;

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
    fn value(&self, params: &[f64]) -> f64 {
        loss_value(self.table, self.kind, params, self.loss, self.counts)
    }
}

/// A one-parameter problem in u = ln(parameter): every parameter we fit is positive, and a
/// logarithmic scale lets one bracket search cover exponents from 0.1 to 100.
struct LogScale<'a>(Problem<'a>);

impl CostFunction for LogScale<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, u: &f64) -> Result<f64, ArgminError> {
        Ok(self.0.value(&[u.exp()]))
    }
}

struct TwoParam<'a>(Problem<'a>);

impl CostFunction for TwoParam<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Vec<f64>) -> Result<f64, ArgminError> {
        Ok(self.0.value(p))
    }
}

/// Search range, in ln(parameter): about 1e-4 to 1e4.
const LOG_LIMIT: f64 = 9.2;

/// Fit a model. `start` overrides the usual starting values (the bootstrap starts at the full fit).
pub fn fit(p: Problem<'_>, start: Option<&[f64]>) -> Result<Outcome, FitError> {
    let start: Vec<f64> = start.map_or_else(|| p.kind.start(), <[f64]>::to_vec);
    match p.kind {
        ModelKind::Pythagenport => {
            if p.loss == Loss::Logloss
                && let Some(out) = newton_pythagenport(p, &start)
            {
                return Ok(out);
            }
            fit_two(p, &start)
        }
        _ => {
            if p.kind == ModelKind::Pythagorean
                && p.loss == Loss::Logloss
                && let Some(out) = newton_pythagorean(p, start[0])
            {
                return Ok(out);
            }
            fit_one(p, start[0])
        }
    }
}

fn fit_one(p: Problem<'_>, start: f64) -> Result<Outcome, FitError> {
    let problem = LogScale(p);
    let f = |u: f64| p.value(&[u.exp()]);
    let (lo, hi, evals) =
        bracket(&f, start.max(1e-3).ln()).map_err(|reason| FitError::NoMinimum {
            model: p.kind.name().to_string(),
            reason,
        })?;
    let res = Executor::new(problem, BrentOpt::new(lo, hi).set_tolerance(1e-11, 1e-13))
        .configure(|s| s.max_iters(200))
        .run()
        .map_err(|e| FitError::Solver {
            model: p.kind.name().to_string(),
            message: e.to_string(),
        })?;
    let state = res.state();
    let u = *state.get_best_param().ok_or_else(|| FitError::Solver {
        model: p.kind.name().to_string(),
        message: "no parameter returned".to_string(),
    })?;
    Ok(Outcome {
        params: vec![u.exp()],
        loss: state.get_best_cost(),
        iterations: state.get_iter() + evals,
        converged: converged(state.get_termination_status()),
    })
}

fn converged(status: &TerminationStatus) -> bool {
    matches!(
        status,
        TerminationStatus::Terminated(TerminationReason::SolverConverged)
            | TerminationStatus::Terminated(TerminationReason::TargetCostReached)
    )
}

/// Find (lo, hi) around a minimum of `f`, expanding geometrically from `u0` until the loss rises on
/// both sides. Returns the bracket and the number of steps taken.
pub fn bracket(f: &dyn Fn(f64) -> f64, u0: f64) -> Result<(f64, f64, u64), String> {
    let mut h = 0.1;
    let (mut a, mut b, mut c) = (u0 - h, u0, u0 + h);
    let (mut fa, mut fb, mut fc) = (f(a), f(b), f(c));
    let f0 = fb;
    let mut steps = 0;
    if !(fa.is_finite() && fb.is_finite() && fc.is_finite()) {
        return Err("the loss is not finite at the starting value".to_string());
    }
    while !(fb < fa && fb < fc) {
        steps += 1;
        let end = if a <= -LOG_LIMIT && fa < fb {
            Some((a, fa))
        } else if c >= LOG_LIMIT && fc < fb {
            Some((c, fc))
        } else {
            None
        };
        if let Some((end, f_end)) = end
            && let Some((lo, hi, evals)) = bracket_at_end(f, b, end, f_end)
        {
            return Ok((lo, hi, steps + evals));
        }
        if steps > 200 || a <= -LOG_LIMIT || c >= LOG_LIMIT {
            // Flat where the search stopped is not flat everywhere: a loss that fell all the way to
            // the edge (e.g. every record in run order, so larger exponents always fit better) ends
            // flat once the predictions reach 0 and 1.
            return Err(if fa == fb && fb == fc && fb == f0 {
                "the loss does not change with the parameter (do all teams score as many runs as they allow?)"
                    .to_string()
            } else {
                format!(
                    "the loss keeps falling toward {:.3e}; the data have no interior optimum",
                    if b < u0 { a.exp() } else { c.exp() }
                )
            });
        }
        h *= 1.6;
        if fa <= fc {
            // Downhill to the left: slide the triple left.
            c = b;
            fc = fb;
            b = a;
            fb = fa;
            // Never past the ends, so that a minimum just inside them is still found.
            a = (b - h).max(-LOG_LIMIT);
            fa = f(a);
        } else {
            a = b;
            fa = fb;
            b = c;
            fb = fc;
            c = (b + h).min(LOG_LIMIT);
            fc = f(c);
        }
    }
    Ok((a, c, steps))
}

/// At an end of the search range, still falling toward it (f(end) < f(inner)): halve the interval
/// toward the end until a point lower than the end brackets a minimum between `inner` and the end,
/// or the interval is too short to hold one. Returns the bracket and the evaluations spent.
fn bracket_at_end(
    f: &dyn Fn(f64) -> f64,
    inner: f64,
    end: f64,
    f_end: f64,
) -> Option<(f64, f64, u64)> {
    let mut b = inner;
    for evals in 1..=64 {
        let d = 0.5 * (b + end);
        if f(d) < f_end {
            return Some((b.min(end), b.max(end), evals));
        }
        // f(d) >= f(end) < f(b): a minimum, if any, lies between d and the end.
        if (end - d).abs() < 1e-9 {
            break;
        }
        b = d;
    }
    None
}

/// Newton's method on the Pythagorean log-loss, in the exponent itself. The loss is convex in x
/// (a logistic regression on ln(RS/RA) without intercept), so from a sensible start it converges in a
/// handful of steps; any sign of trouble hands the problem to Brent.
pub fn newton_pythagorean(p: Problem<'_>, x0: f64) -> Option<Outcome> {
    let t = p.table;
    let mut x = x0;
    for iter in 1..=50u64 {
        let (mut grad, mut hess) = (0.0, 0.0);
        for i in 0..t.len() {
            let c = p.counts.map_or(1.0, |c| c[i]);
            let l = t.ln_ratio[i];
            // An infinite ratio gives p̂ of exactly 0 or 1 whatever x is: no slope, no curvature.
            if c == 0.0 || !l.is_finite() {
                continue;
            }
            let q = 1.0 / (1.0 + (-x * l).exp());
            let n = c * t.decisions[i];
            grad += (c * t.wins[i] - n * q) * l;
            hess += n * q * (1.0 - q) * l * l;
        }
        if hess.is_nan() || hess <= 0.0 || !grad.is_finite() {
            return None;
        }
        let step = grad / hess;
        x += step;
        if !x.is_finite() || x <= 0.0 {
            return None;
        }
        if step.abs() <= 1e-12 * x.abs().max(1.0) {
            let loss = p.value(&[x]);
            return Some(Outcome {
                params: vec![x],
                loss,
                iterations: iter,
                converged: true,
            });
        }
    }
    None
}

/// Newton's method on the Pythagenport log-loss. With x = a·log10(RPG) + b the expected win% is
/// σ(a·log10(RPG)·l + b·l), l = ln(RS/RA): a logistic regression without intercept on the two
/// covariates log10(RPG)·l and l, so the loss is convex in (a, b) and Newton converges in a few
/// steps where Nelder–Mead needs hundreds of loss evaluations along the long valley (a, b) form.
/// `None` (Nelder–Mead takes over) on any sign of trouble, with a zero-run side in the data (whose
/// prediction jumps where x changes sign), or when the optimum puts a row at the log-loss clamp.
pub fn newton_pythagenport(p: Problem<'_>, start: &[f64]) -> Option<Outcome> {
    let t = p.table;
    if t.ln_ratio.iter().any(|l| !l.is_finite()) {
        return None;
    }
    let (mut a, mut b) = (start[0], start[1]);
    for iter in 1..=50u64 {
        let (mut ga, mut gb) = (0.0, 0.0);
        let (mut haa, mut hab, mut hbb) = (0.0, 0.0, 0.0);
        let mut inside = true;
        for i in 0..t.len() {
            let c = p.counts.map_or(1.0, |c| c[i]);
            if c == 0.0 {
                continue;
            }
            let (l, g) = (t.ln_ratio[i], t.log10_rpg[i]);
            let q = 1.0 / (1.0 + (-(a * g + b) * l).exp());
            inside &= q > 1e-9 && q < 1.0 - 1e-9;
            let n = c * t.decisions[i];
            let r = (c * t.wins[i] - n * q) * l;
            let v = n * q * (1.0 - q) * l * l;
            ga += r * g;
            gb += r;
            haa += v * g * g;
            hab += v * g;
            hbb += v;
        }
        let det = haa * hbb - hab * hab;
        // Nearly singular (the two covariates nearly proportional, as with a single run
        // environment): the optimum is a whole line, which Nelder–Mead handles.
        if det.is_nan()
            || det <= 1e-10 * haa * hbb
            || haa <= 0.0
            || !(ga.is_finite() && gb.is_finite())
        {
            return None;
        }
        let (da, db) = ((hbb * ga - hab * gb) / det, (haa * gb - hab * ga) / det);
        a += da;
        b += db;
        if !(a.is_finite() && b.is_finite()) {
            return None;
        }
        if da.abs() <= 1e-12 * a.abs().max(1.0) && db.abs() <= 1e-12 * b.abs().max(1.0) {
            let loss = p.value(&[a, b]);
            // A safeguard like Nelder–Mead's: never end worse than the start.
            return (inside && loss <= p.value(start)).then(|| Outcome {
                loss,
                params: vec![a, b],
                iterations: iter,
                converged: true,
            });
        }
    }
    None
}

/// Order of [`PythagoreanSeries`]: terms up to dᴼᴿᴰᴱᴿ of the score's Taylor series.
const ORDER: usize = 6;
/// Columns of a series row: w·l, ORDER + 1 score coefficients and the log-likelihood at x0, padded
/// to an even width for two-lane arithmetic.
const WIDTH: usize = ORDER + 4;
const NLL: usize = ORDER + 2;

/// The Pythagorean log-loss of a weighted table as a Taylor series in d = x − x0 around a fixed
/// exponent x0, so that a bootstrap resample's optimum and log-loss follow from dot products of the
/// row counts with per-row coefficients, with no exp or ln at all.
///
/// With q = σ(x0·l), σ⁽ᵏ⁾(x0·l) = Pₖ(q) for polynomials with P₀ = q and Pₖ₊₁ = Pₖ'·q(1−q), so a row's
/// score c·(w − n·σ(x·l))·l is c·(w·l − Σₖ aₖ·dᵏ) with aₖ = n·Pₖ(q)·l^(k+1)/k!, and its negative
/// log-likelihood, whose derivative is minus the score, is c·(nll(x0) − w·l·d + Σₖ aₖ·d^(k+1)/(k+1)).
/// Rows with an infinite ratio have no slope and keep zero coefficients.
#[derive(Debug, Clone)]
pub struct PythagoreanSeries {
    pub x0: f64,
    /// max |l| over rows with a finite ratio: bounds how far the series can be trusted.
    ln_ratio_max: f64,
    rows: Vec<[f64; WIDTH]>,
    /// Per row: l where finite, else 0 (the row's p̂ does not move with x)…
    slopes: Vec<f64>,
    /// …and exp(−x0·l): 0 for l = +∞ (p̂ = 1), +∞ for l = −∞ (p̂ = 0).
    e_start: Vec<f64>,
}

/// Rows per step of [`PythagoreanSeries::predictions`].
const LANES: usize = 8;

/// 0!, 1!, …, 9!.
const FACTORIALS: [f64; 10] = [
    1.0, 1.0, 2.0, 6.0, 24.0, 120.0, 720.0, 5040.0, 40320.0, 362_880.0,
];

/// Sums over a resample's rows of every series column, counted with their multiplicities.
#[derive(Debug, Clone, Copy)]
pub struct SeriesSums {
    x0: f64,
    ln_ratio_max: f64,
    sums: [f64; WIDTH],
}

impl PythagoreanSeries {
    /// `None` when a row's p̂ lies within 1e-9 of 0 or 1 at x0: the log-loss clamps such rows, so
    /// their loss is not the smooth function the series expands.
    pub fn new(t: &Table, x0: f64) -> Option<PythagoreanSeries> {
        // Coefficients of Pₖ in powers of q (Pₖ has degree k+1).
        let mut polys: Vec<Vec<f64>> = vec![vec![0.0, 1.0]];
        for k in 0..ORDER {
            let p = &polys[k];
            let mut next = vec![0.0; p.len() + 1];
            for j in 1..p.len() {
                let dp = j as f64 * p[j];
                next[j] += dp;
                next[j + 1] -= dp;
            }
            polys.push(next);
        }
        let mut ln_ratio_max = 0.0f64;
        let mut rows = Vec::with_capacity(t.len());
        let slopes: Vec<f64> = t
            .ln_ratio
            .iter()
            .map(|&l| if l.is_finite() { l } else { 0.0 })
            .collect();
        let e_start: Vec<f64> = t.ln_ratio.iter().map(|&l| (-x0 * l).exp()).collect();
        for i in 0..t.len() {
            let l = t.ln_ratio[i];
            let mut row = [0.0; WIDTH];
            let p = crate::model::pythagorean_pct(x0, l);
            if l.is_finite() {
                if !(p > 1e-9 && p < 1.0 - 1e-9) {
                    return None;
                }
                ln_ratio_max = ln_ratio_max.max(l.abs());
                row[0] = t.wins[i] * l;
                let (mut lk, mut factorial) = (l, 1.0);
                for (k, poly) in polys.iter().enumerate() {
                    if k > 0 {
                        factorial *= k as f64;
                    }
                    let pk = poly.iter().rev().fold(0.0, |acc, &c| acc * p + c);
                    row[k + 1] = t.decisions[i] * pk * lk / factorial;
                    lk *= l;
                }
            }
            row[NLL] = super::loss::row_nll(t.wins[i], t.losses[i], p);
            rows.push(row);
        }
        Some(PythagoreanSeries {
            x0,
            ln_ratio_max,
            rows,
            slopes,
            e_start,
        })
    }

    /// p̂ at exponent x of each row in `drawn`, into `out`, without calling exp:
    /// exp(−x·l) = exp(−x0·l)·exp(−(x − x0)·l), the second factor a degree-10 Taylor polynomial,
    /// which is exact to rounding while |(x − x0)·l| ≤ 1/8 (the remainder is below 3e-18), and
    /// which vectorises where exp, a call, does not. `false` (and nothing written) beyond that.
    pub fn predictions(&self, x: f64, drawn: &[u32], out: &mut Vec<f64>) -> bool {
        let d = x - self.x0;
        let reach = d.abs() * self.ln_ratio_max;
        if reach.is_nan() || reach > 0.125 {
            return false;
        }
        out.clear();
        // Eight rows at a time: their Horner steps are independent, so they fill the vector lanes
        // and hide each other's latency.
        for rows in drawn.chunks(LANES) {
            let (mut z, mut e) = ([0.0; LANES], [0.0; LANES]);
            for (j, &i) in rows.iter().enumerate() {
                z[j] = -d * self.slopes[i as usize];
                e[j] = self.e_start[i as usize];
            }
            // Horner's rule for Σ zᵏ/k!, k ≤ 10.
            let mut poly = [1.0 / 3_628_800.0; LANES];
            for k in (0..10).rev() {
                for j in 0..LANES {
                    poly[j] = poly[j] * z[j] + 1.0 / FACTORIALS[k];
                }
            }
            let mut p = [0.0; LANES];
            for j in 0..LANES {
                p[j] = 1.0 / (1.0 + e[j] * poly[j]);
            }
            out.extend_from_slice(&p[..rows.len()]);
        }
        true
    }

    /// Column sums over `drawn` (the rows whose count is not zero), each row `counts[i]` times.
    pub fn sums(&self, counts: &[f64], drawn: &[u32]) -> SeriesSums {
        let mut sums = [0.0; WIDTH];
        for &i in drawn {
            let (c, row) = (counts[i as usize], &self.rows[i as usize]);
            for (s, &r) in sums.iter_mut().zip(row) {
                *s += c * r;
            }
        }
        SeriesSums {
            x0: self.x0,
            ln_ratio_max: self.ln_ratio_max,
            sums,
        }
    }
}

impl SeriesSums {
    /// The optimum predicted by the truncated series (Newton's method on a polynomial). Only a
    /// prediction: the caller checks it with an exact Newton step. `None` when the series has no
    /// usable root within |d·l| ≤ 1 (well inside the radius π where σ's series converges).
    pub fn optimum(&self) -> Option<f64> {
        let s = &self.sums;
        let mut d = 0.0;
        for _ in 0..20 {
            // score(d) = s[0] − poly(d) with poly(d) = Σₖ s[k+1]·dᵏ; information(d) = poly'(d).
            let (mut poly, mut info) = (0.0, 0.0);
            for k in (0..=ORDER).rev() {
                info = info * d + poly;
                poly = poly * d + s[k + 1];
            }
            let score = s[0] - poly;
            if info.is_nan() || info <= 0.0 {
                return None;
            }
            let step = score / info;
            d += step;
            let reach = d.abs() * self.ln_ratio_max;
            if reach.is_nan() || reach > 1.0 {
                return None;
            }
            if step.abs() <= 1e-15 * self.x0 {
                let x = self.x0 + d;
                return (x.is_finite() && x > 0.0).then_some(x);
            }
        }
        None
    }

    /// Total negative log-likelihood at exponent x, from the series.
    pub fn nll(&self, x: f64) -> f64 {
        let (s, d) = (&self.sums, x - self.x0);
        // ∫₀ᵈ poly = Σₖ s[k+1]·d^(k+1)/(k+1), by Horner.
        let mut integral = 0.0;
        for k in (0..=ORDER).rev() {
            integral = integral * d + s[k + 1] / (k + 1) as f64;
        }
        s[NLL] - s[0] * d + integral * d
    }

    /// Σ c·w·l: the score's part that does not depend on x.
    pub fn wins_ln_ratio(&self) -> f64 {
        self.sums[0]
    }
}

fn fit_two(p: Problem<'_>, start: &[f64]) -> Result<Outcome, FitError> {
    let mut best = start.to_vec();
    let mut best_cost = p.value(&best);
    if !best_cost.is_finite() {
        return Err(FitError::NoMinimum {
            model: p.kind.name().to_string(),
            reason: "the loss is not finite at the starting values".to_string(),
        });
    }
    let mut iterations = 0;
    let mut converged_any = false;
    // Restarting from the best point with a fresh simplex guards against a collapsed simplex on the
    // long, narrow valley that (a, b) form when run environments vary little.
    for round in 0..6 {
        let scale = if round == 0 { 0.25 } else { 0.05 };
        let simplex = vec![
            best.clone(),
            vec![best[0] + scale * best[0].abs().max(0.2), best[1]],
            vec![best[0], best[1] + scale * best[1].abs().max(0.2)],
        ];
        let solver = NelderMead::new(simplex)
            .with_sd_tolerance(1e-15)
            .map_err(|e| FitError::Solver {
                model: p.kind.name().to_string(),
                message: e.to_string(),
            })?;
        let res = Executor::new(TwoParam(p), solver)
            .configure(|s| s.max_iters(5000))
            .run()
            .map_err(|e| FitError::Solver {
                model: p.kind.name().to_string(),
                message: e.to_string(),
            })?;
        let state = res.state();
        iterations += state.get_iter();
        let done = converged(state.get_termination_status());
        let cost = state.get_best_cost();
        let improved = cost < best_cost - 1e-15 * best_cost.abs();
        if let Some(param) = state.get_best_param()
            && cost <= best_cost
        {
            best = param.clone();
            best_cost = cost;
        }
        converged_any = done;
        if round > 0 && !improved && done {
            break;
        }
    }
    Ok(Outcome {
        params: best,
        loss: best_cost,
        iterations,
        converged: converged_any,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::{LoadOptions, TiePolicy, Weighting};

    fn databank(seasons: Option<&str>) -> Table {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/databank-teams.csv");
        let maps = [
            "season=yearID",
            "league=lgID",
            "team=teamID",
            "runs_scored=R",
        ];
        let opts = LoadOptions {
            maps: maps.iter().map(|m| m.parse().unwrap()).collect(),
            seasons: seasons.map(|s| s.parse().unwrap()),
            ..Default::default()
        };
        let ds = crate::data::load(&[path.to_string()], false, None, &opts).unwrap();
        Table::new(&ds.rows, TiePolicy::Half, Weighting::None)
    }

    #[test]
    fn series_predictions_match_exp_to_rounding() {
        let t = databank(None);
        let x0 = 1.86;
        let series = PythagoreanSeries::new(&t, x0).unwrap();
        let rows: Vec<u32> = (0..t.len() as u32).collect();
        let reach = 0.1249 / series.ln_ratio_max;
        let mut out = Vec::new();
        for d in [-reach, -0.3 * reach, 0.0, 1e-9, 0.5 * reach, reach] {
            assert!(series.predictions(x0 + d, &rows, &mut out));
            for (&i, &p) in rows.iter().zip(&out) {
                let want = crate::model::pythagorean_pct(x0 + d, t.ln_ratio[i as usize]);
                assert!((p - want).abs() <= 1e-15 * want, "{d}: {p} vs {want}");
            }
        }
        assert!(!series.predictions(x0 + 1.02 * reach, &rows, &mut out));
    }

    #[test]
    fn pythagenport_newton_finds_the_nelder_mead_optimum() {
        for seasons in [None, Some("1980-2006")] {
            let t = databank(seasons);
            let p = Problem {
                table: &t,
                kind: ModelKind::Pythagenport,
                loss: Loss::Logloss,
                counts: None,
            };
            let start = ModelKind::Pythagenport.start();
            let newton = newton_pythagenport(p, &start).expect("Newton converges");
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
}
