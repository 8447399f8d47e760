//! JSON printers. Each schema is a serde-derived struct whose field order is the contract's key
//! order; the `schema` field carries the contract's version: change a shape only with a bump.

mod fit;
mod runs;

pub use fit::{FitJson, MetricsJson, ModelFitJson, fit};
pub use runs::{BacktestJson, CheckJson, SimulateJson, backtest, check, simulate};

use serde::Serialize;
use serde::ser::{SerializeMap, SerializeSeq, Serializer};

use super::TeamLine;
use crate::model::Model;

/// A number that becomes `null` when it is not finite (JSON has no NaN or infinity).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Num(pub f64);

impl Serialize for Num {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        if self.0.is_finite() {
            s.serialize_f64(self.0)
        } else {
            s.serialize_none()
        }
    }
}

/// `[lo, hi]`, each finite or null.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pair(pub f64, pub f64);

impl Serialize for Pair {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(2))?;
        seq.serialize_element(&Num(self.0))?;
        seq.serialize_element(&Num(self.1))?;
        seq.end()
    }
}

/// Parameter names mapped to values, in the model's parameter order.
#[derive(Debug, Clone, Copy)]
pub struct Named<'a, T> {
    pub names: &'a [&'a str],
    pub values: &'a [T],
}

impl<T: Copy + Into<Cell>> Serialize for Named<'_, T> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(self.names.len()))?;
        for (n, v) in self.names.iter().zip(self.values) {
            m.serialize_entry(n, &(*v).into())?;
        }
        m.end()
    }
}

/// A value of a [`Named`] map: a number or an interval.
#[derive(Debug, Clone, Copy, Serialize)]
#[serde(untagged)]
pub enum Cell {
    Number(Num),
    Interval(Pair),
}

impl From<f64> for Cell {
    fn from(v: f64) -> Cell {
        Cell::Number(Num(v))
    }
}

impl From<(f64, f64)> for Cell {
    fn from((lo, hi): (f64, f64)) -> Cell {
        Cell::Interval(Pair(lo, hi))
    }
}

pub fn named<'a, T>(names: &'a [&'a str], values: &'a [T]) -> Named<'a, T> {
    Named { names, values }
}

pub fn params_of(m: &Model) -> Named<'_, f64> {
    named(m.kind.param_names(), &m.params)
}

/// Render a serialisable schema as pretty JSON with a closing newline.
pub fn to_bytes<T: Serialize>(value: &T) -> Result<Vec<u8>, crate::error::Error> {
    let mut s = serde_json::to_string_pretty(value)
        .map_err(|e| crate::error::Error::Serialize(e.to_string()))?;
    s.push('\n');
    Ok(s.into_bytes())
}

/// A square matrix whose non-finite entries become null.
#[derive(Debug, Clone, Copy)]
pub struct Matrix<'a>(pub &'a [Vec<f64>]);

impl Serialize for Matrix<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(self.0.len()))?;
        for row in self.0 {
            seq.serialize_element(&row.iter().map(|&v| Num(v)).collect::<Vec<_>>())?;
        }
        seq.end()
    }
}

/// The record and expectation columns every team row shares.
#[derive(Serialize)]
pub struct TeamJson<'a> {
    season: i32,
    league: Option<&'a str>,
    team: &'a str,
    games: u64,
    wins: u64,
    losses: u64,
    ties: u64,
    runs_scored: Num,
    runs_allowed: Num,
    win_pct: Num,
    expected_win_pct: Num,
    expected_wins: Num,
    luck_wins: Num,
}

impl<'a> From<&'a TeamLine> for TeamJson<'a> {
    fn from(t: &'a TeamLine) -> TeamJson<'a> {
        TeamJson {
            season: t.season,
            league: t.league.as_deref(),
            team: &t.team,
            games: t.games,
            wins: t.wins,
            losses: t.losses,
            ties: t.ties,
            runs_scored: Num(t.runs_scored),
            runs_allowed: Num(t.runs_allowed),
            win_pct: Num(t.win_pct),
            expected_win_pct: Num(t.expected_win_pct),
            expected_wins: Num(t.expected_wins),
            luck_wins: Num(t.luck_wins),
        }
    }
}
