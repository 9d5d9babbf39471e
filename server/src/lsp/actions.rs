//! Code actions: the quick fixes of `seam_analysis::fix` for the findings under the cursor
//! (kind quickfix; the main fix is preferred), as versioned `documentChanges`.
//!
//! RTL fixes are offered only while every file they edit is unchanged since the model the
//! analysis used (their byte offsets must still be right); the waiver is always offered,
//! placed by the diagnostic's line when the text has moved on.

use std::collections::{BTreeMap, HashMap};

use seam_analysis::finding::Finding;
use seam_analysis::fix::{self, Fix};
use seam_analysis::model::FileModel;
use tower_lsp::lsp_types::{
    CodeAction, CodeActionKind, CodeActionOrCommand, CodeActionParams, Diagnostic, DocumentChanges,
    NumberOrString, OneOf, OptionalVersionedTextDocumentIdentifier, Position, Range,
    TextDocumentEdit, TextEdit, Url, WorkspaceEdit,
};

use super::convert::{span_range, TextView};
use super::documents::{self, Encoding};
use super::state::{FileSnap, Shared};

pub fn actions(
    p: &CodeActionParams,
    sh: &Shared,
    key: &Url,
    file: &FileSnap,
) -> Vec<CodeActionOrCommand> {
    let enc = sh.encoding;
    let design = sh.design();
    let df = design.files.get(key);
    // display path → (uri, snapshot) of every design file whose text matches its model
    let mut by_display: HashMap<&str, (&Url, std::sync::Arc<FileSnap>)> = HashMap::new();
    for (u, d) in &design.files {
        if d.stale {
            continue;
        }
        if let Some(s) = sh.file(u) {
            if !documents::edited_since(&s.edits, d.good_seq) {
                by_display.insert(d.display.as_str(), (u, s));
            }
        }
    }
    let models: HashMap<&str, &FileModel> = design
        .files
        .values()
        .map(|d| (d.display.as_str(), &*d.model))
        .collect();
    let model_of = |p: &str| models.get(p).copied();
    let text_of = |p: &str| by_display.get(p).map(|(_, s)| s.text.to_string());

    let mut out = Vec::new();
    for d in &p.context.diagnostics {
        if d.source.as_deref() != Some("seam") {
            continue;
        }
        let Some(NumberOrString::String(rule)) = &d.code else {
            continue;
        };
        if rule == "syntax-error" || rule == "invalid-config" {
            continue;
        }
        // the finding behind the diagnostic: same file, rule and place
        let finding: Option<&Finding> = df.and_then(|df| {
            let view = TextView {
                text: &file.text,
                edits: &file.edits,
            };
            design.analysis.findings.iter().find(|f| {
                f.rule == *rule
                    && !f.waived
                    && f.span.file == df.display
                    && span_range(Some(&view), df.good_seq, &f.span, enc) == d.range
            })
        });
        let fixes = match finding {
            Some(f) => fix::fixes_for(f, &model_of, &text_of),
            None => vec![],
        };
        let mut any_waiver = false;
        for fx in &fixes {
            any_waiver |= fx.kind == "waive";
            if let Some(a) = to_action(fx, d, &by_display, (key, &p.text_document.uri), enc) {
                out.push(CodeActionOrCommand::CodeAction(a));
            }
        }
        if !any_waiver {
            if let Some(a) = line_waiver(rule, d, p, file) {
                out.push(CodeActionOrCommand::CodeAction(a));
            }
        }
    }
    out
}

fn to_action(
    fx: &Fix,
    d: &Diagnostic,
    files: &HashMap<&str, (&Url, std::sync::Arc<FileSnap>)>,
    (key, asked): (&Url, &Url),
    enc: Encoding,
) -> Option<CodeAction> {
    let mut per_file: BTreeMap<&str, Vec<&fix::TextEdit>> = BTreeMap::new();
    for e in &fx.edits {
        per_file.entry(e.file.as_str()).or_default().push(e);
    }
    let mut docs = Vec::new();
    for (file, edits) in per_file {
        let (uri, snap) = files.get(file)?;
        let len = snap.text.len_bytes();
        let mut lsp_edits = Vec::new();
        for e in edits {
            if e.start > e.end || e.end > len {
                return None;
            }
            lsp_edits.push(OneOf::Left(TextEdit {
                range: Range {
                    start: documents::byte_to_position(&snap.text, e.start, enc),
                    end: documents::byte_to_position(&snap.text, e.end, enc),
                },
                new_text: e.text.clone(),
            }));
        }
        docs.push(TextDocumentEdit {
            text_document: OptionalVersionedTextDocumentIdentifier {
                // the requesting document under the client's own spelling of its URI
                uri: if *uri == key {
                    asked.clone()
                } else {
                    (*uri).clone()
                },
                version: snap.version,
            },
            edits: lsp_edits,
        });
    }
    Some(CodeAction {
        title: fx.title.clone(),
        kind: Some(CodeActionKind::QUICKFIX),
        diagnostics: Some(vec![d.clone()]),
        edit: Some(WorkspaceEdit {
            changes: None,
            document_changes: Some(DocumentChanges::Edits(docs)),
            change_annotations: None,
        }),
        command: None,
        is_preferred: Some(fx.preferred),
        disabled: None,
        data: None,
    })
}

/// The waiver placed by the diagnostic's line, for findings the analysis no longer has at
/// that place (the text moved on since).
fn line_waiver(
    rule: &str,
    d: &Diagnostic,
    p: &CodeActionParams,
    file: &FileSnap,
) -> Option<CodeAction> {
    let line = d.range.start.line as usize;
    if line >= file.text.len_lines() {
        return None;
    }
    let indent: String = file
        .text
        .line(line)
        .chars()
        .take_while(|c| *c == ' ' || *c == '\t')
        .collect();
    let at = Position::new(line as u32, 0);
    let edit = TextEdit {
        range: Range { start: at, end: at },
        new_text: format!("{indent}// seam: allow({rule}) TODO: reason\n"),
    };
    let changes = DocumentChanges::Edits(vec![TextDocumentEdit {
        text_document: OptionalVersionedTextDocumentIdentifier {
            uri: p.text_document.uri.clone(),
            version: file.version,
        },
        edits: vec![OneOf::Left(edit)],
    }]);
    Some(CodeAction {
        title: format!("Waive `{rule}` here (adds a comment; write the reason in it)"),
        kind: Some(CodeActionKind::QUICKFIX),
        diagnostics: Some(vec![d.clone()]),
        edit: Some(WorkspaceEdit {
            changes: None,
            document_changes: Some(changes),
            change_annotations: None,
        }),
        command: None,
        is_preferred: Some(false),
        disabled: None,
        data: None,
    })
}
