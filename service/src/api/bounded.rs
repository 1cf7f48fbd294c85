//! Bounded text for statuses and logs: numbers with a bounded count of digits, a cap on the
//! length of a message, at most a few field violations plus a count of the rest, and control
//! characters escaped so a value from a request or a file cannot start a new log line.
//!
//! A status travels in HTTP/2 headers (`grpc-message`, percent-encoded, and
//! `grpc-status-details-bin`, base64), and clients commonly refuse header blocks over 16 KiB;
//! the caps here keep both far below that.

/// Longest status message, bytes (before percent-encoding, which at most triples it).
pub const MAX_MESSAGE_BYTES: usize = 1024;
/// Longest description of one field violation, bytes.
pub const MAX_VIOLATION_BYTES: usize = 200;
/// Field violations listed in the details; the rest are counted in one more entry.
pub const MAX_VIOLATIONS: usize = 8;
/// A run of digits longer than this is rewritten in scientific notation.
const MAX_DIGIT_RUN: usize = 17;

/// `text` with digit runs shortened ([`shorten_numbers`]), control characters escaped, and cut
/// to at most `max_bytes` (on a character boundary) with a note of how much was left out.
pub fn bounded(text: &str, max_bytes: usize) -> String {
    let mut out = escape_controls(&shorten_numbers(text));
    if out.len() > max_bytes {
        let omitted = out.len();
        let mut cut = max_bytes.saturating_sub(40);
        while !out.is_char_boundary(cut) {
            cut -= 1;
        }
        out.truncate(cut);
        out.push_str(&format!(" ... ({} bytes left out)", omitted - cut));
    }
    out
}

/// Rewrites each decimal number of more than [`MAX_DIGIT_RUN`] digits (as `f64`'s `Display`
/// prints 1e300 or 1e-300) in shortest scientific notation, e.g. `1e300`.
pub fn shorten_numbers(text: &str) -> String {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len().min(4096));
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i].is_ascii_digit() {
            let start = i;
            let mut digits = 0;
            while i < bytes.len() && (bytes[i].is_ascii_digit() || bytes[i] == b'.') {
                digits += usize::from(bytes[i].is_ascii_digit());
                i += 1;
            }
            let number = &text[start..i];
            // Part of a word (a hash, an identifier): kept as written.
            let joined = |b: Option<&u8>| b.is_some_and(|b| b.is_ascii_alphanumeric() || *b == b'_');
            let in_word = joined(start.checked_sub(1).and_then(|p| bytes.get(p))) || joined(bytes.get(i));
            // 64 digits and no point: a content hash that happens to hold no letter (a pin
            // of all zeros, say), echoed exactly so the client can compare it.
            let hash_like = digits == 64 && !number.contains('.');
            match number.parse::<f64>() {
                Ok(v) if digits > MAX_DIGIT_RUN && !in_word && !hash_like => out.push_str(&format!("{v:e}")),
                _ => out.push_str(number),
            }
        } else {
            let next = text[i..].chars().next().map_or(1, char::len_utf8);
            out.push_str(&text[i..i + next]);
            i += next;
        }
    }
    out
}

/// `text` with every control character (newline, carriage return, escape, ...) written as its
/// Rust escape, so it stays on one line whatever the log format.
pub fn escape_controls(text: &str) -> String {
    if !text.chars().any(char::is_control) {
        return text.to_owned();
    }
    text.chars()
        .map(|c| {
            if c.is_control() {
                c.escape_default().to_string()
            } else {
                c.to_string()
            }
        })
        .collect()
}

/// At most [`MAX_VIOLATIONS`] (field, description) pairs, each bounded, then one entry
/// counting the rest.
pub fn bounded_violations(violations: &[(String, String)], total: usize) -> Vec<(String, String)> {
    let mut out: Vec<(String, String)> = violations
        .iter()
        .take(MAX_VIOLATIONS)
        .map(|(f, d)| (bounded(f, MAX_VIOLATION_BYTES), bounded(d, MAX_VIOLATION_BYTES)))
        .collect();
    let shown = out.len();
    if total > shown {
        out.push((
            "(more)".into(),
            format!("{} more bad values not listed", total - shown),
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn huge_numbers_print_in_a_few_digits() {
        // f64 Display prints 1e300 as 301 digits (Rust std documentation of Display for f64:
        // no exponent is ever used).
        let text = format!("temperatures[0] = {} K and {} K", 1e300, 1e-300);
        assert!(text.len() > 600);
        let short = shorten_numbers(&text);
        assert_eq!(short, "temperatures[0] = 1e300 K and 1e-300 K");
        // Ordinary numbers, indices and versions are kept as written.
        let plain = "densities[12] = 123456.5 cm^-3 in demo@1.0.0 at 0.25, hash f0123456789012345678901234a";
        assert_eq!(shorten_numbers(plain), plain);
        // A 64-digit content hash with no letter is kept whole.
        let pin = format!("the request expected {}", "0".repeat(64));
        assert_eq!(shorten_numbers(&pin), pin);
    }

    #[test]
    fn messages_are_cut_on_a_character_boundary_and_escaped() {
        let long = "é".repeat(3000);
        let cut = bounded(&long, MAX_MESSAGE_BYTES);
        assert!(cut.len() <= MAX_MESSAGE_BYTES, "{}", cut.len());
        assert!(cut.ends_with("bytes left out)"), "{cut}");
        assert_eq!(bounded("a\nb\r\u{1b}[31m", 100), "a\\nb\\r\\u{1b}[31m");
    }

    #[test]
    fn violations_are_capped_with_a_count() {
        let many: Vec<(String, String)> = (0..1000)
            .map(|i| (format!("t[{i}]"), format!("t[{i}] = -1 K: must be > 0")))
            .collect();
        let out = bounded_violations(&many, 1000);
        assert_eq!(out.len(), MAX_VIOLATIONS + 1);
        assert_eq!(out[MAX_VIOLATIONS].1, "992 more bad values not listed");
        assert_eq!(bounded_violations(&many[..3], 3).len(), 3);
    }
}
