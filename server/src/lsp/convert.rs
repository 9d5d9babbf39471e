//! From the analysis' shapes to the LSP's: spans to ranges in the negotiated encoding (through
//! the edits made since the model was parsed), findings to diagnostics.

use ropey::Rope;
use seam_analysis::finding::{Finding, Severity};
use seam_analysis::model::Span;
use serde_json::json;
use tower_lsp::lsp_types::{
    CodeDescription, Diagnostic, DiagnosticRelatedInformation, DiagnosticSeverity, Location,
    NumberOrString, Position, Range, Url,
};

use super::documents::{self, Bias, Edit, Encoding};

/// The current text of a file and the edits made to it, for placing spans of older models.
pub struct TextView<'a> {
    pub text: &'a Rope,
    pub edits: &'a [Edit],
}

/// Where a span of a model parsed at edit `from_seq` is now.
///
/// Byte offsets are mapped through the later edits when they can be; otherwise (the text was
/// replaced as a whole, or the offsets do not agree with the line the span names) the span's
/// line and code-point column are used.
pub fn span_range(view: Option<&TextView>, from_seq: u64, span: &Span, enc: Encoding) -> Range {
    let Some(v) = view else {
        // no text at hand: code points stand in for the encoding's units
        let p = |l: u32, c: u32| Position::new(l.saturating_sub(1), c.saturating_sub(1));
        return Range {
            start: p(span.line, span.column),
            end: p(span.end_line, span.end_column),
        };
    };
    let edited = documents::edited_since(v.edits, from_seq);
    let mapped = documents::map_offset(v.edits, from_seq, span.start, Bias::Start).zip(
        documents::map_offset(v.edits, from_seq, span.end.max(span.start), Bias::End),
    );
    if let Some((s, e)) = mapped {
        let len = v.text.len_bytes();
        let plausible = s <= len
            && e <= len
            // unedited: the offsets must land on the line the span names (spans made without
            // offsets, e.g. line-only locations, fall through to line and column)
            && (edited || span.line == 0 || v.text.byte_to_line(s) + 1 == span.line as usize);
        if plausible {
            return Range {
                start: documents::byte_to_position(v.text, s, enc),
                end: documents::byte_to_position(v.text, e.max(s), enc),
            };
        }
    }
    let start = documents::line_col_to_position(v.text, span.line.max(1), span.column.max(1), enc);
    let end = documents::line_col_to_position(
        v.text,
        span.end_line.max(span.line).max(1),
        span.end_column.max(1),
        enc,
    );
    Range {
        start,
        end: if end < start { start } else { end },
    }
}

/// Per-rule documentation link: `<base><rule>.md`.
pub fn rule_doc(base: Option<&Url>, rule: &str) -> Option<CodeDescription> {
    let href = base?.join(&format!("{rule}.md")).ok()?;
    Some(CodeDescription { href })
}

pub fn severity(s: Severity) -> DiagnosticSeverity {
    match s {
        Severity::Error => DiagnosticSeverity::ERROR,
        Severity::Warning => DiagnosticSeverity::WARNING,
        Severity::Info => DiagnosticSeverity::INFORMATION,
        Severity::Hint => DiagnosticSeverity::HINT,
    }
}

/// Text appended to findings that come from the last version of a file that parsed.
pub const STALE_NOTE: &str =
    " [from the last version of this file that parsed; it has a syntax error now]";

/// A finding as a diagnostic. `related` is already placed; `stale` marks findings of a file
/// whose current text does not parse (kept from its last good model).
pub fn diagnostic(
    f: &Finding,
    range: Range,
    related: Vec<(Url, Range, String)>,
    stale: bool,
    docs: Option<&Url>,
) -> Diagnostic {
    let mut message = f.message.clone();
    let mut sev = severity(f.severity);
    if f.waived {
        // waived findings are shown (never silently dropped), at the lowest level
        sev = DiagnosticSeverity::HINT;
        match &f.waiver_reason {
            Some(r) if !r.is_empty() => message.push_str(&format!(" [waived: {r}]")),
            _ => message.push_str(" [waived]"),
        }
    }
    if stale {
        message.push_str(STALE_NOTE);
    }
    let related: Vec<DiagnosticRelatedInformation> = related
        .into_iter()
        .map(|(uri, range, message)| DiagnosticRelatedInformation {
            location: Location { uri, range },
            message,
        })
        .collect();
    Diagnostic {
        range,
        severity: Some(sev),
        code: Some(NumberOrString::String(f.rule.clone())),
        code_description: rule_doc(docs, &f.rule),
        source: Some("seam".into()),
        message,
        related_information: if related.is_empty() {
            None
        } else {
            Some(related)
        },
        tags: None,
        // what code actions need without a second look-up
        data: Some(json!({
            "rule": f.rule,
            "signal": f.signal,
            "source_domain": f.source_domain,
            "destination_domain": f.destination_domain,
            "waived": f.waived,
            "stale": stale,
        })),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn span(text: &str, s: usize, e: usize) -> Span {
        let ix = seam_analysis::parse::position::LineIndex::new(text);
        ix.span("a.v", s, e)
    }

    #[test]
    fn spans_follow_edits_and_encodings() {
        let old = "module m;\n  wire q;\nendmodule\n";
        let q = old.find('q').unwrap();
        let sp = span(old, q, q + 1);
        let mut rope = Rope::from_str(old);
        // insert a line with a non-BMP character above: the span moves one line down
        let ch = tower_lsp::lsp_types::TextDocumentContentChangeEvent {
            range: Some(Range::new(Position::new(1, 0), Position::new(1, 0))),
            range_length: None,
            text: "  // 𝄞 x\n".into(),
        };
        let e = documents::apply_change(&mut rope, &ch, Encoding::Utf16, 1);
        let v = TextView {
            text: &rope,
            edits: &[e],
        };
        let r = span_range(Some(&v), 0, &sp, Encoding::Utf16);
        assert_eq!(r, Range::new(Position::new(2, 7), Position::new(2, 8)));
        // a span whose offsets disagree with its line falls back to line and column
        let mut bad = sp.clone();
        bad.start = 0;
        bad.end = 0;
        let v0 = TextView {
            text: &Rope::from_str(old),
            edits: &[],
        };
        let r = span_range(Some(&v0), 0, &bad, Encoding::Utf16);
        assert_eq!(r.start, Position::new(1, 7));
    }
}
