//! Quick fixes: pure functions from a finding, the file models and the files' text to text
//! edits. Nothing here reads or writes files; the server turns the edits into an LSP
//! `WorkspaceEdit`, `seam check --fix` into a diff and an atomic write.
//!
//! The design layer ([`plan`]) decides while the rules run whether a finding can be fixed and
//! records what the text layer needs in [`Finding::fix`]; the text layer (one file per fix
//! kind) then works on the model and the current text only, so an editor can ask for the
//! edits without rerunning the analysis. Every RTL fix changes latency or timing; its title
//! says how.

pub mod add_stage;
pub mod enable_strobe;
pub mod gray_code;
pub mod parent_sync;
pub mod plan;
pub mod pulse_sync;
pub mod synchronizer;
pub mod text;
pub mod waive;

use serde::{Deserialize, Serialize};

use crate::finding::Finding;
use crate::model::FileModel;

/// One replacement in one file, in byte offsets of that file's current text.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct TextEdit {
    pub file: String,
    pub start: usize,
    pub end: usize,
    pub text: String,
}

/// A quick fix: a title that says what it changes, and its edits.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Fix {
    pub title: String,
    pub rule: String,
    /// The main fix of the finding (the editor may apply it with one key).
    pub preferred: bool,
    /// `waive` or the fix kind (`synchronizer`, `enable-strobe`, `add-stage`).
    pub kind: String,
    /// What the fix rewrites (`file::module` for RTL fixes, `file:line` for waivers): two
    /// fixes of one scope are never applied in one pass, as the second was planned on the
    /// text before the first.
    pub scope: String,
    pub edits: Vec<TextEdit>,
}

/// What the design layer found out for a fix; stored on the finding.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum FixHint {
    Synchronizer(synchronizer::SyncHint),
    EnableStrobe(enable_strobe::StrobeHint),
    PulseSync(pulse_sync::PulseHint),
    ParentSync(parent_sync::ParentHint),
    GrayCode(gray_code::GrayHint),
    AddStage(add_stage::StageHint),
    /// No RTL fix is offered; the reason is shown to the user.
    Unavailable {
        reason: String,
    },
}

/// The text of a file by its display path (the editor buffer or the file on disk).
pub type TextOf<'a> = dyn Fn(&str) -> Option<String> + 'a;

/// The model of a file by its display path (the one the analysis used).
pub type ModelOf<'a> = dyn Fn(&str) -> Option<&'a FileModel> + 'a;

/// [`ModelOf`] over a slice of models.
pub fn in_slice<'a>(files: &'a [FileModel]) -> impl Fn(&str) -> Option<&'a FileModel> + 'a {
    move |p: &str| files.iter().find(|m| m.path == p)
}

/// Every fix for a finding: the RTL fix first (when there is one), then the waiver.
/// Waived findings and syntax errors get none.
pub fn fixes_for<'m>(f: &Finding, files: &ModelOf<'m>, text_of: &TextOf) -> Vec<Fix> {
    let mut out = Vec::new();
    if f.waived || f.rule == "syntax-error" {
        return out;
    }
    let rtl = match &f.fix {
        Some(FixHint::Synchronizer(h)) => synchronizer::fix(f, h, files, text_of).ok(),
        Some(FixHint::EnableStrobe(h)) => enable_strobe::fix(f, h, files, text_of).ok(),
        Some(FixHint::PulseSync(h)) => pulse_sync::fix(f, h, files, text_of).ok(),
        Some(FixHint::ParentSync(h)) => parent_sync::fix(f, h, files, text_of).ok(),
        Some(FixHint::GrayCode(h)) => gray_code::fix(f, h, files, text_of).ok(),
        Some(FixHint::AddStage(h)) => add_stage::fix(f, h, files, text_of).ok(),
        _ => None,
    };
    let has_rtl = rtl.is_some();
    out.extend(rtl);
    if let Some(mut w) = waive::fix(f, text_of) {
        w.preferred = !has_rtl;
        out.push(w);
    }
    out
}

/// Why no RTL fix is offered for this finding, when one kind of fix applies to its rule but
/// not here (for hover and disabled code actions).
pub fn unavailable_reason<'m>(
    f: &Finding,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Option<String> {
    match &f.fix {
        Some(FixHint::Unavailable { reason }) => Some(reason.clone()),
        Some(FixHint::Synchronizer(h)) => synchronizer::fix(f, h, files, text_of).err(),
        Some(FixHint::EnableStrobe(h)) => enable_strobe::fix(f, h, files, text_of).err(),
        Some(FixHint::PulseSync(h)) => pulse_sync::fix(f, h, files, text_of).err(),
        Some(FixHint::ParentSync(h)) => parent_sync::fix(f, h, files, text_of).err(),
        Some(FixHint::GrayCode(h)) => gray_code::fix(f, h, files, text_of).err(),
        Some(FixHint::AddStage(h)) => add_stage::fix(f, h, files, text_of).err(),
        None => None,
    }
}

/// Apply edits to one file's text. `None` when an edit is out of range, splits a character
/// or overlaps another (the caller then offers nothing rather than a broken text).
pub fn apply(text: &str, edits: &[&TextEdit]) -> Option<String> {
    let mut es: Vec<&TextEdit> = edits.to_vec();
    es.sort_by_key(|e| (e.start, e.end));
    let mut out = String::with_capacity(text.len() + 256);
    let mut at = 0usize;
    for e in es {
        if e.start < at
            || e.end < e.start
            || e.end > text.len()
            || !text.is_char_boundary(e.start)
            || !text.is_char_boundary(e.end)
        {
            return None;
        }
        out.push_str(&text[at..e.start]);
        out.push_str(&e.text);
        at = e.end;
    }
    out.push_str(&text[at..]);
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ed(start: usize, end: usize, t: &str) -> TextEdit {
        TextEdit {
            file: "a.v".into(),
            start,
            end,
            text: t.into(),
        }
    }

    #[test]
    fn apply_orders_and_rejects_overlaps() {
        let a = ed(4, 5, "X");
        let b = ed(0, 0, "// top\n");
        assert_eq!(
            apply("abc d e", &[&a, &b]).as_deref(),
            Some("// top\nabc X e")
        );
        let c = ed(3, 6, "");
        assert_eq!(apply("abc d e", &[&a, &c]), None);
        assert_eq!(apply("abc", &[&ed(2, 9, "")]), None);
        // a split UTF-8 character is refused, never written
        assert_eq!(apply("aé", &[&ed(2, 2, "x")]), None);
    }
}
