//! Where things are in a model file: byte offsets to line and column.

use std::ops::Range;
use std::path::{Path, PathBuf};

use super::ModelError;

/// Model text with its file name, for locating fields in messages.
#[derive(Debug)]
pub struct Source<'a> {
    file: PathBuf,
    text: &'a str,
}

impl<'a> Source<'a> {
    /// Wraps the text of `file`.
    pub fn new(file: &Path, text: &'a str) -> Self {
        Source {
            file: file.to_path_buf(),
            text,
        }
    }

    /// The file name.
    pub fn file(&self) -> PathBuf {
        self.file.clone()
    }

    /// 1-based line and column of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let before = &self.text[..offset];
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let column = before[line_start..].chars().count() + 1;
        (line, column)
    }

    /// Line and column of `key = …` inside the table spanning `span`, or of the
    /// table itself when the key is not written there (a missing field).
    pub fn locate(&self, span: &Range<usize>, key: &str) -> (usize, usize) {
        let end = span.end.min(self.text.len());
        let start = span.start.min(end);
        let body = &self.text[start..end];
        let mut search = 0;
        while let Some(found) = body[search..].find(key) {
            let at = search + found;
            let before_ok = body[..at]
                .chars()
                .next_back()
                .is_none_or(|c| c.is_whitespace() || c == '{' || c == ',' || c == '.');
            let after = body[at + key.len()..].trim_start_matches([' ', '\t']);
            if before_ok && after.starts_with('=') {
                return self.line_col(start + at);
            }
            search = at + key.len();
        }
        self.line_col(start)
    }

    /// Converts a TOML reader error into a located [`ModelError::Syntax`].
    pub fn syntax_error(&self, err: &toml::de::Error) -> ModelError {
        let (line, column) = err.span().map_or((1, 1), |s| self.line_col(s.start));
        ModelError::Syntax {
            file: self.file(),
            line,
            column,
            message: err.message().trim().to_string(),
        }
    }

    /// An [`ModelError::Invalid`] at `key` inside `span`.
    pub fn invalid(
        &self,
        span: &Range<usize>,
        key: &str,
        field: String,
        problem: String,
        fix: &str,
    ) -> ModelError {
        let (line, column) = self.locate(span, key);
        ModelError::Invalid {
            file: self.file(),
            line,
            column,
            field,
            problem,
            fix: fix.to_string(),
        }
    }
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
}
