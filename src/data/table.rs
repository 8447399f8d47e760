//! The struct-of-arrays table that every hot loop runs over.

use super::TeamSeason;

/// How ties count toward win%.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum TiePolicy {
    /// A tie is half a win and half a loss: win% = (W + T/2)/(W+L+T).
    #[default]
    Half,
    /// Ties are left out: win% = W/(W+L).
    Exclude,
}

/// How team-seasons are weighted in MAE and RMSE.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Weighting {
    #[default]
    None,
    Games,
}

/// Season lengths that differ by more than this share of the longest make equal weights unfair:
/// a 60-game season's win% is noisier than a 162-game one's (our choice of "about 10%").
pub const WEIGHT_SPREAD: f64 = 0.10;

/// The default MAE/RMSE weighting for these rows: by games when the longest and shortest
/// team-seasons differ by more than [`WEIGHT_SPREAD`] of the longest, else equal; with the note
/// that says so when it chose games.
pub fn default_weighting(rows: &[TeamSeason]) -> (Weighting, Option<String>) {
    let games = rows.iter().map(|r| r.games).filter(|&g| g > 0);
    let (Some(lo), Some(hi)) = (games.clone().min(), games.max()) else {
        return (Weighting::None, None);
    };
    if (hi - lo) as f64 > WEIGHT_SPREAD * hi as f64 {
        let note = format!(
            "season lengths differ ({lo} to {hi} games): MAE and RMSE weight each team-season by its games (--weight none weighs them equally)"
        );
        (Weighting::Games, Some(note))
    } else {
        (Weighting::None, None)
    }
}

/// Per-row quantities precomputed once: the fitters never touch strings or divide twice.
#[derive(Debug, Clone, Default)]
pub struct Table {
    /// Wins counted for the loss: W + T/2 (or W when ties are excluded).
    pub wins: Vec<f64>,
    /// Losses counted for the loss: L + T/2 (or L).
    pub losses: Vec<f64>,
    /// Decisions: wins + losses as counted above.
    pub decisions: Vec<f64>,
    pub win_pct: Vec<f64>,
    /// Games played (for runs per game and the linear model).
    pub games: Vec<f64>,
    /// ln(RS/RA); ±infinity when one side scored nothing.
    pub ln_ratio: Vec<f64>,
    /// Runs per game, both teams: (RS+RA)/G.
    pub rpg: Vec<f64>,
    pub ln_rpg: Vec<f64>,
    pub log10_rpg: Vec<f64>,
    /// (RS−RA)/G, for the linear model.
    pub diff_per_game: Vec<f64>,
    /// MAE/RMSE weight of each row.
    pub weight: Vec<f64>,
    /// How `weight` was set.
    pub weighting: Weighting,
    pub runs_total: f64,
    pub games_total: f64,
}

impl Table {
    /// Build the table. Rows with no decisions under the tie policy must have been rejected before.
    pub fn new(rows: &[TeamSeason], ties: TiePolicy, weighting: Weighting) -> Table {
        let mut t = Table {
            weighting,
            ..Table::default()
        };
        for r in rows {
            let (w, l) = match ties {
                TiePolicy::Half => (
                    r.wins as f64 + r.ties as f64 / 2.0,
                    r.losses as f64 + r.ties as f64 / 2.0,
                ),
                TiePolicy::Exclude => (r.wins as f64, r.losses as f64),
            };
            let n = w + l;
            let g = r.games as f64;
            let rpg = (r.runs_scored + r.runs_allowed) / g;
            t.wins.push(w);
            t.losses.push(l);
            t.decisions.push(n);
            t.win_pct.push(if n > 0.0 { w / n } else { 0.5 });
            t.games.push(g);
            t.ln_ratio.push((r.runs_scored / r.runs_allowed).ln());
            t.rpg.push(rpg);
            t.ln_rpg.push(rpg.ln());
            t.log10_rpg.push(rpg.log10());
            t.diff_per_game.push((r.runs_scored - r.runs_allowed) / g);
            t.weight.push(match weighting {
                Weighting::None => 1.0,
                Weighting::Games => g,
            });
            t.runs_total += r.runs_scored + r.runs_allowed;
            t.games_total += g;
        }
        t
    }

    pub fn len(&self) -> usize {
        self.wins.len()
    }

    pub fn is_empty(&self) -> bool {
        self.wins.is_empty()
    }

    /// Runs per game (both teams) over the whole table: Σ(RS+RA)/ΣG.
    pub fn average_rpg(&self) -> f64 {
        self.runs_total / self.games_total
    }

    /// Mean games per team-season.
    pub fn mean_games(&self) -> f64 {
        self.games_total / self.len() as f64
    }

    /// A new table holding the given rows, in that order.
    pub fn subset(&self, idx: &[usize]) -> Table {
        let pick = |v: &Vec<f64>| idx.iter().map(|&i| v[i]).collect::<Vec<f64>>();
        let games = pick(&self.games);
        let rpg = pick(&self.rpg);
        Table {
            wins: pick(&self.wins),
            losses: pick(&self.losses),
            decisions: pick(&self.decisions),
            win_pct: pick(&self.win_pct),
            ln_ratio: pick(&self.ln_ratio),
            ln_rpg: pick(&self.ln_rpg),
            log10_rpg: pick(&self.log10_rpg),
            diff_per_game: pick(&self.diff_per_game),
            weight: pick(&self.weight),
            weighting: self.weighting,
            runs_total: idx.iter().map(|&i| self.rpg[i] * self.games[i]).sum(),
            games_total: games.iter().sum(),
            games,
            rpg,
        }
    }
}

/// Drop rows that have no decided games under the tie policy, as rejections.
pub fn decided_rows(
    ds: &mut super::Dataset,
    ties: TiePolicy,
    skip_invalid: bool,
) -> Result<(), crate::error::DataError> {
    if ties == TiePolicy::Half {
        return Ok(());
    }
    let mut keep = Vec::with_capacity(ds.rows.len());
    for row in std::mem::take(&mut ds.rows) {
        if row.wins + row.losses == 0 {
            ds.reject(
                skip_invalid,
                crate::error::Rejection {
                    at: row.at.clone(),
                    reason: "no decided games once ties are excluded (--ties exclude)".to_string(),
                },
            )?;
        } else {
            keep.push(row);
        }
    }
    ds.rows = keep;
    Ok(())
}
