//! The saved calibration (`runcal.profile/1`): what `luck` and `check` apply to new data.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::data::{Dataset, Table, TeamSeason, TiePolicy, Weighting};
use crate::error::{Error, ProfileError};
use crate::fit::{Loss, ModelFit};
use crate::model::{Model, ModelKind};

pub const SCHEMA: &str = "runcal.profile/1";

/// What the calibration was fitted on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FittedOn {
    pub files: Vec<String>,
    /// First and last season.
    pub seasons: [i32; 2],
    pub rows: usize,
    /// FNV-1a (64-bit) over the validated rows, independent of file layout.
    pub fingerprint: String,
}

/// A saved calibration.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Profile {
    pub schema: String,
    pub runcal_version: String,
    /// UTC, RFC 3339; `SOURCE_DATE_EPOCH` pins it for reproducible files.
    pub created: String,
    pub model: ModelKind,
    pub params: BTreeMap<String, f64>,
    pub loss: Loss,
    pub ties: TiePolicy,
    pub weight: Weighting,
    pub std_errors: Option<BTreeMap<String, f64>>,
    pub std_errors_binomial: Option<BTreeMap<String, f64>>,
    pub dispersion: Option<f64>,
    /// Quasi-binomial covariance of the parameters (rows and columns in the model's parameter
    /// order), when the fit had one; profiles saved before it existed load without it.
    #[serde(default)]
    pub covariance: Option<Vec<Vec<f64>>>,
    pub ci: Option<BTreeMap<String, [f64; 2]>>,
    pub ci_level: Option<f64>,
    pub metrics: crate::fit::Metrics,
    pub fitted_on: FittedOn,
    /// Runs per game (both teams) over the fitted data.
    pub average_rpg: f64,
    /// Median games per team-season in the fitted data.
    pub season_games: u64,
    pub runs_per_win: f64,
    /// Games of regression to .500 (k) for the actual record, estimated on the fitted data.
    pub regression_games: Option<f64>,
    /// Games of regression for the run-based record, (1 − dispersion)·k (absent in profiles written
    /// before it existed; [`Profile::run_based_regression_games`] derives it then).
    #[serde(default)]
    pub run_based_regression_games: Option<f64>,
}

fn named(names: &[&str], v: &[f64]) -> BTreeMap<String, f64> {
    names
        .iter()
        .map(|n| n.to_string())
        .zip(v.iter().copied())
        .collect()
}

/// FNV-1a over the rows' canonical text.
pub fn fingerprint(rows: &[TeamSeason]) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for r in rows {
        let line = format!(
            "{}\u{1f}{}\u{1f}{}\u{1f}{}\u{1f}{}\u{1f}{}\u{1f}{}\u{1f}{}\u{1f}{}\n",
            r.season,
            r.league.as_deref().unwrap_or(""),
            r.team,
            r.wins,
            r.losses,
            r.ties,
            r.runs_scored,
            r.runs_allowed,
            r.games
        );
        for b in line.bytes() {
            h ^= u64::from(b);
            h = h.wrapping_mul(0x0100_0000_01b3);
        }
    }
    format!("fnv1a64:{h:016x}")
}

/// Current time as RFC 3339 UTC to the second, or `SOURCE_DATE_EPOCH` (seconds since 1970) when
/// set, so that a build or a test can pin it (reproducible-builds.org's convention).
fn now_rfc3339() -> String {
    let pinned = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok());
    format_utc(pinned.unwrap_or_else(|| jiff::Timestamp::now().as_second()))
}

/// Seconds since the epoch as RFC 3339 UTC (whole seconds: jiff then prints no fraction); a
/// value beyond jiff's range (years -9999 to 9999) gives the current time instead.
fn format_utc(secs: i64) -> String {
    jiff::Timestamp::from_second(secs)
        .or_else(|_| jiff::Timestamp::from_second(jiff::Timestamp::now().as_second()))
        .unwrap_or(jiff::Timestamp::UNIX_EPOCH)
        .to_string()
}

impl Profile {
    pub fn from_fit(
        f: &ModelFit,
        ds: &Dataset,
        t: &Table,
        ties: TiePolicy,
        weight: Weighting,
        files: &[String],
    ) -> Result<Profile, Error> {
        let names = f.model.kind.param_names();
        let mut lengths: Vec<u64> = ds.rows.iter().map(|r| r.games).collect();
        lengths.sort_unstable();
        let seasons = ds.seasons();
        let dispersion = f.std_errors.as_ref().map(|s| s.dispersion);
        let k = crate::luck::regression_games(t);
        Ok(Profile {
            schema: SCHEMA.to_string(),
            runcal_version: env!("CARGO_PKG_VERSION").to_string(),
            created: now_rfc3339(),
            model: f.model.kind,
            params: named(names, &f.model.params),
            loss: f.loss,
            ties,
            weight,
            std_errors: f.std_errors.as_ref().map(|s| named(names, &s.corrected)),
            std_errors_binomial: f.std_errors.as_ref().map(|s| named(names, &s.binomial)),
            dispersion,
            covariance: f.std_errors.as_ref().map(|s| s.covariance.clone()),
            ci: f.intervals.as_ref().map(|iv| {
                names
                    .iter()
                    .map(|n| n.to_string())
                    .zip(iv.params.iter().map(|&(a, b)| [a, b]))
                    .collect()
            }),
            ci_level: f.intervals.as_ref().map(|iv| iv.level),
            metrics: f.metrics,
            fitted_on: FittedOn {
                files: files.to_vec(),
                seasons: [
                    *seasons.first().unwrap_or(&0),
                    *seasons.last().unwrap_or(&0),
                ],
                rows: ds.rows.len(),
                fingerprint: fingerprint(&ds.rows),
            },
            average_rpg: t.average_rpg(),
            season_games: lengths.get(lengths.len() / 2).copied().unwrap_or(0),
            runs_per_win: f.runs_per_win,
            regression_games: k,
            run_based_regression_games: k
                .zip(dispersion)
                .and_then(|(k, d)| crate::luck::run_based_regression_games(k, d)),
        })
    }

    pub fn save(&self, path: &str) -> Result<(), Error> {
        let mut text =
            serde_json::to_string_pretty(self).map_err(|e| Error::Serialize(e.to_string()))?;
        text.push('\n');
        crate::output::write_atomic(path, text.as_bytes())
    }

    pub fn load(path: &str) -> Result<Profile, ProfileError> {
        let text = read_capped(path)?;
        let value: serde_json::Value =
            serde_json::from_str(&text).map_err(|e| ProfileError::Invalid {
                file: path.to_string(),
                reason: format!("not valid JSON ({e})"),
            })?;
        let schema = value
            .get("schema")
            .and_then(|s| s.as_str())
            .ok_or_else(|| ProfileError::Invalid {
                file: path.to_string(),
                reason: "no \"schema\" field".to_string(),
            })?;
        if schema != SCHEMA {
            return Err(ProfileError::Version {
                file: path.to_string(),
                found: schema.to_string(),
                expected: SCHEMA.to_string(),
            });
        }
        let p: Profile = serde_json::from_value(value).map_err(|e| ProfileError::Invalid {
            file: path.to_string(),
            reason: e.to_string(),
        })?;
        p.model_checked(path)?;
        p.check_fields().map_err(|reason| ProfileError::Invalid {
            file: path.to_string(),
            reason,
        })?;
        Ok(p)
    }

    fn model_checked(&self, path: &str) -> Result<Model, ProfileError> {
        let params = self
            .model
            .param_names()
            .iter()
            .map(|n| {
                self.params
                    .get(*n)
                    .copied()
                    .filter(|v| v.is_finite())
                    .ok_or_else(|| ProfileError::Invalid {
                        file: path.to_string(),
                        reason: format!("model {} needs a finite parameter \"{n}\"", self.model),
                    })
            })
            .collect::<Result<Vec<f64>, _>>()?;
        let m = Model::new(self.model, params);
        m.validate().map_err(|reason| ProfileError::Invalid {
            file: path.to_string(),
            reason,
        })?;
        Ok(m)
    }

    /// The calibrated model.
    pub fn model(&self) -> Model {
        let params = self
            .model
            .param_names()
            .iter()
            .map(|n| self.params.get(*n).copied().unwrap_or(f64::NAN))
            .collect();
        Model::new(self.model, params)
    }

    /// The saved run-based constant, else (1 − dispersion)·k from the saved actual-record k.
    pub fn run_based_regression_games(&self) -> Option<f64> {
        self.run_based_regression_games.or_else(|| {
            self.regression_games
                .zip(self.dispersion)
                .and_then(|(k, d)| crate::luck::run_based_regression_games(k, d))
        })
    }

    /// Standard error of each parameter, in model order: the saved one, else the interval's
    /// half-width over the normal quantile of its level.
    pub fn std_error_of(&self, name: &str) -> Option<f64> {
        if let Some(se) = self.std_errors.as_ref().and_then(|m| m.get(name)) {
            return Some(*se);
        }
        let (ci, level) = (self.ci.as_ref()?.get(name)?, self.ci_level?);
        let z = statrs::distribution::ContinuousCDF::inverse_cdf(
            &statrs::distribution::Normal::standard(),
            0.5 + level / 2.0,
        );
        Some((ci[1] - ci[0]) / (2.0 * z))
    }
}

/// A profile is a small JSON file; anything larger is not one (and `/dev/zero` never ends).
pub const MAX_PROFILE_BYTES: u64 = 1 << 20;

/// Longest season a profile (or `luck --season-games`) may state.
pub const MAX_SEASON_GAMES: u64 = 1_000_000;

/// Read a profile: a regular file (a FIFO would block, a device never end) of at most
/// [`MAX_PROFILE_BYTES`], UTF-8 with or without a byte-order mark.
fn read_capped(path: &str) -> Result<String, ProfileError> {
    use std::io::Read;
    let io = |source| ProfileError::Io {
        file: path.to_string(),
        source,
    };
    let invalid = |reason: String| ProfileError::Invalid {
        file: path.to_string(),
        reason,
    };
    let meta = std::fs::metadata(path).map_err(io)?;
    if !meta.is_file() {
        return Err(invalid(
            "not a regular file (a profile is read from a saved JSON file, not a device, FIFO or directory)".to_string(),
        ));
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .map_err(io)?
        .take(MAX_PROFILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > MAX_PROFILE_BYTES {
        return Err(invalid(format!(
            "larger than {} KiB; a saved calibration is a few KiB",
            MAX_PROFILE_BYTES / 1024
        )));
    }
    let body = bytes.strip_prefix(b"\xef\xbb\xbf").unwrap_or(&bytes);
    String::from_utf8(body.to_vec()).map_err(|e| invalid(format!("not UTF-8 ({e})")))
}

impl Profile {
    /// Every number a command will use, checked once on load; the first problem, named by field.
    fn check_fields(&self) -> Result<(), String> {
        let positive = |name: &str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(format!("\"{name}\" must be a positive number, got {v}"))
            }
        };
        let non_negative = |name: &str, v: f64| {
            if v.is_finite() && v >= 0.0 {
                Ok(())
            } else {
                Err(format!("\"{name}\" must be a non-negative number, got {v}"))
            }
        };
        positive("runs_per_win", self.runs_per_win)?;
        positive("average_rpg", self.average_rpg)?;
        if let Some(k) = self.regression_games {
            non_negative("regression_games", k)?;
        }
        if let Some(k) = self.run_based_regression_games {
            non_negative("run_based_regression_games", k)?;
        }
        if let Some(d) = self.dispersion {
            positive("dispersion", d)?;
        }
        if self.season_games > MAX_SEASON_GAMES {
            return Err(format!(
                "\"season_games\" is {}; runcal projects seasons of at most {MAX_SEASON_GAMES} games",
                self.season_games
            ));
        }
        for (field, map) in [
            ("std_errors", &self.std_errors),
            ("std_errors_binomial", &self.std_errors_binomial),
        ] {
            for (n, v) in map.iter().flatten() {
                non_negative(&format!("{field}.{n}"), *v)?;
            }
        }
        for (n, [lo, hi]) in self.ci.iter().flatten() {
            if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
                return Err(format!(
                    "\"ci.{n}\" must be finite with lower <= upper, got [{lo}, {hi}]"
                ));
            }
        }
        if let Some(l) = self.ci_level
            && !(l > 0.0 && l < 1.0)
        {
            return Err(format!("\"ci_level\" must lie between 0 and 1, got {l}"));
        }
        if self.ci.is_some() != self.ci_level.is_some() {
            return Err("\"ci\" and \"ci_level\" come together (both or neither)".to_string());
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn epoch_formats_as_utc() {
        // GNU date: `date -u -d @1796083200` prints Tue Dec 1 00:00:00 UTC 2026.
        assert_eq!(format_utc(1_796_083_200), "2026-12-01T00:00:00Z");
        assert_eq!(format_utc(0), "1970-01-01T00:00:00Z");
        // `date -u -d @951825599`: Tue Feb 29 11:59:59 UTC 2000 (a leap day).
        assert_eq!(format_utc(951_825_599), "2000-02-29T11:59:59Z");
    }
}
