//! Dataset keys: which rows have a blank key, and which repeat a key seen before.
//!
//! The key set is the only state of a check that grows with the file, so it lives on its
//! own and is run on one thread in file order (a repeat is the *second* occurrence), while
//! the cells of a row may be checked anywhere.

use std::collections::{HashMap, HashSet};
use std::hash::{BuildHasherDefault, Hash, Hasher};

use super::cell::trim;
use super::plan::Plan;
use crate::data::Record;

/// What the key of one row is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum KeyStatus {
    /// The dataset has no key.
    None,
    Fresh,
    /// A key variable is blank.
    Blank,
    /// The key was seen on an earlier row.
    Repeat,
}

/// Keys seen so far, and a reused buffer for the key text of a row.
#[derive(Default)]
pub struct Keys {
    set: KeySet,
    text: String,
}

impl Keys {
    /// Classify the key of `record`, remembering it.
    pub fn status(&mut self, plan: &Plan, record: &Record) -> KeyStatus {
        if plan.key.is_empty() {
            return KeyStatus::None;
        }
        // The usual key: one variable holding a serial of the file's shape.
        if let [k] = plan.key[..] {
            let value = plan.columns[k].field.and_then(|f| record.field(f));
            let value = trim(value.unwrap_or(""));
            if value.is_empty() {
                return KeyStatus::Blank;
            }
            match self.set.insert_serial(value) {
                Some(true) => return KeyStatus::Fresh,
                Some(false) => return KeyStatus::Repeat,
                None => {}
            }
        }
        let blank = key_text(plan, record, &mut self.text);
        if blank {
            KeyStatus::Blank
        } else if self.set.insert(&self.text, plan.key.len()) {
            KeyStatus::Fresh
        } else {
            KeyStatus::Repeat
        }
    }
}

/// The trimmed key values of `record`, each followed by U+001F, into `text`; true if one
/// of them is blank.
pub fn key_text(plan: &Plan, record: &Record, text: &mut String) -> bool {
    text.clear();
    let mut blank = false;
    for &k in &plan.key {
        let value = plan.columns[k]
            .field
            .and_then(|f| record.field(f))
            .unwrap_or("");
        let value = trim(value);
        blank |= value.is_empty();
        text.push_str(value);
        text.push('\u{1f}');
    }
    blank
}

/// Hash-set keys are already hashes: pass them through.
#[derive(Default)]
struct PassThrough(u64);

impl Hasher for PassThrough {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, _: &[u8]) {}
    fn write_u64(&mut self, n: u64) {
        self.0 = n;
    }
}

/// The keys seen so far, to find repeats (`structure.id-duplicate`).
///
/// Memory is the only thing here that grows with the file, so keys are stored compactly,
/// in two exact-or-hashed parts that never hold the same key:
///
/// * **Serial keys.** Most survey keys are a fixed prefix and a fixed-width serial number
///   (`P00012345`, `10423`). The first key seen fixes the shape (the text before its
///   trailing digits, and how many digits there are); every key of that shape is the same
///   text exactly when it has the same number, so it is remembered *exactly* as one bit in
///   a paged bitmap indexed by the number: 4 million consecutive ids take 0.5 MB, and a
///   repeat is never missed nor invented.
/// * **Everything else** (other shapes, composite keys, serials so sparse that the bitmap
///   would cost more than hashes) is remembered by a 64-bit hash, 10 to 21 bytes per key in
///   a `HashSet<u64>` (9 bytes a slot, at most 7/8 full, doubling as it grows, with both
///   tables alive for a moment while it does). Two different keys share a hash with
///   probability about n^2 / 2^65 (below 1e-6 for 4 million cases), which would report a
///   false repeat.
///
/// When the bitmap turns out sparse (more than [`SPARSE_BYTES_PER_KEY`] per key beyond its
/// first megabyte), its keys are moved into the hash set, rebuilding their text so they
/// hash exactly as they would have from the start, and serial storage stops.
#[derive(Default)]
struct KeySet {
    serial: Serial,
    hashes: HashSet<u64, BuildHasherDefault<PassThrough>>,
}

/// Bits per bitmap page (4 KiB).
const PAGE_BITS: u64 = 1 << 15;
/// A bitmap denser than this (bytes per key) is cheaper than hashing.
const SPARSE_BYTES_PER_KEY: u64 = 16;
/// At most 18 digits, so a serial number fits a `u64`.
const MAX_SERIAL_DIGITS: usize = 18;

#[derive(Default)]
enum Serial {
    /// No key seen yet.
    #[default]
    Unset,
    Active(Bitmap),
    /// Not used for this file (a composite key, a first key without a trailing number, or a
    /// bitmap that grew sparse).
    Off,
}

struct Bitmap {
    prefix: String,
    digits: usize,
    /// Page number -> index in `bits`. A map, because serials need not start near zero.
    pages: HashMap<u64, usize>,
    bits: Vec<Box<[u64; (PAGE_BITS / 64) as usize]>>,
    /// The page used last (page number, index): consecutive keys skip the map.
    last: (u64, usize),
    /// Keys stored, for the density rule.
    members: u64,
}

/// Split a key into the text before its trailing ASCII digits and their number.
fn split_serial(key: &str) -> Option<(&str, usize, u64)> {
    let digits = key.bytes().rev().take_while(u8::is_ascii_digit).count();
    if digits == 0 || digits > MAX_SERIAL_DIGITS {
        return None;
    }
    let (prefix, number) = key.split_at(key.len() - digits);
    Some((prefix, digits, number.parse().ok()?))
}

impl KeySet {
    /// Remember `key` (the trimmed key values, each followed by U+001F); false if it was
    /// already there. `parts` is the number of key variables.
    fn insert(&mut self, key: &str, parts: usize) -> bool {
        if let Serial::Unset = self.serial {
            self.serial = match (parts, split_serial(key.trim_end_matches('\u{1f}'))) {
                (1, Some((prefix, digits, _))) => Serial::Active(Bitmap {
                    prefix: prefix.to_string(),
                    digits,
                    pages: HashMap::new(),
                    bits: Vec::new(),
                    last: (u64::MAX, 0),
                    members: 0,
                }),
                _ => Serial::Off,
            };
        }
        if let Serial::Active(bitmap) = &mut self.serial {
            let serial = split_serial(key.trim_end_matches('\u{1f}'))
                .filter(|&(p, d, _)| d == bitmap.digits && p == bitmap.prefix);
            if let Some((_, _, n)) = serial {
                let fresh = bitmap.insert(n);
                if fresh && bitmap.is_sparse() {
                    self.stop_serial();
                }
                return fresh;
            }
        }
        self.hashes.insert(hash_key(key))
    }

    /// [`KeySet::insert`] for a one-variable key (the trimmed value, without U+001F) when it
    /// has the bitmap's shape: the same prefix, then exactly that many digits. The prefix
    /// never ends in a digit, so such a key splits exactly as `split_serial` would split it.
    /// `None` when there is no bitmap or the key has another shape.
    fn insert_serial(&mut self, value: &str) -> Option<bool> {
        let Serial::Active(bitmap) = &mut self.serial else {
            return None;
        };
        let digits = value.strip_prefix(bitmap.prefix.as_str())?.as_bytes();
        if digits.len() != bitmap.digits {
            return None;
        }
        let mut n = 0u64;
        for &c in digits {
            let d = c.wrapping_sub(b'0');
            if d > 9 {
                return None;
            }
            n = n * 10 + u64::from(d);
        }
        let fresh = bitmap.insert(n);
        if fresh && bitmap.is_sparse() {
            self.stop_serial();
        }
        Some(fresh)
    }

    /// Move the bitmap's keys into the hash set and stop using it.
    fn stop_serial(&mut self) {
        let Serial::Active(bitmap) = std::mem::replace(&mut self.serial, Serial::Off) else {
            return;
        };
        let mut text = String::new();
        for (&page, &index) in &bitmap.pages {
            for (w, &word) in bitmap.bits[index].iter().enumerate() {
                let mut word = word;
                while word != 0 {
                    let bit = u64::from(word.trailing_zeros());
                    word &= word - 1;
                    let n = page * PAGE_BITS + w as u64 * 64 + bit;
                    text.clear();
                    use std::fmt::Write;
                    let _ = write!(text, "{}{n:0w$}\u{1f}", bitmap.prefix, w = bitmap.digits);
                    self.hashes.insert(hash_key(&text));
                }
            }
        }
    }
}

impl Bitmap {
    /// Set the bit of `n`; false if it was set already.
    #[inline]
    fn insert(&mut self, n: u64) -> bool {
        let page = n / PAGE_BITS;
        if self.last.0 != page {
            let bits = &mut self.bits;
            let index = *self.pages.entry(page).or_insert_with(|| {
                bits.push(Box::new([0; (PAGE_BITS / 64) as usize]));
                bits.len() - 1
            });
            self.last = (page, index);
        }
        let bit = n % PAGE_BITS;
        let word = &mut self.bits[self.last.1][(bit / 64) as usize];
        let mask = 1u64 << (bit % 64);
        let fresh = *word & mask == 0;
        *word |= mask;
        self.members += u64::from(fresh);
        fresh
    }

    fn is_sparse(&self) -> bool {
        let bytes = self.pages.len() as u64 * (PAGE_BITS / 8);
        bytes > (1 << 20) + SPARSE_BYTES_PER_KEY * self.members
    }
}

fn hash_key(key: &str) -> u64 {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    key.hash(&mut h);
    h.finish()
}

#[cfg(test)]
mod tests {
    use super::KeySet;

    fn key(text: &str) -> String {
        format!("{text}\u{1f}")
    }

    #[test]
    fn serial_keys_repeat_exactly() {
        let mut keys = KeySet::default();
        for n in 1..=70_000u64 {
            assert!(keys.insert(&key(&format!("P{n:08}")), 1));
        }
        assert!(!keys.insert(&key("P00000001"), 1));
        assert!(!keys.insert(&key("P00070000"), 1));
        // Same number, other shapes: different keys.
        assert!(keys.insert(&key("P1"), 1));
        assert!(keys.insert(&key("Q00000001"), 1));
        assert!(keys.insert(&key("00000001"), 1));
        assert!(!keys.insert(&key("P1"), 1));
        assert!(!keys.insert(&key("00000001"), 1));
        assert!(keys.hashes.len() == 3);
    }

    #[test]
    fn sparse_serials_move_to_hashes_and_keep_their_repeats() {
        let mut keys = KeySet::default();
        let spread = |n: u64| key(&format!("{:012}", n * 1_000_003));
        for n in 0..2_000 {
            assert!(keys.insert(&spread(n), 1), "{n}");
        }
        assert!(matches!(keys.serial, super::Serial::Off));
        for n in 0..2_000 {
            assert!(!keys.insert(&spread(n), 1), "{n}");
        }
        assert!(keys.insert(&spread(2_000), 1));
    }

    #[test]
    fn the_serial_shortcut_agrees_with_the_full_path() {
        // The same keys through `insert` (the text path) and, where it applies,
        // `insert_serial`: the same answers, key by key.
        let keys: Vec<String> = ["P00000001", "P00000002", "P00000001", "P1", "P000000003"]
            .iter()
            .map(|k| k.to_string())
            .chain((0..50_000).map(|n| format!("P{:08}", n * 7 % 40_000)))
            .chain(["Q00000001", "P0000000A", "P00000002 "].map(String::from))
            .collect();
        let mut full = KeySet::default();
        let mut quick = KeySet::default();
        for k in &keys {
            let expected = full.insert(&key(k), 1);
            let got = match quick.insert_serial(k) {
                Some(fresh) => fresh,
                None => quick.insert(&key(k), 1),
            };
            assert_eq!(got, expected, "{k}");
        }
    }

    #[test]
    fn composite_and_unnumbered_keys_are_hashed() {
        let mut keys = KeySet::default();
        assert!(keys.insert("H001\u{1f}1\u{1f}", 2));
        assert!(keys.insert("H001\u{1f}2\u{1f}", 2));
        assert!(!keys.insert("H001\u{1f}1\u{1f}", 2));
        let mut keys = KeySet::default();
        assert!(keys.insert(&key("abc"), 1));
        assert!(keys.insert(&key("abd1"), 1));
        assert!(!keys.insert(&key("abd1"), 1));
    }
}
