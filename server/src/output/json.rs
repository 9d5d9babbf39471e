//! The JSON report, version 1 (schema: docs/schema/check-v1.json).

use seam_analysis::finding::Finding;
use seam_analysis::report::{Analysis, ClockInfo, Crossing, CrossingStatus};
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

/// One clock of `Analysis::clocks`.
pub fn clock_json(c: &ClockInfo) -> Value {
    json!({
        "name": c.name,
        "frequency_hz": c.frequency_hz,
        "group": c.group,
        "root": c.root,
        "domain": c.domain,
    })
}

/// One crossing of `Analysis::crossings`; its span is the destination's read of the source.
pub fn crossing_json(c: &Crossing) -> Value {
    json!({
        "source_domain": c.source_domain,
        "destination_domain": c.destination_domain,
        "source": c.source,
        "destination": c.destination,
        "status": match c.status {
            CrossingStatus::Synchronized => "synchronized",
            CrossingStatus::Unsafe => "unsafe",
            CrossingStatus::Waived => "waived",
        },
        "scheme": c.scheme,
        "stages": c.stages,
        "bits": c.bits,
        "file": c.span.file,
        "line": c.span.line,
        "column": c.span.column,
        "end_line": c.span.end_line,
        "end_column": c.span.end_column,
    })
}

/// The whole report of one run: [`report`] plus the `clocks` and `crossings` tables.
pub fn analysis_report(a: &Analysis) -> Value {
    let mut v = report(a.files, a.modules, &a.findings);
    v["clocks"] = Value::Array(a.clocks.iter().map(clock_json).collect());
    v["crossings"] = Value::Array(a.crossings.iter().map(crossing_json).collect());
    v
}
