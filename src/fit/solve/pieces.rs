//! The linear model's log-loss, searched whole. In u = 1/r a row's p̂ = 0.5 + D·u is affine, so its
//! negative log-likelihood is convex in u until p̂ reaches the log-loss clamp, and constant beyond
//! it. A row whose loss rises toward the clamp (losses when D > 0, wins when D < 0) therefore puts a
//! concave kink where it gets there, at u = (0.5 − ε)/|D|, its breakpoint; between consecutive
//! breakpoints the total loss is convex. On the full Databank history the 1870s clubs put eight
//! local minima between r = 5 and r = 60, so a local solver's answer depends on where it starts.
//!
//! The search: each stretch between breakpoints holds at most one minimum. A lower bound of the
//! loss on the stretch where the first j breakpoint rows (in order of u) are clamped is
//! Σ saturated + Σ_{k ≤ j} (clamped − saturated), nondecreasing in j, so the stretches whose bound
//! is not below the best loss found are skipped; every other stretch gets a safeguarded Newton
//! search for the root of the derivative inside it, and the lowest minimum wins.

use super::{Outcome, Problem};
use crate::fit::loss::{LOGLOSS_CLAMP, row_nll};

/// A row with a breakpoint: where it is (in u) and what clamping it costs over its best case.
#[derive(Debug, Clone, Copy)]
pub struct Breakpoint {
    pub row: usize,
    pub u: f64,
    /// Its clamped loss minus its saturated loss (the loss at p̂ = its own win%), both unweighted.
    pub penalty: f64,
}

/// Row `i`'s breakpoint, or `None` when clamping costs it nothing more than it already pays (a
/// zero difference, or the side whose loss rises toward the clamp has no games).
pub fn breakpoint(d: f64, wins: f64, losses: f64) -> Option<f64> {
    let rising = if d > 0.0 { losses } else { wins };
    (d != 0.0 && rising > 0.0 && d.is_finite()).then(|| (0.5 - LOGLOSS_CLAMP) / d.abs())
}

/// The loss a row pays clamped, less the least it can pay.
pub fn penalty(d: f64, wins: f64, losses: f64) -> f64 {
    let clamped = row_nll(wins, losses, if d > 0.0 { 1.0 } else { 0.0 });
    clamped - saturated(wins, losses)
}

/// A row's loss at its own win% (0·ln 0 = 0).
pub fn saturated(wins: f64, losses: f64) -> f64 {
    let n = wins + losses;
    let term = |k: f64| if k > 0.0 { k * (k / n).ln() } else { 0.0 };
    -(term(wins) + term(losses))
}

/// The first and second derivatives in u of row `i`'s loss at p̂ = 0.5 + d·u (zero where clamped).
#[inline]
pub fn row_derivatives(d: f64, wins: f64, losses: f64, u: f64) -> (f64, f64) {
    let p = 0.5 + d * u;
    if !(p > LOGLOSS_CLAMP && p < 1.0 - LOGLOSS_CLAMP) {
        return (0.0, 0.0);
    }
    // One division: 1/p = q·r and 1/q = p·r with r = 1/(p·q).
    let q = 1.0 - p;
    let r = 1.0 / (p * q);
    let (ip, iq) = (q * r, p * r);
    let (a, b) = (wins * ip, losses * iq);
    (d * (b - a), d * d * (a * ip + b * iq))
}

/// Σ c·(first, second derivative) of every counted row at u.
fn derivatives(p: &Problem<'_>, u: f64) -> (f64, f64) {
    let t = p.table;
    let (mut g, mut h) = (0.0, 0.0);
    for i in 0..t.len() {
        let c = p.count(i);
        if c == 0.0 {
            continue;
        }
        let (gi, hi) = row_derivatives(t.diff_per_game[i], t.wins[i], t.losses[i], u);
        g += c * gi;
        h += c * hi;
    }
    (g, h)
}

/// A stretch's derivatives rescaled for [`stretch_minimum`]: (hi − u)·f'(u) and its derivative.
/// The row whose breakpoint ends a stretch at `hi` has its pole (p̂ = 0 or 1) just beyond it, so
/// near `hi` the loss's slope grows like 1/(hi − u) and Newton on it crawls (each step about
/// halves the distance to the pole); times (hi − u) the pole is gone. The factor is positive inside
/// the stretch, so the root and the signs are the slope's own.
pub fn pole_free(derivatives: impl Fn(f64) -> (f64, f64), hi: f64) -> impl Fn(f64) -> (f64, f64) {
    move |u| {
        let (g, h) = derivatives(u);
        let gap = hi - u;
        (gap * g, gap * h - g)
    }
}

/// The root of the (increasing) derivative strictly inside (lo, hi), or `None` when the derivative
/// does not change sign there (the stretch's minimum is at an end, which is no local minimum: the
/// neighbouring stretch is lower). `derivatives(u)`: the loss's first and second derivative; `tol`:
/// the step (relative to u) at which the search stops.
pub fn stretch_minimum(
    derivatives: impl Fn(f64) -> (f64, f64),
    lo: f64,
    hi: f64,
    tol: f64,
) -> Option<f64> {
    let inside = |x: f64| lo + (hi - lo) * x;
    // Just inside the ends: at an end itself a row sits on its clamp.
    let (mut a, mut b) = (inside(1e-12), inside(1.0 - 1e-12));
    let (mut ga, ha) = derivatives(a);
    let (mut gb, hb) = derivatives(b);
    if !(ga < 0.0 && gb > 0.0) {
        return None;
    }
    // The start: the ends' tangent roots, both above the root where the derivative is convex and
    // both below where it is concave (the secant's root lies on the other side, which tells the
    // two apart): the nearer of those inside, else the secant's.
    let secant = |a: f64, ga: f64, b: f64, gb: f64| a - ga * (b - a) / (gb - ga);
    let (na, nb) = (a - ga / ha, b - gb / hb);
    let within = |x: f64, a: f64, b: f64| x > a && x < b;
    let mut u = match (within(na, a, b), within(nb, a, b)) {
        (true, true) if na > secant(a, ga, b, gb) => na.min(nb),
        (true, true) => na.max(nb),
        (true, false) => na,
        (false, true) => nb,
        (false, false) => secant(a, ga, b, gb),
    };
    if !within(u, a, b) {
        u = 0.5 * (a + b);
    }
    let mut previous = f64::INFINITY;
    for _ in 0..200 {
        let (g, h) = derivatives(u);
        if g == 0.0 {
            return Some(u);
        }
        // Converged: Newton's step is below the tolerance (it may round to u itself).
        if h > 0.0 && (g / h).abs() <= tol * u {
            return Some(u - g / h);
        }
        if g < 0.0 {
            (a, ga) = (u, g);
        } else {
            (b, gb) = (u, g);
        }
        // Newton where it stays inside the bracket, else the bracket's secant; bisection when
        // that leaves the bracket or is not half the step before (a secant that keeps moving one
        // end only).
        let newton = u - g / h;
        let mut next = if h > 0.0 && within(newton, a, b) {
            newton
        } else {
            secant(a, ga, b, gb)
        };
        if !within(next, a, b) || (next - u).abs() > 0.5 * previous {
            next = 0.5 * (a + b);
        }
        if (next - u).abs() <= tol * u || b - a <= tol * u {
            return Some(next);
        }
        previous = (next - u).abs();
        u = next;
    }
    Some(u)
}

/// The counted rows' breakpoints in ascending u.
pub fn breakpoints(p: &Problem<'_>) -> Vec<Breakpoint> {
    let t = p.table;
    let mut out: Vec<Breakpoint> = (0..t.len())
        .filter(|&i| p.count(i) != 0.0)
        .filter_map(|i| {
            let (d, w, l) = (t.diff_per_game[i], t.wins[i], t.losses[i]);
            breakpoint(d, w, l).map(|u| Breakpoint {
                row: i,
                u,
                penalty: penalty(d, w, l),
            })
        })
        .collect();
    out.sort_by(|a, b| a.u.total_cmp(&b.u));
    out
}

/// The lowest local minimum of the linear log-loss over every stretch whose bound is below
/// `found`'s loss, as an outcome (which may be `found` itself).
pub fn global(p: Problem<'_>, found: &Outcome) -> Outcome {
    let t = p.table;
    let (mut games, mut floor) = (0.0, 0.0);
    for i in 0..t.len() {
        let c = p.count(i);
        if c != 0.0 {
            games += c * t.decisions[i];
            floor += c * saturated(t.wins[i], t.losses[i]);
        }
    }
    let mut best = found.clone();
    let breaks = breakpoints(&p);
    let mut bound = floor;
    let mut lo = 0.0;
    for j in 0..=breaks.len() {
        if bound / games >= best.loss {
            break;
        }
        let hi = breaks.get(j).map_or(1.0 / 1e-4, |b| b.u);
        if hi > lo
            && let Some(u) = stretch_minimum(pole_free(|u| derivatives(&p, u), hi), lo, hi, 1e-15)
        {
            let loss = p.value(&[1.0 / u]);
            if loss < best.loss {
                best = Outcome {
                    params: vec![1.0 / u],
                    loss,
                    iterations: found.iterations,
                    converged: true,
                };
            }
        }
        if let Some(b) = breaks.get(j) {
            bound += p.count(b.row) * b.penalty;
            lo = b.u;
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::cell::Cell;

    /// A slope with a pole just past the stretch's end, as a row's has near its clamp:
    /// g(u) = A + K/(P − u) with A < 0 < K, whose root is P − K/|A| (algebra). Both searches find
    /// it; the rescaled one in a handful of evaluations where the plain one crawls toward the pole.
    #[test]
    fn a_slope_with_a_pole_is_searched_without_crawling() {
        let (a, k, hi) = (-5.0e4, 2.0, 0.0523);
        let pole = hi + 1e-13;
        let root = pole - k / -a;
        let calls = Cell::new(0);
        let slope = |u: f64| {
            calls.set(calls.get() + 1);
            let gap = pole - u;
            (a + k / gap, k / (gap * gap))
        };
        let plain = stretch_minimum(slope, 0.0, hi, 1e-13).unwrap();
        let plain_calls = calls.replace(0);
        let rescaled = stretch_minimum(pole_free(slope, hi), 0.0, hi, 1e-13).unwrap();
        let rescaled_calls = calls.get();
        assert!((plain - root).abs() <= 1e-12 * root, "{plain} vs {root}");
        assert!(
            (rescaled - root).abs() <= 1e-12 * root,
            "{rescaled} vs {root}"
        );
        assert!(
            rescaled_calls <= 8 && rescaled_calls * 2 < plain_calls,
            "{rescaled_calls} evaluations rescaled, {plain_calls} plain"
        );
    }

    /// Without a pole the rescaling changes nothing that matters: the root of 2u − 1 on (0, 3).
    #[test]
    fn rescaling_keeps_a_smooth_slopes_root() {
        let u = stretch_minimum(
            pole_free(|u: f64| (2.0 * u - 1.0, 2.0), 3.0),
            0.0,
            3.0,
            1e-15,
        );
        assert!((u.unwrap() - 0.5).abs() <= 1e-14);
    }
}
