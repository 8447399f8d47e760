//! Club strength and home advantage: the run-based record shrunk toward .500, its beta posterior,
//! and the league's home win% shrunk toward a long-run value; log5 for one game.

use crate::data::schedule::HomeRecord;

/// Home win% used when the log holds no earlier seasons to learn a long-run value from. Common
/// practice (from memory, not a sourced figure): home teams win about 54% of major-league games.
pub const COMMON_HOME_WIN_PCT: f64 = 0.54;

/// Games the long-run home win% is worth against this season's: p(1 − p)/var with a season-to-season
/// SD of about .010 in the league's true home edge (common practice, from memory).
pub const HOME_PRIOR_GAMES: f64 = 2_500.0;

/// Earlier seasons' home games needed before their home win% replaces the common-practice value.
pub const MIN_EARLIER_HOME_GAMES: f64 = 1_000.0;

/// Largest dispersion the posterior accepts: at φ → 1 the run-based record carries no information
/// beyond the actual record, and n/(1 − φ) would grow without bound.
pub const MAX_DISPERSION: f64 = 0.95;

/// Where the regression constant for the run-based win% came from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ShrinkageSource {
    /// The run-based constant saved in the profile.
    Profile,
    /// (1 − φ)·k from the constant k for the actual record (DESIGN.md's noise model).
    FromActualRecord { actual_games: f64 },
    /// Given on the command line.
    Given,
}

/// Regression of the run-based win% toward .500.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shrinkage {
    /// k′: games of .500 added to the run-based record, (n·p̂ + k′/2)/(n + k′).
    pub run_based_games: f64,
    /// φ: the actual record's residual variance around the run-based one, as a share of binomial.
    pub dispersion: f64,
    pub source: ShrinkageSource,
}

impl Shrinkage {
    /// The run-based constant from the actual record's: (1 − φ)·k.
    pub fn from_actual_record(actual_games: f64, dispersion: f64) -> Shrinkage {
        let phi = clamp_dispersion(dispersion);
        Shrinkage {
            run_based_games: (1.0 - phi) * actual_games,
            dispersion: phi,
            source: ShrinkageSource::FromActualRecord { actual_games },
        }
    }

    /// The posterior of a club's strength given n decisions at run-based win% p̂.
    ///
    /// True strength has a .500-centred prior of variance 0.25/k (k = k′/(1 − φ) in games of the actual
    /// record); the run-based win% measures it with noise (1 − φ)·0.25/n. The beta with the same mean
    /// and variance counts the record as n/(1 − φ) games and the prior as k games, so its mean is
    /// (n·p̂ + k′/2)/(n + k′), the estimate `luck` projects from.
    pub fn posterior(&self, decisions: f64, expected_win_pct: f64) -> Beta {
        let scale = 1.0 / (1.0 - clamp_dispersion(self.dispersion));
        let n = decisions * scale;
        let k = self.run_based_games * scale;
        let p = expected_win_pct.clamp(0.0, 1.0);
        Beta::new(k / 2.0 + n * p, k / 2.0 + n * (1.0 - p))
    }
}

fn clamp_dispersion(phi: f64) -> f64 {
    if phi.is_finite() {
        phi.clamp(0.0, MAX_DISPERSION)
    } else {
        0.0
    }
}

/// A beta distribution's two shapes (kept away from zero, which a club without runs allowed and no
/// shrinkage would reach).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Beta {
    pub alpha: f64,
    pub beta: f64,
}

impl Beta {
    pub fn new(alpha: f64, beta: f64) -> Beta {
        Beta {
            alpha: alpha.max(1e-6),
            beta: beta.max(1e-6),
        }
    }

    pub fn mean(&self) -> f64 {
        self.alpha / (self.alpha + self.beta)
    }

    pub fn sd(&self) -> f64 {
        let s = self.alpha + self.beta;
        (self.alpha * self.beta / (s * s * (s + 1.0))).sqrt()
    }
}

/// Where the long-run home win% came from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HomePrior {
    /// The log's earlier seasons (this many home games).
    EarlierSeasons { games: f64 },
    /// [`COMMON_HOME_WIN_PCT`].
    CommonPractice,
}

/// The league's home advantage: this season's home record shrunk toward a long-run value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HomeEdge {
    pub observed: HomeRecord,
    pub prior_win_pct: f64,
    pub prior_games: f64,
    pub prior_source: HomePrior,
}

impl HomeEdge {
    /// From this season's and earlier seasons' home records.
    pub fn estimate(this_season: HomeRecord, earlier: HomeRecord) -> HomeEdge {
        let (prior_win_pct, prior_source) = if earlier.games >= MIN_EARLIER_HOME_GAMES {
            (
                earlier.wins / earlier.games,
                HomePrior::EarlierSeasons {
                    games: earlier.games,
                },
            )
        } else {
            (COMMON_HOME_WIN_PCT, HomePrior::CommonPractice)
        };
        HomeEdge {
            observed: this_season,
            prior_win_pct,
            prior_games: HOME_PRIOR_GAMES,
            prior_source,
        }
    }

    pub fn posterior(&self) -> Beta {
        let o = self.observed;
        Beta::new(
            self.prior_games * self.prior_win_pct + o.wins,
            self.prior_games * (1.0 - self.prior_win_pct) + (o.games - o.wins),
        )
    }

    /// The home win% used: the posterior mean.
    pub fn win_pct(&self) -> f64 {
        self.posterior().mean()
    }
}

/// Odds s/(1 − s), with s kept inside (0, 1) so that no odds is 0 or infinite.
#[inline]
pub fn odds(s: f64) -> f64 {
    let s = s.clamp(1e-9, 1.0 - 1e-9);
    s / (1.0 - s)
}

/// log5 (B. James, 1981): the chance that a club of strength a beats one of strength b at a venue
/// whose home side wins h of even games; in odds, odds(a)/odds(b)·odds(h) for the home side.
pub fn log5_home(a: f64, b: f64, h: f64) -> f64 {
    let x = odds(a) * odds(h);
    x / (x + odds(b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log5_matches_the_published_form() {
        // log5 as published: (a − ab)/(a + b − 2ab); at a neutral site (h = .5) both agree.
        let (a, b) = (0.6, 0.45);
        let published = (a - a * b) / (a + b - 2.0 * a * b);
        assert!((log5_home(a, b, 0.5) - published).abs() < 1e-12);
        // Two even clubs: the home side wins h.
        assert!((log5_home(0.5, 0.5, 0.54) - 0.54).abs() < 1e-12);
    }

    #[test]
    fn posterior_mean_is_the_luck_projection_estimate() {
        let s = Shrinkage::from_actual_record(88.0, 0.4);
        let b = s.posterior(70.0, 0.58);
        let k = 0.6 * 88.0;
        assert!((b.mean() - (70.0 * 0.58 + k / 2.0) / (70.0 + k)).abs() < 1e-12);
    }
}
