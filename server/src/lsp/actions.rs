//! Code actions. For now: waive a finding with a `// seam: allow(rule) TODO: reason` comment
//! above its line (DESIGN.md section 7); the RTL quick fixes come with the fix engine.

use std::collections::HashMap;

use tower_lsp::lsp_types::{
    CodeAction, CodeActionKind, CodeActionOrCommand, CodeActionParams, DocumentChanges,
    NumberOrString, OneOf, OptionalVersionedTextDocumentIdentifier, Position, Range,
    TextDocumentEdit, TextEdit, WorkspaceEdit,
};

use super::documents::Encoding;
use super::state::FileSnap;

pub fn actions(p: &CodeActionParams, file: &FileSnap, _enc: Encoding) -> Vec<CodeActionOrCommand> {
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
        let line = d.range.start.line as usize;
        if line >= file.text.len_lines() {
            continue;
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
        out.push(CodeActionOrCommand::CodeAction(CodeAction {
            title: format!("Waive {rule} here (adds a comment; write the reason in it)"),
            kind: Some(CodeActionKind::QUICKFIX),
            diagnostics: Some(vec![d.clone()]),
            edit: Some(WorkspaceEdit {
                changes: None::<HashMap<_, _>>,
                document_changes: Some(changes),
                change_annotations: None,
            }),
            command: None,
            is_preferred: Some(false),
            disabled: None,
            data: None,
        }));
    }
    out
}
