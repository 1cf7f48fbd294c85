//! Typed reading of a parsed TOML tree that records every problem instead of stopping at the
//! first: each read returns `None` and files a [`Problem`] when a key is missing or has the
//! wrong type, and [`TableReader::finish`] reports keys the format does not know.

use std::ops::Range;

use toml::Spanned;
use toml::de::{DeTable, DeValue};

use super::error::Problem;
use super::lines::LineIndex;

/// Where a value sits: its 1-based line and its field path.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Loc {
    pub(crate) line: usize,
    pub(crate) field: String,
}

/// A value read from a file together with its location.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Val<T> {
    pub(crate) value: T,
    pub(crate) loc: Loc,
}

/// Collects the problems of one file.
#[derive(Debug)]
pub(crate) struct Sink<'t> {
    file: String,
    text: &'t str,
    lines: LineIndex,
    problems: Vec<Problem>,
}

impl<'t> Sink<'t> {
    pub(crate) fn new(file: &str, text: &'t str) -> Self {
        Sink {
            file: file.to_string(),
            text,
            lines: LineIndex::new(text),
            problems: Vec::new(),
        }
    }

    pub(crate) fn line_of(&self, span: &Range<usize>) -> usize {
        self.lines.line(span.start)
    }

    /// The source text of a span, shortened for messages.
    pub(crate) fn snippet(&self, span: &Range<usize>) -> String {
        let raw = self.text.get(span.clone()).unwrap_or("");
        let one_line = raw.lines().next().unwrap_or("");
        if one_line.chars().count() > 40 || one_line.len() < raw.len() {
            format!("{}...", one_line.chars().take(40).collect::<String>())
        } else {
            one_line.to_string()
        }
    }

    pub(crate) fn report(&mut self, loc: &Loc, message: impl Into<String>) {
        self.report_line(Some(loc.line), loc.field.clone(), message);
    }

    pub(crate) fn report_line(
        &mut self,
        line: Option<usize>,
        field: impl Into<String>,
        message: impl Into<String>,
    ) {
        self.problems.push(Problem {
            file: self.file.clone(),
            line,
            field: field.into(),
            message: message.into(),
        });
    }

    pub(crate) fn has_problems(&self) -> bool {
        !self.problems.is_empty()
    }

    pub(crate) fn into_problems(self) -> Vec<Problem> {
        self.problems
    }
}

/// Reads the keys of one table, remembering which keys the format knows.
pub(crate) struct TableReader<'a, 'i> {
    table: &'a DeTable<'i>,
    path: String,
    line: usize,
    known: Vec<&'static str>,
}

impl<'a, 'i> TableReader<'a, 'i> {
    /// `path` is the field path of the table itself (empty for the document root).
    pub(crate) fn new(table: &'a DeTable<'i>, path: String, line: usize) -> Self {
        TableReader {
            table,
            path,
            line,
            known: Vec::new(),
        }
    }

    /// Location of the table header (used for missing keys).
    pub(crate) fn loc(&self) -> Loc {
        Loc {
            line: self.line,
            field: self.path.clone(),
        }
    }

    pub(crate) fn field(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{key}", self.path)
        }
    }

    /// True when `key` is present, whatever its value (marks the key as known).
    pub(crate) fn has(&mut self, key: &'static str) -> bool {
        self.get(key).is_some()
    }

    fn get(&mut self, key: &'static str) -> Option<&'a Spanned<DeValue<'i>>> {
        self.known.push(key);
        self.table.get(key)
    }

    fn missing(&self, sink: &mut Sink<'_>, key: &str, what: &str) {
        let place = if self.path.is_empty() {
            "the file".to_string()
        } else {
            format!("[{}]", self.path)
        };
        sink.report_line(
            Some(self.line),
            self.field(key),
            format!("missing: {place} needs `{key}`, {what}"),
        );
    }

    fn wrong_type(&self, sink: &mut Sink<'_>, key: &str, value: &Spanned<DeValue<'_>>, what: &str) {
        let line = sink.line_of(&value.span());
        let text = sink.snippet(&value.span());
        sink.report_line(
            Some(line),
            self.field(key),
            format!("got {text} (a {}), must be {what}", value.get_ref().type_str()),
        );
    }

    /// A string value.
    pub(crate) fn text(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<Val<String>> {
        let value = match self.get(key) {
            Some(v) => v,
            None => {
                if required {
                    self.missing(sink, key, "a string");
                }
                return None;
            }
        };
        match value.get_ref() {
            DeValue::String(s) => Some(Val {
                value: s.to_string(),
                loc: Loc {
                    line: sink.line_of(&value.span()),
                    field: self.field(key),
                },
            }),
            _ => {
                self.wrong_type(sink, key, value, "a string");
                None
            }
        }
    }

    /// A number (integer or float), as f64.
    pub(crate) fn number(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<Val<f64>> {
        let field = self.field(key);
        match self.get(key) {
            Some(value) => read_number(sink, value, field),
            None => {
                if required {
                    self.missing(sink, key, "a number");
                }
                None
            }
        }
    }

    /// A whole number, as i64.
    pub(crate) fn whole(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<Val<i64>> {
        let value = match self.get(key) {
            Some(v) => v,
            None => {
                if required {
                    self.missing(sink, key, "a whole number");
                }
                return None;
            }
        };
        let loc = Loc {
            line: sink.line_of(&value.span()),
            field: self.field(key),
        };
        match value.get_ref() {
            DeValue::Integer(i) => match i64::from_str_radix(i.as_str(), i.radix()) {
                Ok(v) => Some(Val { value: v, loc }),
                Err(_) => {
                    let text = sink.snippet(&value.span());
                    sink.report(
                        &loc,
                        format!(
                            "got {text}, must be a whole number between {} and {}",
                            i64::MIN,
                            i64::MAX
                        ),
                    );
                    None
                }
            },
            _ => {
                self.wrong_type(sink, key, value, "a whole number");
                None
            }
        }
    }

    /// An array of numbers; each element keeps its own location.
    pub(crate) fn numbers(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<Val<Vec<Val<f64>>>> {
        let field = self.field(key);
        let array = self.array(sink, key, required, "an array of numbers")?;
        let mut out = Vec::with_capacity(array.value.len());
        let mut ok = true;
        for (i, element) in array.value.iter().enumerate() {
            match read_number(sink, element, format!("{field}[{i}]")) {
                Some(v) => out.push(v),
                None => ok = false,
            }
        }
        ok.then_some(Val {
            value: out,
            loc: array.loc,
        })
    }

    /// An array of strings; each element keeps its own location.
    pub(crate) fn texts(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<Val<Vec<Val<String>>>> {
        let field = self.field(key);
        let array = self.array(sink, key, required, "an array of strings")?;
        let mut out = Vec::with_capacity(array.value.len());
        let mut ok = true;
        for (i, element) in array.value.iter().enumerate() {
            let loc = Loc {
                line: sink.line_of(&element.span()),
                field: format!("{field}[{i}]"),
            };
            match element.get_ref() {
                DeValue::String(s) => out.push(Val {
                    value: s.to_string(),
                    loc,
                }),
                other => {
                    let text = sink.snippet(&element.span());
                    sink.report(
                        &loc,
                        format!("got {text} (a {}), must be a string", other.type_str()),
                    );
                    ok = false;
                }
            }
        }
        ok.then_some(Val {
            value: out,
            loc: array.loc,
        })
    }

    fn array(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
        what: &str,
    ) -> Option<Val<&'a [Spanned<DeValue<'i>>]>> {
        let value = match self.get(key) {
            Some(v) => v,
            None => {
                if required {
                    self.missing(sink, key, what);
                }
                return None;
            }
        };
        match value.get_ref() {
            DeValue::Array(a) => Some(Val {
                value: a.as_ref(),
                loc: Loc {
                    line: sink.line_of(&value.span()),
                    field: self.field(key),
                },
            }),
            _ => {
                self.wrong_type(sink, key, value, what);
                None
            }
        }
    }

    /// A sub-table, returned as a reader of its own.
    pub(crate) fn table(
        &mut self,
        sink: &mut Sink<'_>,
        key: &'static str,
        required: bool,
    ) -> Option<TableReader<'a, 'i>> {
        let value = match self.get(key) {
            Some(v) => v,
            None => {
                if required {
                    self.missing(sink, key, "a table");
                }
                return None;
            }
        };
        match value.get_ref() {
            DeValue::Table(t) => Some(TableReader::new(t, self.field(key), sink.line_of(&value.span()))),
            _ => {
                self.wrong_type(sink, key, value, "a table");
                None
            }
        }
    }

    /// An array of tables (`[[key]]` blocks or an inline array of tables), one reader each.
    pub(crate) fn tables(&mut self, sink: &mut Sink<'_>, key: &'static str) -> Vec<TableReader<'a, 'i>> {
        let field = self.field(key);
        let Some(array) = self.array(sink, key, false, "an array of tables") else {
            return Vec::new();
        };
        let mut out = Vec::with_capacity(array.value.len());
        for (i, element) in array.value.iter().enumerate() {
            let path = format!("{field}[{i}]");
            let line = sink.line_of(&element.span());
            match element.get_ref() {
                DeValue::Table(t) => out.push(TableReader::new(t, path, line)),
                other => {
                    let text = sink.snippet(&element.span());
                    sink.report_line(
                        Some(line),
                        path,
                        format!("got {text} (a {}), must be a table", other.type_str()),
                    );
                }
            }
        }
        out
    }

    /// Every key with a string value, for free-form tables such as `[sources]`.
    pub(crate) fn string_entries(self, sink: &mut Sink<'_>) -> Vec<(Val<String>, Val<String>)> {
        let mut out = Vec::new();
        for (key, value) in self.table.iter() {
            let name = key.get_ref().to_string();
            let field = self.field(&name);
            let key_loc = Loc {
                line: sink.line_of(&key.span()),
                field: field.clone(),
            };
            match value.get_ref() {
                DeValue::String(s) => out.push((
                    Val {
                        value: name,
                        loc: key_loc,
                    },
                    Val {
                        value: s.to_string(),
                        loc: Loc {
                            line: sink.line_of(&value.span()),
                            field,
                        },
                    },
                )),
                other => {
                    let text = sink.snippet(&value.span());
                    sink.report(
                        &key_loc,
                        format!("got {text} (a {}), must be a string", other.type_str()),
                    );
                }
            }
        }
        out
    }

    /// Report every key that no read asked for.
    pub(crate) fn finish(self, sink: &mut Sink<'_>) {
        for (key, _) in self.table.iter() {
            let name: &str = key.get_ref();
            if !self.known.contains(&name) {
                let mut allowed = self.known.clone();
                allowed.sort_unstable();
                allowed.dedup();
                let line = sink.line_of(&key.span());
                sink.report_line(
                    Some(line),
                    self.field(name),
                    format!("unknown key `{name}`; allowed here: {}", allowed.join(", ")),
                );
            }
        }
    }
}

fn read_number(sink: &mut Sink<'_>, value: &Spanned<DeValue<'_>>, field: String) -> Option<Val<f64>> {
    let loc = Loc {
        line: sink.line_of(&value.span()),
        field,
    };
    let parsed = match value.get_ref() {
        DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix()).ok().map(|v| v as f64),
        DeValue::Float(f) => f.as_str().parse::<f64>().ok(),
        other => {
            let text = sink.snippet(&value.span());
            sink.report(
                &loc,
                format!("got {text} (a {}), must be a number", other.type_str()),
            );
            return None;
        }
    };
    match parsed {
        // -0.0 is stored as 0.0 so that the canonical form has one zero.
        Some(v) => Some(Val {
            value: if v == 0.0 { 0.0 } else { v },
            loc,
        }),
        None => {
            let text = sink.snippet(&value.span());
            sink.report(
                &loc,
                format!("got {text}, must be a number that fits a 64-bit float"),
            );
            None
        }
    }
}
