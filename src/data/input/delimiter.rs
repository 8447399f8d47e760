//! The field delimiter of an input: the one `--delimiter` gives, checked against the header, or
//! the one the header line (and when needed the first lines after it) shows outside quotes.

use super::shown;
use crate::error::DataError;

/// The field delimiters runcal knows, in the order preferred when a header allows several.
pub const DELIMITERS: [u8; 4] = [b',', b';', b'\t', b'|'];

/// A delimiter as messages and `--help` name it.
pub fn delimiter_name(d: u8) -> String {
    match d {
        b'\t' => "tab".to_string(),
        _ => format!("'{}'", char::from(d)),
    }
}

/// Parse a delimiter as `--delimiter` takes it: `,` `;` `|`, or `tab` (or a tab character).
pub fn parse_delimiter(text: &str) -> Result<u8, String> {
    match text {
        "," | "comma" => Ok(b','),
        ";" | "semicolon" => Ok(b';'),
        "|" | "pipe" => Ok(b'|'),
        "\t" | "tab" | "\\t" => Ok(b'\t'),
        _ => Err(format!(
            "expected one of , ; | tab (the field delimiter), got '{}'",
            shown(text)
        )),
    }
}

/// Bytes read ahead to choose a delimiter: the header line and, when the header allows several
/// delimiters, up to [`SNIFF_LINES`] lines after it.
pub(super) const SNIFF_BYTES: usize = 1 << 16;
const SNIFF_LINES: usize = 5;

/// Each line's count of every delimiter of [`DELIMITERS`] outside quotes, for the complete lines
/// at the start of `head` (line ends: `\n`, `\r\n` or `\r`, outside quotes).
fn delimiter_counts(head: &[u8], most_lines: usize) -> Vec<[usize; 4]> {
    line_counts(head, most_lines).0
}

/// [`delimiter_counts`], and the counts of the line still open at the end of `head`.
fn line_counts(head: &[u8], most_lines: usize) -> (Vec<[usize; 4]>, [usize; 4]) {
    let mut lines = Vec::new();
    let mut counts = [0usize; 4];
    let mut quoted = false;
    for &b in head {
        if lines.len() == most_lines {
            break;
        }
        match b {
            b'"' => quoted = !quoted,
            b'\n' | b'\r' if !quoted => {
                // `\r\n`: the `\n` closes an empty line, which is not counted.
                if counts != [0; 4] || lines.is_empty() {
                    lines.push(counts);
                }
                counts = [0; 4];
            }
            _ if !quoted => {
                if let Some(k) = DELIMITERS.iter().position(|&d| d == b) {
                    counts[k] += 1;
                }
            }
            _ => {}
        }
    }
    (lines, counts)
}

/// Whether `head` holds enough to choose a delimiter (or to check the one given).
pub(super) fn sniffed_enough(head: &[u8], given: bool) -> bool {
    let lines = delimiter_counts(head, SNIFF_LINES + 1);
    let Some(header) = lines.first() else {
        return false;
    };
    given || header.iter().filter(|&&n| n > 0).count() < 2 || lines.len() > SNIFF_LINES
}

/// The delimiter of a file that starts with `head`: the one given (checked against the header),
/// or the only one the header line holds outside quotes; when it holds several, the one that
/// splits the first lines into as many fields as the header. A comma for a one-column header.
pub(super) fn choose_delimiter(
    file: &str,
    head: &[u8],
    given: Option<u8>,
) -> Result<u8, DataError> {
    let (lines, open) = line_counts(head, SNIFF_LINES + 1);
    // An input whose first line never ends (an open quote, no line end, nothing at all) is
    // judged by what there is.
    let header = lines.first().copied().unwrap_or(open);
    let present: Vec<usize> = (0..DELIMITERS.len()).filter(|&k| header[k] > 0).collect();
    let refuse = |reason: String| {
        DataError::Rejected(crate::error::Rejection {
            at: crate::error::Location {
                file: file.to_string(),
                line: Some(1),
                column: None,
            },
            reason,
        })
    };
    if let Some(d) = given {
        let k = DELIMITERS.iter().position(|&x| x == d).unwrap_or(0);
        if header[k] == 0
            && let Some(&other) = present.first()
        {
            return Err(refuse(format!(
                "--delimiter {} does not match the header line, which has no {} but {} {}: drop --delimiter (runcal finds the delimiter itself) or give --delimiter {}",
                delimiter_name(d),
                delimiter_name(d),
                header[other],
                delimiter_name(DELIMITERS[other]),
                delimiter_name(DELIMITERS[other]),
            )));
        }
        return Ok(d);
    }
    match present[..] {
        [] => Ok(b','),
        [k] => Ok(DELIMITERS[k]),
        _ => {
            let data = &lines[1.min(lines.len())..];
            let fits: Vec<usize> = present
                .iter()
                .copied()
                .filter(|&k| !data.is_empty() && data.iter().all(|l| l[k] == header[k]))
                .collect();
            let names: Vec<String> = present
                .iter()
                .map(|&k| delimiter_name(DELIMITERS[k]))
                .collect();
            match fits[..] {
                [k] => Ok(DELIMITERS[k]),
                _ => Err(refuse(format!(
                    "mixed delimiters: the header line holds {} outside quotes, and the first lines do not show which one separates the fields; give it with --delimiter (one of , ; | tab)",
                    names.join(" and ")
                ))),
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn delimiters_are_read_from_the_header_and_when_needed_the_first_lines() {
        let choose = |text: &str| choose_delimiter("f.csv", text.as_bytes(), None);
        assert_eq!(choose("a,b,c\n1,2,3\n").unwrap(), b',');
        assert_eq!(choose("a;b;c\n1,5;2;3\n").unwrap(), b';');
        assert_eq!(choose("a\tb\tc\r\n1\t2\t3\r\n").unwrap(), b'\t');
        assert_eq!(choose("a|b|c").unwrap(), b'|');
        assert_eq!(choose("team\nAces\n").unwrap(), b',');
        assert_eq!(choose("").unwrap(), b',');
        assert_eq!(
            choose("\"a;b").unwrap(),
            b',',
            "an open quote hides everything"
        );
        assert_eq!(choose("a;b;c").unwrap(), b';', "no line end");
        // A comma inside a quoted header name is not a delimiter.
        assert_eq!(choose("\"Runs, scored\";W;L\n1;2;3\n").unwrap(), b';');
        // Both in the header: the lines settle it, or the choice is refused.
        let e = choose("a,b;c\n1,2;3\n4,5;6\n").unwrap_err();
        assert!(e.to_string().contains("mixed delimiters"), "{e}");
        assert_eq!(choose("a;b,c;d\n1;2;3\n").unwrap(), b';');
        assert!(choose("a;b,c\n").is_err(), "no lines to settle it");
        // A given delimiter is checked against the header.
        assert_eq!(choose_delimiter("f", b"a;b\n", Some(b';')).unwrap(), b';');
        assert_eq!(choose_delimiter("f", b"ab\n", Some(b';')).unwrap(), b';');
        let e = choose_delimiter("f", b"a,b\n", Some(b';')).unwrap_err();
        assert!(e.to_string().contains("give --delimiter ','"), "{e}");
    }

    #[test]
    fn the_sniff_reads_only_the_header_line_when_it_decides() {
        assert!(
            !sniffed_enough(b"team;w;l", false),
            "the header has not ended"
        );
        assert!(sniffed_enough(b"team;w;l\n", false));
        assert!(!sniffed_enough(b"team;w,l\n1;2,3\n", false));
        assert!(sniffed_enough(b"team;w,l\n1;2,3\n", true));
        let six = "team;w,l\n".to_string() + &"1;2,3\n".repeat(SNIFF_LINES);
        assert!(sniffed_enough(six.as_bytes(), false));
    }
}
