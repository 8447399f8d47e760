//! Reading the rows of logs, schedules and teams files: roles, fields, names and the duplicate rule.

use super::super::gamelog::{self, Date};
use super::super::roles::{self, ColumnMap, RoleSpec};
use super::super::{LoadOptions, input, parse_count};
use crate::error::{DataError, Location, Rejection};

pub(super) const DATE: usize = 0;
pub(super) const HOME: usize = 1;
pub(super) const AWAY: usize = 2;
pub(super) const HOME_SCORE: usize = 3;
pub(super) const AWAY_SCORE: usize = 4;
pub(super) const SEASON: usize = 5;
pub(super) const LEAGUE: usize = 6;
pub(super) const GAME: usize = 7;
pub(super) const GROUP: usize = 8;

const GROUP_SPEC: RoleSpec = RoleSpec {
    name: "group",
    aliases: &["group", "division", "conference", "div", "grp"],
    fallbacks: &[],
    required: false,
};

/// A game log's roles (the loader's) plus an optional group column.
pub(super) fn log_roles() -> Vec<RoleSpec> {
    gamelog::ROLES.iter().copied().chain([GROUP_SPEC]).collect()
}

/// A schedule file's roles: the log's, with the scores left out.
pub(super) fn schedule_roles() -> Vec<RoleSpec> {
    log_roles()
        .into_iter()
        .map(|mut r| {
            if r.name.ends_with("_score") {
                r.required = false;
                r.aliases = &[];
            }
            r
        })
        .collect()
}

pub(super) const TEAM_ROLES: &[RoleSpec] = &[
    RoleSpec {
        name: "team",
        aliases: &["team", "club", "team_name", "name"],
        fallbacks: &[],
        required: true,
    },
    RoleSpec {
        name: "group",
        aliases: &["group", "division", "conference", "league", "div", "grp"],
        fallbacks: &[],
        required: true,
    },
];
/// A row's fields as read.
pub(super) struct Row {
    pub date: Date,
    pub home: String,
    pub away: String,
    pub season: i32,
    pub league: String,
    pub game: u32,
    pub group: String,
    /// (home, away) scores; `None` when both are empty.
    pub scores: Option<(u64, u64)>,
}

/// A team or group name: trimmed, non-empty UTF-8 without control characters.
pub(super) fn name(bytes: &[u8]) -> Result<String, String> {
    let text =
        std::str::from_utf8(bytes.trim_ascii()).map_err(|_| "not valid UTF-8".to_string())?;
    if text.is_empty() {
        return Err("the name is empty".to_string());
    }
    if text.chars().any(char::is_control) {
        return Err(format!(
            "the name holds a control character: {}",
            text.escape_debug()
        ));
    }
    Ok(text.to_string())
}

pub(super) fn duplicate(at: &Location, first: &Location, row: &Row, map: &ColumnMap) -> DataError {
    let hint = if map.index[GAME].is_none() {
        "; a doubleheader needs a 'game' column"
    } else {
        ""
    };
    DataError::Rejected(Rejection {
        at: at.clone(),
        reason: format!(
            "duplicate game {} {} at {} (first at {first}){hint}",
            row.date, row.away, row.home
        ),
    })
}

/// Stream one file's rows. Rows the loader would reject are errors here too, or with
/// `--skip-invalid` left out of a log (the loader has listed them already) — never of a schedule.
/// A CSV reader over one input, past its header, with the header's roles resolved.
pub(super) use input::CsvReader;

pub(super) fn open_csv(
    path: &str,
    specs: &[RoleSpec],
    maps: &[roles::Mapping],
    opts: &LoadOptions,
) -> Result<(String, CsvReader, ColumnMap), DataError> {
    let file = input::display_name(path);
    let (rdr, headers) = input::open_with_headers(path, &file, opts)?;
    let map = roles::resolve(&file, &headers, specs, maps)?;
    Ok((file, rdr, map))
}

pub(super) fn for_each_row(
    path: &str,
    specs: &[RoleSpec],
    opts: &LoadOptions,
    is_log: bool,
    mut each: impl FnMut(&ColumnMap, Location, Row) -> Result<(), DataError>,
) -> Result<(), DataError> {
    let (file, mut rdr, map) = open_csv(path, specs, &opts.maps, opts)?;
    crate::data::check_season_is(&file, &map, SEASON, opts)?;
    let mut record = csv::ByteRecord::new();
    let mut count: u64 = 0;
    let skip = is_log && opts.skip_invalid;
    loop {
        let start = rdr.position().line();
        let read = rdr.read_byte_record(&mut record);
        let line = input::record_line(start, rdr.position().line(), &record);
        match read {
            Ok(false) => return Ok(()),
            Ok(true) => {}
            Err(e) if input::is_row_error(&e) => {
                if skip {
                    continue;
                }
                return Err(DataError::Rejected(input::row_error(
                    &file, e, line, &record,
                )));
            }
            Err(e) => return Err(input::csv_error(&file, e)),
        }
        input::count_row(&mut count, &file, opts)?;
        let at = Location {
            file: file.clone(),
            line: Some(line),
            column: None,
        };
        match parse_row(&map, &record, &at, is_log, opts.season_is) {
            Ok(row) => each(&map, at, row)?,
            Err(_) if skip => {}
            Err(r) => return Err(DataError::Rejected(r)),
        }
    }
}

fn parse_row(
    map: &ColumnMap,
    record: &csv::ByteRecord,
    at: &Location,
    is_log: bool,
    season_is: Option<i32>,
) -> Result<Row, Rejection> {
    let field = |role: usize| {
        map.index[role]
            .and_then(|i| record.get(i))
            .map(<[u8]>::trim_ascii)
            .unwrap_or_default()
    };
    let fail = |role: usize, reason: String| Rejection {
        at: Location {
            column: map.header_of(role).map(str::to_string),
            ..at.clone()
        },
        reason,
    };
    let text = |role: usize| -> Result<String, Rejection> {
        std::str::from_utf8(field(role))
            .map(str::to_string)
            .map_err(|_| fail(role, "not valid UTF-8".to_string()))
    };
    let date_text = field(DATE);
    let date = gamelog::parse_iso_date(date_text).map_err(|e| fail(DATE, e))?;
    let home = name(field(HOME)).map_err(|r| fail(HOME, r))?;
    let away = name(field(AWAY)).map_err(|r| fail(AWAY, r))?;
    if home == away {
        return Err(fail(AWAY, format!("'{home}' is listed as playing itself")));
    }
    let season = match map.index[SEASON] {
        Some(_) => text(SEASON)?.parse::<i32>().map_err(|_| {
            fail(
                SEASON,
                format!(
                    "expected a season (a whole number), found '{}'",
                    String::from_utf8_lossy(field(SEASON))
                ),
            )
        })?,
        None => season_is.unwrap_or_else(|| i32::from(date.year())),
    };
    let game = match map.index[GAME] {
        Some(_) => {
            let g = parse_count(&text(GAME)?).map_err(|e| fail(GAME, e))?;
            u32::try_from(g).map_err(|_| fail(GAME, format!("game number {g} is too large")))?
        }
        None => 0,
    };
    let scores = if is_log {
        match (field(HOME_SCORE).is_empty(), field(AWAY_SCORE).is_empty()) {
            (true, true) => None,
            _ => {
                let h = parse_count(&text(HOME_SCORE)?).map_err(|e| fail(HOME_SCORE, e))?;
                let a = parse_count(&text(AWAY_SCORE)?).map_err(|e| fail(AWAY_SCORE, e))?;
                Some((h, a))
            }
        }
    } else {
        None
    };
    Ok(Row {
        date,
        home,
        away,
        season,
        league: text(LEAGUE)?,
        game,
        group: text(GROUP)?,
        scores,
    })
}
