//! The certificate that lets a linear resample keep the fast path's optimum. The general path
//! searches every stretch between breakpoints for the lowest minimum ([`crate::fit::solve::pieces`]);
//! the fast path finds the minimum of one stretch by Newton, then proves that no other stretch can
//! go lower, from a bound that needs only sums over the drawn rows and exact terms for a few.
//!
//! The rows split in two. The breakpoint rows up to `top` (the 1870s clubs on the full history)
//! are taken exactly, with their clamp. Every other row is smooth and convex on (0, top], with a
//! second derivative of at least mᵢ there, so with u* the optimum found and δ = u − u*, Taylor's
//! theorem gives fᵢ(u) ≥ fᵢ(u*) + fᵢ'(u*)·δ + ½·mᵢ·δ². Their sum with the exact rows is a lower bound
//! of the resample's loss on (0, top], convex on each stretch, whose minimum on each stretch is a few
//! dozen rows' work. Beyond `top` each row's least loss over u ≥ `top` (its clamped loss for an
//! exact row) bounds it, so their sum over the drawn rows bounds the loss there. When every stretch but u*'s has its bound above the loss at u*
//! (by a relative 1e-9), u* is the lowest minimum the general path would find; otherwise the
//! resample goes to the general path.

use crate::data::Table;
use crate::fit::solve::pieces::{self, Breakpoint};

/// How much of the clamped rows' penalties `top` must take in, in multiples of the full data's
/// excess over its saturated loss: resamples vary that excess.
const MARGIN: f64 = 3.0;

#[derive(Debug, Clone)]
pub struct Stretches {
    top: f64,
    /// The breakpoint rows at or below `top`, ascending in u.
    exact: Vec<Breakpoint>,
    /// Each exact row's saturated loss (the least it can pay), in the order of `exact`.
    floors: Vec<f64>,
    /// Per row: the least second derivative on (0, top] (0 for the exact rows and for rows whose
    /// loss has a kink there) and the least loss at any u ≥ top.
    rows: Vec<[f64; 2]>,
}

/// Row `i`'s loss at u, clamped as the log-loss clamps it.
fn row_loss(t: &Table, i: usize, u: f64) -> f64 {
    crate::fit::loss::row_nll(t.wins[i], t.losses[i], 0.5 + t.diff_per_game[i] * u)
}

impl Stretches {
    /// From the full data at its optimum u0 = 1/r0. `None` when the data have no breakpoint rows
    /// at all (then the loss is convex and the Newton optimum needs no certificate).
    pub fn new(t: &Table, u0: f64) -> Option<Stretches> {
        let (mut loss, mut floor) = (0.0, 0.0);
        for i in 0..t.len() {
            loss += row_loss(t, i, u0);
            floor += pieces::saturated(t.wins[i], t.losses[i]);
        }
        let mut breaks: Vec<Breakpoint> = (0..t.len())
            .filter_map(|i| {
                let (d, w, l) = (t.diff_per_game[i], t.wins[i], t.losses[i]);
                pieces::breakpoint(d, w, l).map(|u| Breakpoint {
                    row: i,
                    u,
                    penalty: pieces::penalty(d, w, l),
                })
            })
            .collect();
        if breaks.is_empty() {
            return None;
        }
        breaks.sort_by(|a, b| a.u.total_cmp(&b.u));
        // The first breakpoints past u0 whose penalties add up to MARGIN times the excess.
        let mut sum = 0.0;
        let mut keep = breaks.len();
        for (k, b) in breaks.iter().enumerate() {
            sum += b.penalty;
            if b.u > u0 && sum >= MARGIN * (loss - floor) {
                keep = k + 1;
                break;
            }
        }
        breaks.truncate(keep);
        let top = breaks.last().map_or(u0, |b| b.u);
        let mut exact_row = vec![false; t.len()];
        for b in &breaks {
            exact_row[b.row] = true;
        }
        let rows = (0..t.len())
            .map(|i| {
                let (d, w, l) = (t.diff_per_game[i], t.wins[i], t.losses[i]);
                let curvature = if exact_row[i] {
                    0.0
                } else {
                    least_curvature(d, w, l, top)
                };
                [curvature, least_beyond(d, w, l, top)]
            })
            .collect();
        let floors = breaks
            .iter()
            .map(|b| pieces::saturated(t.wins[b.row], t.losses[b.row]))
            .collect();
        Some(Stretches {
            top,
            floors,
            exact: breaks,
            rows,
        })
    }

    /// The stretch (between the drawn exact rows' breakpoints, up to `top`) that holds u.
    pub fn around(&self, counts: &[f64], u: f64) -> (f64, f64) {
        let mut lo = 0.0;
        for b in self.exact.iter().filter(|b| counts[b.row] != 0.0) {
            if b.u > u {
                return (lo, b.u);
            }
            lo = b.u;
        }
        (lo, self.top)
    }

    /// Whether `at` (u* found by Newton, with the drawn rows' loss there and its derivative in
    /// u) is the lowest minimum over every stretch but those `ruled_out` (already
    /// searched, with no lower minimum): `Lowest`, or the stretch whose bound is lowest below it
    /// (`Search`), or `Unknown` when the bound cannot tell.
    pub fn certify(
        &self,
        t: &Table,
        counts: &[f64],
        drawn: &[u32],
        at: Found,
        ruled_out: &[(f64, f64)],
    ) -> Verdict {
        let Found {
            u: u_star,
            loss,
            gradient,
        } = at;
        if !(u_star > 0.0 && u_star < self.top) {
            return Verdict::Unknown;
        }
        let (mut curvature, mut beyond) = (0.0, 0.0);
        for &i in drawn {
            let (c, row) = (counts[i as usize], &self.rows[i as usize]);
            curvature += c * row[0];
            beyond += c * row[1];
        }
        // The drawn exact rows, and the least they can pay together.
        let (mut exact, mut floor) = (Vec::new(), 0.0);
        for (b, &least) in self.exact.iter().zip(&self.floors) {
            let c = counts[b.row];
            if c != 0.0 {
                exact.push((c, b));
                floor += c * least;
            }
        }
        // Past `top` no row pays less than its least loss there.
        let need = loss * (1.0 + 1e-9);
        if beyond < need {
            return Verdict::Unknown;
        }
        // The smooth rows' part of the loss and of its slope at u*.
        let (mut rest, mut slope) = (loss, gradient);
        for &(c, b) in &exact {
            rest -= c * row_loss(t, b.row, u_star);
            slope -= c * row_derivative(t, b.row, u_star).0;
        }
        let bound = |u: f64| {
            let d = u - u_star;
            let mut v = rest + slope * d + 0.5 * curvature * d * d;
            for &(c, b) in &exact {
                v += c * row_loss(t, b.row, u);
            }
            v
        };
        let bound_slope = |u: f64| {
            let d = u - u_star;
            let (mut g, mut h) = (slope + curvature * d, curvature);
            for &(c, b) in &exact {
                let (gi, hi) = row_derivative(t, b.row, u);
                g += c * gi;
                h += c * hi;
            }
            (g, h)
        };
        // A first, cheaper bound of each stretch: the smooth rows' quadratic at its least there,
        // the exact rows already past their breakpoint at their clamped loss, the others at
        // their saturated loss (the least any row can pay). Only a stretch it cannot rule out
        // gets the exact rows' loss itself.
        let quadratic = |lo: f64, hi: f64| {
            let vertex = if curvature > 0.0 {
                (u_star - slope / curvature).clamp(lo, hi)
            } else if slope > 0.0 {
                lo
            } else {
                hi
            };
            let d = vertex - u_star;
            rest + slope * d + 0.5 * curvature * d * d
        };
        let mut lo = 0.0;
        let mut lowest: Option<(f64, f64, f64)> = None;
        for k in 0..=exact.len() {
            let hi = exact.get(k).map_or(self.top, |(_, b)| b.u);
            let holds_star = lo <= u_star && u_star <= hi;
            if hi > lo
                && !holds_star
                && quadratic(lo, hi) + floor < need
                && !ruled_out.contains(&(lo, hi))
            {
                let least = convex_minimum(&bound, &bound_slope, lo, hi);
                if least < need && lowest.is_none_or(|(v, ..)| least < v) {
                    lowest = Some((least, lo, hi));
                }
            }
            if let Some((c, b)) = exact.get(k) {
                floor += c * b.penalty;
            }
            lo = hi;
        }
        match lowest {
            None => Verdict::Lowest,
            Some((_, lo, hi)) => Verdict::Search(lo, hi),
        }
    }
}

/// A minimum Newton found: u*, the drawn rows' loss there and its derivative in u.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Found {
    pub u: f64,
    pub loss: f64,
    pub gradient: f64,
}

/// What [`Stretches::certify`] found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Verdict {
    Lowest,
    /// The stretch (lo, hi) in u may hold a lower minimum.
    Search(f64, f64),
    Unknown,
}

/// The drawn rows' first and second derivative in u at u.
pub fn derivatives(t: &Table, counts: &[f64], drawn: &[u32], u: f64) -> (f64, f64) {
    let (mut g, mut h) = (0.0, 0.0);
    for &i in drawn {
        let i = i as usize;
        let (gi, hi) = row_derivative(t, i, u);
        g += counts[i] * gi;
        h += counts[i] * hi;
    }
    (g, h)
}

fn row_derivative(t: &Table, i: usize, u: f64) -> (f64, f64) {
    pieces::row_derivatives(t.diff_per_game[i], t.wins[i], t.losses[i], u)
}

/// The least second derivative in u of a row's loss on (0, top]: d²·(W/p² + L/(1 − p)²) at the p
/// nearest its minimiser 1/(1 + (L/W)^⅓) within the p̂ the row takes there; 0 when the row reaches
/// the clamp inside (0, top] (where its loss is flat) or has no difference.
fn least_curvature(d: f64, wins: f64, losses: f64, top: f64) -> f64 {
    let far = 0.5 + d * top;
    let edge = crate::fit::loss::LOGLOSS_CLAMP;
    if d == 0.0 || !(far > edge && far < 1.0 - edge) {
        return 0.0;
    }
    let (lo, hi) = if far < 0.5 { (far, 0.5) } else { (0.5, far) };
    let at = if wins == 0.0 {
        lo // only L/(1 − p)², least at the smallest p
    } else if losses == 0.0 {
        hi
    } else {
        (1.0 / (1.0 + (losses / wins).cbrt())).clamp(lo, hi)
    };
    // Rounding: shave a relative 1e-12 so that the bound stays below the true curvature.
    d * d * (wins / (at * at) + losses / ((1.0 - at) * (1.0 - at))) * (1.0 - 1e-12)
}

/// The least loss a row pays at any u ≥ `top`: p̂ runs from 0.5 + d·top to the clamp on d's side
/// (and stays there), over which the loss is convex in p̂ with its least at the row's own win%, so
/// the least is at that win% moved into the range (the clamped loss for an exact row).
fn least_beyond(d: f64, wins: f64, losses: f64, top: f64) -> f64 {
    let edge = crate::fit::loss::LOGLOSS_CLAMP;
    let clamp = |p: f64| p.clamp(edge, 1.0 - edge);
    let near = clamp(0.5 + d * top);
    let far = if d > 0.0 {
        1.0 - edge
    } else if d < 0.0 {
        edge
    } else {
        near
    };
    let own = wins / (wins + losses);
    let at = if own.is_finite() {
        own.clamp(near.min(far), near.max(far))
    } else {
        near
    };
    // Rounding: shave a relative 1e-12 so that it stays a lower bound.
    crate::fit::loss::row_nll(wins, losses, at) * (1.0 - 1e-12)
}

/// The least value of a convex function on [lo, hi], given its slope and curvature.
fn convex_minimum(
    f: &dyn Fn(f64) -> f64,
    slope: &dyn Fn(f64) -> (f64, f64),
    lo: f64,
    hi: f64,
) -> f64 {
    // Just inside the ends: at an end an exact row sits on its clamp, where its slope is that of
    // the neighbouring stretch. The bound is continuous, so its values there are its infimum's.
    let (lo, hi) = (lo + (hi - lo) * 1e-12, hi - (hi - lo) * 1e-12);
    let (ga, _) = slope(lo);
    if ga >= 0.0 {
        return f(lo);
    }
    let (gb, _) = slope(hi);
    if gb <= 0.0 {
        return f(hi);
    }
    let (mut a, mut b) = (lo, hi);
    let mut u = 0.5 * (a + b);
    for _ in 0..100 {
        let (g, h) = slope(u);
        if g < 0.0 {
            a = u;
        } else {
            b = u;
        }
        let newton = u - g / h;
        let next = if h > 0.0 && newton > a && newton < b {
            newton
        } else {
            0.5 * (a + b)
        };
        if (next - u).abs() <= 1e-14 * u.max(1e-300) || b - a <= 1e-14 * b {
            u = next;
            break;
        }
        u = next;
    }
    // The bisection bracket's ends bound the minimum's place; the least of the three values is
    // the minimum to within rounding.
    f(u).min(f(a)).min(f(b))
}
