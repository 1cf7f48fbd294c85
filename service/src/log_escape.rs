//! Log lines that stay one line: a writer for the log subscriber that escapes every control
//! character (newline, carriage return, escape, the C1 controls, line and paragraph
//! separators) inside an event, keeping only the newline that ends it. Values from requests or
//! dataset files logged with `%` then cannot forge extra lines or terminal sequences, whatever
//! the format (JSON lines are already escaped and pass unchanged).

use std::io::{self, Write};
use tracing_subscriber::fmt::MakeWriter;

/// Wraps a [`MakeWriter`] so each event it writes is escaped by [`escape_event`].
#[derive(Debug, Clone, Copy)]
pub struct Escaping<M>(pub M);

impl<'a, M: MakeWriter<'a>> MakeWriter<'a> for Escaping<M> {
    type Writer = EscapingWriter<M::Writer>;

    fn make_writer(&'a self) -> Self::Writer {
        EscapingWriter(self.0.make_writer())
    }
}

/// The writer [`Escaping`] hands out.
#[derive(Debug)]
pub struct EscapingWriter<W>(W);

impl<W: Write> Write for EscapingWriter<W> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.write_all(buf)?;
        Ok(buf.len())
    }

    fn write_all(&mut self, buf: &[u8]) -> io::Result<()> {
        self.0.write_all(escape_event(buf).as_bytes())
    }

    fn flush(&mut self) -> io::Result<()> {
        self.0.flush()
    }
}

/// One formatted event with its control characters escaped, ending in one newline if it ended
/// in one.
pub fn escape_event(event: &[u8]) -> String {
    let text = String::from_utf8_lossy(event);
    let (body, end) = match text.strip_suffix('\n') {
        Some(body) => (body, "\n"),
        None => (&*text, ""),
    };
    let mut out = String::with_capacity(body.len() + 1);
    for c in body.chars() {
        if c.is_control() || c == '\u{2028}' || c == '\u{2029}' {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    out.push_str(end);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_injected_line_stays_on_the_event_line() {
        let event = b"WARN refused species=\"Mk\nINFO forged line\" \x1b[2J\r\n";
        let out = escape_event(event);
        assert_eq!(out.matches('\n').count(), 1, "{out}");
        assert!(out.ends_with('\n'));
        assert!(out.contains("Mk\\nINFO forged line"), "{out}");
        assert!(out.contains("\\u{1b}[2J\\r"), "{out}");
        assert_eq!(escape_event(b"plain line\n"), "plain line\n");
        assert!(escape_event("x\u{85}y\u{2028}z".as_bytes()).contains("\\u{85}y\\u{2028}z"));
    }
}
