//! Document text in ropey, LSP positions in the negotiated encoding, and an edit log that maps
//! byte offsets of an older text (the one a model was parsed from) onto the current text.
//!
//! ropey is built with `default-features = false, features = ["simd", "cr_lines"]`, so only
//! `\n`, `\r\n` and `\r` end a line, exactly as the LSP specifies (a form feed or U+2028 does
//! not).

use ropey::Rope;
use tower_lsp::lsp_types::{Position, TextDocumentContentChangeEvent};

/// How `Position.character` counts: negotiated at `initialize`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Encoding {
    Utf8,
    Utf16,
}

/// One replacement, in byte offsets of the text just before it. `seq` numbers the edits of one
/// file; a model parsed from the text at `seq = s` is mapped forward through the edits `> s`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Edit {
    pub seq: u64,
    pub start: usize,
    pub old_end: usize,
    pub new_len: usize,
    /// The whole text was replaced (full sync, a file re-read from disk): offsets from before
    /// cannot be mapped.
    pub whole: bool,
}

/// Char index just past the content of `line` (before its line break).
fn line_content_end(rope: &Rope, line: usize) -> usize {
    let next = if line + 1 < rope.len_lines() {
        rope.line_to_char(line + 1)
    } else {
        rope.len_chars()
    };
    let start = rope.line_to_char(line);
    let mut end = next;
    if end > start && rope.char(end - 1) == '\n' {
        end -= 1;
    }
    if end > start && rope.char(end - 1) == '\r' {
        end -= 1;
    }
    end
}

/// An LSP position to a char index. A character past the end of the line means the line's
/// end; a line past the end of the text means the end of the text (LSP spec, "Position").
pub fn position_to_char(rope: &Rope, pos: Position, enc: Encoding) -> usize {
    let line = pos.line as usize;
    if line >= rope.len_lines() {
        return rope.len_chars();
    }
    let start = rope.line_to_char(line);
    let end = line_content_end(rope, line);
    let want = pos.character as usize;
    match enc {
        Encoding::Utf16 => {
            let s = rope.char_to_utf16_cu(start);
            let e = rope.char_to_utf16_cu(end);
            // inside a surrogate pair: ropey rounds down to the char holding it
            rope.utf16_cu_to_char((s + want).min(e))
        }
        Encoding::Utf8 => {
            let s = rope.char_to_byte(start);
            let e = rope.char_to_byte(end);
            rope.byte_to_char((s + want).min(e))
        }
    }
}

pub fn char_to_position(rope: &Rope, ch: usize, enc: Encoding) -> Position {
    let ch = ch.min(rope.len_chars());
    let line = rope.char_to_line(ch);
    let start = rope.line_to_char(line);
    let character = match enc {
        Encoding::Utf16 => rope.char_to_utf16_cu(ch) - rope.char_to_utf16_cu(start),
        Encoding::Utf8 => rope.char_to_byte(ch) - rope.char_to_byte(start),
    };
    Position {
        line: line as u32,
        character: character as u32,
    }
}

/// A byte offset (rounded down to a char boundary, clamped to the text) to a position.
pub fn byte_to_position(rope: &Rope, byte: usize, enc: Encoding) -> Position {
    let b = byte.min(rope.len_bytes());
    char_to_position(rope, rope.byte_to_char(b), enc)
}

/// 1-based line and code-point column (as in `Span`) to a position, clamped to the text.
pub fn line_col_to_position(rope: &Rope, line: u32, column: u32, enc: Encoding) -> Position {
    let l = line.saturating_sub(1) as usize;
    if l >= rope.len_lines() {
        return char_to_position(rope, rope.len_chars(), enc);
    }
    let start = rope.line_to_char(l);
    let end = line_content_end(rope, l);
    let ch = (start + column.saturating_sub(1) as usize).min(end);
    char_to_position(rope, ch, enc)
}

/// Apply one `contentChanges` entry; returns the edit for the log. Positions past the end are
/// clamped (LSP spec, "Position"); a range given end first is taken as the range between.
pub fn apply_change(
    rope: &mut Rope,
    change: &TextDocumentContentChangeEvent,
    enc: Encoding,
    seq: u64,
) -> Edit {
    match change.range {
        Some(r) => {
            let a = position_to_char(rope, r.start, enc);
            let b = position_to_char(rope, r.end, enc);
            let (a, b) = if a <= b { (a, b) } else { (b, a) };
            let start = rope.char_to_byte(a);
            let old_end = rope.char_to_byte(b);
            rope.remove(a..b);
            rope.insert(a, &change.text);
            Edit {
                seq,
                start,
                old_end,
                new_len: change.text.len(),
                whole: false,
            }
        }
        None => {
            let old = rope.len_bytes();
            *rope = Rope::from_str(&change.text);
            Edit {
                seq,
                start: 0,
                old_end: old,
                new_len: change.text.len(),
                whole: true,
            }
        }
    }
}

/// Which end of a span an offset is: decides where an offset at an edit boundary goes.
#[derive(Clone, Copy, PartialEq, Eq)]
pub enum Bias {
    Start,
    End,
}

/// Map a byte offset of the text at `since` through the later edits. `None` when a later
/// edit replaced the whole text.
pub fn map_offset(edits: &[Edit], since: u64, off: usize, bias: Bias) -> Option<usize> {
    let mut o = off;
    for e in edits.iter().filter(|e| e.seq > since) {
        if e.whole {
            return None;
        }
        o = if o < e.start {
            o
        } else if o > e.old_end {
            o - (e.old_end - e.start) + e.new_len
        } else if e.start == e.old_end {
            // a pure insertion exactly at the offset: a span starting here moves right with
            // its text, a span ending here does not grow
            if bias == Bias::Start {
                o + e.new_len
            } else {
                o
            }
        } else if o == e.start {
            o
        } else {
            // inside the replaced range or at its end: just past the new text
            e.start + e.new_len
        };
    }
    Some(o)
}

/// Whether any edit after `since` exists.
pub fn edited_since(edits: &[Edit], since: u64) -> bool {
    edits.iter().any(|e| e.seq > since)
}

/// The identifier (letters, digits, `_`, `$`) touching a char index, as a char range.
pub fn word_at(rope: &Rope, ch: usize) -> Option<(usize, usize)> {
    let is_word = |c: char| c.is_alphanumeric() || c == '_' || c == '$';
    let n = rope.len_chars();
    let ch = ch.min(n);
    let mut s = ch;
    while s > 0 && is_word(rope.char(s - 1)) {
        s -= 1;
    }
    let mut e = ch;
    while e < n && is_word(rope.char(e)) {
        e += 1;
    }
    if s == e || rope.char(s).is_ascii_digit() {
        return None;
    }
    Some((s, e))
}

#[cfg(test)]
mod tests {
    use super::*;
    use tower_lsp::lsp_types::Range;

    fn change(sl: u32, sc: u32, el: u32, ec: u32, text: &str) -> TextDocumentContentChangeEvent {
        TextDocumentContentChangeEvent {
            range: Some(Range {
                start: Position::new(sl, sc),
                end: Position::new(el, ec),
            }),
            range_length: None,
            text: text.into(),
        }
    }

    #[test]
    fn only_lsp_line_breaks() {
        // LSP spec, "Text Documents": EOL is \n, \r\n or \r; form feed and U+2028 are text
        let r = Rope::from_str("a\u{000C}b\u{2028}c\r\nd\re\nf");
        assert_eq!(r.len_lines(), 4);
        assert_eq!(
            char_to_position(&r, r.len_chars() - 1, Encoding::Utf16),
            Position::new(3, 0)
        );
        assert_eq!(
            position_to_char(&r, Position::new(0, 99), Encoding::Utf16),
            5
        );
        // before \r\n
    }

    #[test]
    fn utf16_and_utf8_columns() {
        // "é" is 1 UTF-16 unit and 2 UTF-8 bytes; "𝄞" is 2 UTF-16 units and 4 bytes
        let r = Rope::from_str("é𝄞x\n");
        let x = 2; // char index of 'x'
        assert_eq!(
            char_to_position(&r, x, Encoding::Utf16),
            Position::new(0, 3)
        );
        assert_eq!(char_to_position(&r, x, Encoding::Utf8), Position::new(0, 6));
        assert_eq!(
            position_to_char(&r, Position::new(0, 3), Encoding::Utf16),
            x
        );
        assert_eq!(position_to_char(&r, Position::new(0, 6), Encoding::Utf8), x);
    }

    #[test]
    fn incremental_changes_and_offset_mapping() {
        let mut r = Rope::from_str("module m;\nreg q;\nendmodule\n");
        let q = r.to_string().find("q;").unwrap();
        let e1 = apply_change(&mut r, &change(1, 0, 1, 0, "// é\n"), Encoding::Utf16, 1);
        let e2 = apply_change(&mut r, &change(0, 7, 0, 8, "top"), Encoding::Utf16, 2);
        assert_eq!(r.to_string(), "module top;\n// é\nreg q;\nendmodule\n");
        let m = map_offset(&[e1, e2], 0, q, Bias::Start).unwrap();
        assert_eq!(&r.to_string()[m..m + 2], "q;");
        assert_eq!(map_offset(&[e1, e2], 1, 7, Bias::Start), Some(7));
    }
}
