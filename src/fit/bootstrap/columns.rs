//! The count-weighted column sums every fast path's prediction starts from: Σ c·row over a
//! resample's drawn rows, each row a fixed-width array of per-row coefficients.
//!
//! Under season resampling every row of a season is drawn as often as its season, so the sum is
//! also Σ over the seasons of (the season's count) × (the season's own column sums). [`BySeason`]
//! holds those per-season sums, made once per bootstrap, and reads a season's count off its first
//! row: about 150 seasons instead of about 1,850 drawn rows per resample on the full Databank
//! history. The two orders of summation agree to rounding (a test checks 1e-13).

/// Σ `counts[i]`·`rows[i]` over the rows in `drawn`.
#[inline]
pub(super) fn row_sums<const W: usize>(
    rows: &[[f64; W]],
    counts: &[f64],
    drawn: &[u32],
) -> [f64; W] {
    let mut s = [0.0; W];
    for &i in drawn {
        let (c, row) = (counts[i as usize], &rows[i as usize]);
        for (s, &r) in s.iter_mut().zip(row) {
            *s += c * r;
        }
    }
    s
}

/// Per-season column sums of a per-row table, for season resampling.
#[derive(Debug, Clone)]
pub(super) struct BySeason<const W: usize> {
    /// Each season's first row, whose count is the season's.
    first: Vec<u32>,
    sums: Vec<[f64; W]>,
}

impl<const W: usize> BySeason<W> {
    /// `seasons`: the rows of each season (none empty); `row(i)`: row i's columns.
    pub(super) fn new(seasons: &[Vec<usize>], row: impl Fn(usize) -> [f64; W]) -> BySeason<W> {
        let (mut first, mut sums) = (Vec::new(), Vec::new());
        for rows in seasons {
            let Some(&head) = rows.first() else { continue };
            let mut s = [0.0; W];
            for &i in rows {
                for (s, r) in s.iter_mut().zip(row(i)) {
                    *s += r;
                }
            }
            first.push(head as u32);
            sums.push(s);
        }
        BySeason { first, sums }
    }

    /// Σ c·row over a season resample with row counts `counts`.
    #[inline]
    pub(super) fn sums(&self, counts: &[f64]) -> [f64; W] {
        let mut s = [0.0; W];
        for (&head, season) in self.first.iter().zip(&self.sums) {
            let c = counts[head as usize];
            if c != 0.0 {
                for (s, &r) in s.iter_mut().zip(season) {
                    *s += c * r;
                }
            }
        }
        s
    }
}

/// A table's column sums by rows or, where it has them, by seasons.
#[inline]
pub(super) fn sums<const W: usize>(
    rows: &[[f64; W]],
    by_season: Option<&BySeason<W>>,
    counts: &[f64],
    drawn: &[u32],
) -> [f64; W] {
    match by_season {
        Some(b) => b.sums(counts),
        None => row_sums(rows, counts, drawn),
    }
}

#[cfg(test)]
mod tests {
    use super::super::{Resample, season_index, weights};
    use super::*;

    /// Per-season sums against per-row sums on season resamples of the Databank (the same sums in
    /// another order: rounding only).
    #[test]
    fn season_sums_match_row_sums() {
        let (t, rows) = crate::fit::testdata::databank(None, crate::data::Weighting::None);
        let seasons = season_index(&rows);
        let table: Vec<[f64; 3]> = (0..t.len())
            .map(|i| {
                [
                    t.wins[i],
                    t.ln_ratio[i].clamp(-5.0, 5.0),
                    t.diff_per_game[i],
                ]
            })
            .collect();
        let by = BySeason::new(&seasons, |i| table[i]);
        let mut counts = Vec::new();
        for b in 0..20 {
            weights(t.len(), &seasons, Resample::Season, 5, b, &mut counts);
            let drawn: Vec<u32> = (0..t.len() as u32)
                .filter(|&i| counts[i as usize] != 0.0)
                .collect();
            let (a, r) = (by.sums(&counts), row_sums(&table, &counts, &drawn));
            for k in 0..3 {
                assert!(
                    (a[k] - r[k]).abs() <= 1e-13 * r[k].abs().max(1.0),
                    "{b} {k}"
                );
            }
        }
    }
}
