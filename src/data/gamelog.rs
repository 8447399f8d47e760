//! Game logs: one row per game, aggregated while streaming into team-season rows, so memory
//! grows with the number of teams, not games.

use std::collections::HashMap;
use std::hash::Hash;
use std::sync::mpsc;

use super::roles::{self, RoleSpec};
use super::{Dataset, LoadOptions, TeamSeason, input, parse_count};
use crate::error::{DataError, Location, Rejection};

/// A calendar date (ISO 8601 `YYYY-MM-DD`), ordered by time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
}

impl Date {
    /// Parse `YYYY-MM-DD`, checking the month and day (leap years included).
    pub fn parse(text: &[u8]) -> Option<Date> {
        if text.len() != 10 || text[4] != b'-' || text[7] != b'-' {
            return None;
        }
        let digits = |r: std::ops::Range<usize>| -> Option<u32> {
            text[r].iter().try_fold(0u32, |acc, &b| {
                b.is_ascii_digit().then(|| acc * 10 + u32::from(b - b'0'))
            })
        };
        let year = digits(0..4)? as i32;
        let month = digits(5..7)? as u8;
        let day = digits(8..10)? as u8;
        if !(1..=12).contains(&month) || day == 0 || day > days_in_month(year, month) {
            return None;
        }
        Some(Date { year, month, day })
    }

    /// The date `n` days earlier (proleptic Gregorian calendar).
    pub fn days_earlier(self, n: u32) -> Date {
        let mut d = self;
        for _ in 0..n {
            d = if d.day > 1 {
                Date {
                    day: d.day - 1,
                    ..d
                }
            } else if d.month > 1 {
                Date {
                    month: d.month - 1,
                    day: days_in_month(d.year, d.month - 1),
                    ..d
                }
            } else {
                Date {
                    year: d.year - 1,
                    month: 12,
                    day: 31,
                }
            };
        }
        d
    }

    fn packed(self) -> u32 {
        (self.year as u32) << 9 | u32::from(self.month) << 5 | u32::from(self.day)
    }
}

impl std::str::FromStr for Date {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Date::parse(s.trim().as_bytes())
            .ok_or_else(|| format!("expected an ISO 8601 date (YYYY-MM-DD), got '{s}'"))
    }
}

impl std::fmt::Display for Date {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

fn days_in_month(year: i32, month: u8) -> u8 {
    match month {
        4 | 6 | 9 | 11 => 30,
        2 if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 => 29,
        2 => 28,
        _ => 31,
    }
}

const DATE: usize = 0;
const HOME: usize = 1;
const AWAY: usize = 2;
const HOME_SCORE: usize = 3;
const AWAY_SCORE: usize = 4;
const SEASON: usize = 5;
const LEAGUE: usize = 6;
const GAME: usize = 7;

/// The roles of a game log and the generic aliases that claim them.
pub const ROLES: &[RoleSpec] = &[
    RoleSpec {
        name: "date",
        aliases: &["date", "game_date", "day"],
        required: true,
    },
    RoleSpec {
        name: "home",
        aliases: &["home", "home_team", "host"],
        required: true,
    },
    RoleSpec {
        name: "away",
        aliases: &[
            "away",
            "away_team",
            "visitor",
            "visitors",
            "road",
            "visiting_team",
        ],
        required: true,
    },
    RoleSpec {
        name: "home_score",
        aliases: &[
            "home_score",
            "home_runs",
            "home_points",
            "home_goals",
            "home_pts",
        ],
        required: true,
    },
    RoleSpec {
        name: "away_score",
        aliases: &[
            "away_score",
            "away_runs",
            "away_points",
            "away_goals",
            "away_pts",
            "visitor_score",
        ],
        required: true,
    },
    RoleSpec {
        name: "season",
        aliases: &["season", "year"],
        required: false,
    },
    RoleSpec {
        name: "league",
        aliases: &["league", "lg"],
        required: false,
    },
    RoleSpec {
        name: "game",
        aliases: &["game", "game_number", "game_no"],
        required: false,
    },
];

#[derive(Debug, Clone, Default)]
struct Record {
    games: u64,
    wins: u64,
    losses: u64,
    ties: u64,
    runs_scored: u64,
    runs_allowed: u64,
    one_run_wins: u64,
    one_run_losses: u64,
    first_line: u64,
}

/// Slots of [`Interner`]'s cache (a power of two).
const NAME_CACHE: usize = 256;

/// Names seen in the input, each stored once.
#[derive(Default)]
struct Interner {
    ids: HashMap<Box<[u8]>, u32>,
    names: Vec<String>,
    /// A small cache in front of `ids`, indexed by a cheap hash: a league's few dozen names then
    /// never pay for SipHash, while hostile names only fall back to the DoS-resistant map.
    cache: Vec<CacheSlot>,
}

/// A name in [`Interner`]'s cache: its id + 1 (0: empty), length and [`NameWords`].
#[derive(Clone, Copy, Default)]
struct CacheSlot {
    id: u32,
    len: u32,
    words: NameWords,
}

/// A name's first sixteen bytes and its last eight, as little-endian words (zero-padded): with the
/// length they determine a name of up to 24 bytes, so most cache hits need no byte comparison.
type NameWords = [u64; 3];

fn name_words(name: &[u8]) -> NameWords {
    let n = name.len();
    let tail = if n > 16 { word(&name[n - 8..]) } else { 0 };
    [word(name), word(name.get(8..).unwrap_or_default()), tail]
}

/// The first (up to) eight bytes of `b` as a little-endian word, zero-padded. Four to seven bytes
/// take two overlapping loads (the overlap holds the same bytes, so OR keeps them), not a loop.
#[inline]
fn word(b: &[u8]) -> u64 {
    let n = b.len();
    if n >= 8 {
        u64::from_le_bytes([b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]])
    } else if n >= 4 {
        let lo = u64::from(u32::from_le_bytes([b[0], b[1], b[2], b[3]]));
        let hi = u64::from(u32::from_le_bytes([b[n - 4], b[n - 3], b[n - 2], b[n - 1]]));
        lo | hi << (8 * (n - 4))
    } else {
        b.iter().rev().fold(0u64, |w, &x| w << 8 | u64::from(x))
    }
}

impl Interner {
    fn id(&mut self, name: &[u8]) -> Result<u32, ()> {
        if self.cache.is_empty() {
            self.cache = vec![CacheSlot::default(); NAME_CACHE];
        }
        let words = name_words(name);
        let h =
            (words[0] ^ words[1].rotate_left(21) ^ words[2].rotate_left(42) ^ name.len() as u64)
                .wrapping_mul(0x9E37_79B9_7F4A_7C15);
        // Two ways, so that two names landing on one slot do not evict each other on every row.
        let pair = (h >> (64 - NAME_CACHE.trailing_zeros())) as usize & !1;
        for slot in [pair, pair + 1] {
            let c = &self.cache[slot];
            if c.id != 0
                && c.len as usize == name.len()
                && c.words[0] == words[0]
                && c.words[1] == words[1]
                && c.words[2] == words[2]
                && (name.len() <= 24 || self.names[c.id as usize - 1].as_bytes() == name)
            {
                return Ok(c.id - 1);
            }
        }
        let id = match self.ids.get(name) {
            Some(&id) => id,
            None => {
                let text = std::str::from_utf8(name).map_err(|_| ())?;
                let id = self.names.len() as u32;
                self.names.push(text.to_string());
                self.ids.insert(name.into(), id);
                id
            }
        };
        if let Ok(len) = u32::try_from(name.len()) {
            // The newcomer takes the second way; the name there moves to the first.
            self.cache[pair] = self.cache[pair + 1];
            self.cache[pair + 1] = CacheSlot {
                id: id + 1,
                len,
                words,
            };
        }
        Ok(id)
    }
}

/// Team and league names, shared by every file of one load.
#[derive(Default)]
struct Names {
    teams: Interner,
    leagues: Interner,
}

/// A team-season: (season, league id, team id).
type Key = (i32, u32, u32);

/// Team-season records in the order they were first seen, found through a map, with each team's
/// latest record remembered: in a log ordered by season a team's key changes once a season, so the
/// map is consulted once per team-season rather than twice per game.
#[derive(Default)]
struct Records {
    list: Vec<(Key, Record)>,
    index: HashMap<Key, u32>,
    /// Per team id: position in `list` of the team's latest record (u32::MAX: none yet).
    latest: Vec<u32>,
}

impl Records {
    /// Position of an existing record.
    fn find(&mut self, key: Key) -> Option<usize> {
        let team = key.2 as usize;
        if let Some(&at) = self.latest.get(team)
            && let Some((k, _)) = self.list.get(at as usize)
            && *k == key
        {
            return Some(at as usize);
        }
        let at = *self.index.get(&key)?;
        self.remember(team, at);
        Some(at as usize)
    }

    /// Add a record that is not present yet (first seen at `line`); its position.
    fn insert(&mut self, key: Key, line: u64) -> usize {
        let at = self.list.len() as u32;
        self.list.push((
            key,
            Record {
                first_line: line,
                ..Record::default()
            },
        ));
        self.index.insert(key, at);
        self.remember(key.2 as usize, at);
        at as usize
    }

    fn remember(&mut self, team: usize, at: u32) {
        if self.latest.len() <= team {
            self.latest.resize(team + 1, u32::MAX);
        }
        self.latest[team] = at;
    }
}

/// Game keys with the line each was first seen at: a short list scanned linearly while small (one
/// date's games, a league's worth), a hash map beyond that (every game of stdin or of a file whose
/// dates go backwards), so the usual day costs no hashing.
struct GameKeys<K> {
    list: Vec<(K, u64)>,
    map: HashMap<K, u64>,
}

/// Entries [`GameKeys`] keeps in its list before it moves them to its map.
const GAME_KEYS_LIST: usize = 64;

impl<K: Copy + Eq + Hash> GameKeys<K> {
    fn new() -> Self {
        GameKeys {
            list: Vec::with_capacity(GAME_KEYS_LIST),
            map: HashMap::new(),
        }
    }

    fn first_line(&self, key: &K) -> Option<u64> {
        if self.map.is_empty() {
            self.list.iter().find(|(k, _)| k == key).map(|&(_, l)| l)
        } else {
            self.map.get(key).copied()
        }
    }

    /// Add a key that is not present yet.
    fn insert(&mut self, key: K, line: u64) {
        if self.map.is_empty() && self.list.len() < GAME_KEYS_LIST {
            self.list.push((key, line));
        } else {
            self.map.extend(self.list.drain(..));
            self.map.insert(key, line);
        }
    }

    fn clear(&mut self) {
        self.list.clear();
        self.map.clear();
    }
}

/// The aggregation of one file.
#[derive(Default)]
struct FileTotals {
    records: Records,
    rejected: Vec<Rejection>,
    filtered_out: u64,
}

/// A count made only of ASCII digits (the usual score), read directly; `None` for anything else,
/// which then takes `parse_count`'s full rules. Fifteen digits stay below its 10^15 limit.
fn digits(b: &[u8]) -> Option<u64> {
    if b.is_empty() || b.len() > 15 {
        return None;
    }
    b.iter().try_fold(0u64, |acc, &d| {
        d.is_ascii_digit().then(|| acc * 10 + u64::from(d - b'0'))
    })
}

enum Pass {
    Done(Box<FileTotals>),
    /// Dates went backwards: a rolling duplicate check cannot see every earlier game.
    OutOfOrder,
}

fn trim(bytes: &[u8]) -> &[u8] {
    bytes.trim_ascii()
}

pub fn load(
    paths: &[String],
    as_of: Option<Date>,
    opts: &LoadOptions,
) -> Result<Dataset, DataError> {
    roles::check_mappings(ROLES, &opts.maps)?;
    let mut names = Names::default();
    // Team-seasons over all files, each with the file it was first seen in.
    let mut merged: Vec<(Key, Record, usize)> = Vec::new();
    let mut merged_index: HashMap<Key, usize> = HashMap::new();
    let mut files: Vec<String> = Vec::new();
    let mut ds = Dataset::default();
    for path in paths {
        let file = input::display_name(path);
        // A pipe or a terminal can keep a read waiting for more input: its records are then
        // checked one by one as they are read, so that an error is reported without that wait.
        let pipelined = path != "-" && std::fs::metadata(path).is_ok_and(|m| m.is_file());
        // Standard input cannot be read twice, so it keeps every game key from the start.
        let first = aggregate(path, &file, as_of, opts, path == "-", pipelined, &mut names)?;
        let totals = match first {
            Pass::Done(t) => t,
            Pass::OutOfOrder => {
                match aggregate(path, &file, as_of, opts, true, pipelined, &mut names)? {
                    Pass::Done(t) => t,
                    Pass::OutOfOrder => unreachable!("a global duplicate check never restarts"),
                }
            }
        };
        ds.filtered_out += totals.filtered_out;
        ds.rejected.extend(totals.rejected);
        files.push(file);
        let file_no = files.len() - 1;
        if file_no == 0 {
            // The first file's records are the merge so far; their keys are distinct already.
            merged = totals
                .records
                .list
                .into_iter()
                .map(|(k, r)| (k, r, 0))
                .collect();
            continue;
        }
        if file_no == 1 {
            merged_index = merged.iter().enumerate().map(|(at, m)| (m.0, at)).collect();
        }
        for (key, rec) in totals.records.list {
            let at = *merged_index.entry(key).or_insert_with(|| {
                merged.push((
                    key,
                    Record {
                        first_line: rec.first_line,
                        ..Record::default()
                    },
                    file_no,
                ));
                merged.len() - 1
            });
            let acc = &mut merged[at].1;
            acc.games += rec.games;
            acc.wins += rec.wins;
            acc.losses += rec.losses;
            acc.ties += rec.ties;
            let (Some(scored), Some(allowed)) = (
                acc.runs_scored.checked_add(rec.runs_scored),
                acc.runs_allowed.checked_add(rec.runs_allowed),
            ) else {
                return Err(DataError::Rejected(Rejection {
                    at: Location {
                        file: files[file_no].clone(),
                        line: Some(rec.first_line),
                        column: None,
                    },
                    reason: "the season's run totals over all files are too large to count"
                        .to_string(),
                }));
            };
            acc.runs_scored = scored;
            acc.runs_allowed = allowed;
            acc.one_run_wins += rec.one_run_wins;
            acc.one_run_losses += rec.one_run_losses;
        }
    }
    drop(merged_index);
    let league_of = |id: u32| {
        let name = names.leagues.names[id as usize].as_str();
        (!name.is_empty()).then_some(name)
    };
    let team_of = |id: u32| names.teams.names[id as usize].as_str();
    // In (season, league, team) order, so that rejections come out in the same order on every run
    // and the rows below are already sorted. Names are ranked once, so the sort compares integers
    // (the empty league, shown as none, ranks first as none does).
    let rank = |interner: &Interner| {
        let mut ids: Vec<u32> = (0..interner.names.len() as u32).collect();
        ids.sort_unstable_by(|&a, &b| interner.names[a as usize].cmp(&interner.names[b as usize]));
        let mut rank = vec![0u32; ids.len()];
        for (r, id) in ids.into_iter().enumerate() {
            rank[id as usize] = r as u32;
        }
        rank
    };
    let (league_rank, team_rank) = (rank(&names.leagues), rank(&names.teams));
    // Sorted as small (key, position) pairs rather than moving the records themselves.
    let mut order: Vec<(i32, u32, u32, u32)> = merged
        .iter()
        .enumerate()
        .map(|(at, &((season, league, team), ..))| {
            let (l, t) = (league_rank[league as usize], team_rank[team as usize]);
            (season, l, t, at as u32)
        })
        .collect();
    order.sort_unstable();
    let mut rows: Vec<TeamSeason> = Vec::with_capacity(merged.len());
    for &(.., at) in &order {
        let ((season, league, team), ref rec, file_no) = merged[at as usize];
        let league = league_of(league).map(str::to_string);
        let team = team_of(team).to_string();
        let at = Location {
            file: files[file_no].clone(),
            line: Some(rec.first_line),
            column: None,
        };
        if rec.runs_scored == 0 && rec.runs_allowed == 0 {
            ds.reject(
                opts.skip_invalid,
                Rejection {
                    at,
                    reason: format!(
                        "{team} {season}: runs scored and runs allowed are both 0 in every game"
                    ),
                },
            )?;
            continue;
        }
        rows.push(TeamSeason {
            season,
            league,
            team,
            wins: rec.wins,
            losses: rec.losses,
            ties: rec.ties,
            runs_scored: rec.runs_scored as f64,
            runs_allowed: rec.runs_allowed as f64,
            games: rec.games,
            one_run: Some((rec.one_run_wins, rec.one_run_losses)),
            at,
        });
    }
    drop((merged, order));
    // Already in (season, league, team) order: the ranks sort as the names do.
    debug_assert!(
        rows.is_sorted_by(|a, b| {
            (a.season, &a.league, &a.team) <= (b.season, &b.league, &b.team)
        })
    );
    ds.rows = rows;
    ds.finish(opts.skip_invalid)?;
    Ok(ds)
}

fn aggregate(
    path: &str,
    file: &str,
    as_of: Option<Date>,
    opts: &LoadOptions,
    global_keys: bool,
    pipelined: bool,
    names: &mut Names,
) -> Result<Pass, DataError> {
    let reader = input::open(path, opts.max_line_bytes)?;
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(false)
        .buffer_capacity(1 << 16)
        .from_reader(reader);
    let headers: Vec<String> = match rdr.byte_headers() {
        Ok(h) => h
            .iter()
            .map(|f| String::from_utf8_lossy(f).into_owned())
            .collect(),
        Err(e) => return Err(input::csv_error(file, e)),
    };
    if headers.is_empty() || (headers.len() == 1 && headers[0].trim().is_empty()) {
        return Err(DataError::Empty {
            file: file.to_string(),
        });
    }
    let map = &roles::resolve(file, &headers, ROLES, &opts.maps)?;
    let cx = Tally {
        file,
        as_of,
        opts,
        global_keys,
        map,
    };
    if !pipelined {
        // One record at a time, on this thread.
        let (spare_tx, spare_rx) = mpsc::channel::<Batch>();
        let mut record = csv::ByteRecord::new();
        let mut more = true;
        let batches = std::iter::from_fn(|| {
            if !more {
                return None;
            }
            let mut batch = spare_rx.try_recv().unwrap_or_default();
            more = fill(&mut rdr, &mut record, &mut batch, 1);
            (!batch.records.is_empty() || batch.fatal.is_some()).then_some(batch)
        });
        return tally(cx, names, batches, |b| {
            let _ = spare_tx.send(b);
        });
    }
    // Parsing the csv takes about as long as all the checks and sums, so it runs on this thread
    // while a second thread aggregates. Records travel in batches over a bounded channel (memory
    // stays at a few batches) and the emptied batches come back to be refilled.
    std::thread::scope(|scope| {
        let (full_tx, full_rx) = mpsc::sync_channel::<Batch>(BATCHES_IN_FLIGHT);
        let (empty_tx, empty_rx) = mpsc::channel::<Batch>();
        let worker = scope.spawn(move || {
            // The parsing thread may have finished; then a spare batch is simply dropped.
            tally(cx, names, full_rx.into_iter(), |b| {
                let _ = empty_tx.send(b);
            })
        });
        read_batches(&mut rdr, &full_tx, &empty_rx);
        // Closing the channel ends the worker's loop.
        drop(full_tx);
        worker
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
    })
}

/// What the aggregation of one file reads besides its records.
#[derive(Clone, Copy)]
struct Tally<'a> {
    file: &'a str,
    as_of: Option<Date>,
    opts: &'a LoadOptions,
    global_keys: bool,
    map: &'a roles::ColumnMap,
}

/// Check and sum the records of one file as they arrive, and hand each batch back to `spare` once
/// it has been read.
fn tally(
    cx: Tally<'_>,
    names: &mut Names,
    batches: impl Iterator<Item = Batch>,
    mut spare: impl FnMut(Batch),
) -> Result<Pass, DataError> {
    let Tally {
        file,
        as_of,
        opts,
        global_keys,
        map,
    } = cx;
    let col = |role: usize| map.index[role];
    let (date_col, home_col, away_col) = (col(DATE), col(HOME), col(AWAY));
    let (hs_col, as_col) = (col(HOME_SCORE), col(AWAY_SCORE));
    let mut totals = FileTotals::default();
    let no_league = names.leagues.id(b"").unwrap_or(0);
    // Dates already left behind, ascending (a sorted list: in a date-ordered log every date is a
    // push at the end, and looking one up is a comparison with the last).
    let mut finished_dates: Vec<u32> = Vec::new();
    // Per team id: 1 + the packed date on which it last played at home (0: never). A team that
    // has not hosted today cannot repeat a game of today, so most rows skip the key search.
    let mut hosted_on: Vec<u32> = Vec::new();
    let mut today: Option<u32> = None;
    // With global keys every game so far, else only today's: a key and the line it was first at.
    let mut first_line_of_key: GameKeys<(u32, u32, u32, u32)> = GameKeys::new();
    // The last date's text and value: a day's games share one date, so most rows skip the parse.
    let mut last_date: Option<((u64, u64), Date)> = None;
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
            count += 1;
            if count > opts.max_rows {
                return Err(DataError::TooManyRows {
                    file: file.to_string(),
                    limit: opts.max_rows,
                });
            }
            // A record that ends one line after reading began has no line break inside and starts
            // where reading began: what `record_line` returns then, without scanning the record.
            let line = if end == start + 1 {
                start
            } else {
                input::record_line(start, end, &record.to_byte_record())
            };
            if let Some(e) = row_error {
                reject(
                    &mut totals,
                    input::row_error(file, e, line, &record.to_byte_record()),
                )?;
                continue;
            }
            let field =
                |c: Option<usize>| c.and_then(|i| record.get(i)).map(trim).unwrap_or_default();
            let fail = |role: usize, reason: String| Rejection {
                at: Location {
                    file: file.to_string(),
                    line: Some(line),
                    column: map.header_of(role).map(str::to_string),
                },
                reason,
            };
            let date_text = field(date_col);
            // A valid date has ten bytes, which two words determine (compared one by one: an array
            // comparison reloads the words through memory).
            let date_words = (
                word(date_text),
                word(date_text.get(8..).unwrap_or_default()),
            );
            let date = match last_date {
                Some(((w0, w1), d))
                    if date_text.len() == 10 && w0 == date_words.0 && w1 == date_words.1 =>
                {
                    d
                }
                _ => {
                    let Some(d) = Date::parse(date_text) else {
                        let shown = String::from_utf8_lossy(date_text);
                        reject(
                            &mut totals,
                            fail(
                                DATE,
                                format!("expected an ISO 8601 date (YYYY-MM-DD), found '{shown}'"),
                            ),
                        )?;
                        continue;
                    };
                    last_date = Some((date_words, d));
                    d
                }
            };
            let home = field(home_col);
            let away = field(away_col);
            if home.is_empty() || away.is_empty() {
                let role = if home.is_empty() { HOME } else { AWAY };
                reject(
                    &mut totals,
                    fail(role, "the team name is empty".to_string()),
                )?;
                continue;
            }
            // Interned here (the ids are used further down) so that equal names compare as equal ids
            // rather than byte by byte.
            let (home_id, away_id) = (names.teams.id(home), names.teams.id(away));
            let same = match (home_id, away_id) {
                (Ok(h), Ok(a)) => h == a,
                _ => home == away,
            };
            if same {
                let shown = String::from_utf8_lossy(home);
                reject(
                    &mut totals,
                    fail(AWAY, format!("'{shown}' is listed as playing itself")),
                )?;
                continue;
            }
            let score = |role: usize, c: Option<usize>| -> Result<u64, Rejection> {
                let b = field(c);
                let t = std::str::from_utf8(b)
                    .map_err(|_| fail(role, "not valid UTF-8".to_string()))?;
                parse_count(t).map_err(|e| fail(role, e))
            };
            // Plain digits first: the general parse returns a large Result that costs a copy per row.
            let (hs, aw) = match (digits(field(hs_col)), digits(field(as_col))) {
                (Some(h), Some(a)) => (h, a),
                _ => match (score(HOME_SCORE, hs_col), score(AWAY_SCORE, as_col)) {
                    (Ok(h), Ok(a)) => (h, a),
                    (Err(r), _) | (_, Err(r)) => {
                        reject(&mut totals, r)?;
                        continue;
                    }
                },
            };
            let season = match col(SEASON) {
                Some(_) => {
                    let b = field(col(SEASON));
                    // Up to nine digits fit an i32; anything else takes the general parse.
                    let fast = digits(b).filter(|_| b.len() <= 9).map(|v| v as i32);
                    match fast.or_else(|| std::str::from_utf8(b).ok()?.parse::<i32>().ok()) {
                        Some(s) => s,
                        None => {
                            let shown = String::from_utf8_lossy(b);
                            reject(
                                &mut totals,
                                fail(
                                    SEASON,
                                    format!("expected a season (a whole number), found '{shown}'"),
                                ),
                            )?;
                            continue;
                        }
                    }
                }
                None => date.year,
            };
            let league_bytes = field(col(LEAGUE));
            let game_no = match col(GAME) {
                Some(_) => match score(GAME, col(GAME)).and_then(|g| {
                    u32::try_from(g)
                        .map_err(|_| fail(GAME, format!("game number {g} is too large")))
                }) {
                    Ok(g) => g,
                    Err(r) => {
                        reject(&mut totals, r)?;
                        continue;
                    }
                },
                None => 0,
            };
            let ids = (home_id, away_id, names.leagues.id(league_bytes));
            let (Ok(home_id), Ok(away_id), Ok(league_id)) = ids else {
                let role = match ids {
                    (Err(()), _, _) => HOME,
                    (_, Err(()), _) => AWAY,
                    _ => LEAGUE,
                };
                reject(&mut totals, fail(role, "not valid UTF-8".to_string()))?;
                continue;
            };
            let packed = date.packed();
            let key = (packed, home_id, away_id, game_no);
            // With global keys the map holds every game so far, else only today's.
            let first = if global_keys {
                first_line_of_key.first_line(&key)
            } else {
                if today != Some(packed) {
                    if let Some(d) = today {
                        match finished_dates.last() {
                            Some(&last) if last >= d => {
                                if let Err(at) = finished_dates.binary_search(&d) {
                                    finished_dates.insert(at, d);
                                }
                            }
                            _ => finished_dates.push(d),
                        }
                    }
                    if finished_dates.last().is_some_and(|&last| last >= packed)
                        && finished_dates.binary_search(&packed).is_ok()
                    {
                        return Ok(Pass::OutOfOrder);
                    }
                    today = Some(packed);
                    first_line_of_key.clear();
                }
                if hosted_on.get(home_id as usize) == Some(&(packed + 1)) {
                    first_line_of_key.first_line(&key)
                } else {
                    None
                }
            };
            if let Some(first) = first {
                let first = format!(" (first at line {first})");
                let shown = format!(
                    "{} {} at {}",
                    date,
                    String::from_utf8_lossy(away),
                    String::from_utf8_lossy(home)
                );
                let hint = if col(GAME).is_none() {
                    "; a doubleheader needs a 'game' column"
                } else {
                    ""
                };
                reject(
                    &mut totals,
                    fail(DATE, format!("duplicate game {shown}{first}{hint}")),
                )?;
                continue;
            }
            first_line_of_key.insert(key, line);
            if hosted_on.len() <= home_id as usize {
                hosted_on.resize(home_id as usize + 1, 0);
            }
            hosted_on[home_id as usize] = packed + 1;
            if as_of.is_some_and(|cut| date > cut)
                || !opts.keeps(
                    season,
                    // The interner has checked the name's UTF-8 already.
                    Some(names.leagues.names[league_id as usize].as_str())
                        .filter(|l| !l.is_empty()),
                )
            {
                totals.filtered_out += 1;
                continue;
            }
            let league_id = if league_bytes.is_empty() {
                no_league
            } else {
                league_id
            };
            let sides = [(home_id, hs, aw), (away_id, aw, hs)];
            // Checked first, so that absurd scores give a message instead of wrapping (or panicking).
            let found = sides.map(|(team, ..)| totals.records.find((season, league_id, team)));
            let countable = sides.iter().zip(found).all(|(&(_, scored, allowed), at)| {
                at.is_none_or(|at| {
                    let r = &totals.records.list[at].1;
                    r.runs_scored.checked_add(scored).is_some()
                        && r.runs_allowed.checked_add(allowed).is_some()
                })
            });
            if !countable {
                reject(
                    &mut totals,
                    fail(
                        HOME_SCORE,
                        "the season's run totals grow too large to count".to_string(),
                    ),
                )?;
                continue;
            }
            for ((team, scored, allowed), at) in sides.into_iter().zip(found) {
                let at =
                    at.unwrap_or_else(|| totals.records.insert((season, league_id, team), line));
                let rec = &mut totals.records.list[at].1;
                rec.games += 1;
                rec.runs_scored += scored;
                rec.runs_allowed += allowed;
                match scored.cmp(&allowed) {
                    std::cmp::Ordering::Greater => {
                        rec.wins += 1;
                        if scored - allowed == 1 {
                            rec.one_run_wins += 1;
                        }
                    }
                    std::cmp::Ordering::Less => {
                        rec.losses += 1;
                        if allowed - scored == 1 {
                            rec.one_run_losses += 1;
                        }
                    }
                    std::cmp::Ordering::Equal => rec.ties += 1,
                }
            }
        }
        if let Some(e) = batch.fatal.take() {
            return Err(input::csv_error(file, e));
        }
        spare(batch);
    }
    Ok(Pass::Done(Box::new(totals)))
}

/// Records read ahead by the parsing thread. Their fields are copied back to back into one buffer:
/// the aggregating thread then reads memory laid out in order, rather than a thousand small records
/// that were each last written on the other core.
#[derive(Default)]
struct Batch {
    bytes: Vec<u8>,
    /// End of every field in `bytes`.
    ends: Vec<usize>,
    records: Vec<BatchRecord>,
    /// An error that ends reading, after the records above.
    fatal: Option<csv::Error>,
}

struct BatchRecord {
    /// Where its fields start in `bytes` and in `ends`, and its field count.
    bytes_from: usize,
    ends_from: usize,
    fields: usize,
    /// The reader's line count before and after the record.
    start: u64,
    end: u64,
    /// A csv error confined to the row (which is then rejected).
    error: Option<csv::Error>,
}

impl Batch {
    fn clear(&mut self) {
        self.bytes.clear();
        self.ends.clear();
        self.records.clear();
        self.fatal = None;
    }

    fn push(&mut self, r: &csv::ByteRecord, start: u64, end: u64, error: Option<csv::Error>) {
        let base = self.bytes.len();
        self.records.push(BatchRecord {
            bytes_from: base,
            ends_from: self.ends.len(),
            fields: r.len(),
            start,
            end,
            error,
        });
        self.bytes.extend_from_slice(r.as_slice());
        let mut end = base;
        for field in r {
            end += field.len();
            self.ends.push(end);
        }
    }

    fn record(&self, k: usize) -> Fields<'_> {
        let r = &self.records[k];
        Fields {
            bytes: &self.bytes,
            from: r.bytes_from,
            ends: &self.ends[r.ends_from..r.ends_from + r.fields],
        }
    }
}

/// The fields of one record in a [`Batch`].
#[derive(Clone, Copy)]
struct Fields<'a> {
    bytes: &'a [u8],
    from: usize,
    ends: &'a [usize],
}

impl<'a> Fields<'a> {
    fn get(&self, i: usize) -> Option<&'a [u8]> {
        let end = *self.ends.get(i)?;
        let start = if i == 0 { self.from } else { self.ends[i - 1] };
        Some(&self.bytes[start..end])
    }

    /// The record as csv gave it (for the rare paths that need one).
    fn to_byte_record(self) -> csv::ByteRecord {
        (0..self.ends.len()).filter_map(|i| self.get(i)).collect()
    }
}

/// Records per [`Batch`], and batches that may wait in the channel.
const BATCH: usize = 4096;
const BATCHES_IN_FLIGHT: usize = 4;

/// Read the whole input into batches and send them, until the end, an error that ends reading,
/// or the receiver hanging up (the aggregation stopped early).
fn read_batches<R: std::io::Read>(
    rdr: &mut csv::Reader<R>,
    full: &mpsc::SyncSender<Batch>,
    empty: &mpsc::Receiver<Batch>,
) {
    let mut record = csv::ByteRecord::new();
    loop {
        let mut batch = empty.try_recv().unwrap_or_default();
        let more = fill(rdr, &mut record, &mut batch, BATCH);
        if full.send(batch).is_err() || !more {
            return;
        }
    }
}

/// Empty `batch` and read up to `limit` records into it through `record`; whether there may be
/// more (false at the end of the input or after an error that ends reading).
fn fill<R: std::io::Read>(
    rdr: &mut csv::Reader<R>,
    record: &mut csv::ByteRecord,
    batch: &mut Batch,
    limit: usize,
) -> bool {
    batch.clear();
    while batch.records.len() < limit {
        let start = rdr.position().line();
        let error = match rdr.read_byte_record(record) {
            Ok(false) => return false,
            Ok(true) => None,
            Err(e) if input::is_row_error(&e) => Some(e),
            Err(e) => {
                batch.fatal = Some(e);
                return false;
            }
        };
        batch.push(record, start, rdr.position().line(), error);
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pipelined_and_record_by_record_aggregation_agree() {
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
            // Some bad rows and a repeated game among them, to be rejected alike.
            let score = if n % 97 == 0 {
                "x".to_string()
            } else {
                g.home_score.to_string()
            };
            let line = format!(
                "{},{league},{},T{},T{},{score},{}",
                g.season, g.date, g.home, g.away, g.away_score
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
        let run = |pipelined| {
            let mut names = Names::default();
            let Ok(Pass::Done(t)) = aggregate(
                &path,
                "games.csv",
                None,
                &opts,
                false,
                pipelined,
                &mut names,
            ) else {
                panic!("the file is in date order");
            };
            let teams: Vec<_> = t
                .records
                .list
                .iter()
                .map(|(k, _)| &names.teams.names[k.2 as usize])
                .cloned()
                .collect();
            format!(
                "{:?} {teams:?} {:?} {}",
                t.records.list, t.rejected, t.filtered_out
            )
        };
        let (a, b) = (run(true), run(false));
        assert!(a.contains("expected a number") && a.contains("duplicate game"));
        assert_eq!(a, b);
    }

    #[test]
    fn dates_check_calendar() {
        assert!(Date::parse(b"2024-02-29").is_some());
        assert!(Date::parse(b"2023-02-29").is_none());
        assert!(Date::parse(b"1900-02-29").is_none());
        assert!(Date::parse(b"2000-02-29").is_some());
        assert!(Date::parse(b"2024-13-01").is_none());
        assert!(Date::parse(b"2024-04-31").is_none());
        assert!(Date::parse(b"24-04-01").is_none());
        assert!(Date::parse(b"2024/04/01").is_none());
        assert!(Date::parse(b"2024-04-01").unwrap() < Date::parse(b"2024-04-02").unwrap());
    }
}
