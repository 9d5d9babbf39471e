//! Byte offsets to 1-based lines and Unicode-code-point columns.
//!
//! Only `\n`, `\r\n` and `\r` break lines, as in the LSP (a form feed or U+2028 does not).

use crate::model::Span;

pub struct LineIndex<'t> {
    text: &'t str,
    starts: Vec<usize>,
}

impl<'t> LineIndex<'t> {
    pub fn new(text: &'t str) -> Self {
        let b = text.as_bytes();
        let mut starts = vec![0];
        let mut i = 0;
        while i < b.len() {
            match b[i] {
                b'\n' => starts.push(i + 1),
                b'\r' if b.get(i + 1) == Some(&b'\n') => {
                    starts.push(i + 2);
                    i += 1;
                }
                b'\r' => starts.push(i + 1),
                _ => {}
            }
            i += 1;
        }
        LineIndex { text, starts }
    }

    /// (line, column), both 1-based; the column counts code points.
    pub fn line_col(&self, offset: usize) -> (u32, u32) {
        let offset = offset.min(self.text.len());
        let line = match self.starts.binary_search(&offset) {
            Ok(l) => l,
            Err(l) => l - 1,
        };
        let start = self.starts[line];
        let mut end = offset;
        while end > start && !self.text.is_char_boundary(end) {
            end -= 1;
        }
        let col = self.text[start..end].chars().count();
        (line as u32 + 1, col as u32 + 1)
    }

    pub fn span(&self, file: &str, start: usize, end: usize) -> Span {
        let (line, column) = self.line_col(start);
        let (end_line, end_column) = self.line_col(end.max(start));
        Span {
            file: file.to_string(),
            start,
            end: end.max(start),
            line,
            column,
            end_line,
            end_column,
        }
    }

    /// Byte offset of the start of a 1-based line.
    pub fn line_start(&self, line: u32) -> usize {
        self.starts
            .get(line.saturating_sub(1) as usize)
            .copied()
            .unwrap_or(self.text.len())
    }

    pub fn line_count(&self) -> usize {
        self.starts.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lsp_line_breaks_only() {
        let t = "a\r\nb\rc\nd\u{000C}e\u{2028}f";
        let ix = LineIndex::new(t);
        assert_eq!(ix.line_col(0), (1, 1));
        assert_eq!(ix.line_col(3), (2, 1));
        assert_eq!(ix.line_col(5), (3, 1));
        assert_eq!(ix.line_col(7), (4, 1));
        // form feed and U+2028 stay on line 4; columns count code points
        let f = t.find('f').unwrap();
        assert_eq!(ix.line_col(f), (4, 5));
    }
}
