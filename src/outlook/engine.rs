//! The simulation: N seasons, each first drawing every club's strength (and the home edge) from its
//! posterior, then playing every game left. Season `s` draws from its own ChaCha stream (seed,
//! stream = s) and every tally is an integer count, so the result is the same for any thread count.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::Distribution;
use rayon::prelude::*;

use super::strength::{Beta, odds};

/// What the engine plays: club posteriors, banked wins, groups and the games left.
pub struct Plan<'a> {
    pub posteriors: &'a [Beta],
    pub home: Beta,
    /// Wins banked so far, per club.
    pub banked: &'a [u64],
    /// Group index per club.
    pub group: &'a [usize],
    pub groups: usize,
    /// (home, away) club indices.
    pub games: &'a [(u32, u32)],
    /// Per game: the home side's chance at the posterior means (used when strengths are not drawn).
    pub fixed: &'a [f64],
    pub draw_strength: bool,
}

/// Counts over the simulated seasons.
#[derive(Debug, Clone, PartialEq)]
pub struct Tally {
    /// Per club: seasons ending with `j` more wins, j = 0..=games left.
    pub wins_left: Vec<Vec<u64>>,
    /// Per club: seasons in which it shared first place with `m` clubs in all, at index m − 1.
    pub first_shared: Vec<Vec<u64>>,
}

impl Tally {
    fn new(games_left: &[usize], group_sizes: &[usize], group: &[usize]) -> Tally {
        Tally {
            wins_left: games_left.iter().map(|&g| vec![0; g + 1]).collect(),
            first_shared: group.iter().map(|&g| vec![0; group_sizes[g]]).collect(),
        }
    }

    fn add(mut self, other: Tally) -> Tally {
        for (a, b) in self.wins_left.iter_mut().zip(other.wins_left) {
            a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
        }
        for (a, b) in self.first_shared.iter_mut().zip(other.first_shared) {
            a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
        }
        self
    }
}

/// Scratch space of one worker.
struct Scratch {
    tally: Tally,
    odds: Vec<f64>,
    wins: Vec<u32>,
    best: Vec<u64>,
    leaders: Vec<u32>,
}

/// A uniform draw in [0, 1) from 32 random bits: a game's chance is then resolved to 2^-32, far
/// below any Monte-Carlo error, at half the random bits of a 53-bit draw.
#[inline]
fn uniform(rng: &mut ChaCha8Rng) -> f64 {
    f64::from(rng.next_u32()) * (1.0 / 4_294_967_296.0)
}

/// A beta sampler, or its mean when the shapes are unusable (they are positive and finite by
/// construction).
enum Sampler {
    Beta(rand_distr::Beta<f64>),
    Fixed(f64),
}

impl Sampler {
    fn new(b: Beta) -> Sampler {
        rand_distr::Beta::new(b.alpha, b.beta).map_or(Sampler::Fixed(b.mean()), Sampler::Beta)
    }

    fn draw(&self, rng: &mut ChaCha8Rng) -> f64 {
        match self {
            Sampler::Beta(d) => d.sample(rng),
            Sampler::Fixed(v) => *v,
        }
    }
}

/// Play `simulations` seasons of the plan.
pub fn run(plan: &Plan<'_>, simulations: u64, seed: u64) -> Tally {
    let clubs = plan.banked.len();
    let samplers: Vec<Sampler> = plan.posteriors.iter().map(|&b| Sampler::new(b)).collect();
    let home = Sampler::new(plan.home);
    let draws = Draws {
        clubs: &samplers,
        home: &home,
    };
    let mut games_left = vec![0usize; clubs];
    for &(h, a) in plan.games {
        games_left[h as usize] += 1;
        games_left[a as usize] += 1;
    }
    let mut group_sizes = vec![0usize; plan.groups];
    for &g in plan.group {
        group_sizes[g] += 1;
    }
    let fresh = || Scratch {
        tally: Tally::new(&games_left, &group_sizes, plan.group),
        odds: vec![0.0; clubs],
        wins: vec![0; clubs],
        best: vec![0; plan.groups],
        leaders: vec![0; plan.groups],
    };
    // Simulations are bounded far below usize::MAX (`MAX_SIMULATIONS`); usize ranges split evenly.
    (0..simulations as usize)
        .into_par_iter()
        .with_min_len(32)
        .fold(fresh, |mut s, season| {
            one_season(plan, &draws, seed, season as u64, &mut s);
            s
        })
        .map(|s| s.tally)
        .reduce(
            || Tally::new(&games_left, &group_sizes, plan.group),
            Tally::add,
        )
}

/// The strength samplers, built once.
struct Draws<'a> {
    clubs: &'a [Sampler],
    home: &'a Sampler,
}

fn one_season(plan: &Plan<'_>, draws: &Draws<'_>, seed: u64, season: u64, s: &mut Scratch) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(season);
    s.wins.iter_mut().for_each(|w| *w = 0);
    if plan.draw_strength {
        for (o, d) in s.odds.iter_mut().zip(draws.clubs) {
            *o = odds(d.draw(&mut rng));
        }
        let home = odds(draws.home.draw(&mut rng));
        for &(h, a) in plan.games {
            let x = home * s.odds[h as usize];
            let winner = if uniform(&mut rng) * (x + s.odds[a as usize]) < x {
                h
            } else {
                a
            };
            s.wins[winner as usize] += 1;
        }
    } else {
        for (&(h, a), &p) in plan.games.iter().zip(plan.fixed) {
            let winner = if uniform(&mut rng) < p { h } else { a };
            s.wins[winner as usize] += 1;
        }
    }
    s.best.iter_mut().for_each(|b| *b = 0);
    s.leaders.iter_mut().for_each(|l| *l = 0);
    for c in 0..s.wins.len() {
        let total = plan.banked[c] + u64::from(s.wins[c]);
        let g = plan.group[c];
        if s.leaders[g] == 0 || total > s.best[g] {
            s.best[g] = total;
            s.leaders[g] = 1;
        } else if total == s.best[g] {
            s.leaders[g] += 1;
        }
        s.tally.wins_left[c][s.wins[c] as usize] += 1;
    }
    for c in 0..s.wins.len() {
        let g = plan.group[c];
        if plan.banked[c] + u64::from(s.wins[c]) == s.best[g] {
            s.tally.first_shared[c][s.leaders[g] as usize - 1] += 1;
        }
    }
}
