//! Human output: each finding with its source line, a caret under the span, and the related
//! locations, rendered by codespan-reporting.

use std::collections::HashMap;

use codespan_reporting::diagnostic::{Diagnostic, Label, Severity as CsSeverity};
use codespan_reporting::files::SimpleFiles;
use codespan_reporting::term::{self, termcolor::WriteColor};
use seam_analysis::finding::{Finding, Severity};

pub struct Sources {
    files: SimpleFiles<String, String>,
    ids: HashMap<String, usize>,
}

impl Sources {
    /// `read(display_path)` supplies a file's text (None when it cannot be read).
    pub fn new() -> Self {
        Sources {
            files: SimpleFiles::new(),
            ids: HashMap::new(),
        }
    }

    fn id(&mut self, name: &str, read: &dyn Fn(&str) -> Option<String>) -> Option<usize> {
        if let Some(i) = self.ids.get(name) {
            return Some(*i);
        }
        let text = read(name)?;
        let i = self.files.add(name.to_string(), text);
        self.ids.insert(name.to_string(), i);
        Some(i)
    }
}

fn clamp(text_len: usize, a: usize, b: usize) -> std::ops::Range<usize> {
    let a = a.min(text_len);
    let b = b.max(a).min(text_len);
    a..b
}

pub fn render(
    out: &mut dyn WriteColor,
    findings: &[Finding],
    read: &dyn Fn(&str) -> Option<String>,
) -> std::io::Result<()> {
    let mut src = Sources::new();
    let config = term::Config::default();
    for f in findings {
        let sev = match f.severity {
            Severity::Error => CsSeverity::Error,
            Severity::Warning => CsSeverity::Warning,
            Severity::Info => CsSeverity::Note,
            Severity::Hint => CsSeverity::Help,
        };
        let mut d = Diagnostic::new(sev)
            .with_code(f.rule.clone())
            .with_message(&f.message);
        let mut labels = Vec::new();
        let mut notes = Vec::new();
        if let Some(id) = src.id(&f.span.file, read) {
            let len = src.files.get(id).map(|x| x.source().len()).unwrap_or(0);
            labels.push(Label::primary(id, clamp(len, f.span.start, f.span.end)));
        } else {
            notes.push(format!(
                "at {}:{}:{}",
                f.span.file, f.span.line, f.span.column
            ));
        }
        for r in &f.related {
            match src.id(&r.span.file, read) {
                Some(id) => {
                    let len = src.files.get(id).map(|x| x.source().len()).unwrap_or(0);
                    labels.push(
                        Label::secondary(id, clamp(len, r.span.start, r.span.end))
                            .with_message(&r.message),
                    );
                }
                None => notes.push(format!("{}: {}:{}", r.message, r.span.file, r.span.line)),
            }
        }
        if f.waived {
            notes.push(format!(
                "waived: {}",
                f.waiver_reason.clone().unwrap_or_default()
            ));
        }
        d = d.with_labels(labels).with_notes(notes);
        if term::emit(out, &config, &src.files, &d).is_err() {
            writeln!(
                out,
                "{}:{}:{}: {}: {} [{}]",
                f.span.file,
                f.span.line,
                f.span.column,
                f.severity.as_str(),
                f.message,
                f.rule
            )?;
        }
    }
    Ok(())
}

/// "2 errors, 1 warning, 0 hints (3 waived)".
pub fn summary(findings: &[Finding]) -> String {
    let live = |s: Severity| {
        findings
            .iter()
            .filter(|f| !f.waived && f.severity == s)
            .count()
    };
    let waived = findings.iter().filter(|f| f.waived).count();
    let plural = |n: usize, w: &str| format!("{n} {w}{}", if n == 1 { "" } else { "s" });
    format!(
        "{}, {}, {}, {} ({} waived)",
        plural(live(Severity::Error), "error"),
        plural(live(Severity::Warning), "warning"),
        plural(live(Severity::Info), "note"),
        plural(live(Severity::Hint), "hint"),
        waived
    )
}
