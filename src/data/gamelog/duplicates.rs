//! The same game twice: within a file, across the files of one load, or the same file given twice.
//!
//! A game is its date, home and away team and game number, so a repeat can only fall on a date
//! already seen. The check keeps the games of the current date, plus the games of earlier dates up
//! to a budget (oldest dates let go first); a date that comes back finds its games again. A log in
//! date order therefore needs one date's games and the list of dates; so do several files that
//! follow one another in time. When a date comes back after its games were let go, the check says
//! so ([`Seen::LetGo`]) and the loader decides: regular files are read again with no budget,
//! anything else (a pipe, standard input) is refused with advice, since it cannot be read twice.

use std::collections::{HashMap, VecDeque};
use std::hash::Hash;

/// (packed date, home id, away id, game number).
pub(super) type GameKey = (u32, u32, u32, u32);

/// Where a game was first seen: file number in the load and line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct SeenAt {
    pub file: u32,
    pub line: u64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Seen {
    New,
    Before(SeenAt),
    /// The date came back after its games were let go: the check cannot tell.
    LetGo,
}

/// Game keys of one date: a short list scanned linearly while small (a league's day), a hash map
/// beyond that, so the usual day costs no hashing.
struct DayKeys<K> {
    list: Vec<(K, SeenAt)>,
    map: HashMap<K, SeenAt>,
}

/// Entries [`DayKeys`] keeps in its list before it moves them to its map.
const DAY_KEYS_LIST: usize = 64;

impl<K: Copy + Eq + Hash> DayKeys<K> {
    fn new() -> Self {
        DayKeys {
            list: Vec::with_capacity(DAY_KEYS_LIST),
            map: HashMap::new(),
        }
    }

    fn get(&self, key: &K) -> Option<SeenAt> {
        if self.map.is_empty() {
            self.list.iter().find(|(k, _)| k == key).map(|&(_, at)| at)
        } else {
            self.map.get(key).copied()
        }
    }

    /// Add a key that is not present yet.
    fn insert(&mut self, key: K, at: SeenAt) {
        if self.map.is_empty() && self.list.len() < DAY_KEYS_LIST {
            self.list.push((key, at));
        } else {
            self.map.extend(self.list.drain(..));
            self.map.insert(key, at);
        }
    }

    fn len(&self) -> usize {
        self.list.len() + self.map.len()
    }

    /// Move every entry into `into`, leaving the keys empty (and their list's allocation in place).
    fn move_into(&mut self, into: &mut Vec<(K, SeenAt)>) {
        into.append(&mut self.list);
        into.extend(self.map.drain());
    }

    fn clear(&mut self) {
        self.list.clear();
        self.map.clear();
    }

    fn restore(&mut self, entries: &mut Vec<(K, SeenAt)>) {
        for (k, at) in entries.drain(..) {
            self.insert(k, at);
        }
    }
}

/// Hashes a packed date (not input an attacker can steer into collisions beyond the calendar's
/// few million days, and bounded by the budget): one multiplication instead of SipHash, since the
/// map is touched on every change of date.
#[derive(Default)]
struct DateHasher(u64);

impl std::hash::Hasher for DateHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 = (self.0 ^ u64::from(b)).wrapping_mul(0x100_0000_01b3);
        }
    }
    fn write_u32(&mut self, n: u32) {
        self.0 = u64::from(n).wrapping_mul(0x9E37_79B9_7F4A_7C15);
    }
}

type DateMap<V> = HashMap<u32, V, std::hash::BuildHasherDefault<DateHasher>>;

type HeldGames = Vec<(GameKey, SeenAt)>;

/// Games of earlier dates, held up to a budget.
#[derive(Default)]
struct Held {
    by_date: DateMap<(HeldGames, u64)>,
    /// Dates in the order they were put away, with the generation they were put away under: an
    /// entry whose date was taken back since is stale and skipped.
    order: VecDeque<(u32, u64)>,
    games: usize,
    generation: u64,
    /// Emptied lists, kept for reuse: a date-ordered log puts a date away on every change of date.
    spare: Vec<HeldGames>,
}

impl Held {
    /// A list to fill (from the spares when there are any).
    fn list(&mut self) -> HeldGames {
        self.spare.pop().unwrap_or_default()
    }

    fn put(&mut self, date: u32, games: HeldGames, budget: usize) {
        self.generation += 1;
        self.games += games.len();
        self.by_date.insert(date, (games, self.generation));
        self.order.push_back((date, self.generation));
        while self.games > budget {
            let Some((old, generation)) = self.order.pop_front() else {
                break;
            };
            if self.by_date.get(&old).is_some_and(|e| e.1 == generation)
                && let Some((mut gone, _)) = self.by_date.remove(&old)
            {
                self.games -= gone.len();
                gone.clear();
                self.spare.push(gone);
            }
        }
        // Stale entries pile up when dates go back and forth: drop them now and then.
        if self.order.len() > 2 * self.by_date.len() + 1024 {
            let by_date = &self.by_date;
            self.order
                .retain(|(d, g)| by_date.get(d).is_some_and(|e| e.1 == *g));
        }
    }

    fn take(&mut self, date: u32) -> Option<HeldGames> {
        let (games, _) = self.by_date.remove(&date)?;
        self.games -= games.len();
        Some(games)
    }
}

/// The duplicate check of one load (shared by its files).
pub(super) struct DuplicateCheck {
    budget: usize,
    today: Option<u32>,
    today_keys: DayKeys<GameKey>,
    /// Today's games include games put away earlier (the date came back), which `hosted_on` does
    /// not know about.
    today_restored: bool,
    /// Per team id: 1 + the packed date on which it last hosted a game (0: never). A team that has
    /// not hosted today cannot repeat a game of today, so most rows skip the key search.
    hosted_on: Vec<u32>,
    /// Dates already left behind, ascending (in a date-ordered log every date is a push at the
    /// end, and looking one up is a comparison with the last).
    finished: Vec<u32>,
    held: Held,
}

impl DuplicateCheck {
    /// A check that holds up to `budget` games of earlier dates (`usize::MAX`: every game).
    pub(super) fn new(budget: usize) -> Self {
        DuplicateCheck {
            budget,
            today: None,
            today_keys: DayKeys::new(),
            today_restored: false,
            hosted_on: Vec::new(),
            finished: Vec::new(),
            held: Held::default(),
        }
    }

    /// Record a game, or say where it was seen before.
    pub(super) fn check(&mut self, key: GameKey, at: SeenAt) -> Seen {
        let (date, home) = (key.0, key.1 as usize);
        if self.today != Some(date) && !self.move_to(date) {
            return Seen::LetGo;
        }
        if (self.today_restored || self.hosted_on.get(home) == Some(&(date + 1)))
            && let Some(first) = self.today_keys.get(&key)
        {
            return Seen::Before(first);
        }
        self.today_keys.insert(key, at);
        if self.hosted_on.len() <= home {
            self.hosted_on.resize(home + 1, 0);
        }
        self.hosted_on[home] = date + 1;
        Seen::New
    }

    /// Put today's games away and make `date` today; false if its games were let go.
    fn move_to(&mut self, date: u32) -> bool {
        if let Some(d) = self.today {
            if self.today_keys.len() > 0 && self.budget > 0 {
                let mut games = self.held.list();
                self.today_keys.move_into(&mut games);
                self.held.put(d, games, self.budget);
            } else {
                self.today_keys.clear();
            }
            match self.finished.last() {
                Some(&last) if last >= d => {
                    if let Err(at) = self.finished.binary_search(&d) {
                        self.finished.insert(at, d);
                    }
                }
                _ => self.finished.push(d),
            }
        }
        self.today = Some(date);
        let seen_before = self.finished.last().is_some_and(|&last| last >= date)
            && self.finished.binary_search(&date).is_ok();
        self.today_restored = seen_before;
        if !seen_before {
            return true;
        }
        match self.held.take(date) {
            Some(mut games) => {
                self.today_keys.restore(&mut games);
                self.held.spare.push(games);
                true
            }
            None => {
                self.today = None;
                false
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(line: u64) -> SeenAt {
        SeenAt { file: 0, line }
    }

    #[test]
    fn a_date_that_comes_back_finds_its_games_within_the_budget() {
        let mut check = DuplicateCheck::new(2);
        assert_eq!(check.check((1, 0, 1, 0), at(2)), Seen::New);
        assert_eq!(check.check((2, 0, 1, 0), at(3)), Seen::New);
        assert_eq!(check.check((1, 0, 1, 0), at(4)), Seen::Before(at(2)));
        assert_eq!(check.check((1, 1, 0, 0), at(5)), Seen::New);
        // Dates 3 to 5 push the oldest dates out of a budget of two games: 4 and 5 stay.
        assert_eq!(check.check((3, 0, 1, 0), at(6)), Seen::New);
        assert_eq!(check.check((4, 0, 1, 0), at(7)), Seen::New);
        assert_eq!(check.check((5, 0, 1, 0), at(8)), Seen::New);
        assert_eq!(check.check((4, 0, 1, 0), at(9)), Seen::Before(at(7)));
        assert_eq!(check.check((1, 0, 1, 0), at(10)), Seen::LetGo);
    }

    #[test]
    fn without_a_budget_every_game_is_kept() {
        let mut check = DuplicateCheck::new(usize::MAX);
        for d in 0..500u32 {
            assert_eq!(check.check((d, 0, 1, 0), at(u64::from(d))), Seen::New);
        }
        for d in (0..500u32).rev() {
            assert_eq!(
                check.check((d, 0, 1, 0), at(9)),
                Seen::Before(at(u64::from(d)))
            );
            assert_eq!(check.check((d, 1, 0, 0), at(9)), Seen::New);
        }
    }
}
