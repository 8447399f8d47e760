//! The exact passes over a resample's drawn rows of the one-parameter models, each ONE pass that
//! accumulates the loss's slope and curvature and every metric's running sums, branch-free, four
//! rows side by side in separate lanes (the lanes are added at the end), with no call per row:
//!
//! - [`Linear`], in u = 1/r: p̂ = 0.5 + D·u, the slope D·(L/(1 − p̂) − W/p̂) and curvature
//!   D²·(W/p̂² + L/(1 − p̂)²) of each row's loss (zero past the clamp, where the loss is constant),
//!   with one division per row (1/p̂ and 1/(1 − p̂) from 1/(p̂·(1 − p̂))); each row's columns are
//!   packed into one cache line.
//! - [`pythagenpat_pass`], at z = z0 + d: η = η0·exp(d·ln RPG) and p̂ = 1/(1 + exp(−η0)·exp(−(η − η0))),
//!   both exponentials of small arguments as degree-11 Taylor polynomials ([`exp_m1`], exact to
//!   rounding within 1/8; the second one's argument halved and the result squared up to twice
//!   where it is larger), so the pass has no exp at all.

use super::Resampled;
use crate::data::Table;
use crate::fit::loss::{LOGLOSS_CLAMP, Sums, row_nll};

/// D, W, L, win%, weight, decisions, season games, and a pad to 64 bytes.
pub type Packed = [f64; 8];

/// W, L, win%, weight, decisions and season games of row `i`: every pass's columns but the model's.
fn outcome(t: &Table, i: usize) -> [f64; 6] {
    [
        t.wins[i],
        t.losses[i],
        t.win_pct[i],
        t.weight[i],
        t.decisions[i],
        t.games[i],
    ]
}

pub fn pack(t: &Table) -> Vec<Packed> {
    (0..t.len())
        .map(|i| {
            let [w, losses, pct, weight, decisions, games] = outcome(t, i);
            [
                t.diff_per_game[i],
                w,
                losses,
                pct,
                weight,
                decisions,
                games,
                0.0,
            ]
        })
        .collect()
}

/// One pass's results.
pub(crate) struct Pass {
    pub gradient: f64,
    pub hessian: f64,
    /// The least distance of a drawn row's p̂ from the clamp at 0 or 1 (from either side).
    pub edge: f64,
    /// Every metric's sums, when asked; their log-likelihood only when `with_nll`.
    pub sums: Option<Sums>,
}

const LANES: usize = 4;

type Lane = [f64; LANES];

/// What a model's pass computes of one row, counted `c` times.
pub(crate) struct RowPass {
    pub p: f64,
    /// The row's share of the total loss's slope and curvature.
    pub g: f64,
    pub h: f64,
    /// Signed distance of p̂ from the clamp (negative past it); +∞ for a row whose p̂ cannot move.
    pub clear: f64,
}

/// A model's rows for [`pass`].
pub(crate) trait Kernel {
    type Row: Copy;
    /// One row counted `c` times (`c` = 0 adds nothing), inlined into the four-lane loop.
    fn row(&self, r: &Self::Row, c: f64) -> RowPass;
    /// win% and weight of the row (the metrics' other inputs; their count-only sums are the
    /// resample's [`Counted`]).
    fn shared(r: &Self::Row) -> [f64; 2];
    /// The row's negative log-likelihood (one count), for a pass that needs it.
    fn nll(&self, r: &Self::Row) -> f64;
}

/// The linear model at u = 1/r.
pub(crate) struct Linear {
    pub u: f64,
}

impl Kernel for Linear {
    type Row = Packed;

    #[inline(always)]
    fn row(&self, r: &Packed, c: f64) -> RowPass {
        let clamp = LOGLOSS_CLAMP;
        let (d, w, l) = (r[0], r[1], r[2]);
        let p = 0.5 + d * self.u;
        let q = 1.0 - p;
        let near = p.min(q);
        let inside = near > clamp;
        // Past the clamp the divisions are of harmless stand-ins and their result dropped.
        let (ps, qs) = if inside { (p, q) } else { (1.0, 1.0) };
        // One division: 1/p = q·r and 1/q = p·r with r = 1/(p·q).
        let inv = 1.0 / (ps * qs);
        let (ip, iq) = (qs * inv, ps * inv);
        let (a, b) = (w * ip, l * iq);
        let on = if inside { c } else { 0.0 };
        RowPass {
            p,
            g: on * d * (b - a),
            h: on * d * d * (a * ip + b * iq),
            clear: near - clamp,
        }
    }

    #[inline(always)]
    fn shared(r: &Packed) -> [f64; 2] {
        [r[3], r[4]]
    }

    fn nll(&self, r: &Packed) -> f64 {
        row_nll(r[1], r[2], 0.5 + r[0] * self.u)
    }
}

/// PythagenPat's rows: η0 = l·x0 (0 where l is infinite), ln RPG, exp(−η0), W, L, win%, weight,
/// decisions, season games, and 1 where l is finite (0 where p̂ is fixed at 0 or 1).
pub type PatPacked = [f64; 10];

/// PythagenPat's rows at the full-data z0.
pub fn pack_pythagenpat(t: &Table, z0: f64) -> Vec<PatPacked> {
    (0..t.len())
        .map(|i| {
            let l = t.ln_ratio[i];
            let finite = l.is_finite();
            let eta0 = if finite {
                l * (z0 * t.ln_rpg[i]).exp()
            } else {
                0.0
            };
            // p̂ = 1/(1 + e): e = 0 gives 1 (no runs allowed), e = ∞ gives 0 (none scored).
            let e = if finite {
                (-eta0).exp()
            } else if l > 0.0 {
                0.0
            } else {
                f64::INFINITY
            };
            let [w, losses, pct, weight, decisions, games] = outcome(t, i);
            let slope = f64::from(u8::from(finite));
            [
                eta0,
                t.ln_rpg[i],
                e,
                w,
                losses,
                pct,
                weight,
                decisions,
                games,
                slope,
            ]
        })
        .collect()
}

/// PythagenPat at z = z0 + `d`, exp(−(η − η0)) as the polynomial at 2⁻ᴴ of its argument squared H
/// times (each squaring doubles its relative rounding error); see [`pythagenpat_pass`].
pub(crate) struct Pythagenpat<const H: u32> {
    pub d: f64,
}

/// PythagenPat's pass at z0 + `d`, or `None` where its polynomials do not hold for every row
/// (the caller then calls exp). They hold while |d·ln RPG| ≤ 1/8 and |η − η0| ≤ 2ᴴ/8 for H ≤ 2,
/// checked from `bounds` ([`pat_bounds`]: the largest |η0·ln RPG| and |ln RPG|), since
/// |η − η0| = |η0|·|exp(d·ln RPG) − 1| ≤ |η0·ln RPG|·|d|·exp(|d·ln RPG|).
pub(crate) fn pythagenpat_pass(
    rows: &[PatPacked],
    r: Resampled<'_>,
    d: f64,
    bounds: [f64; 2],
    metrics: bool,
    with_nll: bool,
) -> Option<Pass> {
    let s = d.abs() * bounds[1];
    let shift = bounds[0] * d.abs() * s.exp();
    // NaN (a NaN d) fails every test below and falls back too.
    let args = (rows, r, metrics, with_nll);
    if s > 0.125 || s.is_nan() {
        None
    } else if shift <= 0.125 {
        Some(squared::<0>(d, args))
    } else if shift <= 0.25 {
        Some(squared::<1>(d, args))
    } else if shift <= 0.5 {
        Some(squared::<2>(d, args))
    } else {
        None
    }
}

/// [`pythagenpat_pass`] with H squarings: rows, resample, metrics, with_nll.
type PatArgs<'a> = (&'a [PatPacked], Resampled<'a>, bool, bool);

fn squared<const H: u32>(d: f64, (rows, r, metrics, with_nll): PatArgs<'_>) -> Pass {
    pass(&Pythagenpat::<H> { d }, rows, r, metrics, with_nll)
}

/// max |η0·ln RPG| and max |ln RPG| over PythagenPat's rows.
pub fn pat_bounds(rows: &[PatPacked]) -> [f64; 2] {
    rows.iter().fold([0.0f64; 2], |[e, g], r| {
        [e.max((r[0] * r[1]).abs()), g.max(r[1].abs())]
    })
}

/// 1/k! for k ≤ 11.
const INV_FACTORIALS: [f64; 12] = [
    1.0,
    1.0,
    1.0 / 2.0,
    1.0 / 6.0,
    1.0 / 24.0,
    1.0 / 120.0,
    1.0 / 720.0,
    1.0 / 5040.0,
    1.0 / 40_320.0,
    1.0 / 362_880.0,
    1.0 / 3_628_800.0,
    1.0 / 39_916_800.0,
];

/// exp(x) − 1 for |x| ≤ 1/8 as x·Σₖ₌₀¹⁰ xᵏ/(k+1)! (the remainder is below 3e-19 relative), by
/// Estrin's scheme: the pairs, then the pairs of pairs, combined with x², x⁴ and x⁸, so that the
/// longest chain of dependent operations is 8 long instead of Horner's 22 (a pass is bound by that
/// latency, not by the number of operations).
#[inline(always)]
pub(crate) fn exp_m1(x: f64) -> f64 {
    let c = &INV_FACTORIALS;
    let (x2, x4) = (x * x, x * x * (x * x));
    let x8 = x4 * x4;
    let q0 = c[1] + c[2] * x;
    let q1 = c[3] + c[4] * x;
    let q2 = c[5] + c[6] * x;
    let q3 = c[7] + c[8] * x;
    let q4 = c[9] + c[10] * x;
    let r0 = q0 + q1 * x2;
    let r1 = q2 + q3 * x2;
    let r2 = q4 + c[11] * x2;
    (r0 + r1 * x4 + r2 * x8) * x
}

/// exp(x) for |x| ≤ 2ᴴ/8 as exp(x/2ᴴ)^(2ᴴ): [`exp_m1`] at x/2ᴴ (a power of two, so exact), plus
/// one, squared H times. Each squaring doubles the relative rounding error, so the result is within
/// 2ᴴ⁺¹ units in the last place (H ≤ 2: a few parts in 10¹⁶).
#[inline(always)]
pub(crate) fn exp_squared<const H: u32>(x: f64) -> f64 {
    let mut e = 1.0 + exp_m1(x / f64::from(1u32 << H));
    for _ in 0..H {
        e *= e;
    }
    e
}

impl<const H: u32> Pythagenpat<H> {
    /// p̂ and η of a row.
    #[inline(always)]
    fn at(&self, r: &PatPacked) -> (f64, f64) {
        let (eta0, ln_rpg, e) = (r[0], r[1], r[2]);
        let shift = eta0 * exp_m1(self.d * ln_rpg);
        (1.0 / (1.0 + e * exp_squared::<H>(-shift)), eta0 + shift)
    }
}

impl<const H: u32> Kernel for Pythagenpat<H> {
    type Row = PatPacked;

    #[inline(always)]
    fn row(&self, r: &PatPacked, c: f64) -> RowPass {
        let (p, eta) = self.at(r);
        // ∂η/∂z = η·ln RPG, ∂²η/∂z² = η·ln² RPG; both 0 for a row with an infinite ratio.
        let ln_rpg = r[1];
        let slope = eta * ln_rpg;
        let n = c * r[7];
        let residual = c * r[3] - n * p;
        let v = n * p * (1.0 - p);
        RowPass {
            p,
            g: -residual * slope,
            h: v * slope * slope - residual * slope * ln_rpg,
            clear: if r[9] > 0.0 {
                p.min(1.0 - p) - LOGLOSS_CLAMP
            } else {
                f64::INFINITY
            },
        }
    }

    #[inline(always)]
    fn shared(r: &PatPacked) -> [f64; 2] {
        [r[5], r[6]]
    }

    fn nll(&self, r: &PatPacked) -> f64 {
        row_nll(r[3], r[4], self.at(r).0)
    }
}

/// A model's exact pass: gradient, Hessian, clamp distance and (with `metrics`) every metric's
/// sums over the drawn rows. On a CPU with AVX2 the same code runs compiled for it (four lanes in
/// one register instead of two): the same IEEE operations in the same order (Rust fuses no
/// multiply-add unasked), so the same bits, as a test checks.
pub(crate) fn pass<K: Kernel>(
    kernel: &K,
    rows: &[K::Row],
    r: Resampled<'_>,
    metrics: bool,
    with_nll: bool,
) -> Pass {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2 (checked just above).
        return unsafe { pass_avx2(kernel, rows, r, metrics, with_nll) };
    }
    pass_generic(kernel, rows, r, metrics, with_nll)
}

/// [`pass_generic`] compiled for AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn pass_avx2<K: Kernel>(
    kernel: &K,
    rows: &[K::Row],
    r: Resampled<'_>,
    metrics: bool,
    with_nll: bool,
) -> Pass {
    pass_generic(kernel, rows, r, metrics, with_nll)
}

/// [`pass`] for any CPU; inlined, so that [`pass_avx2`] compiles it for AVX2.
#[inline(always)]
fn pass_generic<K: Kernel>(
    kernel: &K,
    rows: &[K::Row],
    r: Resampled<'_>,
    metrics: bool,
    with_nll: bool,
) -> Pass {
    if metrics {
        lanes::<K, true>(kernel, rows, r, with_nll)
    } else {
        lanes::<K, false>(kernel, rows, r, with_nll)
    }
}

/// Per-lane running sums.
#[derive(Clone, Copy)]
struct Acc {
    g: Lane,
    h: Lane,
    edge: Lane,
    abs: Lane,
    sq: Lane,
    bias: Lane,
    max_abs: Lane,
}

impl Acc {
    /// Four rows, one per lane; a lane with `live` 0 adds nothing.
    #[inline(always)]
    fn block<K: Kernel, const METRICS: bool>(
        &mut self,
        kernel: &K,
        r: &[&K::Row; LANES],
        c: Lane,
        live: Lane,
    ) {
        for k in 0..LANES {
            let one = kernel.row(r[k], c[k]);
            self.g[k] += one.g;
            self.h[k] += one.h;
            let clear = if live[k] > 0.0 {
                one.clear.abs()
            } else {
                f64::INFINITY
            };
            self.edge[k] = self.edge[k].min(clear);
            if METRICS {
                let [win_pct, weight] = K::shared(r[k]);
                let e = win_pct - one.p;
                let wt = c[k] * weight;
                self.abs[k] += wt * e.abs();
                self.sq[k] += wt * e * e;
                self.bias[k] += wt * e;
                self.max_abs[k] = self.max_abs[k].max(e.abs() * live[k]);
            }
        }
    }
}

#[inline(always)]
fn lanes<K: Kernel, const METRICS: bool>(
    kernel: &K,
    rows: &[K::Row],
    r: Resampled<'_>,
    with_nll: bool,
) -> Pass {
    let Resampled {
        counts,
        drawn,
        counted,
    } = r;
    let zero: Lane = [0.0; LANES];
    let mut acc = Acc {
        g: zero,
        h: zero,
        edge: [f64::INFINITY; LANES],
        abs: zero,
        sq: zero,
        bias: zero,
        max_abs: zero,
    };
    let mut chunks = drawn.chunks_exact(LANES);
    for chunk in &mut chunks {
        let (i0, i1, i2, i3) = (
            chunk[0] as usize,
            chunk[1] as usize,
            chunk[2] as usize,
            chunk[3] as usize,
        );
        let r = [&rows[i0], &rows[i1], &rows[i2], &rows[i3]];
        let c = [counts[i0], counts[i1], counts[i2], counts[i3]];
        acc.block::<K, METRICS>(kernel, &r, c, [1.0; LANES]);
    }
    // The last rows, with the missing lanes repeating the first of them, counted zero.
    let rest = chunks.remainder();
    if let Some(&first) = rest.first() {
        let mut r = [&rows[first as usize]; LANES];
        let (mut c, mut live) = (zero, zero);
        for (k, &i) in rest.iter().enumerate() {
            r[k] = &rows[i as usize];
            c[k] = counts[i as usize];
            live[k] = 1.0;
        }
        acc.block::<K, METRICS>(kernel, &r, c, live);
    }
    let total = |x: &Lane| x.iter().sum::<f64>();
    let sums = METRICS.then(|| {
        let nll = if with_nll {
            drawn
                .iter()
                .map(|&i| counts[i as usize] * kernel.nll(&rows[i as usize]))
                .sum()
        } else {
            0.0
        };
        Sums {
            abs: total(&acc.abs),
            sq: total(&acc.sq),
            nll,
            bias: total(&acc.bias),
            max_abs: acc.max_abs.iter().fold(0.0, |a: f64, &b| a.max(b)),
            ..Sums::counted(counted)
        }
    });
    Pass {
        gradient: total(&acc.g),
        hessian: total(&acc.h),
        edge: acc.edge.iter().fold(f64::INFINITY, |a, &b| a.min(b)),
        sums,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::loss::Counted;
    use crate::model::{ModelKind, Row, logit_derivatives};

    #[test]
    fn exp_m1_is_exact_to_rounding_within_an_eighth() {
        // Against the platform's expm1 (std's f64::exp_m1), a few ulps.
        for k in -1000..=1000 {
            let x = f64::from(k) / 8000.0;
            let (got, want) = (exp_m1(x), x.exp_m1());
            assert!((got - want).abs() <= 4.0 * f64::EPSILON * want.abs(), "{x}");
        }
        assert_eq!(exp_m1(0.0), 0.0);
    }

    #[test]
    fn squared_logistic_matches_exp_within_half_a_unit() {
        // exp(z) = exp(z/4)⁴ for |z| ≤ 1/2, as the Pythagenport pass uses it.
        let e: Vec<f64> = (0..50).map(|i| (0.4 - 0.02 * f64::from(i)).exp()).collect();
        let drawn: Vec<u32> = (0..50).collect();
        let z = |i: usize| 0.5 - 0.02 * i as f64;
        let mut out = Vec::new();
        super::super::series::shifted_logistic_squared::<2>(&e, &drawn, z, &mut out);
        for (i, &p) in out.iter().enumerate() {
            let want = 1.0 / (1.0 + e[i] * z(i).exp());
            assert!((p - want).abs() <= 1e-15 * want, "{i}: {p} vs {want}");
        }
    }

    /// PythagenPat's exp-free pass against the model's own derivatives (crate::model, which calls
    /// exp), row by row, on the Databank: p̂, slope and curvature to rounding.
    #[test]
    fn pythagenpat_pass_matches_the_model_derivatives() {
        let (t, _) = crate::fit::testdata::databank(None, crate::data::Weighting::None);
        let z0 = 0.28;
        let rows = pack_pythagenpat(&t, z0);
        let bounds = pat_bounds(&rows);
        let counts: Vec<f64> = (0..t.len()).map(|i| f64::from((i % 3) as u8)).collect();
        let drawn: Vec<u32> = (0..t.len() as u32)
            .filter(|&i| counts[i as usize] > 0.0)
            .collect();
        let counted = Counted::of(&t, &counts);
        let r = Resampled {
            counts: &counts,
            drawn: &drawn,
            counted: &counted,
        };
        // The bootstrap SD of z on the Databank is about 0.003 (runcal fit --bootstrap): ±0.01 is
        // past three of them.
        for d in [-0.01, -1e-4, 0.0, 3e-3, 0.007, 0.01] {
            let pass = pythagenpat_pass(&rows, r, d, bounds, true, true).unwrap();
            let (mut g, mut h, mut nll) = (0.0, 0.0, 0.0);
            for &i in &drawn {
                let i = i as usize;
                let c = counts[i];
                let r = Row::of(&t, i);
                let dv = logit_derivatives(ModelKind::Pythagenpat, &[z0 + d], &r).unwrap();
                let n = c * t.decisions[i];
                let residual = c * t.wins[i] - n * dv.p;
                g -= residual * dv.gradient[0];
                h += n * dv.p * (1.0 - dv.p) * dv.gradient[0].powi(2) - residual * dv.hessian[0][0];
                nll += c * row_nll(t.wins[i], t.losses[i], dv.p);
            }
            let close = |a: f64, b: f64, tol: f64| (a - b).abs() <= tol * b.abs().max(1.0);
            assert!(
                close(pass.gradient, g, 1e-9),
                "{d}: {} vs {g}",
                pass.gradient
            );
            assert!(
                close(pass.hessian, h, 1e-12),
                "{d}: {} vs {h}",
                pass.hessian
            );
            assert!(close(pass.sums.unwrap().nll, nll, 1e-13), "{d}");
        }
        // The AVX2 build of the pass gives the same bits as the generic one.
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            for d in [-0.01, 0.0, 0.01] {
                let kernel = Pythagenpat::<1> { d };
                let a = pass_generic(&kernel, &rows, r, true, true);
                // SAFETY: the CPU has AVX2 (checked above).
                let b = unsafe { pass_avx2(&kernel, &rows, r, true, true) };
                let (sa, sb) = (a.sums.unwrap(), b.sums.unwrap());
                assert_eq!(a.gradient.to_bits(), b.gradient.to_bits());
                assert_eq!(a.hessian.to_bits(), b.hessian.to_bits());
                assert_eq!(a.edge.to_bits(), b.edge.to_bits());
                assert_eq!(sa.abs.to_bits(), sb.abs.to_bits());
                assert_eq!(sa.nll.to_bits(), sb.nll.to_bits());
                assert_eq!(sa.max_abs.to_bits(), sb.max_abs.to_bits());
            }
        }
        // Far from z0 the polynomials do not hold, and the caller falls back to exp.
        assert!(pythagenpat_pass(&rows, r, 0.1, bounds, true, true).is_none());
    }
}
