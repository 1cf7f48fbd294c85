//! Output helpers: aligned text tables, the dataset stamp line, flag letters and cautions.

use ratewell_client::{flags, pb, stamp_label};
use serde_json::{Value, json};
use std::fmt::Write;

/// A text table whose columns are padded to their widest cell; numbers are right-aligned.
#[derive(Debug, Default)]
pub(crate) struct Table {
    headers: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headers.
    pub(crate) fn new(headers: &[&str]) -> Self {
        Self {
            headers: headers.iter().map(|h| h.to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends a row (missing cells are blank).
    pub(crate) fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    /// The table as lines of text.
    pub(crate) fn render(&self) -> String {
        let n = self.headers.len();
        let mut widths: Vec<usize> = self.headers.iter().map(|h| h.chars().count()).collect();
        for r in &self.rows {
            for (i, c) in r.iter().enumerate().take(n) {
                widths[i] = widths[i].max(c.chars().count());
            }
        }
        // A column is numeric (right-aligned, header too) when every body cell is a number.
        let numeric: Vec<bool> = (0..n)
            .map(|i| {
                !self.rows.is_empty()
                    && self
                        .rows
                        .iter()
                        .all(|r| r.get(i).is_none_or(|c| c.parse::<f64>().is_ok()))
            })
            .collect();
        let mut out = String::new();
        let mut line = |cells: &[String]| {
            let mut s = String::new();
            for (i, w) in widths.iter().enumerate() {
                let c = cells.get(i).map(String::as_str).unwrap_or("");
                if i > 0 {
                    s.push_str("  ");
                }
                if numeric[i] {
                    let _ = write!(s, "{c:>w$}");
                } else {
                    let _ = write!(s, "{c:<w$}");
                }
            }
            out.push_str(s.trim_end());
            out.push('\n');
        };
        line(&self.headers);
        for r in &self.rows {
            line(r);
        }
        out
    }
}

/// "dataset demo version 1.0.0  content hash <hash>  tables digest <digest>" for the top of
/// every answer: the content hash says which data, the tables digest which tables were built
/// from them (equal hashes with different digests: different builds of the tables).
pub(crate) fn stamp_line(stamp: &pb::DatasetStamp) -> String {
    let digest = if stamp.tables_digest.is_empty() {
        "-"
    } else {
        &stamp.tables_digest
    };
    format!(
        "dataset {} version {}  content hash {}  tables digest {}\n",
        stamp.id, stamp.version, stamp.content_hash, digest
    )
}

/// The stamp as a JSON object.
pub(crate) fn stamp_json(stamp: &pb::DatasetStamp) -> Value {
    json!({
        "id": stamp.id,
        "version": stamp.version,
        "content_hash": stamp.content_hash,
        "tables_digest": stamp.tables_digest,
        "label": stamp_label(stamp),
    })
}

/// Letters for a value's flags: A approximate, S beyond source data, G outside the grid.
pub(crate) fn flag_letters(f: u32) -> String {
    let mut s = String::new();
    for (bit, letter) in [
        (flags::APPROXIMATE, 'A'),
        (flags::BEYOND_SOURCE, 'S'),
        (flags::OUTSIDE_GRID, 'G'),
    ] {
        if f & bit != 0 {
            s.push(letter);
        }
    }
    if s.is_empty() { "-".into() } else { s }
}

/// Flag names for JSON.
pub(crate) fn flag_names(f: u32) -> Vec<&'static str> {
    [
        (flags::APPROXIMATE, "approximate"),
        (flags::BEYOND_SOURCE, "beyond_source"),
        (flags::OUTSIDE_GRID, "outside_grid"),
    ]
    .into_iter()
    .filter(|(bit, _)| f & bit != 0)
    .map(|(_, n)| n)
    .collect()
}

/// The legend line printed under tables with a flags column, when any flag is set.
pub(crate) fn flag_legend(any: u32) -> Option<String> {
    (any != 0).then(|| {
        "flags: A approximate data (formula estimate), S outside the source data range \
         (scaled extrapolation), G outside the table grid (extrapolated)\n"
            .to_string()
    })
}

/// Cautions as "caution: ..." lines, without repeats.
pub(crate) fn caution_lines<'a>(cautions: impl IntoIterator<Item = &'a String>) -> String {
    let mut seen: Vec<&String> = Vec::new();
    let mut out = String::new();
    for c in cautions {
        if !seen.contains(&c) {
            seen.push(c);
            let _ = writeln!(out, "caution: {c}");
        }
    }
    out
}

/// A value in scientific notation with 6 significant digits.
pub(crate) fn sci(v: f64) -> String {
    format!("{v:.5e}")
}

/// `v` to `digits` significant digits with no trailing zeros: plain between 1e-3 and 1e6,
/// scientific outside (`2.08e-6`); exactly 0 as `0`.
pub(crate) fn sig(v: f64, digits: usize) -> String {
    let digits = digits.max(1);
    if v == 0.0 || !v.is_finite() {
        return v.to_string();
    }
    let magnitude = v.abs().log10().floor() as i32;
    if (-3..6).contains(&magnitude) {
        let decimals = (digits as i32 - 1 - magnitude).max(0) as usize;
        let text = format!("{v:.decimals$}");
        if text.contains('.') {
            text.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            text
        }
    } else {
        let text = format!("{v:.prec$e}", prec = digits - 1);
        match text.split_once('e') {
            Some((mantissa, exponent)) if mantissa.contains('.') => {
                format!(
                    "{}e{exponent}",
                    mantissa.trim_end_matches('0').trim_end_matches('.')
                )
            }
            _ => text,
        }
    }
}

/// `-` for a value the data do not give (stored as 0), else `shown(v)`.
pub(crate) fn given(v: f64, shown: impl Fn(f64) -> String) -> String {
    if v == 0.0 { "-".into() } else { shown(v) }
}

/// Pretty JSON text with a final newline.
pub(crate) fn json_text(v: &Value) -> String {
    let mut s = serde_json::to_string_pretty(v).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_are_aligned_and_numbers_right_justified() {
        let mut t = Table::new(&["name", "value"]);
        t.row(vec!["a".into(), "1.5".into()]);
        t.row(vec!["longer".into(), "-12.25".into()]);
        assert_eq!(t.render(), "name     value\na          1.5\nlonger  -12.25\n");
    }

    #[test]
    fn numbers_show_the_digits_that_mean_something() {
        assert_eq!(sig(15316.2, 7), "15316.2");
        assert_eq!(sig(1.898_972_600_123, 4), "1.899");
        assert_eq!(sig(2.08e-6, 3), "2.08e-6");
        assert_eq!(sig(1.27, 3), "1.27");
        assert_eq!(sig(1.0e9, 4), "1e9");
        assert_eq!(sig(147.999_999_9, 4), "148");
        assert_eq!(sig(0.001, 4), "0.001");
        assert_eq!(sig(0.0, 4), "0");
        assert_eq!(given(0.0, |v| sig(v, 3)), "-");
        assert_eq!(given(0.1, |v| sig(v, 3)), "0.1");
    }

    #[test]
    fn flags_become_letters_names_and_a_legend() {
        assert_eq!(flag_letters(0), "-");
        assert_eq!(flag_letters(flags::APPROXIMATE | flags::OUTSIDE_GRID), "AG");
        assert_eq!(flag_names(flags::BEYOND_SOURCE), vec!["beyond_source"]);
        assert!(flag_legend(0).is_none());
        assert!(
            flag_legend(2)
                .unwrap()
                .contains("S outside the source data range")
        );
    }

    #[test]
    fn stamp_and_cautions_are_shown_in_full() {
        let s = pb::DatasetStamp {
            id: "demo".into(),
            version: "1.0.0".into(),
            content_hash: "ab".repeat(32),
            ..Default::default()
        };
        assert_eq!(
            stamp_line(&s),
            format!(
                "dataset demo version 1.0.0  content hash {}  tables digest -\n",
                "ab".repeat(32)
            )
        );
        let with_digest = pb::DatasetStamp {
            tables_digest: "cd".repeat(32),
            ..s.clone()
        };
        assert!(stamp_line(&with_digest).ends_with(&format!("  tables digest {}\n", "cd".repeat(32))));
        assert_eq!(stamp_json(&s)["label"], "demo@1.0.0");
        let c = vec!["x".to_string(), "y".to_string(), "x".to_string()];
        assert_eq!(caution_lines(&c), "caution: x\ncaution: y\n");
        assert_eq!(sci(1.234567e-8), "1.23457e-8");
    }
}
