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
