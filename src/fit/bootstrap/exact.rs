//! The linear model's exact pass over a resample's drawn rows, in u = 1/r: p̂ = 0.5 + D·u, the
//! slope D·(L/(1 − p̂) − W/p̂) and curvature D²·(W/p̂² + L/(1 − p̂)²) of each row's loss (zero past
//! the clamp, where the loss is constant), and every metric's running sums, with one division per
//! row (1/p̂ and 1/(1 − p̂) from 1/(p̂·(1 − p̂))). Each row's columns are
//! packed into one cache line and four rows are summed side by side in separate lanes, branch-free,
//! so the divisions and sums run four wide; the lanes are added at the end.

use crate::data::Table;
use crate::fit::loss::{LOGLOSS_CLAMP, Sums, row_nll};

/// D, W, L, win%, weight, decisions, season games, and a pad to 64 bytes.
pub type Packed = [f64; 8];

pub fn pack(t: &Table) -> Vec<Packed> {
    (0..t.len())
        .map(|i| {
            [
                t.diff_per_game[i],
                t.wins[i],
                t.losses[i],
                t.win_pct[i],
                t.weight[i],
                t.decisions[i],
                t.games[i],
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

pub(crate) fn pass(
    rows: &[Packed],
    counts: &[f64],
    drawn: &[u32],
    u: f64,
    metrics: bool,
    with_nll: bool,
) -> Pass {
    if metrics {
        lanes::<true>(rows, counts, drawn, u, with_nll)
    } else {
        lanes::<false>(rows, counts, drawn, u, with_nll)
    }
}

type Lane = [f64; LANES];

/// Per-lane running sums.
#[derive(Clone, Copy)]
struct Acc {
    g: Lane,
    h: Lane,
    edge: Lane,
    abs: Lane,
    sq: Lane,
    wsum: Lane,
    games: Lane,
    bias: Lane,
    csum: Lane,
    season: Lane,
    max_abs: Lane,
}

impl Acc {
    /// Four rows, one per lane; a lane with `live` 0 adds nothing.
    #[inline(always)]
    fn block<const METRICS: bool>(&mut self, r: &[Packed; LANES], c: Lane, live: Lane, u: f64) {
        let clamp = LOGLOSS_CLAMP;
        for k in 0..LANES {
            let (d, w, l) = (r[k][0], r[k][1], r[k][2]);
            let p = 0.5 + d * u;
            let q = 1.0 - p;
            let near = p.min(q);
            let inside = near > clamp;
            // Past the clamp the divisions are of harmless stand-ins and their result dropped.
            let (ps, qs) = if inside { (p, q) } else { (1.0, 1.0) };
            // One division: 1/p = q·r and 1/q = p·r with r = 1/(p·q).
            let inv = 1.0 / (ps * qs);
            let (ip, iq) = (qs * inv, ps * inv);
            let (a, b) = (w * ip, l * iq);
            let on = if inside { c[k] } else { 0.0 };
            self.g[k] += on * d * (b - a);
            self.h[k] += on * d * d * (a * ip + b * iq);
            let clear = if live[k] > 0.0 {
                (near - clamp).abs()
            } else {
                f64::INFINITY
            };
            self.edge[k] = self.edge[k].min(clear);
            if METRICS {
                let e = r[k][3] - p;
                let wt = c[k] * r[k][4];
                self.abs[k] += wt * e.abs();
                self.sq[k] += wt * e * e;
                self.wsum[k] += wt;
                self.games[k] += c[k] * r[k][5];
                self.bias[k] += wt * e;
                self.csum[k] += c[k];
                self.season[k] += c[k] * r[k][6];
                self.max_abs[k] = self.max_abs[k].max(e.abs() * live[k]);
            }
        }
    }
}

fn lanes<const METRICS: bool>(
    rows: &[Packed],
    counts: &[f64],
    drawn: &[u32],
    u: f64,
    with_nll: bool,
) -> Pass {
    let zero: Lane = [0.0; LANES];
    let mut acc = Acc {
        g: zero,
        h: zero,
        edge: [f64::INFINITY; LANES],
        abs: zero,
        sq: zero,
        wsum: zero,
        games: zero,
        bias: zero,
        csum: zero,
        season: zero,
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
        let r = [rows[i0], rows[i1], rows[i2], rows[i3]];
        let c = [counts[i0], counts[i1], counts[i2], counts[i3]];
        acc.block::<METRICS>(&r, c, [1.0; LANES], u);
    }
    // The last rows, with the missing lanes repeating the first of them, counted zero.
    let rest = chunks.remainder();
    if let Some(&first) = rest.first() {
        let mut r = [rows[first as usize]; LANES];
        let (mut c, mut live) = (zero, zero);
        for (k, &i) in rest.iter().enumerate() {
            r[k] = rows[i as usize];
            c[k] = counts[i as usize];
            live[k] = 1.0;
        }
        acc.block::<METRICS>(&r, c, live, u);
    }
    let total = |x: &Lane| x.iter().sum::<f64>();
    let sums = METRICS.then(|| {
        let nll = if with_nll {
            drawn
                .iter()
                .map(|&i| {
                    let (c, r) = (counts[i as usize], &rows[i as usize]);
                    c * row_nll(r[1], r[2], 0.5 + r[0] * u)
                })
                .sum()
        } else {
            0.0
        };
        Sums {
            abs: total(&acc.abs),
            sq: total(&acc.sq),
            wsum: total(&acc.wsum),
            nll,
            games: total(&acc.games),
            bias: total(&acc.bias),
            csum: total(&acc.csum),
            max_abs: acc.max_abs.iter().fold(0.0, |a: f64, &b| a.max(b)),
            season_games: total(&acc.season),
        }
    });
    Pass {
        gradient: total(&acc.g),
        hessian: total(&acc.h),
        edge: acc.edge.iter().fold(f64::INFINITY, |a, &b| a.min(b)),
        sums,
    }
}
