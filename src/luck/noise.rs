//! The noise model behind the luck signal: quasi-binomial, with the dispersion the calibration
//! measured, and a multiplicity-aware flag over every team ranked.

use serde::Serialize;

use super::TeamLine;

/// Where the dispersion came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum NoiseSource {
    /// The saved calibration's Pearson χ²/df.
    Profile,
    /// The fit on the data at hand (Pearson χ²/(n − parameters)).
    Data,
    /// The data at hand under a model not fitted to them (profile without a dispersion, or
    /// `--exponent`): Pearson χ²/n.
    DataUnfitted,
    /// Given on the command line.
    Given,
    /// No dispersion could be measured (too few rows): binomial noise, which understates luck.
    BinomialFallback,
}

impl NoiseSource {
    pub fn describe(self) -> &'static str {
        match self {
            NoiseSource::Profile => "from the profile",
            NoiseSource::Data => "fitted on these data",
            NoiseSource::DataUnfitted => "measured on these data under the model applied",
            NoiseSource::Given => "given with --dispersion",
            NoiseSource::BinomialFallback => "binomial: too few rows to measure a dispersion",
        }
    }
}

/// The luck z's noise model: var(W − n·p̂) = φ·n·p̂(1 − p̂).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Noise {
    pub model: &'static str,
    /// φ, Pearson χ²/df of win records around their run-based expectation.
    pub dispersion: f64,
    pub source: NoiseSource,
}

impl Noise {
    /// Quasi-binomial noise with a measured dispersion; binomial when there is none.
    pub fn new(dispersion: Option<f64>, source: NoiseSource) -> Noise {
        match dispersion.filter(|d| d.is_finite() && *d > 0.0) {
            Some(d) => Noise {
                model: "quasi-binomial",
                dispersion: d,
                source,
            },
            None => Noise::binomial(),
        }
    }

    pub fn binomial() -> Noise {
        Noise {
            model: "binomial",
            dispersion: 1.0,
            source: NoiseSource::BinomialFallback,
        }
    }

    /// z = (W − n·p̂)/sqrt(φ·n·p̂(1 − p̂)); `None` when p̂ is 0 or 1.
    pub fn z(&self, wins: f64, decisions: f64, p: f64) -> Option<f64> {
        let var = self.dispersion * decisions * p * (1.0 - p);
        (var > 0.0).then(|| (wins - decisions * p) / var.sqrt())
    }
}

/// Pearson χ²/(rows − fitted) of the lines' wins around their expectation; rows whose p̂ is 0 or 1
/// carry no binomial variance and are left out of both sums. `None` without degrees of freedom.
pub fn pearson_dispersion(lines: &[TeamLine], fitted: usize) -> Option<f64> {
    let (chi2, rows) = lines
        .iter()
        .filter_map(|l| {
            let n = l.expected_wins / l.expected_win_pct;
            let v = l.expected_win_pct * (1.0 - l.expected_win_pct);
            (v > 0.0 && n.is_finite()).then(|| n * (l.win_pct - l.expected_win_pct).powi(2) / v)
        })
        .fold((0.0, 0usize), |(s, k), c| (s + c, k + 1));
    (rows > fitted).then(|| chi2 / (rows - fitted) as f64)
}

/// Family-wise level of the multiplicity-aware flag.
pub const FAMILY_LEVEL: f64 = 0.05;

/// Holm's step-down adjusted p-values (S. Holm, "A simple sequentially rejective multiple test
/// procedure", Scand. J. Statist. 6, 1979): sorted ascending, p̃(i) = max over j ≤ i of
/// min(1, (m − j + 1)·p(j)). Absent p-values stay absent and do not count in m.
pub fn holm(p: &[Option<f64>]) -> Vec<Option<f64>> {
    let mut order: Vec<usize> = (0..p.len()).filter(|&i| p[i].is_some()).collect();
    order.sort_by(|&a, &b| {
        p[a].unwrap_or(1.0)
            .total_cmp(&p[b].unwrap_or(1.0))
            .then(a.cmp(&b))
    });
    let m = order.len();
    let mut out = vec![None; p.len()];
    let mut running: f64 = 0.0;
    for (j, &i) in order.iter().enumerate() {
        let adjusted = ((m - j) as f64 * p[i].unwrap_or(1.0)).min(1.0);
        running = running.max(adjusted);
        out[i] = Some(running);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn holm_matches_a_worked_example() {
        // statsmodels.stats.multitest.multipletests([0.01, 0.04, 0.03, 0.005], method="holm")
        // gives [0.03, 0.06, 0.06, 0.02] (Holm's procedure by hand: 4·0.005, 3·0.01, 2·0.03, 1·0.04
        // raised to the running maximum).
        let got = holm(&[Some(0.01), Some(0.04), Some(0.03), Some(0.005), None]);
        let want = [0.03, 0.06, 0.06, 0.02];
        for (g, w) in got.iter().zip(want) {
            assert!((g.unwrap() - w).abs() < 1e-12, "{got:?}");
        }
        assert_eq!(got[4], None);
    }

    #[test]
    fn quasi_binomial_z_is_the_binomial_z_over_root_dispersion() {
        let b = Noise::binomial();
        let q = Noise::new(Some(0.25), NoiseSource::Given);
        // (70 − 50)/sqrt(100·0.25) = 4; with φ = 0.25 the spread halves and z doubles.
        assert_eq!(b.z(70.0, 100.0, 0.5), Some(4.0));
        assert_eq!(q.z(70.0, 100.0, 0.5), Some(8.0));
        assert_eq!(q.z(0.0, 10.0, 0.0), None);
        assert_eq!(
            Noise::new(Some(f64::NAN), NoiseSource::Data).model,
            "binomial"
        );
    }
}
