//! Rest-of-season projections: the run-based record regressed toward .500 by the constant that
//! suits it, and a beta-binomial range whose integer endpoints hold as near the nominal mass as
//! they can.

use statrs::function::gamma::ln_gamma;

/// Nominal level of the projection range.
pub const RANGE_LEVEL: f64 = 0.8;

/// Games of regression toward .500 for the run-based win%, from the constant for the actual record
/// (k = 0.25/var(true talent)) and the dispersion φ: the run-based record carries (1 − φ)·0.25/n of
/// noise where the actual record carries 0.25/n, so its constant is (1 − φ)·k (README, Methods).
/// `None` unless 0 < φ < 1, where the split is defined.
pub fn run_based_regression_games(actual_record_k: f64, dispersion: f64) -> Option<f64> {
    (dispersion > 0.0 && dispersion < 1.0 && actual_record_k.is_finite())
        .then_some((1.0 - dispersion) * actual_record_k)
}

/// What a projection needs besides a team's record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outlook {
    pub season_games: u64,
    /// Games of regression toward .500 applied to the run-based win%.
    pub regression_games: f64,
    /// The noise model's φ: n games of run-based record weigh as n/(1 − φ) coin flips.
    pub dispersion: f64,
    pub level: f64,
}

/// Rest-of-season projection of one team.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Projection {
    pub remaining: u64,
    /// Expected win% regressed toward .500 by k games: (n·p̂ + k/2)/(n + k).
    pub regressed_win_pct: f64,
    /// Wins so far (ties as half) + remaining × regressed win%.
    pub projected_wins: f64,
    /// Range of final wins (inclusive): wins so far + a beta-binomial range of the remaining games.
    pub interval: (f64, f64),
    /// The range's nominal level.
    pub level: f64,
    /// The probability the beta-binomial puts on the range (integers rarely allow exactly `level`).
    pub mass: f64,
}

/// The beta of talent after n games at the expected win% p̂: a .500 prior worth k/(1 − φ) coin
/// flips updated by n/(1 − φ) flips at p̂, i.e. α = (k/2 + n·p̂)/(1 − φ), β = (k/2 + n·(1 − p̂))/(1 − φ)
/// with k the run-based constant. Outside 0 < φ < 1 the weights stay at k and n.
pub fn talent_beta(decisions: f64, expected: f64, o: &Outlook) -> (f64, f64) {
    let scale = if o.dispersion > 0.0 && o.dispersion < 1.0 {
        1.0 / (1.0 - o.dispersion)
    } else {
        1.0
    };
    (
        scale * (o.regression_games / 2.0 + decisions * expected),
        scale * (o.regression_games / 2.0 + decisions * (1.0 - expected)),
    )
}

/// Project final wins: the remaining games follow a beta-binomial over the talent beta.
pub fn project(wins: f64, decisions: f64, expected: f64, o: &Outlook, played: u64) -> Projection {
    let remaining = o.season_games.saturating_sub(played);
    let (alpha, beta) = talent_beta(decisions, expected, o);
    let p = alpha / (alpha + beta);
    let (lo, hi, mass) = if remaining > EXACT_QUANTILE_GAMES {
        normal_range(remaining, alpha, beta, o.level)
    } else {
        central_range(remaining, alpha, beta, o.level)
    };
    Projection {
        remaining,
        regressed_win_pct: p,
        projected_wins: wins + remaining as f64 * p,
        interval: (wins + lo as f64, wins + hi as f64),
        level: o.level,
        mass,
    }
}

/// P(X = j), j = 0..=n, for X ~ BetaBinomial(n, α, β).
pub fn beta_binomial_pmf(n: u64, alpha: f64, beta: f64) -> Vec<f64> {
    let nf = n as f64;
    let ln_beta = |a: f64, b: f64| ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
    let base = ln_gamma(nf + 1.0) - ln_beta(alpha, beta);
    (0..=n)
        .map(|j| {
            let jf = j as f64;
            (base - ln_gamma(jf + 1.0) - ln_gamma(nf - jf + 1.0)
                + ln_beta(jf + alpha, nf - jf + beta))
            .exp()
        })
        .collect()
}

/// The smallest j with P(X ≤ j) ≥ q for X ~ BetaBinomial(n, α, β) (the convention of a discrete
/// percent-point function). Beyond [`EXACT_QUANTILE_GAMES`] the normal approximation answers.
pub fn beta_binomial_quantile(n: u64, alpha: f64, beta: f64, q: f64) -> u64 {
    if n > EXACT_QUANTILE_GAMES {
        return normal_quantile(n, alpha, beta, q);
    }
    let mut cdf = 0.0;
    for (j, p) in beta_binomial_pmf(n, alpha, beta).into_iter().enumerate() {
        cdf += p;
        // A hair of slack so that rounding in the sum does not push a quantile one step up.
        if cdf >= q - 1e-12 {
            return j as u64;
        }
    }
    n
}

/// The inclusive integer range [lo, hi] of X ~ BetaBinomial(n, α, β) whose mass is nearest `level`
/// among near-central ranges: for each lo, the hi whose upper tail is nearest lo's lower tail and its
/// two neighbours. Ties go to the more balanced tails, then the shorter range. Returns (lo, hi, mass).
pub fn central_range(n: u64, alpha: f64, beta: f64, level: f64) -> (u64, u64, f64) {
    if n == 0 {
        return (0, 0, 1.0);
    }
    let pmf = beta_binomial_pmf(n, alpha, beta);
    let below: Vec<f64> = std::iter::once(0.0)
        .chain(pmf.iter().scan(0.0, |s, p| {
            *s += p;
            Some(*s)
        }))
        .collect();
    // below[j] = P(X < j); the upper tail of hi is P(X > hi) = total − below[hi + 1].
    let total = below[pmf.len()];
    let upper = |hi: usize| (total - below[hi + 1]).max(0.0);
    let mut best: Option<(f64, f64, usize, usize, usize)> = None;
    let mut hi_star = pmf.len() - 1;
    for lo in 0..pmf.len() {
        let tail = below[lo];
        while hi_star > lo && (upper(hi_star - 1) - tail).abs() <= (upper(hi_star) - tail).abs() {
            hi_star -= 1;
        }
        hi_star = hi_star.max(lo);
        for hi in [hi_star.saturating_sub(1), hi_star, hi_star + 1] {
            if hi < lo || hi >= pmf.len() {
                continue;
            }
            let mass = below[hi + 1] - below[lo];
            let key = (
                (mass - level).abs(),
                (upper(hi) - tail).abs(),
                hi - lo,
                lo,
                hi,
            );
            let better = match &best {
                None => true,
                Some(b) => {
                    let close = (key.0 - b.0).abs() <= 1e-12;
                    key.0 < b.0 - 1e-12
                        || (close && key.1 < b.1 - 1e-12)
                        || (close && (key.1 - b.1).abs() <= 1e-12 && key.2 < b.2)
                }
            };
            if better {
                best = Some(key);
            }
        }
    }
    best.map_or((0, n, total), |(_, _, _, lo, hi)| {
        (lo as u64, hi as u64, below[hi + 1] - below[lo])
    })
}

/// Remaining games up to which the projection sums the beta-binomial exactly (time and memory
/// linear in the games); beyond, the normal law with the same mean and variance is used, so a
/// season of any length (up to `profile::MAX_SEASON_GAMES`) costs the same.
pub const EXACT_QUANTILE_GAMES: u64 = 20_000;

/// Mean nα/(α+β) and standard deviation √(nαβ(α+β+n)/((α+β)²(α+β+1))) of BetaBinomial(n, α, β).
fn beta_binomial_moments(n: u64, alpha: f64, beta: f64) -> (f64, f64) {
    let (nf, s) = (n as f64, alpha + beta);
    let var = nf * alpha * beta * (s + nf) / (s * s * (s + 1.0));
    (nf * alpha / s, var.sqrt())
}

/// The normal approximation's quantile with a continuity correction: the smallest j with
/// Φ((j + ½ − mean)/sd) ≥ q, clamped to [0, n].
pub fn normal_quantile(n: u64, alpha: f64, beta: f64, q: f64) -> u64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    let (mean, sd) = beta_binomial_moments(n, alpha, beta);
    let z = Normal::standard().inverse_cdf(q.clamp(1e-12, 1.0 - 1e-12));
    let j = (mean + z * sd - 0.5).ceil();
    if j.is_nan() || j <= 0.0 {
        0
    } else {
        (j as u64).min(n)
    }
}

/// The central range of the normal approximation: its (1 − level)/2 and (1 + level)/2 quantiles,
/// with the mass the approximation puts on them.
pub fn normal_range(n: u64, alpha: f64, beta: f64, level: f64) -> (u64, u64, f64) {
    use statrs::distribution::{ContinuousCDF, Normal};
    let lo = normal_quantile(n, alpha, beta, (1.0 - level) / 2.0);
    let hi = normal_quantile(n, alpha, beta, (1.0 + level) / 2.0).max(lo);
    let (mean, sd) = beta_binomial_moments(n, alpha, beta);
    let phi = |x: f64| Normal::standard().cdf((x - mean) / sd);
    (lo, hi, phi(hi as f64 + 0.5) - phi(lo as f64 - 0.5))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn beta_binomial_with_one_trial_is_bernoulli() {
        // BetaBinomial(1, a, b) is Bernoulli(a/(a+b)): with a = b the median is 0 (P(0) = 0.5 ≥ 0.5).
        assert_eq!(beta_binomial_quantile(1, 3.0, 3.0, 0.5), 0);
        assert_eq!(beta_binomial_quantile(1, 3.0, 3.0, 0.9), 1);
        assert_eq!(beta_binomial_quantile(0, 3.0, 3.0, 0.9), 0);
    }

    #[test]
    fn the_normal_approximation_agrees_with_the_exact_range_at_the_switch() {
        // The central limit theorem for the beta-binomial (moments above): at 20,000 remaining
        // games a .540 team with a 70-game prior has sd ≈ 1,300 wins; both ranges agree to 0.2%.
        let n = EXACT_QUANTILE_GAMES;
        let (a, b) = (35.0 + 100.0 * 0.54, 35.0 + 100.0 * 0.46);
        let (lo, hi, mass) = central_range(n, a, b, 0.8);
        let (nlo, nhi, nmass) = normal_range(n, a, b, 0.8);
        let tol = 0.002 * n as f64;
        assert!((lo as f64 - nlo as f64).abs() <= tol && (hi as f64 - nhi as f64).abs() <= tol);
        assert!((mass - nmass).abs() < 0.01, "{mass} {nmass}");
        for q in [0.1, 0.5, 0.9] {
            let exact = beta_binomial_quantile(n, a, b, q) as f64;
            assert!(
                (exact - normal_quantile(n, a, b, q) as f64).abs() <= tol,
                "q {q}"
            );
        }
        // 10^12 games answer at once and stay inside [0, n].
        let big = 1_000_000_000_000;
        let (lo, hi, mass) = normal_range(big, a, b, 0.8);
        assert!(lo < hi && hi <= big && (mass - 0.8).abs() < 1e-3);
    }

    #[test]
    fn a_uniform_beta_binomial_range_holds_exactly_its_level() {
        // BetaBinomial(9, 1, 1) is uniform on 0..=9 (each value 1/10): eight central values hold 0.8.
        let (lo, hi, mass) = central_range(9, 1.0, 1.0, 0.8);
        assert_eq!((lo, hi), (1, 8));
        assert!((mass - 0.8).abs() < 1e-12);
    }

    #[test]
    fn ranges_miss_their_level_by_less_than_one_step_and_stay_central() {
        for n in [3u64, 10, 34, 56, 100, 160] {
            for (a, b) in [(2.0, 2.0), (40.0, 30.0), (150.0, 90.0), (5.0, 60.0)] {
                let pmf = beta_binomial_pmf(n, a, b);
                let step = pmf.iter().copied().fold(0.0, f64::max);
                let (lo, hi, mass) = central_range(n, a, b, 0.8);
                assert!((mass - 0.8).abs() <= step, "n {n} a {a} b {b}: {mass}");
                let below: f64 = pmf[..lo as usize].iter().sum();
                let above: f64 = pmf[hi as usize + 1..].iter().sum();
                // Tails balanced to within two steps of the distribution.
                assert!((below - above).abs() <= 2.0 * step, "tails {below} {above}");
            }
        }
    }

    #[test]
    fn the_run_based_constant_is_the_actual_one_times_one_minus_dispersion() {
        assert_eq!(run_based_regression_games(88.0, 0.375), Some(55.0));
        assert_eq!(run_based_regression_games(88.0, 1.2), None);
    }
}
