//! Team and league names, each stored once and known by a small integer id, so that the rest of
//! the pass compares and hashes integers. Names are NFC-normalised (two spellings of "Élan" are one
//! team), refused when they hold control characters, and bounded in number.

use std::collections::HashMap;

use unicode_normalization::{IsNormalized, UnicodeNormalization, is_nfc_quick};

/// Why a name could not be interned.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(super) enum NameError {
    NotUtf8,
    /// A control character: the reason, with the character escaped.
    Control(String),
    /// More distinct names than the load allows.
    TooMany {
        limit: usize,
    },
}

impl NameError {
    pub(super) fn reason(&self, what: &str) -> String {
        match self {
            NameError::NotUtf8 => "not valid UTF-8".to_string(),
            NameError::Control(reason) => reason.clone(),
            NameError::TooMany { limit } => format!(
                "more than {limit} distinct {what} names in one load (the limit, far beyond any league's history): is this the right column?"
            ),
        }
    }
}

/// Slots of [`Interner`]'s cache (a power of two).
const NAME_CACHE: usize = 256;

/// Names seen in the input, each stored once.
pub(super) struct Interner {
    /// Every spelling seen (the NFC one and any other), to its id.
    ids: HashMap<Box<[u8]>, u32>,
    /// By id: the name in NFC.
    names: Vec<String>,
    limit: usize,
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
pub(super) fn word(b: &[u8]) -> u64 {
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
    pub(super) fn new(limit: usize) -> Self {
        Interner {
            ids: HashMap::new(),
            names: Vec::new(),
            limit,
            cache: vec![CacheSlot::default(); NAME_CACHE],
        }
    }

    /// The name of an id, in NFC.
    pub(super) fn name(&self, id: u32) -> &str {
        &self.names[id as usize]
    }

    #[cfg(test)]
    fn len(&self) -> usize {
        self.names.len()
    }

    /// Ids ranked by name: `rank()[id]` is the id's place in byte order of the names.
    pub(super) fn rank(&self) -> Vec<u32> {
        let mut ids: Vec<u32> = (0..self.names.len() as u32).collect();
        ids.sort_unstable_by(|&a, &b| self.names[a as usize].cmp(&self.names[b as usize]));
        let mut rank = vec![0u32; ids.len()];
        for (r, id) in ids.into_iter().enumerate() {
            rank[id as usize] = r as u32;
        }
        rank
    }

    pub(super) fn id(&mut self, name: &[u8]) -> Result<u32, NameError> {
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
                && c.words == words
                && (name.len() <= 24 || self.names[c.id as usize - 1].as_bytes() == name)
            {
                // Past 24 bytes the words do not settle it: compared with the stored (NFC) name,
                // so another spelling of it goes on to the map.
                return Ok(c.id - 1);
            }
        }
        let id = match self.ids.get(name) {
            Some(&id) => id,
            None => self.add(name)?,
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

    /// A spelling not seen before: checked, normalised, and given the id of its NFC form.
    fn add(&mut self, name: &[u8]) -> Result<u32, NameError> {
        let text = std::str::from_utf8(name).map_err(|_| NameError::NotUtf8)?;
        if let Some(reason) = super::super::input::control_character(text) {
            return Err(NameError::Control(reason));
        }
        if self.ids.len() >= self.limit {
            return Err(NameError::TooMany { limit: self.limit });
        }
        let nfc: std::borrow::Cow<str> =
            if text.is_ascii() || is_nfc_quick(text.chars()) == IsNormalized::Yes {
                text.into()
            } else {
                text.nfc().collect::<String>().into()
            };
        let id = match self.ids.get(nfc.as_bytes()) {
            Some(&id) => id,
            None => {
                let id = self.names.len() as u32;
                self.ids.insert(nfc.as_bytes().into(), id);
                self.names.push(nfc.into_owned());
                id
            }
        };
        self.ids.insert(name.into(), id);
        Ok(id)
    }
}

/// Team and league names, shared by every file of one load.
pub(super) struct Names {
    pub teams: Interner,
    pub leagues: Interner,
}

impl Names {
    pub(super) fn new(max_names: usize) -> Self {
        Names {
            teams: Interner::new(max_names),
            leagues: Interner::new(max_names),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nfd_and_nfc_spellings_are_one_name() {
        let mut names = Interner::new(10);
        // U+00C9 (NFC) and E + U+0301 (NFD): canonically equivalent (Unicode Standard Annex #15).
        let nfc = names.id("\u{c9}lan".as_bytes()).unwrap();
        let nfd = names.id("E\u{301}lan".as_bytes()).unwrap();
        assert_eq!(nfc, nfd);
        assert_eq!(names.name(nfd), "\u{c9}lan");
        assert_eq!(names.len(), 1);
        // The NFD spelling first: the stored name is still NFC.
        let mut names = Interner::new(10);
        let id = names.id("E\u{301}lan".as_bytes()).unwrap();
        assert_eq!(names.name(id), "\u{c9}lan");
    }

    #[test]
    fn control_characters_and_too_many_names_are_refused() {
        let mut names = Interner::new(2);
        let e = names.id(b"Ac\x1b]0;x\x07es").unwrap_err();
        let reason = e.reason("team");
        assert!(reason.contains("\\x1b (character 3)"), "{reason}");
        assert!(!reason.contains('\x1b'));
        assert!(matches!(names.id(b"A\0"), Err(NameError::Control(_))));
        assert_eq!(names.id(b"\xff"), Err(NameError::NotUtf8));
        names.id(b"Aces").unwrap();
        names.id(b"Bats").unwrap();
        assert_eq!(names.id(b"Aces"), Ok(0));
        assert_eq!(names.id(b"Cubs"), Err(NameError::TooMany { limit: 2 }));
    }

    #[test]
    fn long_names_that_share_their_words_stay_apart() {
        let mut names = Interner::new(10);
        // Same length, same first sixteen and last eight bytes, different middle.
        let a = names.id(b"0123456789abcdefXYZ_tail0123").unwrap();
        let b = names.id(b"0123456789abcdefQRS_tail0123").unwrap();
        assert_ne!(a, b);
        assert_eq!(names.id(b"0123456789abcdefXYZ_tail0123"), Ok(a));
        assert_eq!(names.id(b"0123456789abcdefQRS_tail0123"), Ok(b));
    }
}
