//! Byte offset to 1-based line number, for locating problems in a file's text.

/// Start offsets of every line of a text.
#[derive(Debug)]
pub(crate) struct LineIndex {
    starts: Vec<usize>,
}

impl LineIndex {
    /// Index the line starts of `text`.
    pub(crate) fn new(text: &str) -> Self {
        let mut starts = vec![0];
        starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        LineIndex { starts }
    }

    /// 1-based line holding byte `offset` (offsets past the end give the last line).
    pub(crate) fn line(&self, offset: usize) -> usize {
        self.starts.partition_point(|&s| s <= offset).max(1)
    }
}

#[cfg(test)]
mod tests {
    use super::LineIndex;

    #[test]
    fn offsets_map_to_lines() {
        // common practice, no source: line numbers count from 1, a newline ends its line
        let idx = LineIndex::new("ab\ncd\n\nef");
        assert_eq!(idx.line(0), 1);
        assert_eq!(idx.line(2), 1);
        assert_eq!(idx.line(3), 2);
        assert_eq!(idx.line(6), 3);
        assert_eq!(idx.line(7), 4);
        assert_eq!(idx.line(100), 4);
    }
}
