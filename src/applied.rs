//! Applying a calibration to new data, with one precedence for every command that applies one
//! (luck, outlook, digest): a saved profile, else a given exponent, else a fit on the data at hand
//! (or, when those data are too few to pin an exponent down, the published PythagenPat). Then the
//! luck z's noise, the projection's settings, and the checks that the calibration suits the data.

use crate::data::{Table, TeamSeason};
use crate::error::{Error, FitError};
use crate::fit::{self, Loss};
use crate::luck::{self, Noise, NoiseSource, Outlook};
use crate::model::{Model, ModelKind};
use crate::profile::Profile;

/// Where the applied model came from.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelSource {
    /// A saved calibration, by path.
    Profile(String),
    /// Fitted on the data at hand (no profile).
    Fitted,
    /// Given on the command line (`--exponent`).
    Given,
    /// The published PythagenPat exponent, because the data at hand were too few to fit one.
    Published,
}

impl ModelSource {
    /// The words a heading prints after the model.
    pub fn describe(&self) -> String {
        match self {
            ModelSource::Profile(p) => format!("calibration from {p}"),
            ModelSource::Fitted => {
                "fitted on these data alone, no --profile; a profile fitted on past seasons is steadier"
                    .to_string()
            }
            ModelSource::Given => "given with --exponent".to_string(),
            ModelSource::Published => format!(
                "published PythagenPat z {PUBLISHED_Z}: too few games here to fit one, no --profile"
            ),
        }
    }

    /// The words a chart's subtitle prints after the model.
    pub fn short(&self) -> String {
        match self {
            ModelSource::Profile(p) => format!("calibration {p}"),
            ModelSource::Fitted => "fitted on these data, no profile".to_string(),
            ModelSource::Given => "given exponent".to_string(),
            ModelSource::Published => "published PythagenPat, no profile".to_string(),
        }
    }
}

/// PythagenPat's published z (from memory; the same value `runcal fit` shows as a reference).
pub const PUBLISHED_Z: f64 = 0.287;

/// A fit on the data at hand is set aside for the published exponent when its quasi-binomial
/// standard error exceeds this share of the fitted value (our choice: a 25% relative error moves
/// expected win% of a .600 team by about ±.025).
pub const MAX_RELATIVE_SE: f64 = 0.25;

/// Runs per game (both teams) up to which the published PythagenPat is a fair fallback: it was
/// derived on baseball scoring, and a high-scoring sport needs its own calibration (our choice).
pub const FALLBACK_MAX_RPG: f64 = 20.0;

/// The model chosen, where it came from, and what the choice should tell the user.
#[derive(Debug, Clone)]
pub struct Chosen {
    pub model: Model,
    pub source: ModelSource,
    /// `Some` when the model was fitted here: the fit's measured dispersion, if it had one.
    pub fitted_dispersion: Option<Option<f64>>,
    /// Plain-words notes (what was fitted); `warnings` are louder.
    pub notes: Vec<String>,
    pub warnings: Vec<String>,
}

/// The model to apply: a saved calibration (with its path), else `exponent`, else `kind` fitted by
/// log-loss on `table` — unless that fit is unstable, when low-scoring data fall back to the
/// published PythagenPat and high-scoring data keep the fit with a warning.
pub fn choose_model(
    profile: Option<(&Profile, &str)>,
    exponent: Option<f64>,
    kind: ModelKind,
    table: &Table,
) -> Result<Chosen, Error> {
    let chosen = |model, source| Chosen {
        model,
        source,
        fitted_dispersion: None,
        notes: Vec::new(),
        warnings: Vec::new(),
    };
    if let Some((p, path)) = profile {
        return Ok(chosen(p.model(), ModelSource::Profile(path.to_string())));
    }
    if let Some(x) = exponent {
        if !(x.is_finite() && x > 0.0) {
            return Err(Error::Usage(format!(
                "--exponent must be a positive number, got {x}"
            )));
        }
        return Ok(chosen(
            Model::new(ModelKind::Pythagorean, vec![x]),
            ModelSource::Given,
        ));
    }
    let rpg = table.average_rpg();
    let fitted_on = format!("{} team-seasons", table.len());
    let published = |why: String| {
        let mut c = chosen(
            Model::new(ModelKind::Pythagenpat, vec![PUBLISHED_Z]),
            ModelSource::Published,
        );
        c.warnings.push(format!(
            "no --profile, and {kind} fitted on these {fitted_on} {why}: applying the published PythagenPat z {PUBLISHED_Z} instead; save a profile from past seasons with `runcal fit --save-profile`"
        ));
        c
    };
    let f = match fit::fit_model(table, kind, Loss::Logloss) {
        Ok(f) => f,
        // Too few games (every club unbeaten or winless, say) leave no interior optimum.
        Err(e @ (FitError::NoMinimum { .. } | FitError::Solver { .. }))
            if rpg <= FALLBACK_MAX_RPG && !table.is_empty() =>
        {
            return Ok(published(format!("has no estimate ({e})")));
        }
        Err(e) => return Err(e.into()),
    };
    let params = describe_params(&f.model);
    let relative_se = f
        .std_errors
        .as_ref()
        .and_then(|s| Some(s.corrected.first()? / f.model.params.first()?.abs()));
    let unstable = !relative_se.is_some_and(|r| r.is_finite() && r <= MAX_RELATIVE_SE);
    if unstable && rpg <= FALLBACK_MAX_RPG {
        return Ok(published(format!(
            "({params}) {}",
            instability(relative_se)
        )));
    }
    let mut c = chosen(f.model.clone(), ModelSource::Fitted);
    c.fitted_dispersion = Some(f.std_errors.as_ref().map(|s| s.dispersion));
    c.notes.push(format!(
        "no --profile: fitted {kind} on these {fitted_on} ({params}); a profile fitted on past seasons (`runcal fit --save-profile`) is steadier"
    ));
    if unstable {
        c.warnings.push(format!(
            "the {kind} fit on these {fitted_on} {}, and at {rpg:.1} points per game the published baseball exponent does not apply: pass --profile or --exponent",
            instability(relative_se)
        ));
    }
    Ok(c)
}

fn instability(relative_se: Option<f64>) -> String {
    match relative_se {
        Some(r) if r.is_finite() => format!(
            "is unstable (standard error {:.0}% of the value, above {:.0}%)",
            100.0 * r,
            100.0 * MAX_RELATIVE_SE
        ),
        _ => "has no standard error (too few games to measure one)".to_string(),
    }
}

/// Parameter values as `exponent 1.9273`.
pub fn describe_params(m: &Model) -> String {
    m.kind
        .param_names()
        .iter()
        .zip(&m.params)
        .map(|(n, v)| format!("{n} {v:.4}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// What the user set on the command line, each overriding the calibration's value.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Overrides {
    pub dispersion: Option<f64>,
    pub regress_games: Option<f64>,
    pub season_games: Option<u64>,
}

/// The luck z's noise and the projection's settings for the data at hand.
#[derive(Debug, Clone, PartialEq)]
pub struct LuckSettings {
    pub noise: Noise,
    /// `None` without a season length, or when every team has played it out.
    pub outlook: Option<Outlook>,
    /// Set when the season is over: every team has played its `season_games`.
    pub finished: Option<u64>,
    pub notes: Vec<String>,
    pub warnings: Vec<String>,
}

/// The noise and outlook the luck report applies: `--dispersion`, the profile's, the fit's, or one
/// measured on these data under the model applied; the regression constant from the command line,
/// the profile, or (1 − φ)·k estimated here; the season length from the command line or the profile.
pub fn luck_settings(
    chosen: &Chosen,
    profile: Option<&Profile>,
    over: &Overrides,
    rows: &[TeamSeason],
    table: &Table,
) -> Result<LuckSettings, Error> {
    let mut notes = Vec::new();
    let mut warnings = Vec::new();
    let noise = noise(chosen, profile, over, rows, table, &mut warnings);
    let season_games = over.season_games.or(profile.map(|p| p.season_games));
    let played = rows.iter().map(|r| r.games).max().unwrap_or(0);
    if let Some(n) = over.season_games
        && n < played
    {
        let most = rows.iter().find(|r| r.games == played).map(|r| &r.team);
        return Err(Error::Usage(format!(
            "--season-games {n} is smaller than the {played} games {} has already played",
            most.map_or("a team".to_string(), |t| format!("'{t}'"))
        )));
    }
    let mut finished = None;
    let season_games = match season_games {
        Some(n) if !rows.is_empty() && rows.iter().all(|r| r.games >= n) => {
            notes.push(format!(
                "the season is complete: every team has played its {n} games, so these are final records and there is no projection"
            ));
            finished = Some(n);
            None
        }
        other => other,
    };
    let k = over.regress_games.or_else(|| {
        profile
            .and_then(Profile::run_based_regression_games)
            .or_else(|| {
                let k = luck::regression_games(table)?;
                luck::run_based_regression_games(k, noise.dispersion).or(Some(k))
            })
    });
    let outlook = match (season_games, k) {
        (Some(season_games), Some(k)) => Some(Outlook {
            season_games,
            regression_games: k,
            dispersion: noise.dispersion,
            level: luck::RANGE_LEVEL,
        }),
        (Some(_), None) => {
            return Err(Error::Usage(
                "cannot estimate the regression toward .500 from these data (win% spread no larger than chance); pass --regress-games K".to_string(),
            ));
        }
        (None, _) => None,
    };
    Ok(LuckSettings {
        noise,
        outlook,
        finished,
        notes,
        warnings,
    })
}

fn noise(
    chosen: &Chosen,
    profile: Option<&Profile>,
    over: &Overrides,
    rows: &[TeamSeason],
    table: &Table,
    warnings: &mut Vec<String>,
) -> Noise {
    if let Some(d) = over.dispersion {
        return Noise::new(Some(d), NoiseSource::Given);
    }
    if let Some(d) = profile.and_then(|p| p.dispersion) {
        return Noise::new(Some(d), NoiseSource::Profile);
    }
    if let Some(Some(d)) = chosen.fitted_dispersion {
        return Noise::new(Some(d), NoiseSource::Data);
    }
    // Fitted here without standard errors: its parameters cost degrees of freedom.
    let (fitted_params, source) = match chosen.fitted_dispersion {
        Some(_) => (chosen.model.params.len(), NoiseSource::Data),
        None => (0, NoiseSource::DataUnfitted),
    };
    let lines = luck::team_lines(rows, table, &chosen.model);
    let noise = Noise::new(luck::pearson_dispersion(&lines, fitted_params), source);
    if profile.is_some() {
        warnings.push(format!(
            "the profile saves no dispersion (a log-loss fit saves one); luck z uses {} noise {}",
            noise.model,
            noise.source.describe()
        ));
    }
    noise
}

/// How far the data's run environment may sit from the profile's before the calibration is said
/// not to suit them: a factor of 1.5 either way in runs per game (our choice; the fitted exponents
/// of baseball eras differ by less than that).
pub const ENVIRONMENT_FACTOR: f64 = 1.5;

/// Whether `a` and `b` differ by more than [`ENVIRONMENT_FACTOR`] either way (or either is not a
/// usable number).
fn far_apart(a: f64, b: f64) -> bool {
    !(a / b <= ENVIRONMENT_FACTOR && b / a <= ENVIRONMENT_FACTOR)
}

/// Ways the data at hand sit far from the run environment the profile was fitted in: runs per game
/// (both teams), a given season length against the profile's, or teams that have already played
/// more games than the profile's season. Empty when the profile suits the data.
pub fn environment_mismatch(
    profile: &Profile,
    rows: &[TeamSeason],
    season_games: Option<u64>,
) -> Vec<String> {
    let mut out = Vec::new();
    let games: u64 = rows.iter().map(|r| r.games).sum();
    let runs: f64 = rows.iter().map(|r| r.runs_scored + r.runs_allowed).sum();
    let fitted = profile.average_rpg;
    if games > 0 && fitted.is_finite() && fitted > 0.0 {
        let rpg = runs / games as f64;
        if far_apart(rpg, fitted) {
            out.push(format!(
                "these data score {rpg:.2} runs per game (both teams), the profile was fitted at {fitted:.2}: its calibration may not apply here"
            ));
        }
    }
    let saved = profile.season_games as f64;
    if let Some(n) = season_games
        && saved > 0.0
        && far_apart(n as f64, saved)
    {
        out.push(format!(
            "--season-games {n} is far from the profile's season of {} games: its regression toward .500 was estimated on seasons of that length",
            profile.season_games
        ));
    }
    let played = rows.iter().map(|r| r.games).max().unwrap_or(0);
    if season_games.is_none() && played as f64 > saved * 1.1 && saved > 0.0 {
        out.push(format!(
            "teams here have played {played} games, more than the profile's season of {} games: pass --season-games for this league",
            profile.season_games
        ));
    }
    out
}
