//! Waive a finding: `// seam: allow(rule) TODO: reason` above its line, indented like it
//! (DESIGN.md section 7). Offered for every rule but `syntax-error`. The reason must be
//! written by the user; the `TODO` makes the unfinished waiver easy to find.
//!
//! When the line above already holds a waiver comment, a new line between the two would move
//! the old waiver away from its own finding, so the new one goes at the end of the finding's
//! line instead (or, when that line already has a comment, into the old waiver's list).

use super::text::{indent_at, line_end_incl, line_start, newline};
use super::{Fix, TextEdit, TextOf};
use crate::finding::Finding;

fn is_waiver_line(line: &str) -> bool {
    line.find("//")
        .is_some_and(|c| line[c..].contains("seam:") && line[c..].contains("allow("))
}

pub fn fix(f: &Finding, text_of: &TextOf) -> Option<Fix> {
    if f.rule == "syntax-error" || f.waived || f.span.file.is_empty() {
        return None;
    }
    let text = text_of(&f.span.file)?;
    let off = f.span.start.min(text.len());
    if !text.is_char_boundary(off) {
        return None;
    }
    let rule = &f.rule;
    let nl = newline(&text);
    let ls = line_start(&text, off);
    let line_end = line_end_incl(&text, off);
    let line = text[ls..line_end].trim_end_matches(['\n', '\r']);
    let above = (ls > 0).then(|| {
        let prev = line_start(&text, ls - 1);
        &text[prev..ls]
    });
    let comment = format!("// seam: allow({rule}) TODO: reason");
    let edit = match above {
        Some(prev) if is_waiver_line(prev) => {
            if !line.contains("//") {
                let end = ls + line.len();
                TextEdit {
                    file: f.span.file.clone(),
                    start: end,
                    end,
                    text: format!(" {comment}"),
                }
            } else {
                // add the rule to the waiver above: `allow(a)` → `allow(a, rule)`
                let prev_start = line_start(&text, ls - 1);
                let c = prev.find("allow(")? + "allow(".len();
                let close = prev[c..].find(')')? + c;
                let at = prev_start + close;
                TextEdit {
                    file: f.span.file.clone(),
                    start: at,
                    end: at,
                    text: format!(", {rule}"),
                }
            }
        }
        _ => {
            let ind = indent_at(&text, off);
            TextEdit {
                file: f.span.file.clone(),
                start: ls,
                end: ls,
                text: format!("{ind}{comment}{nl}"),
            }
        }
    };
    Some(Fix {
        title: format!("Waive `{rule}` here (adds a comment; write the reason in it)"),
        rule: rule.clone(),
        preferred: false,
        kind: "waive".into(),
        scope: format!("{}:{}", f.span.file, ls),
        edits: vec![edit],
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::finding::Severity;
    use crate::model::Span;

    fn finding(start: usize) -> Finding {
        Finding::new(
            "derived-clock",
            Severity::Warning,
            Span {
                file: "a.v".into(),
                start,
                ..Default::default()
            },
            "m",
        )
    }

    fn applied(text: &str, start: usize) -> String {
        let t = text.to_string();
        let fx = fix(&finding(start), &move |_: &str| Some(t.clone())).expect("a fix");
        crate::fix::apply(text, &fx.edits.iter().collect::<Vec<_>>()).expect("applies")
    }

    #[test]
    fn above_the_line_with_its_indentation() {
        let t = "module m;\n  always @(posedge c) q <= d;\nendmodule\n";
        assert_eq!(
            applied(t, t.find("always").unwrap()),
            "module m;\n  // seam: allow(derived-clock) TODO: reason\n  always @(posedge c) q <= d;\nendmodule\n"
        );
    }

    #[test]
    fn keeps_an_existing_waiver_next_to_its_finding() {
        let t = "  // seam: allow(gated-clock) ok\n  always @(posedge c) q <= d;\n";
        assert_eq!(
            applied(t, t.find("always").unwrap()),
            "  // seam: allow(gated-clock) ok\n  always @(posedge c) q <= d; // seam: allow(derived-clock) TODO: reason\n"
        );
        let t = "  // seam: allow(gated-clock) ok\n  q <= d; // note\n";
        assert_eq!(
            applied(t, t.find("q <=").unwrap()),
            "  // seam: allow(gated-clock, derived-clock) ok\n  q <= d; // note\n"
        );
    }
}
