//! Column roles: header normalisation, generic trade aliases and `--map` overrides.

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

/// A role a column can play, with the normalised headers that claim it without `--map`.
#[derive(Debug, Clone, Copy)]
pub struct RoleSpec {
    pub name: &'static str,
    pub aliases: &'static [&'static str],
    pub required: bool,
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
        let header = normalise_header(&m.header);
        if let Some(other) = effective[..i]
            .iter()
            .find(|o| normalise_header(&o.header) == header)
        {
            return Err(DataError::Usage(format!(
                "--map {}={} and --map {}={} give one column two roles",
                other.role, other.header, m.role, m.header
            )));
        }
        let claimed_by = specs.iter().find(|s| {
            s.name != m.role
                && s.aliases.contains(&header.as_str())
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

/// Match a file's headers to roles. `--map` wins over aliases; two columns claiming one role is an error.
pub fn resolve(
    file: &str,
    headers: &[String],
    specs: &[RoleSpec],
    maps: &[Mapping],
) -> Result<ColumnMap, DataError> {
    let normalised: Vec<String> = headers.iter().map(|h| normalise_header(h)).collect();
    // A map from header to column keeps this linear in the number of columns.
    let mut first_column: HashMap<&str, usize> = HashMap::with_capacity(normalised.len());
    for (i, h) in normalised.iter().enumerate() {
        if h.is_empty() {
            continue;
        }
        if let Some(&j) = first_column.get(h.as_str()) {
            return Err(DataError::DuplicateHeader {
                file: file.to_string(),
                header: crate::data::input::shown(&headers[i]),
                first: j + 1,
                second: i + 1,
            });
        }
        first_column.insert(h, i);
    }
    let mapped_headers: Vec<(String, &str)> = maps
        .iter()
        .map(|m| (normalise_header(&m.header), m.role.as_str()))
        .collect();
    let mut index = vec![None; specs.len()];
    for (r, spec) in specs.iter().enumerate() {
        if let Some(m) = maps.iter().rev().find(|m| m.role == spec.name) {
            let wanted = normalise_header(&m.header);
            let found = first_column.get(wanted.as_str()).copied();
            match found {
                Some(i) => index[r] = Some(i),
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
        let mut hit: Option<usize> = None;
        // Through the aliases (a handful each), not through every column.
        let mut candidates: Vec<usize> = spec
            .aliases
            .iter()
            .filter_map(|a| first_column.get(a).copied())
            .collect();
        candidates.sort_unstable();
        for i in candidates {
            let h = &normalised[i];
            let mapped_elsewhere = mapped_headers
                .iter()
                .any(|(header, role)| *role != spec.name && header == h);
            if mapped_elsewhere {
                continue;
            }
            if let Some(prev) = hit {
                return Err(DataError::AmbiguousRole {
                    file: file.to_string(),
                    role: spec.name,
                    first: crate::data::input::shown(&headers[prev]),
                    second: crate::data::input::shown(&headers[i]),
                });
            }
            hit = Some(i);
        }
        if hit.is_none() && spec.required {
            return Err(DataError::MissingRole {
                file: file.to_string(),
                role: spec.name,
                looked_for: spec.aliases.join(", "),
            });
        }
        index[r] = hit;
    }
    Ok(ColumnMap {
        index,
        headers: headers
            .iter()
            .map(|h| h.trim_start_matches('\u{feff}').to_string())
            .collect(),
    })
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
