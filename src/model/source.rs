//! Where things are in a model file: byte offsets to line and column.

use std::ops::Range;
use std::path::{Path, PathBuf};

use super::ModelError;

/// Model text with its file name, for locating fields in messages.
#[derive(Debug)]
pub struct Source<'a> {
    file: PathBuf,
    text: &'a str,
    /// Byte offset of the start of each line, so that a location is found by
    /// a binary search, not a scan of the text before it.
    line_starts: Vec<usize>,
}

impl<'a> Source<'a> {
    /// Wraps the text of `file`.
    pub fn new(file: &Path, text: &'a str) -> Self {
        let line_starts = std::iter::once(0).chain(text.match_indices('\n').map(|(i, _)| i + 1)).collect();
        Source { file: file.to_path_buf(), text, line_starts }
    }

    /// The text.
    pub fn text(&self) -> &str {
        self.text
    }

    /// The file name.
    pub fn file(&self) -> PathBuf {
        self.file.clone()
    }

    /// 1-based line and column of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let line = self.line_starts.partition_point(|&s| s <= offset);
        let line_start = self.line_starts[line - 1];
        let column = self.text[line_start..offset].chars().count() + 1;
        (line, column)
    }

    /// End of the table whose span (as toml reports it: the header only, for
    /// `[table]` and `[[array]]`) is `span`: the start of the next header line.
    fn table_end(&self, span: &Range<usize>) -> usize {
        let end = span.end.min(self.text.len());
        if !self.text[span.start.min(end)..end].starts_with('[') {
            return end;
        }
        let mut offset = end;
        for line in self.text[end..].split_inclusive('\n') {
            if offset > end && is_header(line) {
                return offset;
            }
            offset += line.len();
        }
        self.text.len()
    }

    /// Line and column of `key = …` inside the table spanning `span`, or of the
    /// table itself when the key is not written there (a missing field).
    pub fn locate(&self, span: &Range<usize>, key: &str) -> (usize, usize) {
        let end = self.table_end(span);
        let start = span.start.min(end);
        let body = &self.text[start..end];
        let mut search = 0;
        while let Some(found) = body[search..].find(key) {
            let at = search + found;
            let before_ok =
                body[..at].chars().next_back().is_none_or(|c| c.is_whitespace() || c == '{' || c == ',' || c == '.');
            let after = body[at + key.len()..].trim_start_matches([' ', '\t']);
            if before_ok && after.starts_with('=') {
                return self.line_col(start + at);
            }
            search = at + key.len();
        }
        self.line_col(start)
    }

    /// Converts a TOML reader error into a located [`ModelError::Syntax`].
    /// The key is named where the reader's message does not, and Rust type
    /// names are put in words.
    pub fn syntax_error(&self, err: &toml::de::Error) -> ModelError {
        let start = err.span().map_or(0, |s| s.start);
        let (line, column) = self.line_col(start);
        let mut message = err
            .message()
            .trim()
            .replace("expected f64", "expected a number")
            .replace("expected i64", "expected a whole number")
            .replace("expected u64", "expected a whole number >= 0");
        let line_text = self.text.lines().nth(line.saturating_sub(1)).unwrap_or("");
        if let Some((key, _)) = line_text.split_once('=') {
            let key = key.trim();
            if column > key.len() && !key.starts_with('[') && !message.contains(&format!("`{key}`")) {
                message = format!("`{key}`: {message}");
            }
        }
        if message == "duplicate key" {
            let key = line_text.split_once('=').map_or(line_text, |(k, _)| k).trim();
            message = format!("duplicate key `{key}`; keep one `{key} = ...` in this table");
        } else if message.contains("invalid type") {
            message.push_str("; write a number without quotes, text in quotes");
        }
        if message.starts_with("missing field") {
            let table = line_text.trim();
            if table.starts_with('[') {
                message.push_str(&format!(" in `{table}`; add it to that table"));
            } else {
                message.push_str("; add it to the file");
            }
        }
        ModelError::Syntax { file: self.file(), line, column, message }
    }

    /// An [`ModelError::Invalid`] at `key` inside `span`.
    pub fn invalid(&self, span: &Range<usize>, key: &str, field: String, problem: String, fix: &str) -> ModelError {
        let (line, column) = self.locate(span, key);
        ModelError::Invalid { file: self.file(), line, column, field, problem, fix: fix.to_string() }
    }
}

/// True for a `[table]` or `[[array.of.tables]]` header line (not a row of a
/// multi-line array such as `[0.0, 1.0],`).
fn is_header(line: &str) -> bool {
    let code = line.split('#').next().unwrap_or("").trim();
    let inner = code.trim_start_matches('[').trim_end_matches(']');
    code.starts_with('[')
        && code.ends_with(']')
        && !inner.contains(',')
        && inner.chars().next().is_some_and(|c| c.is_alphabetic() || c == '"' || c == '\'' || c == '_')
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_col_counts_from_one() {
        let s = Source::new(Path::new("m.toml"), "a = 1\nbb = 2\n");
        assert_eq!(s.line_col(0), (1, 1));
        assert_eq!(s.line_col(6), (2, 1));
        assert_eq!(s.line_col(9), (2, 4));
    }

    #[test]
    fn locate_finds_key_not_prefix() {
        let text = "[gene]\nproduction_x = 3\nproduction = 2\n";
        let s = Source::new(Path::new("m.toml"), text);
        assert_eq!(s.locate(&(0..text.len()), "production"), (3, 1));
    }

    #[test]
    fn locate_searches_from_header_to_next_header() {
        let text = "[[gene]]\nname = \"a\"\nv = [\n  [0.0, 1.0],\n]\ndecay = 1\n[[gene]]\ndecay = 2\n";
        let s = Source::new(Path::new("m.toml"), text);
        assert_eq!(s.locate(&(0..8), "decay"), (6, 1));
        // A key missing from the first table is not found in the second.
        assert_eq!(s.locate(&(0..8), "bias"), (1, 1));
        let second = text.rfind("[[gene]]").unwrap();
        assert_eq!(s.locate(&(second..second + 8), "decay"), (8, 1));
    }
}
