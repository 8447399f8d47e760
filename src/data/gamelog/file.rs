//! One file's pass: open it, match its header, and take every record through the row checks,
//! the duplicate check, the filters and the team-season sums.

use super::super::{LoadOptions, input, roles};
use super::duplicates::{DuplicateCheck, Seen, SeenAt};
use super::names::Names;
use super::pipeline::{self, Batch};
use super::row::RowReader;
use super::standings::FileRecords;
use super::{DATE, GAME, ROLES, SEASON};
use crate::error::{DataError, Location, Rejection};

/// What one file added up to besides its records.
#[derive(Default)]
pub(super) struct FileTotals {
    pub records: FileRecords,
    pub rejected: Vec<Rejection>,
    /// Games left out by `--seasons`, and by `--league`.
    pub outside_seasons: u64,
    pub outside_league: u64,
    /// Games with both scores empty, and games dated after `--as-of`.
    pub unplayed: u64,
    pub after_as_of: u64,
    /// The date of the last game counted.
    pub last_played: Option<super::Date>,
    /// Warnings of the reader (text after a closing quote).
    pub warnings: Vec<String>,
}

/// Why a pass stopped early.
pub(super) enum Stop {
    Data(DataError),
    /// A date came back after the duplicate check let its games go (at this place).
    DateLetGo(Location),
}

impl From<DataError> for Stop {
    fn from(e: DataError) -> Self {
        Stop::Data(e)
    }
}

/// The file of a load and everything shared with the other files.
pub(super) struct Pass<'a> {
    pub opts: &'a LoadOptions,
    /// Display names of every file of the load.
    pub files: &'a [String],
    pub names: &'a mut Names,
    pub duplicates: &'a mut DuplicateCheck,
}

/// Read one file (number `file_no` of the load).
pub(super) fn aggregate(path: &str, file_no: usize, pass: Pass<'_>) -> Result<FileTotals, Stop> {
    // A pipe or a terminal can keep a read waiting for more input: its records are then checked
    // one by one as they are read, so that an error is reported without that wait.
    aggregate_on(path, file_no, pass, input::is_regular_file(path))
}

/// [`aggregate`] on two threads or one.
fn aggregate_on(
    path: &str,
    file_no: usize,
    pass: Pass<'_>,
    threaded: bool,
) -> Result<FileTotals, Stop> {
    let file = pass.files[file_no].as_str();
    let opts = pass.opts;
    // The delimiter is chosen here, once per file, from the first lines.
    let (mut rdr, headers) = input::open_with_headers(path, file, opts)?;
    let map = roles::resolve(file, &headers, ROLES, &opts.maps).map_err(|e| {
        roles::hint_missing(e, || {
            roles::resolve(file, &headers, crate::data::season::ROLES, &[])
                .is_ok()
                .then(|| {
                    "; the headers look like a team-season table (one row per team): drop --games"
                        .to_string()
                })
        })
    })?;
    crate::data::check_season_is(file, &map, SEASON, opts)?;
    let mut totals = pipeline::stream(&mut rdr, threaded, |batches, spare| {
        sum_records(file, file_no as u32, &map, pass, batches, spare)
    })?;
    totals.warnings.extend(rdr.get_ref().warnings(file));
    Ok(totals)
}

/// Check and sum the records of one file as they arrive, and hand each batch back to `spare` once
/// it has been read.
fn sum_records(
    file: &str,
    file_no: u32,
    map: &roles::ColumnMap,
    pass: Pass<'_>,
    batches: &mut dyn Iterator<Item = Batch>,
    spare: &mut dyn FnMut(Batch),
) -> Result<FileTotals, Stop> {
    let Pass {
        opts,
        files,
        names,
        duplicates,
    } = pass;
    let mut rows = RowReader::new(file, map, opts.season_is);
    let mut totals = FileTotals::default();
    let mut count: u64 = 0;
    let reject = |totals: &mut FileTotals, r: Rejection| -> Result<(), DataError> {
        if opts.skip_invalid {
            totals.rejected.push(r);
            Ok(())
        } else {
            Err(DataError::Rejected(r))
        }
    };
    for mut batch in batches {
        for k in 0..batch.records.len() {
            let (start, end) = (batch.records[k].start, batch.records[k].end);
            let row_error = batch.records[k].error.take();
            let record = batch.record(k);
            input::count_row(&mut count, file, opts)?;
            // A record that ends one line after reading began has no line break inside and starts
            // where reading began: what `record_line` returns then, without scanning the record.
            let line = if end == start + 1 {
                start
            } else {
                input::record_line(start, end, &record.to_byte_record())
            };
            if let Some(e) = row_error {
                let r = input::row_error(file, e, line, &record.to_byte_record());
                reject(&mut totals, r)?;
                continue;
            }
            let game = match rows.read(names, record, line) {
                Ok(g) => g,
                Err(r) => {
                    reject(&mut totals, r)?;
                    continue;
                }
            };
            let Some(scores) = game.scores else {
                totals.unplayed += 1;
                continue;
            };
            let key = (game.packed_date, game.home, game.away, game.game_number);
            match duplicates.check(
                key,
                SeenAt {
                    file: file_no,
                    line,
                },
            ) {
                Seen::New => {}
                Seen::Before(first) => {
                    let first = if first.file == file_no {
                        format!("line {}", first.line)
                    } else {
                        format!("{}:{}", files[first.file as usize], first.line)
                    };
                    let hint = if map.index[GAME].is_none() {
                        "; a doubleheader needs a 'game' column"
                    } else {
                        ""
                    };
                    let shown = input::shown(&format!(
                        "{} {} at {}",
                        game.date,
                        names.teams.name(game.away),
                        names.teams.name(game.home)
                    ));
                    let reason = format!("duplicate game {shown} (first at {first}){hint}");
                    reject(&mut totals, rows.fail(line, DATE, reason))?;
                    continue;
                }
                Seen::LetGo => {
                    return Err(Stop::DateLetGo(Location {
                        file: file.to_string(),
                        line: Some(line),
                        column: map.header_of(DATE).map(str::to_string),
                    }));
                }
            }
            if opts.as_of.is_some_and(|cut| game.date > cut) {
                totals.unplayed += 1;
                totals.after_as_of += 1;
                continue;
            }
            // The interner has checked the name's UTF-8 already.
            let league = Some(names.leagues.name(game.league)).filter(|l| !l.is_empty());
            match opts.left_out_by(game.season, league) {
                Some(super::super::Filter::Seasons) => {
                    totals.outside_seasons += 1;
                    continue;
                }
                Some(super::super::Filter::League) => {
                    totals.outside_league += 1;
                    continue;
                }
                None => {}
            }
            let teams = (game.home, game.away);
            if !totals
                .records
                .add_game(game.season, game.league, teams, scores, line)
            {
                let reason = "the season's run totals grow too large to count".to_string();
                reject(&mut totals, rows.fail(line, super::HOME_SCORE, reason))?;
            } else {
                totals.last_played = totals.last_played.max(Some(game.date));
            }
        }
        if let Some(e) = batch.fatal.take() {
            return Err(input::csv_error(file, e).into());
        }
        spare(batch);
    }
    Ok(totals)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_threads_and_one_sum_alike() {
        use std::io::Write;
        let d = crate::simulate::Design {
            // 6,480 games: more than one batch.
            teams: 8,
            seasons: 10,
            games: 162,
            shape: 1.8,
            runs_per_game: 4.5,
            talent_sd: 0.1,
            first_season: 2001,
            league: "L".to_string(),
            seed: 5,
        };
        let mut file = tempfile::NamedTempFile::new().unwrap();
        writeln!(file, "season,league,date,home,away,home_score,away_score").unwrap();
        let mut n = 0;
        crate::simulate::games(&d, |g| {
            n += 1;
            let league = if g.home % 3 == 0 { "" } else { "L" };
            // Some bad rows, unplayed ones and a repeated game among them, to be handled alike.
            let (home_score, away_score) = match n % 97 {
                0 => ("x".to_string(), g.away_score.to_string()),
                1 => (String::new(), String::new()),
                _ => (g.home_score.to_string(), g.away_score.to_string()),
            };
            let line = format!(
                "{},{league},{},T{},T{},{home_score},{away_score}",
                g.season, g.date, g.home, g.away
            );
            writeln!(file, "{line}").unwrap();
            if n % 101 == 0 {
                writeln!(file, "{line}").unwrap();
            }
        })
        .unwrap();
        file.flush().unwrap();
        let path = file.path().to_string_lossy().into_owned();
        let opts = LoadOptions {
            skip_invalid: true,
            ..Default::default()
        };
        let files = ["games.csv".to_string()];
        let run = |threaded| {
            let mut names = Names::new(100);
            let mut duplicates = DuplicateCheck::new(0);
            let pass = Pass {
                opts: &opts,
                files: &files,
                names: &mut names,
                duplicates: &mut duplicates,
            };
            let Ok(t) = aggregate_on(&path, 0, pass, threaded) else {
                panic!("the file is in date order");
            };
            format!(
                "{} {:?} {} {}",
                t.records.describe(&names),
                t.rejected,
                t.unplayed,
                t.outside_seasons
            )
        };
        let (a, b) = (run(true), run(false));
        assert!(a.contains("expected a number") && a.contains("duplicate game"));
        assert!(!a.contains(" 0 0"), "unplayed games were counted: {a}");
        assert_eq!(a, b);
    }
}
