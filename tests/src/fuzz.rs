//! A small seeded mutator for the fuzz runs (tests/tests/fuzz.rs): valid inputs are changed by
//! byte flips, insertions, deletions, truncation, splices of random bytes, repeated pieces and,
//! for text, swapped, deleted and repeated lines and numbers replaced by extreme ones. The same
//! seed gives the same cases, so a failure names its case and can be replayed.
//!
//! The mutation scheme is common practice in mutation-based fuzzing (no source).

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};

/// Numbers that stress parsers and range checks (from memory of what breaks numeric code).
const EXTREME_NUMBERS: &[&str] = &[
    "0",
    "-0",
    "-1",
    "1e308",
    "-1e308",
    "1e-320",
    "nan",
    "inf",
    "-inf",
    "18446744073709551616",
    "4294967296",
    "9999999999999999999999",
    "0x10",
    "1_000",
    "",
    "1e",
    ".",
    "-",
];

/// A seeded source of mutated cases.
pub struct Mutator {
    rng: StdRng,
}

impl Mutator {
    /// Cases drawn from `seed`.
    pub fn new(seed: u64) -> Self {
        Self {
            rng: StdRng::seed_from_u64(seed),
        }
    }

    /// A mutated copy of `input`: one to four byte-level changes.
    pub fn bytes(&mut self, input: &[u8]) -> Vec<u8> {
        let mut out = input.to_vec();
        for _ in 0..self.rng.random_range(1..=4) {
            self.one_byte_change(&mut out);
        }
        out
    }

    fn one_byte_change(&mut self, out: &mut Vec<u8>) {
        let len = out.len();
        let at = if len == 0 {
            0
        } else {
            self.rng.random_range(0..len)
        };
        match self.rng.random_range(0..7) {
            0 if len > 0 => out[at] ^= 1 << self.rng.random_range(0..8),
            1 if len > 0 => out[at] = self.rng.random(),
            2 => out.insert(at, self.rng.random()),
            3 if len > 0 => {
                out.remove(at);
            }
            4 => out.truncate(at),
            5 => {
                let n = self.rng.random_range(1..=16);
                let junk: Vec<u8> = (0..n).map(|_| self.rng.random()).collect();
                out.splice(at..at, junk);
            }
            _ if len > 0 => {
                // A piece repeated: duplicated fields and repeated elements.
                let end = (at + self.rng.random_range(1..=32)).min(len);
                let piece = out[at..end].to_vec();
                out.splice(at..at, piece);
            }
            _ => out.push(self.rng.random()),
        }
    }

    /// A mutated copy of `text`: line-level and number-level changes, sometimes byte-level ones
    /// too (so the result need not be UTF-8 valid; it is made valid lossily).
    pub fn text(&mut self, text: &str) -> String {
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        for _ in 0..self.rng.random_range(1..=3) {
            if lines.is_empty() {
                break;
            }
            let at = self.rng.random_range(0..lines.len());
            match self.rng.random_range(0..6) {
                0 => {
                    lines.remove(at);
                }
                1 => {
                    let copy = lines[at].clone();
                    lines.insert(at, copy);
                }
                2 => {
                    let other = self.rng.random_range(0..lines.len());
                    lines.swap(at, other);
                }
                3 | 4 => {
                    let extreme = EXTREME_NUMBERS[self.rng.random_range(0..EXTREME_NUMBERS.len())];
                    lines[at] = replace_a_number(&lines[at], extreme, &mut self.rng);
                }
                _ => {
                    let bytes = self.bytes(lines[at].as_bytes());
                    lines[at] = String::from_utf8_lossy(&bytes).into_owned();
                }
            }
        }
        lines.join("\n")
    }

    /// A uniform number in [0, n).
    pub fn below(&mut self, n: usize) -> usize {
        self.rng.random_range(0..n)
    }
}

/// `line` with one of its numbers (a run of digits, signs, points and exponents) replaced.
fn replace_a_number(line: &str, by: &str, rng: &mut StdRng) -> String {
    let bytes = line.as_bytes();
    let mut runs = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i].is_ascii_digit() {
            let start = i;
            while i < bytes.len() && (bytes[i].is_ascii_digit() || b".eE+-_".contains(&bytes[i])) {
                i += 1;
            }
            runs.push(start..i);
        } else {
            i += 1;
        }
    }
    if runs.is_empty() {
        return line.to_string();
    }
    let run = runs[rng.random_range(0..runs.len())].clone();
    format!("{}{}{}", &line[..run.start], by, &line[run.end..])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_same_seed_gives_the_same_cases_and_cases_differ_from_the_input() {
        let input = b"\x0a\x04demo\x12\x06Mk III";
        let (mut a, mut b) = (Mutator::new(7), Mutator::new(7));
        let cases: Vec<Vec<u8>> = (0..50).map(|_| a.bytes(input)).collect();
        assert_eq!(cases, (0..50).map(|_| b.bytes(input)).collect::<Vec<_>>());
        assert!(cases.iter().filter(|c| c.as_slice() != input).count() > 40);
        let text = "a = 1.5\nb = [2, 3]\nc = \"x\"";
        let changed = (0..50).filter(|_| a.text(text) != text).count();
        assert!(changed > 40, "{changed}");
        let mut rng = StdRng::seed_from_u64(1);
        assert_eq!(replace_a_number("x = 12.5e3 # y", "nan", &mut rng), "x = nan # y");
        assert_eq!(replace_a_number("no numbers", "1", &mut rng), "no numbers");
    }
}
