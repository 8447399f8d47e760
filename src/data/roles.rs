//! Column roles: header keys, generic trade aliases, `--map` overrides, and the advice given when a
//! role has no column. Every kind of input (team-season tables, game logs, schedules, teams files)
//! matches its headers here, through its own table of [`RoleSpec`]s.

use std::collections::HashMap;

use crate::error::DataError;

/// Normalise a header: trim, lower-case, runs of non-alphanumerics become `_`, no `_` at either end.
/// A UTF-8 byte-order mark at the start of the file is dropped here too.
pub fn normalise_header(raw: &str) -> String {
    let raw = raw.trim_start_matches('\u{feff}').trim();
    let mut out = String::with_capacity(raw.len());
    let mut pending_sep = false;
    for ch in raw.chars() {
        if ch.is_alphanumeric() {
            if pending_sep && !out.is_empty() {
                out.push('_');
            }
            pending_sep = false;
            out.extend(ch.to_lowercase());
        } else {
            pending_sep = true;
        }
    }
    out
}

/// The key headers are matched on: lower-cased letters and digits only, so that `PointsFor`,
/// `Points For`, `points_for` and `POINTS-FOR` are one header (`pointsfor`). A `%` is kept: `W%`
/// is a win percentage, not the wins column `W`. A UTF-8 byte-order mark is dropped too.
pub fn header_key(raw: &str) -> String {
    raw.chars()
        .filter(|&c| c.is_alphanumeric() || c == '%')
        .flat_map(char::to_lowercase)
        .collect()
}

/// A role a column can play, with the headers that claim it without `--map` (compared by
/// [`header_key`], so an alias is written once, in snake case).
#[derive(Debug, Clone, Copy)]
pub struct RoleSpec {
    pub name: &'static str,
    pub aliases: &'static [&'static str],
    /// Weaker names, tried only when no alias is present: a file may carry a club's `name` or
    /// `franchise` beside its `team` code, and that is no ambiguity.
    pub fallbacks: &'static [&'static str],
    pub required: bool,
}

impl RoleSpec {
    /// Every header key the role answers to: aliases first, then fallbacks.
    fn keys(&self) -> impl Iterator<Item = String> + '_ {
        self.aliases
            .iter()
            .chain(self.fallbacks)
            .map(|a| header_key(a))
    }
}

/// Which column plays each role in one file (indices into the record), in the order of the specs.
#[derive(Debug, Clone)]
pub struct ColumnMap {
    pub index: Vec<Option<usize>>,
    pub headers: Vec<String>,
}

impl ColumnMap {
    /// The header of a role's column, as written in the file.
    pub fn header_of(&self, role: usize) -> Option<&str> {
        self.index[role].map(|i| self.headers[i].as_str())
    }
}

/// A `--map ROLE=HEADER` override.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Mapping {
    pub role: String,
    pub header: String,
}

impl std::str::FromStr for Mapping {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let (role, header) = s
            .split_once('=')
            .ok_or_else(|| format!("expected ROLE=HEADER, got '{s}'"))?;
        let role = normalise_header(role);
        if role.is_empty() || header.trim().is_empty() {
            return Err(format!("expected ROLE=HEADER, got '{s}'"));
        }
        Ok(Mapping {
            role,
            header: header.trim().to_string(),
        })
    }
}

/// Check that every `--map` names a known role, and that no column is given two roles: two maps
/// naming one header, or a map taking a header that another role claims by its aliases (unless that
/// role is mapped elsewhere too).
pub fn check_mappings(specs: &[RoleSpec], maps: &[Mapping]) -> Result<(), DataError> {
    // The last --map of a role wins, as in `resolve`.
    let effective: Vec<&Mapping> = maps
        .iter()
        .enumerate()
        .filter(|(i, m)| !maps[i + 1..].iter().any(|later| later.role == m.role))
        .map(|(_, m)| m)
        .collect();
    for (i, m) in effective.iter().enumerate() {
        let header = header_key(&m.header);
        if let Some(other) = effective[..i]
            .iter()
            .find(|o| header_key(&o.header) == header)
        {
            return Err(DataError::Usage(format!(
                "--map {}={} and --map {}={} give one column two roles",
                other.role, other.header, m.role, m.header
            )));
        }
        // Only aliases: a fallback claims a column only when no alias is present, which depends
        // on the file.
        let claimed_by = specs.iter().find(|s| {
            s.name != m.role
                && s.aliases.iter().any(|a| header_key(a) == header)
                && !effective.iter().any(|o| o.role == s.name)
        });
        if let Some(other) = claimed_by {
            return Err(DataError::Usage(format!(
                "--map {}={}: a column '{}' plays {} already; one column cannot play two roles (give {} its own column with --map {}=HEADER)",
                m.role, m.header, m.header, other.name, other.name, other.name
            )));
        }
    }
    for m in maps {
        if !specs.iter().any(|s| s.name == m.role) {
            let known: Vec<&str> = specs.iter().map(|s| s.name).collect();
            return Err(DataError::Usage(format!(
                "--map {}={}: unknown role '{}' (roles: {})",
                m.role,
                m.header,
                m.role,
                known.join(", ")
            )));
        }
    }
    Ok(())
}

/// Headers for a message: the first twenty, and how many more (a file can have 400,000 columns).
fn listed(headers: &[String]) -> String {
    const SHOWN: usize = 20;
    let mut text = headers[..headers.len().min(SHOWN)].join(", ");
    if headers.len() > SHOWN {
        text.push_str(&format!(", … ({} more)", headers.len() - SHOWN));
    }
    text
}

/// Match a file's headers to roles, by [`header_key`]. `--map` wins over aliases, aliases over
/// fallbacks; two columns claiming one role, or two headers with one key, are errors. A required
/// role with no column is reported with the file's headers and the closest of them, if any.
pub fn resolve(
    file: &str,
    headers: &[String],
    specs: &[RoleSpec],
    maps: &[Mapping],
) -> Result<ColumnMap, DataError> {
    let keys: Vec<String> = headers.iter().map(|h| header_key(h)).collect();
    // A map from key to column keeps this linear in the number of columns.
    let mut first_column: HashMap<&str, usize> = HashMap::with_capacity(keys.len());
    for (i, k) in keys.iter().enumerate() {
        if k.is_empty() {
            continue;
        }
        if let Some(&j) = first_column.get(k.as_str()) {
            let (a, b) = (
                headers[j].trim_start_matches('\u{feff}'),
                headers[i].as_str(),
            );
            let header = if a == b {
                crate::data::input::shown(b)
            } else {
                // Different spellings of one name (`PointsFor`, `Points For`).
                crate::data::input::shown(&format!("{a}' and '{b}"))
            };
            return Err(DataError::DuplicateHeader {
                file: file.to_string(),
                header,
                first: j + 1,
                second: i + 1,
            });
        }
        first_column.insert(k, i);
    }
    let mapped_keys: Vec<(String, &str)> = maps
        .iter()
        .map(|m| (header_key(&m.header), m.role.as_str()))
        .collect();
    let mut index = vec![None; specs.len()];
    let mut missing = None;
    for (r, spec) in specs.iter().enumerate() {
        if let Some(m) = maps.iter().rev().find(|m| m.role == spec.name) {
            match first_column.get(header_key(&m.header).as_str()) {
                Some(&i) => index[r] = Some(i),
                None => {
                    return Err(DataError::MappedHeaderMissing {
                        file: file.to_string(),
                        role: spec.name,
                        header: crate::data::input::shown(&m.header),
                        headers: crate::data::input::shown(&listed(headers)),
                    });
                }
            }
            continue;
        }
        // Through the aliases (a handful each), not through every column.
        let claim = |names: &[&str]| -> Result<Option<usize>, DataError> {
            let mut candidates: Vec<usize> = names
                .iter()
                .filter_map(|a| first_column.get(header_key(a).as_str()).copied())
                .filter(|&i| {
                    !mapped_keys
                        .iter()
                        .any(|(key, role)| *role != spec.name && *key == keys[i])
                })
                .collect();
            candidates.sort_unstable();
            candidates.dedup();
            match candidates[..] {
                [] => Ok(None),
                [i] => Ok(Some(i)),
                [first, second, ..] => Err(DataError::AmbiguousRole {
                    file: file.to_string(),
                    role: spec.name,
                    first: crate::data::input::shown(&headers[first]),
                    second: crate::data::input::shown(&headers[second]),
                }),
            }
        };
        let hit = match claim(spec.aliases)? {
            Some(i) => Some(i),
            None => claim(spec.fallbacks)?,
        };
        if hit.is_none() && spec.required && missing.is_none() {
            missing = Some(r);
        }
        index[r] = hit;
    }
    if let Some(r) = missing {
        let spec = &specs[r];
        let taken: Vec<usize> = index.iter().flatten().copied().collect();
        let advice = match closest(&keys, &taken, spec) {
            Some(i) => {
                let header = headers[i].trim_start_matches('\u{feff}');
                format!(
                    "; did you mean '{}'? map it with --map {}",
                    crate::data::input::shown(header),
                    shell_word(&format!("{}={header}", spec.name))
                )
            }
            None => format!("; name it with --map {}=HEADER", spec.name),
        };
        return Err(DataError::MissingRole {
            file: file.to_string(),
            role: spec.name,
            looked_for: spec
                .aliases
                .iter()
                .chain(spec.fallbacks)
                .copied()
                .collect::<Vec<_>>()
                .join(", "),
            headers: crate::data::input::shown(&listed(headers)),
            advice,
        });
    }
    Ok(ColumnMap {
        index,
        headers: headers
            .iter()
            .map(|h| h.trim_start_matches('\u{feff}').to_string())
            .collect(),
    })
}

/// Add a reader's hint to a missing-role error (a game log read as a table, or the reverse): it
/// takes the place of the generic "name it with --map" advice. `hint` is asked only for that
/// error, and its text starts with "; ".
pub fn hint_missing(err: DataError, hint: impl FnOnce() -> Option<String>) -> DataError {
    match err {
        DataError::MissingRole {
            file,
            role,
            looked_for,
            headers,
            mut advice,
        } => {
            // A file of the other kind needs the switch, not a --map.
            if let Some(h) = hint() {
                if advice.starts_with("; name it with") {
                    advice = h;
                } else {
                    advice.push_str(&h);
                }
            }
            DataError::MissingRole {
                file,
                role,
                looked_for,
                headers,
                advice,
            }
        }
        other => other,
    }
}

/// How many of a file's columns are weighed for a "did you mean": the suggestion is a courtesy,
/// and a file with 400,000 columns must not spend seconds on it.
const SUGGESTION_COLUMNS: usize = 2_000;

/// The column (not taken by another role) whose header is closest to one of the role's names:
/// within a small edit distance, or an abbreviation of it (`PtsFor` for `points_for`). Names of
/// one or two letters (`w`, `pa`) are left out: any short header would be near them.
fn closest(keys: &[String], taken: &[usize], spec: &RoleSpec) -> Option<usize> {
    let names: Vec<String> = spec.keys().filter(|k| k.chars().count() >= 3).collect();
    let mut best: Option<(usize, usize)> = None;
    for (i, key) in keys.iter().enumerate().take(SUGGESTION_COLUMNS) {
        if taken.contains(&i) || key.chars().count() < 2 || key.len() > 64 {
            continue;
        }
        for name in &names {
            let distance = edit_distance(key, name);
            let shorter = key.chars().count().min(name.chars().count());
            let near = distance <= if shorter >= 6 { 2 } else { 1 };
            if (near || abbreviates(key, name)) && best.is_none_or(|(d, _)| distance < d) {
                best = Some((distance, i));
            }
        }
    }
    best.map(|(_, i)| i)
}

/// Whether `short` abbreviates `long`: at least three characters, the same first one, and every
/// character found in `long` in order (`ptsfor` in `pointsfor`).
fn abbreviates(short: &str, long: &str) -> bool {
    let mut rest = long.chars();
    short.chars().count() >= 3
        && short.len() < long.len()
        && short.chars().next() == long.chars().next()
        && short.chars().all(|c| rest.any(|l| l == c))
}

/// Levenshtein distance (insertions, deletions and substitutions of characters).
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let next = (diagonal + usize::from(ca != cb))
                .min(row[j] + 1)
                .min(row[j + 1] + 1);
            diagonal = row[j + 1];
            row[j + 1] = next;
        }
    }
    row[b.len()]
}

/// A `--map` argument as it can be pasted into a shell: quoted when it holds anything but plain
/// characters.
fn shell_word(text: &str) -> String {
    let plain = |c: char| c.is_ascii_alphanumeric() || "_-.=/:%+".contains(c);
    if text.chars().all(plain) {
        text.to_string()
    } else {
        format!("'{}'", text.replace('\'', r"'\''"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normalises_spaces_case_and_punctuation() {
        assert_eq!(normalise_header("  Runs Scored "), "runs_scored");
        assert_eq!(normalise_header("\u{feff}W-L%"), "w_l");
        assert_eq!(normalise_header("R/G"), "r_g");
        assert_eq!(normalise_header("__a__b__"), "a_b");
    }

    #[test]
    fn keys_ignore_case_spaces_and_punctuation() {
        assert_eq!(header_key("PointsFor"), "pointsfor");
        assert_eq!(header_key(" Points  For "), "pointsfor");
        assert_eq!(header_key("\u{feff}points_for"), "pointsfor");
        assert_eq!(header_key("Opp. Pts"), "opppts");
        assert_eq!(header_key("W-L%"), "wl%");
        assert_ne!(header_key("W%"), header_key("W"));
    }

    /// Every role table of the crate: no header key may claim two roles of one table, or a
    /// column would silently go to whichever role comes first.
    #[test]
    fn no_key_claims_two_roles_of_one_table() {
        let tables: [(&str, Vec<RoleSpec>); 3] = [
            ("season", crate::data::season::ROLES.to_vec()),
            ("gamelog", crate::data::gamelog::ROLES.to_vec()),
            (
                "gamelog+group",
                crate::data::gamelog::ROLES
                    .iter()
                    .copied()
                    .chain([RoleSpec {
                        name: "group",
                        aliases: &["group", "division", "conference", "div", "grp"],
                        fallbacks: &[],
                        required: false,
                    }])
                    .collect(),
            ),
        ];
        for (table, specs) in tables {
            let mut seen: HashMap<String, &str> = HashMap::new();
            for spec in &specs {
                for key in spec.keys() {
                    if let Some(other) = seen.insert(key.clone(), spec.name) {
                        panic!("{table}: '{key}' claims both {other} and {}", spec.name);
                    }
                }
            }
        }
    }

    #[test]
    fn suggestions_come_from_small_edits_and_abbreviations() {
        // Levenshtein's textbook example: kitten -> sitting takes three edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("runsscored", "runsscored"), 0);
        assert!(abbreviates("ptsfor", "pointsfor"));
        assert!(abbreviates("ptsagst", "pointsagainst"));
        assert!(!abbreviates("pf", "pointsfor"), "too short to be sure");
        assert!(!abbreviates("forpts", "pointsfor"), "order matters");
        assert!(
            !abbreviates("tspfor", "pointsfor"),
            "the first letter must agree"
        );
        let spec = crate::data::season::ROLES[6];
        assert_eq!(spec.name, "runs_scored");
        let keys = |hs: &[&str]| hs.iter().map(|h| header_key(h)).collect::<Vec<_>>();
        assert_eq!(
            closest(&keys(&["Club", "W", "PtsFor"]), &[], &spec),
            Some(2)
        );
        assert_eq!(closest(&keys(&["Club", "RunScored"]), &[], &spec), Some(1));
        // A taken column is never suggested, and short names suggest nothing.
        assert_eq!(closest(&keys(&["PtsFor"]), &[0], &spec), None);
        assert_eq!(closest(&keys(&["R", "X"]), &[], &spec), None);
    }

    #[test]
    fn mapping_parses_role_and_header() {
        let m: Mapping = "Runs_Scored=R".parse().unwrap();
        assert_eq!(m.role, "runs_scored");
        assert_eq!(m.header, "R");
        assert!("nothing".parse::<Mapping>().is_err());
    }

    #[test]
    fn wide_headers_are_matched_in_one_pass_and_listed_briefly() {
        // 200,000 columns: a quadratic duplicate check would compare 2·10^10 pairs.
        let mut headers: Vec<String> = (0..200_000).map(|i| format!("c{i}")).collect();
        headers.push("C7".to_string());
        let specs = [RoleSpec {
            name: "team",
            aliases: &["team"],
            fallbacks: &[],
            required: true,
        }];
        match resolve("wide.csv", &headers, &specs, &[]) {
            Err(DataError::DuplicateHeader { first, second, .. }) => {
                assert_eq!((first, second), (8, 200_001));
            }
            other => panic!("expected a duplicate header, got {other:?}"),
        }
        headers.pop();
        let maps = ["team=nowhere".parse().unwrap()];
        let e = resolve("wide.csv", &headers, &specs, &maps)
            .unwrap_err()
            .to_string();
        assert!(
            e.ends_with("c19, … (199980 more))"),
            "{}",
            &e[e.len() - 60..]
        );
    }
}
