//! The JSON report, version 1 (schema: docs/schema/check-v1.json).

use seam_analysis::finding::Finding;
use serde_json::{json, Value};

pub fn finding_json(f: &Finding) -> Value {
    json!({
        "rule": f.rule,
        "severity": f.severity.as_str(),
        "file": f.span.file,
        "line": f.span.line,
        "column": f.span.column,
        "end_line": f.span.end_line,
        "end_column": f.span.end_column,
        "message": f.message,
        "signal": f.signal,
        "source_domain": f.source_domain,
        "destination_domain": f.destination_domain,
        "waived": f.waived,
        "waiver_reason": f.waiver_reason,
        "related": f.related.iter().map(|r| json!({
            "file": r.span.file, "line": r.span.line, "column": r.span.column, "message": r.message
        })).collect::<Vec<_>>(),
    })
}

pub fn report(files: usize, modules: usize, findings: &[Finding]) -> Value {
    json!({
        "version": 1,
        "files": files,
        "modules": modules,
        "findings": findings.iter().map(finding_json).collect::<Vec<_>>(),
    })
}
