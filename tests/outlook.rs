//! The rest-of-season simulation against exact distributions and symmetry arguments.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use runcal::data::{self, LoadOptions, Table, TiePolicy, Weighting, schedule};
use runcal::outlook::{self, Club, HomeEdge, League, Settings, Shrinkage, league};
use runcal::profile::Profile;

const DEMO_LOG: &str = "demo-data/meridian-2026-games.csv";
const DEMO_PROFILE: &str = "demo-data/meridian-profile.json";
const FIXTURE: &str = "tests/reference/outlook_fixture.json";
const REFERENCE: &str = "tests/reference/outlook_reference.json";

/// The demo league cut at a date, as `runcal outlook --as-of DATE --profile …` builds it.
fn demo(as_of: &str) -> (League, Shrinkage, HomeEdge) {
    let path = common::repo().join(DEMO_LOG).display().to_string();
    let as_of = Some(data::gamelog::parse_as_of(as_of).unwrap());
    let opts = LoadOptions {
        as_of,
        ..LoadOptions::default()
    };
    let ds = data::load(std::slice::from_ref(&path), true, &opts).unwrap();
    let t = Table::new(&ds.rows, TiePolicy::Half, Weighting::None);
    let profile = Profile::load(&common::repo().join(DEMO_PROFILE).display().to_string()).unwrap();
    let plan = schedule::read_plan(&[path], &[], as_of, &opts).unwrap();
    let (league, _) = league::league(&ds.rows, &t, &profile.model(), &plan, None).unwrap();
    let shrinkage = league::shrinkage(None, Some(&profile), &t, &profile.model()).unwrap();
    (league, shrinkage, league::home_edge(&plan))
}

fn settings(simulations: u64, draw_strength: bool) -> Settings {
    Settings {
        simulations,
        seed: 11,
        draw_strength,
        target_wins: None,
    }
}

fn find<'a>(o: &'a outlook::Outlook, team: &str) -> &'a outlook::ClubOutlook {
    o.groups
        .iter()
        .flat_map(|g| &g.clubs)
        .find(|c| c.team == team)
        .unwrap()
}

/// One club's games left in the demo at 2026-07-15: the fixture the Python reference reads.
fn fixture_value(l: &League, s: &Shrinkage, h: &HomeEdge, club: usize) -> serde_json::Value {
    let strength: Vec<f64> = l
        .clubs
        .iter()
        .map(|c| s.posterior(c.decisions, c.expected_win_pct).mean())
        .collect();
    let probs = outlook::game_probabilities(l, s, h);
    let games: Vec<serde_json::Value> = l
        .games
        .iter()
        .zip(&probs)
        .filter(|((a, b), _)| *a as usize == club || *b as usize == club)
        .map(|(&(a, b), &p)| {
            let home = a as usize == club;
            let opp = if home { b } else { a } as usize;
            serde_json::json!({
                "at_home": home, "strength": strength[club], "opponent_strength": strength[opp],
                "home_probability": p,
            })
        })
        .collect();
    serde_json::json!({
        "source": "demo league at 2026-07-15 with demo-data/meridian-profile.json; written by tests/outlook.rs (REGENERATE_OUTLOOK_FIXTURE=1)",
        "club": l.clubs[club].team, "banked_wins": l.clubs[club].wins,
        "home_win_pct": h.win_pct(), "games": games,
    })
}

#[test]
fn fixed_strength_final_wins_follow_the_poisson_binomial_of_the_log5_chances() {
    let (l, s, h) = demo("2026-07-15");
    let club = l
        .clubs
        .iter()
        .position(|c| c.team == "Greystone Gulls")
        .unwrap();
    let value = fixture_value(&l, &s, &h, club);
    let fixture_path = common::repo().join(FIXTURE);
    if std::env::var_os("REGENERATE_OUTLOOK_FIXTURE").is_some() {
        let text = serde_json::to_string_pretty(&value).unwrap() + "\n";
        std::fs::write(&fixture_path, text).unwrap();
    }
    let committed: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&fixture_path).unwrap()).unwrap();
    // Compared as parsed text on both sides (the parser rounds the last digit alike).
    let fresh: serde_json::Value = serde_json::from_str(&value.to_string()).unwrap();
    assert_eq!(committed, fresh, "the fixture is stale: regenerate it");
    // tests/reference/outlook_reference.py: scipy.stats.poisson_binom (scipy 1.17.1) over the
    // fixture's chances, each recomputed there from the published log5 formula.
    let reference: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(common::repo().join(REFERENCE)).unwrap())
            .unwrap();
    let pmf: Vec<f64> = reference["pmf"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let n = 50_000u64;
    let o = outlook::simulate(&l, &s, &h, &settings(n, false)).unwrap();
    let c = find(&o, "Greystone Gulls");
    assert_eq!(c.distribution.len(), pmf.len());
    for (j, (&sim, &exact)) in c.distribution.iter().zip(&pmf).enumerate() {
        let se = (exact * (1.0 - exact) / n as f64).sqrt();
        // Monte-Carlo error: 4.5 standard errors per win total (34 totals tested at once).
        assert!(
            (sim - exact).abs() <= 4.5 * se + 1e-4,
            "{j} more wins: simulated {sim}, exact {exact}"
        );
    }
    let mean = reference["mean"].as_f64().unwrap();
    let sd = reference["sd"].as_f64().unwrap();
    // Same reference: the Poisson-binomial mean Σp and SD sqrt(Σp(1 − p)).
    assert!((c.mean_final_wins - c.wins as f64 - mean).abs() < 4.0 * sd / (n as f64).sqrt());
}

#[test]
fn mean_final_wins_are_banked_wins_plus_the_game_chances() {
    let (l, s, h) = demo("2026-06-20");
    let probs = outlook::game_probabilities(&l, &s, &h);
    let n = 20_000u64;
    let o = outlook::simulate(&l, &s, &h, &settings(n, false)).unwrap();
    for (i, club) in l.clubs.iter().enumerate() {
        let (mut sum, mut var) = (0.0, 0.0);
        for (&(a, b), &p) in l.games.iter().zip(&probs) {
            let q = if a as usize == i {
                p
            } else if b as usize == i {
                1.0 - p
            } else {
                continue;
            };
            sum += q;
            var += q * (1.0 - q);
        }
        let c = find(&o, &club.team);
        // Linearity of expectation: E[final wins] = banked + Σ p; MC error sqrt(Σp(1 − p)/N).
        let tolerance = 4.0 * (var / n as f64).sqrt();
        assert!(
            (c.mean_final_wins - club.wins as f64 - sum).abs() <= tolerance,
            "{}: {} against {}",
            club.team,
            c.mean_final_wins,
            club.wins as f64 + sum
        );
    }
}

/// Eight identical clubs in two groups of four, each pair meeting twice at each park.
fn identical_league() -> League {
    let clubs = (0..8)
        .map(|i| Club {
            team: format!("Club {i}"),
            group: i / 4,
            wins: 30,
            losses: 30,
            ties: 0,
            decisions: 60.0,
            expected_win_pct: 0.5,
        })
        .collect();
    let mut games = Vec::new();
    for a in 0..8u32 {
        for b in 0..8u32 {
            if a != b {
                games.extend([(a, b), (a, b)]);
            }
        }
    }
    League {
        clubs,
        group_names: vec!["East".to_string(), "West".to_string()],
        games,
    }
}

fn even_home() -> HomeEdge {
    HomeEdge::estimate(
        data::schedule::HomeRecord {
            wins: 500.0,
            games: 1000.0,
        },
        data::schedule::HomeRecord::default(),
    )
}

#[test]
fn identical_clubs_share_first_place_evenly_and_chances_sum_to_one() {
    let l = identical_league();
    let s = Shrinkage::from_actual_record(88.0, 0.39);
    let n = 40_000u64;
    for draw in [true, false] {
        let o = outlook::simulate(&l, &s, &even_home(), &settings(n, draw)).unwrap();
        for g in &o.groups {
            let total: f64 = g.clubs.iter().map(|c| c.chance_first).sum();
            // Every simulated season credits exactly one first place per group (ties split).
            assert!((total - 1.0).abs() < 1e-12, "{}: {total}", g.name);
            for c in &g.clubs {
                // Symmetry: 1/group size; the credit per season lies in [0, 1], so its SD is at
                // most sqrt(p(1 − p)).
                let se = (0.25f64 * 0.75 / n as f64).sqrt();
                assert!(
                    (c.chance_first - 0.25).abs() < 4.0 * se,
                    "{}: {}",
                    c.team,
                    c.chance_first
                );
            }
        }
    }
}

#[test]
fn a_finished_season_gives_one_answer_whatever_the_seed() {
    let mut l = identical_league();
    l.games.clear();
    l.clubs[1].wins = 33;
    l.clubs[2].wins = 33;
    l.clubs[5].wins = 31;
    let s = Shrinkage::from_actual_record(88.0, 0.39);
    let a = outlook::simulate(&l, &s, &even_home(), &settings(500, true)).unwrap();
    let mut other = settings(700, true);
    other.seed = 99;
    let b = outlook::simulate(&l, &s, &even_home(), &other).unwrap();
    assert_eq!(a.groups, b.groups);
    let east = &a.groups[0];
    // Clubs 1 and 2 tie for first at 33 wins: half the credit each, every total certain.
    assert_eq!(find(&a, "Club 1").chance_first, 0.5);
    assert_eq!(find(&a, "Club 2").chance_first, 0.5);
    assert_eq!(find(&a, "Club 5").chance_first, 1.0);
    for c in &east.clubs {
        assert_eq!(
            (c.low.wins, c.median.wins, c.high.wins),
            (c.wins, c.wins, c.wins)
        );
        assert_eq!(c.mean_final_wins, c.wins as f64);
        assert_eq!(c.range_mass, 1.0);
    }
}

#[test]
fn thread_count_does_not_change_the_result() {
    let (l, s, h) = demo("2026-07-15");
    let run = |threads| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| outlook::simulate(&l, &s, &h, &settings(3_000, true)).unwrap())
    };
    assert_eq!(run(1), run(2));
    assert_eq!(run(2), run(3));
}

#[test]
fn sizes_beyond_the_limits_are_refused() {
    let l = identical_league();
    let s = Shrinkage::from_actual_record(88.0, 0.39);
    for n in [0, outlook::MAX_SIMULATIONS + 1] {
        let err = outlook::simulate(&l, &s, &even_home(), &settings(n, true)).unwrap_err();
        assert!(err.to_string().contains("--simulations"), "{err}");
    }
}
