//! Waivers and severities: inline `// seam: allow(rule) reason` comments on the finding's line
//! or the line above, `[[waive]]` entries in seam.toml, and `[rules]` overrides. Waived
//! findings are kept and marked, never dropped; unused waivers and waivers with no reason
//! are reported as `unused-waiver` hints.

use crate::config::{self, Config};
use crate::finding::{Finding, Severity};
use crate::model::{FileModel, Span};

pub const UNUSED: &str = "unused-waiver";

fn map_severity(s: config::Severity) -> Option<Severity> {
    match s {
        config::Severity::Error => Some(Severity::Error),
        config::Severity::Warning => Some(Severity::Warning),
        config::Severity::Info => Some(Severity::Info),
        config::Severity::Hint => Some(Severity::Hint),
        config::Severity::Off => None,
    }
}

pub fn apply(mut findings: Vec<Finding>, models: &[FileModel], config: &Config) -> Vec<Finding> {
    let mut used_inline: Vec<(usize, usize)> = Vec::new();
    let mut used_config = vec![false; config.waivers.len()];
    for f in findings.iter_mut() {
        if f.rule == "syntax-error" {
            continue;
        }
        // inline comments
        if let Some((mi, m)) = models
            .iter()
            .enumerate()
            .find(|(_, m)| m.path == f.span.file)
        {
            for (wi, w) in m.waivers.iter().enumerate() {
                let on_line = w.line == f.span.line || w.line + 1 == f.span.line;
                if on_line && w.rules.iter().any(|r| r == &f.rule || r == "all") {
                    f.waived = true;
                    f.waiver_reason = Some(w.reason.clone());
                    used_inline.push((mi, wi));
                    break;
                }
            }
        }
        if f.waived {
            continue;
        }
        for (i, w) in config.waivers.iter().enumerate() {
            if w.matches(&f.rule, f.signal.as_deref(), Some(&f.span.file)) {
                f.waived = true;
                f.waiver_reason = Some(w.reason.clone().unwrap_or_default());
                used_config[i] = true;
                break;
            }
        }
    }
    // waiver hygiene
    let mut extra = Vec::new();
    for (mi, m) in models.iter().enumerate() {
        for (wi, w) in m.waivers.iter().enumerate() {
            if !used_inline.contains(&(mi, wi)) {
                extra.push(Finding::new(
                    UNUSED,
                    Severity::Hint,
                    w.span.clone(),
                    format!(
                        "waiver for `{}` matches no finding on this line or the next",
                        w.rules.join(", ")
                    ),
                ));
            } else if w.reason.trim().is_empty() {
                extra.push(Finding::new(
                    UNUSED,
                    Severity::Hint,
                    w.span.clone(),
                    format!(
                        "waiver for `{}` has no reason: say why the crossing is safe",
                        w.rules.join(", ")
                    ),
                ));
            }
        }
    }
    for (i, w) in config.waivers.iter().enumerate() {
        let span = Span {
            file: "seam.toml".into(),
            line: w.line as u32,
            column: w.column as u32,
            end_line: w.line as u32,
            end_column: w.column as u32,
            ..Default::default()
        };
        if !used_config[i] {
            extra.push(Finding::new(
                UNUSED,
                Severity::Hint,
                span,
                format!("`[[waive]]` entry for `{}` matches no finding", w.rule),
            ));
        } else if w.reason.as_deref().unwrap_or("").trim().is_empty() {
            extra.push(Finding::new(
                UNUSED,
                Severity::Hint,
                span,
                format!("`[[waive]]` entry for `{}` has no reason", w.rule),
            ));
        }
    }
    findings.extend(extra);
    // severities from [rules]; "off" drops the rule
    findings
        .into_iter()
        .filter_map(|mut f| {
            if let Some(s) = config.rules.get(&f.rule) {
                f.severity = map_severity(*s)?;
            }
            Some(f)
        })
        .collect()
}
