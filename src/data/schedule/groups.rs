//! A teams file: one row per club, `team,group`.

use std::collections::{BTreeMap, HashMap};

use super::super::{LoadOptions, input};
use super::MAX_GAMES_LEFT;
use super::rows::{TEAM_ROLES, name, open_csv};
use crate::error::{DataError, Location, Rejection};

/// Each club's group from a teams file.
pub fn read_groups(path: &str, opts: &LoadOptions) -> Result<BTreeMap<String, String>, DataError> {
    let (file, mut rdr, map) = open_csv(path, TEAM_ROLES, &[], opts)?;
    let mut groups = BTreeMap::new();
    let mut first_at: HashMap<String, u64> = HashMap::new();
    let mut record = csv::ByteRecord::new();
    loop {
        let start = rdr.position().line();
        match rdr.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let line = input::record_line(start, rdr.position().line(), &record);
                return Err(if input::is_row_error(&e) {
                    DataError::Rejected(input::row_error(&file, e, line, &record))
                } else {
                    input::csv_error(&file, e)
                });
            }
        }
        let line = input::record_line(start, rdr.position().line(), &record);
        if groups.len() >= MAX_GAMES_LEFT {
            return Err(DataError::TooManyRows {
                file,
                limit: MAX_GAMES_LEFT as u64,
            });
        }
        let at = |role: usize| Location {
            file: file.clone(),
            line: Some(line),
            column: map.header_of(role).map(str::to_string),
        };
        let text = |role: usize| -> Result<String, DataError> {
            let b = map.index[role]
                .and_then(|i| record.get(i))
                .unwrap_or_default();
            name(b).map_err(|reason| {
                DataError::Rejected(Rejection {
                    at: at(role),
                    reason,
                })
            })
        };
        let (team, group) = (text(0)?, text(1)?);
        if let Some(first) = first_at.get(&team) {
            return Err(DataError::Rejected(Rejection {
                at: at(0),
                reason: format!("'{team}' is listed twice (first at line {first})"),
            }));
        }
        first_at.insert(team.clone(), line);
        groups.insert(team, group);
    }
    Ok(groups)
}
