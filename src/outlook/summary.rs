//! From the simulation's counts to each club's outlook, ranked within its group.

use super::engine::Tally;
use super::strength::Beta;
use super::{League, RANGE_LEVEL, Settings};

/// A point of the final-wins distribution with the share of simulated seasons it actually cuts off.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Percentile {
    pub wins: u64,
    /// For the low end: the share of seasons below `wins`; otherwise the share at or below it.
    pub level: f64,
}

/// One club's rest of season.
#[derive(Debug, Clone, PartialEq)]
pub struct ClubOutlook {
    pub team: String,
    pub group: String,
    pub wins: u64,
    pub losses: u64,
    pub ties: u64,
    pub games_left: u64,
    /// Posterior-mean strength (a win% against an average club at a neutral site).
    pub strength: f64,
    pub strength_sd: f64,
    /// Mean strength of the opponents left; `None` with no games left.
    pub schedule_strength: Option<f64>,
    pub mean_final_wins: f64,
    /// Low end of the central range: the total with about 10% of seasons below it.
    pub low: Percentile,
    pub median: Percentile,
    /// High end: the total with about 90% of seasons at or below it.
    pub high: Percentile,
    /// Share of simulated seasons ending within [low, high].
    pub range_mass: f64,
    /// Chance of finishing first in the group, ties sharing the credit equally.
    pub chance_first: f64,
    /// Chance of reaching `--target-wins`.
    pub chance_target: Option<f64>,
    /// Share of simulated seasons ending with `wins + j` wins, j = 0..=games left.
    pub distribution: Vec<f64>,
}

/// One group's clubs, ranked.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupOutlook {
    pub name: String,
    pub clubs: Vec<ClubOutlook>,
}

/// The tail share nearest to `target` picks the end: `below[j]` is the share of seasons with fewer
/// than j more wins (length games left + 2, from 0 to 1).
fn nearest(below: &[f64], target: f64, range: impl Iterator<Item = usize>) -> usize {
    let mut best = 0;
    let mut gap = f64::INFINITY;
    for j in range {
        let d = (below[j] - target).abs();
        if d < gap {
            gap = d;
            best = j;
        }
    }
    best
}

pub(super) fn summarise(
    league: &League,
    posteriors: &[Beta],
    tally: &Tally,
    settings: &Settings,
) -> Vec<super::GroupOutlook> {
    let n = settings.simulations as f64;
    let tail = (1.0 - RANGE_LEVEL) / 2.0;
    let mut opponents: Vec<(f64, u64)> = vec![(0.0, 0); league.clubs.len()];
    for &(h, a) in &league.games {
        let (h, a) = (h as usize, a as usize);
        opponents[h].0 += posteriors[a].mean();
        opponents[h].1 += 1;
        opponents[a].0 += posteriors[h].mean();
        opponents[a].1 += 1;
    }
    let mut groups: Vec<super::GroupOutlook> = league
        .group_names
        .iter()
        .map(|name| GroupOutlook {
            name: name.clone(),
            clubs: Vec::new(),
        })
        .collect();
    for (c, club) in league.clubs.iter().enumerate() {
        let counts = &tally.wins_left[c];
        let distribution: Vec<f64> = counts.iter().map(|&k| k as f64 / n).collect();
        let mut below = Vec::with_capacity(counts.len() + 1);
        let mut acc = 0u64;
        below.push(0.0);
        for &k in counts {
            acc += k;
            below.push(acc as f64 / n);
        }
        let left = counts.len() - 1;
        let lo = nearest(&below, tail, 0..=left);
        // `below[j + 1]` is the share at or below j; ties of the gap go to the wider range.
        let hi = nearest(&below, 1.0 - tail, (lo + 1..=left + 1).rev()) - 1;
        let med = (0..=left).find(|&j| below[j + 1] >= 0.5).unwrap_or(left);
        let mean_left: f64 = counts
            .iter()
            .enumerate()
            .map(|(j, &k)| j as f64 * k as f64)
            .sum::<f64>()
            / n;
        let first: f64 = tally.first_shared[c]
            .iter()
            .enumerate()
            .map(|(m, &k)| k as f64 / (m + 1) as f64)
            .sum::<f64>()
            / n;
        let chance_target = settings.target_wins.map(|t| {
            let need = t.saturating_sub(club.wins) as usize;
            if need > left { 0.0 } else { 1.0 - below[need] }
        });
        let (opp_sum, opp_games) = opponents[c];
        groups[club.group].clubs.push(ClubOutlook {
            team: club.team.clone(),
            group: league.group_names[club.group].clone(),
            wins: club.wins,
            losses: club.losses,
            ties: club.ties,
            games_left: left as u64,
            strength: posteriors[c].mean(),
            strength_sd: posteriors[c].sd(),
            schedule_strength: (opp_games > 0).then(|| opp_sum / opp_games as f64),
            mean_final_wins: club.wins as f64 + mean_left,
            low: Percentile {
                wins: club.wins + lo as u64,
                level: below[lo],
            },
            median: Percentile {
                wins: club.wins + med as u64,
                level: below[med + 1],
            },
            high: Percentile {
                wins: club.wins + hi as u64,
                level: below[hi + 1],
            },
            range_mass: below[hi + 1] - below[lo],
            chance_first: first,
            chance_target,
            distribution,
        });
    }
    for g in &mut groups {
        g.clubs.sort_by(|a, b| {
            b.chance_first
                .total_cmp(&a.chance_first)
                .then(b.mean_final_wins.total_cmp(&a.mean_final_wins))
                .then_with(|| a.team.cmp(&b.team))
        });
    }
    groups.sort_by(|a, b| a.name.cmp(&b.name));
    groups
}
