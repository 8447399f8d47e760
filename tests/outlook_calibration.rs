//! Calibration of the rest-of-season outlook on leagues from runcal's own simulator (the games
//! `runcal simulate --game-log` writes), cut at mid-season and compared with how they really ended.
//! Slow in debug builds: ignored by default, run by CI in release (`--include-ignored`).

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::Distribution;
use runcal::data::schedule::HomeRecord;
use runcal::data::{Table, TeamSeason, TiePolicy, Weighting};
use runcal::fit::{self, Loss};
use runcal::model::{Model, Row, predict};
use runcal::outlook::{self, Club, HomeEdge, League, Settings, Shrinkage};
use runcal::simulate::{self, Design, Game};

const TEAMS: usize = 14;
const GAMES: usize = 140;
const CUT: usize = 70;
const SEASONS: usize = 240;
const SIMULATIONS: u64 = 2_000;

fn design(seasons: usize, seed: u64) -> Design {
    // `runcal simulate`'s defaults (the demo league's design).
    Design {
        teams: TEAMS,
        seasons,
        games: GAMES,
        shape: 1.83,
        runs_per_game: 4.5,
        talent_sd: 0.08,
        first_season: 2001,
        league: "Meridian League".to_string(),
        seed,
    }
}

/// The calibration a profile would hold, fitted on separate seasons: model, φ and k.
fn calibrate() -> (Model, f64, f64, HomeRecord) {
    let d = design(200, 41);
    let rows: Vec<TeamSeason> = simulate::seasons(&d)
        .unwrap()
        .iter()
        .map(|r| r.team_season(Some("L")))
        .collect();
    let t = Table::new(&rows, TiePolicy::Half, Weighting::None);
    let f = fit::fit_model(&t, runcal::model::ModelKind::Pythagorean, Loss::Logloss).unwrap();
    let phi = f.std_errors.as_ref().unwrap().dispersion;
    let k = runcal::luck::regression_games(&t).unwrap();
    let mut home = HomeRecord::default();
    simulate::games(&d, |g| {
        home.games += 1.0;
        home.wins += f64::from(u8::from(g.home_score > g.away_score));
    })
    .unwrap();
    (f.model, phi, k, home)
}

/// Shares of first place from final totals, ties splitting the credit.
fn first_shares(totals: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; totals.len()];
    for g in 0..2 {
        let idx: Vec<usize> = (0..totals.len()).filter(|&i| i / 7 == g).collect();
        let best = idx.iter().map(|&i| totals[i]).fold(f64::MIN, f64::max);
        let m = idx.iter().filter(|&&i| totals[i] == best).count() as f64;
        for &i in &idx {
            if totals[i] == best {
                out[i] = 1.0 / m;
            }
        }
    }
    out
}

struct Season {
    played: Vec<TeamSeason>,
    home: HomeRecord,
    left: Vec<(u32, u32)>,
    final_wins: Vec<u64>,
}

fn seasons() -> Vec<Season> {
    let mut games: Vec<Game> = Vec::new();
    simulate::games(&design(SEASONS, 2027), |g| games.push(g.clone())).unwrap();
    games
        .chunks(GAMES * TEAMS / 2)
        .map(|season| {
            let year = i32::from(season[0].date.year());
            let cut = simulate::season_day(year, CUT - 1).unwrap();
            let mut rows: Vec<TeamSeason> = (0..TEAMS)
                .map(|i| {
                    simulate::SeasonRow {
                        season: 2001,
                        team: i,
                        games: 0,
                        wins: 0,
                        losses: 0,
                        runs_scored: 0,
                        runs_allowed: 0,
                    }
                    .team_season(Some("L"))
                })
                .collect();
            let mut final_wins = vec![0u64; TEAMS];
            let mut home = HomeRecord::default();
            let mut left = Vec::new();
            for g in season {
                let home_won = g.home_score > g.away_score;
                final_wins[if home_won { g.home } else { g.away }] += 1;
                if g.date > cut {
                    left.push((g.home as u32, g.away as u32));
                    continue;
                }
                home.games += 1.0;
                home.wins += f64::from(u8::from(home_won));
                for (team, scored, allowed) in [
                    (g.home, g.home_score, g.away_score),
                    (g.away, g.away_score, g.home_score),
                ] {
                    let r = &mut rows[team];
                    r.games += 1;
                    r.runs_scored += scored as f64;
                    r.runs_allowed += allowed as f64;
                    if scored > allowed {
                        r.wins += 1;
                    } else {
                        r.losses += 1;
                    }
                }
            }
            Season {
                played: rows,
                home,
                left,
                final_wins,
            }
        })
        .collect()
}

fn brier(chances: &[f64], outcomes: &[f64]) -> f64 {
    chances
        .iter()
        .zip(outcomes)
        .map(|(p, o)| (p - o).powi(2))
        .sum()
}

#[test]
#[ignore = "slow in debug builds; CI runs it in release"]
fn mid_season_outlook_is_calibrated_on_simulated_leagues() {
    let (model, phi, k, earlier) = calibrate();
    let shrinkage = Shrinkage::from_actual_record(k, phi);
    let mut covered = [0usize; 2];
    let mut total = 0usize;
    // Per season: Brier sums of the outlook with and without the strength draw, the point
    // projection's leader and independent beta-binomial projections.
    let mut briers: Vec<[f64; 4]> = Vec::new();
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for s in seasons() {
        let t = Table::new(&s.played, TiePolicy::Half, Weighting::None);
        let clubs: Vec<Club> = s
            .played
            .iter()
            .enumerate()
            .map(|(i, r)| Club {
                team: r.team.clone(),
                group: i / 7,
                wins: r.wins,
                losses: r.losses,
                ties: 0,
                decisions: t.decisions[i],
                expected_win_pct: predict(model.kind, &model.params, &Row::of(&t, i)),
            })
            .collect();
        let league = League {
            clubs: clubs.clone(),
            group_names: vec!["A".into(), "B".into()],
            games: s.left.clone(),
        };
        let home = HomeEdge::estimate(s.home, earlier);
        let finals: Vec<f64> = s.final_wins.iter().map(|&w| w as f64).collect();
        let outcome = first_shares(&finals);
        let mut row = [0.0; 4];
        for (d, draw) in [true, false].into_iter().enumerate() {
            let settings = Settings {
                simulations: SIMULATIONS,
                seed: 3,
                draw_strength: draw,
                target_wins: None,
            };
            let o = outlook::simulate(&league, &shrinkage, &home, &settings).unwrap();
            let mut chance = vec![0.0; TEAMS];
            for c in o.groups.iter().flat_map(|g| &g.clubs) {
                let i = clubs.iter().position(|x| x.team == c.team).unwrap();
                chance[i] = c.chance_first;
                let w = s.final_wins[i];
                covered[d] += usize::from(c.low.wins <= w && w <= c.high.wins);
            }
            row[d] = brier(&chance, &outcome);
        }
        total += TEAMS;
        // The schedule-blind projection of `runcal luck`: regressed win% over the games left.
        let projection = runcal::luck::Outlook {
            season_games: GAMES as u64,
            regression_games: shrinkage.run_based_games,
            dispersion: shrinkage.dispersion,
            level: 0.8,
        };
        let projections: Vec<runcal::luck::Projection> = clubs
            .iter()
            .map(|c| {
                runcal::luck::project(
                    c.wins as f64,
                    c.decisions,
                    c.expected_win_pct,
                    &projection,
                    c.wins + c.losses,
                )
            })
            .collect();
        let point: Vec<f64> = projections.iter().map(|p| p.projected_wins).collect();
        row[2] = brier(&first_shares(&point), &outcome);
        // Its beta-binomial (the same talent beta) drawn independently per club: no schedule, no
        // head-to-head games.
        let mut chance = vec![0.0; TEAMS];
        for _ in 0..SIMULATIONS {
            let totals: Vec<f64> = clubs
                .iter()
                .zip(&projections)
                .map(|(c, p)| {
                    let a = shrinkage.run_based_games / 2.0 + c.decisions * c.expected_win_pct;
                    let b =
                        shrinkage.run_based_games / 2.0 + c.decisions * (1.0 - c.expected_win_pct);
                    let q = rand_distr::Beta::new(a, b).unwrap().sample(&mut rng);
                    let more = rand_distr::Binomial::new(p.remaining, q)
                        .unwrap()
                        .sample(&mut rng);
                    c.wins as f64 + more as f64
                })
                .collect();
            for (x, share) in chance.iter_mut().zip(first_shares(&totals)) {
                *x += share / SIMULATIONS as f64;
            }
        }
        row[3] = brier(&chance, &outcome);
        briers.push(row);
    }
    let seasons = briers.len() as f64;
    let mean = |k: usize| briers.iter().map(|r| r[k]).sum::<f64>() / seasons / TEAMS as f64;
    let paired_se = |a: usize, b: usize| {
        let d: Vec<f64> = briers
            .iter()
            .map(|r| (r[a] - r[b]) / TEAMS as f64)
            .collect();
        let m = d.iter().sum::<f64>() / seasons;
        (d.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (seasons - 1.0) / seasons).sqrt()
    };
    let coverage = covered[0] as f64 / total as f64;
    let coverage_fixed = covered[1] as f64 / total as f64;
    eprintln!(
        "outlook calibration over {} seasons cut at {CUT} of {GAMES} games (phi {phi:.3}, k {k:.1}, k_run {:.1}):",
        briers.len(),
        shrinkage.run_based_games
    );
    eprintln!(
        "  80% range coverage: {coverage:.3} with the strength draw, {coverage_fixed:.3} without"
    );
    eprintln!(
        "  Brier of first place per club: outlook {:.4}, without the draw {:.4}, point projection {:.4}, independent beta-binomial {:.4}",
        mean(0),
        mean(1),
        mean(2),
        mean(3)
    );
    eprintln!(
        "  paired SE of outlook - point {:.4}, outlook - independent {:.4}",
        paired_se(0, 2),
        paired_se(0, 3)
    );
    // The criterion: 80% ranges cover 75–85% of real final totals.
    assert!((0.75..=0.85).contains(&coverage), "coverage {coverage}");
    // Better than the schedule-blind run-based projection (its leader taken as the finisher).
    assert!(mean(0) < mean(2), "{} vs {}", mean(0), mean(2));
    // And not worse than its independent beta-binomial version beyond noise.
    assert!(mean(0) <= mean(3) + 2.0 * paired_se(0, 3));
}
