//! Findings: what every rule and the parser report, in one shape for CLI, JSON, SARIF and LSP.

use serde::{Deserialize, Serialize};

use crate::model::Span;

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    Error,
    Warning,
    Info,
    Hint,
}

impl Severity {
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Info => "info",
            Severity::Hint => "hint",
        }
    }
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Related {
    pub span: Span,
    pub message: String,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    /// Stable kebab-case rule id.
    pub rule: String,
    pub severity: Severity,
    pub span: Span,
    pub message: String,
    pub signal: Option<String>,
    pub source_domain: Option<String>,
    pub destination_domain: Option<String>,
    /// Waived findings are kept and counted, never dropped.
    pub waived: bool,
    pub waiver_reason: Option<String>,
    pub related: Vec<Related>,
    /// What a quick fix needs (set by `fix::plan`); `None` when the rule has no RTL fix.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fix: Option<crate::fix::FixHint>,
}

impl Finding {
    pub fn new(rule: &str, severity: Severity, span: Span, message: impl Into<String>) -> Self {
        Finding {
            rule: rule.to_string(),
            severity,
            span,
            message: message.into(),
            signal: None,
            source_domain: None,
            destination_domain: None,
            waived: false,
            waiver_reason: None,
            related: vec![],
            fix: None,
        }
    }
}

/// Parse problems of a file as `syntax-error` findings.
pub fn syntax_findings(model: &crate::model::FileModel) -> Vec<Finding> {
    model
        .problems
        .iter()
        .map(|p| {
            let sev = if p.hint {
                Severity::Hint
            } else {
                Severity::Error
            };
            Finding::new("syntax-error", sev, p.span.clone(), p.message.clone())
        })
        .collect()
}
