//! Criterion benchmarks of runcal's hot paths: loss evaluation per row, each model's fit, a
//! bootstrap, a backtest, game-log aggregation, the era windows and the rest-of-season
//! simulation. Data: the Baseball Databank team table in tests/data, and leagues simulated with
//! `runcal::simulate`.
//!
//! `cargo bench` runs them all in a few minutes; `cargo bench -- bootstrap` runs one group.
//! Whole-program comparisons with a numpy/scipy/pandas reference are in bench/compare.sh.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

use std::io::Write;
use std::path::PathBuf;
use std::time::Duration;

use criterion::{BatchSize, BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use runcal::data::{self, Dataset, LoadOptions, Table, TiePolicy, Weighting};
use runcal::eras;
use runcal::fit::backtest::{self, Candidate, Scheme};
use runcal::fit::bootstrap::{self, Resample};
use runcal::fit::{self, Loss, loss};
use runcal::model::ModelKind;
use runcal::simulate::{self, Design};

fn databank_path() -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/databank-teams.csv")
        .to_string_lossy()
        .into_owned()
}

/// The Databank loaded the way `runcal fit … --map season=yearID --map league=lgID
/// --map team=teamID --map runs_scored=R` loads it.
fn databank() -> (Dataset, Table) {
    let maps = [
        "season=yearID",
        "league=lgID",
        "team=teamID",
        "runs_scored=R",
    ];
    let opts = LoadOptions {
        maps: maps.iter().map(|m| m.parse().unwrap()).collect(),
        ..Default::default()
    };
    let ds = data::load(&[databank_path()], false, &opts).unwrap();
    let t = Table::new(&ds.rows, TiePolicy::Half, Weighting::None);
    (ds, t)
}

fn design(teams: usize, seasons: usize, games: usize) -> Design {
    Design {
        teams,
        seasons,
        games,
        shape: 1.83,
        runs_per_game: 4.5,
        talent_sd: 0.08,
        first_season: 1901,
        league: "Meridian League".to_string(),
        seed: 7,
    }
}

/// A simulated team-season table, written as CSV and loaded back.
fn simulated_seasons(teams: usize, seasons: usize) -> Table {
    let rows = simulate::seasons(&design(teams, seasons, 162)).unwrap();
    let mut file = tempfile::NamedTempFile::new().unwrap();
    writeln!(
        file,
        "season,team,games,wins,losses,runs_scored,runs_allowed"
    )
    .unwrap();
    for r in &rows {
        writeln!(
            file,
            "{},{},{},{},{},{},{}",
            r.season,
            simulate::club_name(r.team),
            r.games,
            r.wins,
            r.losses,
            r.runs_scored,
            r.runs_allowed
        )
        .unwrap();
    }
    file.flush().unwrap();
    let path = file.path().to_string_lossy().into_owned();
    let ds = data::load(&[path], false, &LoadOptions::default()).unwrap();
    Table::new(&ds.rows, TiePolicy::Half, Weighting::None)
}

/// A simulated game log (one row per game, in date order) in a temporary file.
fn simulated_game_log(teams: usize, seasons: usize) -> (tempfile::NamedTempFile, u64) {
    let mut file = tempfile::NamedTempFile::new().unwrap();
    let mut w = std::io::BufWriter::new(file.as_file_mut());
    writeln!(w, "season,league,date,home,away,home_score,away_score").unwrap();
    let d = design(teams, seasons, 162);
    let mut n = 0;
    simulate::games(&d, |g| {
        n += 1;
        writeln!(
            w,
            "{},{},{},{},{},{},{}",
            g.season,
            d.league,
            g.date,
            simulate::club_name(g.home),
            simulate::club_name(g.away),
            g.home_score,
            g.away_score
        )
        .unwrap();
    })
    .unwrap();
    w.flush().unwrap();
    drop(w);
    (file, n)
}

fn losses(c: &mut Criterion) {
    let t = simulated_seasons(30, 1000);
    let mut g = c.benchmark_group("loss_per_row");
    g.throughput(Throughput::Elements(t.len() as u64));
    for kind in ModelKind::ALL {
        let params = kind.start();
        for l in [Loss::Logloss, Loss::Mae, Loss::Rmse] {
            g.bench_with_input(BenchmarkId::new(kind.name(), l.name()), &l, |b, &l| {
                b.iter(|| loss::loss_value(&t, kind, &params, l, None))
            });
        }
    }
    g.bench_function("metrics/pythagorean", |b| {
        b.iter(|| loss::metrics(&t, ModelKind::Pythagorean, &[1.83], None))
    });
    g.finish();
}

fn fits(c: &mut Criterion) {
    let (_, t) = databank();
    let mut g = c.benchmark_group("fit_databank");
    for kind in ModelKind::ALL {
        for l in [Loss::Logloss, Loss::Rmse] {
            g.bench_with_input(BenchmarkId::new(kind.name(), l.name()), &l, |b, &l| {
                b.iter(|| fit::fit_model(&t, kind, l).unwrap())
            });
        }
    }
    g.finish();
}

fn bootstraps(c: &mut Criterion) {
    let (ds, t) = databank();
    let mut g = c.benchmark_group("bootstrap_databank");
    // Each run is a tenth of a second or more: ten samples are plenty.
    g.sample_size(10);
    let resamples = 10_000;
    for kind in ModelKind::ALL {
        let f = fit::fit_model(&t, kind, Loss::Logloss).unwrap();
        for resample in [Resample::Team, Resample::Season] {
            let opts = bootstrap::Options {
                resamples,
                seed: 1,
                resample,
                level: 0.95,
                progress: None,
            };
            let name = format!("{}_{resamples}", kind.name());
            let id = BenchmarkId::new(name, format!("{resample:?}").to_lowercase());
            g.bench_function(id, |b| {
                b.iter(|| bootstrap::run(&t, &ds.rows, &f, &opts).unwrap())
            });
        }
    }
    g.finish();
}

fn backtests(c: &mut Criterion) {
    let (ds, t) = databank();
    let mut g = c.benchmark_group("backtest_databank");
    let candidates = [
        Candidate::Fit(ModelKind::Pythagorean),
        Candidate::Fit(ModelKind::Pythagenpat),
    ];
    for scheme in [Scheme::LeaveOneSeasonOut, Scheme::Rolling] {
        g.bench_function(scheme.name(), |b| {
            b.iter(|| backtest::run(&ds.rows, &t, &candidates, Loss::Logloss, scheme, 10).unwrap())
        });
    }
    g.finish();
}

fn game_logs(c: &mut Criterion) {
    // 30 clubs, 20 seasons of 162 games: 48,600 games, 600 team-seasons.
    let (file, games) = simulated_game_log(30, 20);
    let path = file.path().to_string_lossy().into_owned();
    let bytes = std::fs::metadata(file.path()).unwrap().len();
    let mut g = c.benchmark_group("game_log");
    g.throughput(Throughput::Bytes(bytes));
    g.bench_function(format!("aggregate_{games}_games"), |b| {
        b.iter_batched(
            || vec![path.clone()],
            |paths| data::load(&paths, true, &LoadOptions::default()).unwrap(),
            BatchSize::SmallInput,
        )
    });
    g.finish();
}

fn era_windows(c: &mut Criterion) {
    // Every rolling 10-season window of the full Databank (141 windows over 150 seasons), each
    // with 1,000 bootstrap resamples, plus the change test and the recommendation: `runcal eras`'s
    // whole computation. Target: under 1 s on 2 cores.
    let (ds, t) = databank();
    let opts = eras::Options {
        window: 10,
        kind: eras::WindowKind::Rolling,
        min_group: 8,
        target_se: 0.05,
        change_by: eras::ChangeBy::Season,
        bootstrap: Some(bootstrap::Options {
            resamples: 1000,
            seed: 1,
            resample: Resample::Team,
            level: 0.95,
            progress: None,
        }),
    };
    let mut g = c.benchmark_group("eras_databank");
    g.sample_size(10);
    g.bench_function("rolling_10_bootstrap_1000", |b| {
        b.iter(|| eras::analyse(&t, &ds.rows, &opts).unwrap())
    });
    g.finish();
}

/// The rest-of-season simulation: 10,000 seasons of a 30-club league in six groups with 1,200 games
/// left, the league's first 1,230 games of a simulated season banked (target: < 0.5 s on 2 cores).
fn outlooks(c: &mut Criterion) {
    use runcal::outlook::{self, Club, HomeEdge, League, Settings, Shrinkage};
    let d = design(30, 1, 162);
    let mut played: Vec<(u64, u64, f64, f64)> = vec![(0, 0, 0.0, 0.0); 30];
    let mut games = Vec::new();
    let mut n = 0;
    simulate::games(&d, |g| {
        n += 1;
        if n > 1_230 {
            games.push((g.home as u32, g.away as u32));
            return;
        }
        let home_won = g.home_score > g.away_score;
        for (team, scored, allowed, won) in [
            (g.home, g.home_score, g.away_score, home_won),
            (g.away, g.away_score, g.home_score, !home_won),
        ] {
            let r = &mut played[team];
            r.0 += u64::from(won);
            r.1 += u64::from(!won);
            r.2 += scored as f64;
            r.3 += allowed as f64;
        }
    })
    .unwrap();
    let clubs = played
        .iter()
        .enumerate()
        .map(|(i, &(w, l, rs, ra))| Club {
            team: simulate::club_name(i),
            group: i / 5,
            wins: w,
            losses: l,
            ties: 0,
            decisions: (w + l) as f64,
            expected_win_pct: 1.0 / (1.0 + (ra / rs).powf(1.83)),
        })
        .collect();
    let league = League {
        clubs,
        group_names: (0..6).map(|g| format!("Group {g}")).collect(),
        games,
    };
    let shrinkage = Shrinkage::from_actual_record(88.0, 0.39);
    let home = HomeEdge::estimate(Default::default(), Default::default());
    let mut g = c.benchmark_group("outlook");
    g.sample_size(10);
    g.bench_function("10000_seasons_30_clubs_1200_games_left", |b| {
        b.iter(|| outlook::simulate(&league, &shrinkage, &home, &Settings::default()).unwrap())
    });
    g.finish();
}

fn config() -> Criterion {
    Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2))
}

criterion_group! {
    name = benches;
    config = config();
    targets = losses, fits, bootstraps, backtests, game_logs, era_windows, outlooks
}
criterion_main!(benches);
