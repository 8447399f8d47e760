//! The linear model's resample loss near the full-data optimum, cheaply: in u = 1/r a row's
//! p̂ = 0.5 + D·u is affine, so its score is −W·D/(p̂0 + D·δ) + L·D/(1 − p̂0 − D·δ) with δ = u − u0,
//! two geometric series in δ whose radius is the row's distance to 0 or 1 in u, min(p̂0, 1 − p̂0)/|D|.
//! Within the window |δ| ≤ [`WINDOW`]·u0 a row whose radius is at least the window over [`RATIO`]
//! is summed as its series to order [`ORDER`] (truncation below RATIO^(ORDER+1) ≈ 1e-13 of the row's
//! score), or to [`FAR_ORDER`] when its ratio is under [`FAR_RATIO`]; the others (the rows near 0 or 1, a few dozen of the 2,955 on the full Databank
//! history, and every row whose clamp falls inside the window) are taken exactly, clamp and all.
//! A resample's loss there is then its count-weighted coefficient sums (no division or ln per row)
//! plus its near rows, so the search over the window's stretches (between the near rows'
//! breakpoints, see [`crate::fit::solve::pieces`]) costs a few dozen rows per step, not thousands.
//! What it finds is only a start: the caller checks it with an exact Newton pass over every drawn
//! row and proves it lowest with [`super::stretches`].

use super::columns::BySeason;
use crate::data::Table;
use crate::fit::loss::row_nll;
use crate::fit::solve::pieces;

/// Order of the score series.
const ORDER: usize = 24;
/// Columns of a row: ORDER + 1 score coefficients and the row's loss at u0.
const WIDTH: usize = ORDER + 2;
const NLL: usize = ORDER + 1;
/// The window's half-width, relative to u0.
const WINDOW: f64 = 0.25;
/// The largest ratio of the window's half-width to a series row's radius.
const RATIO: f64 = 0.3;
/// Most rows are far from 0 and 1 (on the full Databank history all but a few hundred have a
/// ratio under 0.035): their series is cut at [`FAR_ORDER`] (truncation below 0.035^9 ≈ 8e-14 of
/// the row's score), so the per-resample sums read a quarter of the bytes.
const FAR_RATIO: f64 = 0.09;
const FAR_ORDER: usize = 12;
const FAR_WIDTH: usize = FAR_ORDER + 2;
/// How closely (relative to u) a search pins a stretch's minimum before the exact Newton pass
/// (which accepts a step of 1e-12) finishes it; tighter only bisects the sums' rounding noise.
pub const SEARCH_TOL: f64 = 1e-13;

#[derive(Debug, Clone)]
pub struct Window {
    u0: f64,
    /// Per row: its score series in δ to [`FAR_ORDER`] and its loss at u0 (zeros for a row that
    /// is not far).
    far: Vec<[f64; FAR_WIDTH]>,
    /// The other series rows (index, series to [`ORDER`] and loss at u0), ascending.
    mid: Vec<(u32, [f64; WIDTH])>,
    /// The rows taken exactly, ascending.
    near: Vec<u32>,
    /// The far and mid rows' series summed by season, under season resampling.
    by_season: Option<BySeason<WIDTH>>,
}

/// One resample's sums: the series rows' coefficients and its drawn near rows (count, row).
pub struct Sums {
    s: [f64; WIDTH],
    near: Vec<(f64, usize)>,
}

fn row_loss(t: &Table, i: usize, u: f64) -> f64 {
    row_nll(t.wins[i], t.losses[i], 0.5 + t.diff_per_game[i] * u)
}

impl Window {
    pub fn new(t: &Table, u0: f64) -> Window {
        let reach = WINDOW * u0;
        let (mut near, mut mid) = (Vec::new(), Vec::new());
        let mut far = vec![[0.0; FAR_WIDTH]; t.len()];
        for (i, far_row) in far.iter_mut().enumerate() {
            let (d, w, l) = (t.diff_per_game[i], t.wins[i], t.losses[i]);
            let (p0, q0) = (0.5 + d * u0, 0.5 - d * u0);
            let ratio = if d == 0.0 {
                0.0
            } else {
                reach * d.abs() / p0.min(q0)
            };
            if !(d.is_finite() && p0 > 0.0 && q0 > 0.0 && ratio <= RATIO) {
                near.push(i as u32);
                continue;
            }
            // sₖ = W·(−a)^(k+1) + L·b^(k+1), a = D/p̂0, b = D/(1 − p̂0).
            let (a, b) = (-d / p0, d / q0);
            let mut out = [0.0; WIDTH];
            let (mut pa, mut pb) = (a, b);
            for c in out[..=ORDER].iter_mut() {
                *c = w * pa + l * pb;
                pa *= a;
                pb *= b;
            }
            out[NLL] = row_nll(w, l, p0);
            if ratio <= FAR_RATIO {
                far_row[..=FAR_ORDER].copy_from_slice(&out[..=FAR_ORDER]);
                far_row[FAR_ORDER + 1] = out[NLL];
            } else {
                mid.push((i as u32, out));
            }
        }
        Window {
            u0,
            far,
            mid,
            near,
            by_season: None,
        }
    }

    /// For season resampling: the series rows' sums by season (`seasons`: each season's rows).
    pub fn by_season(&mut self, seasons: &[Vec<usize>]) {
        let mut full = vec![[0.0; WIDTH]; self.far.len()];
        for (i, f) in self.far.iter().enumerate() {
            full[i][..=FAR_ORDER].copy_from_slice(&f[..=FAR_ORDER]);
            full[i][NLL] = f[FAR_ORDER + 1];
        }
        for (i, row) in &self.mid {
            full[*i as usize] = *row;
        }
        self.by_season = Some(BySeason::new(seasons, |i| full[i]));
    }

    /// The window, in u.
    pub fn bounds(&self) -> (f64, f64) {
        (self.u0 * (1.0 - WINDOW), self.u0 * (1.0 + WINDOW))
    }

    pub fn sums(&self, counts: &[f64], drawn: &[u32]) -> Sums {
        let near = self
            .near
            .iter()
            .map(|&i| (counts[i as usize], i as usize))
            .filter(|&(c, _)| c != 0.0)
            .collect();
        if let Some(b) = &self.by_season {
            return Sums {
                s: b.sums(counts),
                near,
            };
        }
        let mut f = [0.0; FAR_WIDTH];
        for &i in drawn {
            let (c, row) = (counts[i as usize], self.far[i as usize]);
            #[allow(clippy::needless_range_loop)] // an unrolled loop keeps `f` in registers
            for k in 0..FAR_WIDTH {
                f[k] += c * row[k];
            }
        }
        let mut s = [0.0; WIDTH];
        for (i, row) in &self.mid {
            let c = counts[*i as usize];
            if c != 0.0 {
                for (s, &r) in s.iter_mut().zip(row) {
                    *s += c * r;
                }
            }
        }
        for (s, &f) in s.iter_mut().zip(&f[..=FAR_ORDER]) {
            *s += f;
        }
        s[NLL] += f[FAR_ORDER + 1];
        Sums { s, near }
    }

    /// The resample's first and second derivative in u at u (inside the window).
    pub fn derivatives(&self, t: &Table, sums: &Sums, u: f64) -> (f64, f64) {
        let delta = u - self.u0;
        let (mut g, mut h) = (0.0, 0.0);
        for &c in sums.s[..=ORDER].iter().rev() {
            h = h * delta + g;
            g = g * delta + c;
        }
        for &(c, i) in &sums.near {
            let (gi, hi) = pieces::row_derivatives(t.diff_per_game[i], t.wins[i], t.losses[i], u);
            g += c * gi;
            h += c * hi;
        }
        (g, h)
    }

    /// The resample's loss Σ c·nll at u (inside the window): the series rows' loss at u0 plus their
    /// score integrated from u0, and the near rows exactly.
    pub fn value(&self, t: &Table, sums: &Sums, u: f64) -> f64 {
        let delta = u - self.u0;
        let mut integral = 0.0;
        for (k, &c) in sums.s[..=ORDER].iter().enumerate().rev() {
            integral = integral * delta + c / (k + 1) as f64;
        }
        let near: f64 = sums.near.iter().map(|&(c, i)| c * row_loss(t, i, u)).sum();
        sums.s[NLL] + integral * delta + near
    }

    /// The lowest minimum inside the window: each stretch between the drawn near rows'
    /// breakpoints is searched, and the least of their minima kept. `None` when no stretch has
    /// its minimum inside (the resample's optimum is beyond the window).
    pub fn lowest(&self, t: &Table, sums: &Sums) -> Option<f64> {
        let (lo, hi) = self.bounds();
        let mut ends: Vec<f64> = sums
            .near
            .iter()
            .filter_map(|&(_, i)| pieces::breakpoint(t.diff_per_game[i], t.wins[i], t.losses[i]))
            .filter(|&u| u > lo && u < hi)
            .collect();
        ends.push(hi);
        ends.sort_by(f64::total_cmp);
        let mut best: Option<(f64, f64)> = None;
        let mut a = lo;
        for &b in &ends {
            if b > a
                && let Some(u) = pieces::stretch_minimum(
                    pieces::pole_free(|u| self.derivatives(t, sums, u), b),
                    a,
                    b,
                    SEARCH_TOL,
                )
            {
                let v = self.value(t, sums, u);
                if best.is_none_or(|(_, least)| v < least) {
                    best = Some((u, v));
                }
            }
            a = b;
        }
        best.map(|(u, _)| u)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The series rows' sums against the exact loss and derivative at points across the window
    /// (the exact row formulas are [`row_loss`] and [`pieces::row_derivatives`]).
    #[test]
    fn the_window_matches_the_exact_loss_across_it() {
        let (t, _) = crate::fit::testdata::databank(None, crate::data::Weighting::None);
        let full = crate::fit::fit_model(
            &t,
            crate::model::ModelKind::Linear,
            crate::fit::loss::Loss::Logloss,
        )
        .unwrap();
        let u0 = 1.0 / full.model.params[0];
        let w = Window::new(&t, u0);
        assert!(!w.near.is_empty() && w.near.len() < t.len() / 20);
        let counts: Vec<f64> = (0..t.len()).map(|i| (i % 3) as f64).collect();
        let drawn: Vec<u32> = (0..t.len() as u32)
            .filter(|&i| counts[i as usize] != 0.0)
            .collect();
        let sums = w.sums(&counts, &drawn);
        let (lo, hi) = w.bounds();
        for k in 0..=20 {
            let u = lo + (hi - lo) * k as f64 / 20.0;
            let exact: f64 = drawn
                .iter()
                .map(|&i| counts[i as usize] * row_loss(&t, i as usize, u))
                .sum();
            let (g, h) = w.derivatives(&t, &sums, u);
            let (ge, he) = drawn.iter().fold((0.0, 0.0), |(g, h), &i| {
                let i = i as usize;
                let (gi, hi) =
                    pieces::row_derivatives(t.diff_per_game[i], t.wins[i], t.losses[i], u);
                (g + counts[i] * gi, h + counts[i] * hi)
            });
            assert!(
                (w.value(&t, &sums, u) - exact).abs() <= 1e-10 * exact,
                "{u}"
            );
            assert!((g - ge).abs() <= 1e-9 * he * u, "{u}: {g} vs {ge}");
            assert!((h - he).abs() <= 1e-9 * he, "{u}");
        }
    }
}
