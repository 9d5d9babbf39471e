//! SARIF 2.1.0 output (`seam check --format sarif`) for code-scanning services, built with the
//! serde-sarif types.
//!
//! - one rule descriptor per rule id in `config::RULES`, with a one-line description, help text
//!   (the embedded docs/rules page as Markdown where it exists) and `helpUri` to that page;
//! - artifact locations relative to the workspace root, against the `SRCROOT` base in
//!   `originalUriBaseIds`; regions in 1-based Unicode code points (`columnKind`
//!   "unicodeCodePoints"), end column exclusive, as SARIF defines it;
//! - related locations (source register, hops, destination, stages) as `relatedLocations`;
//! - waived findings kept as results with a suppression: kind `inSource` for a
//!   `// seam: allow(rule)` comment, `external` for a seam.toml `[[waive]]` entry;
//! - `[rules]` severity overrides as `ruleConfigurationOverrides` of the invocation.
//!
//! The help base URI is `$SEAM_DOCS_URI` when set to an absolute URI, else a `file:` URI of the
//! docs/rules folder of the source tree this binary was built from.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use seam_analysis::config::{self, Config, RULES};
use seam_analysis::finding::{Finding, Severity};
use seam_analysis::model::Span;
use seam_analysis::mtbf;
use seam_analysis::report::{Analysis, CrossingStatus};
use serde_json::{json, Value};
use serde_sarif::sarif::{
    ArtifactContent, ArtifactLocation, ConfigurationOverride, Invocation, Location, Message,
    MultiformatMessageString, PhysicalLocation, PropertyBag, Region, ReportingConfiguration,
    ReportingDescriptor, ReportingDescriptorReference, Result as SarifResult, ResultLevel, Run,
    Sarif, Suppression, Tool, ToolComponent,
};

use crate::cli::explain;

/// The OASIS SARIF 2.1.0 schema URI (errata 01), as `$schema`.
pub const SCHEMA_URI: &str =
    "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json";

/// The base id every artifact location is relative to.
pub const SRCROOT: &str = "SRCROOT";

/// Caution beside the CDC rules' help.
pub const CDC_CAUTION: &str = "Seam's findings are structural and advisory: they come from the \
design's structure, not from its timing or behaviour; confirm with your team's sign-off flow.";

const MTBF_RULES: &[&str] = &["low-mtbf"];
const NON_CDC_RULES: &[&str] = &["syntax-error", "unresolved-module", "unused-waiver"];

/// Percent-encode a path for a URI: keeps unreserved characters and `/`.
pub fn encode_path(path: &str) -> String {
    let mut out = String::with_capacity(path.len());
    for b in path.bytes() {
        match b {
            b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'-' | b'.' | b'_' | b'~' | b'/' => {
                out.push(b as char)
            }
            _ => out.push_str(&format!("%{b:02X}")),
        }
    }
    out
}

/// `file:` URI of a folder, with the trailing `/` SARIF wants for a base.
pub fn folder_uri(dir: &Path) -> String {
    let abs = dir.canonicalize().unwrap_or_else(|_| {
        std::env::current_dir()
            .map(|c| c.join(dir))
            .unwrap_or_else(|_| dir.to_path_buf())
    });
    let mut p = abs.to_string_lossy().replace('\\', "/");
    if !p.starts_with('/') {
        p.insert(0, '/');
    }
    if !p.ends_with('/') {
        p.push('/');
    }
    format!("file://{}", encode_path(&p))
}

fn is_absolute_uri(s: &str) -> bool {
    match s.split_once(':') {
        Some((scheme, rest)) => {
            !scheme.is_empty()
                && scheme
                    .chars()
                    .next()
                    .is_some_and(|c| c.is_ascii_alphabetic())
                && scheme
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || matches!(c, '+' | '-' | '.'))
                && !rest.is_empty()
                && !s.chars().any(|c| c.is_whitespace())
        }
        None => false,
    }
}

/// Base URI of the rule pages (ends with `/`).
pub fn docs_base() -> String {
    if let Ok(b) = std::env::var("SEAM_DOCS_URI") {
        let b = b.trim();
        if is_absolute_uri(b) {
            return if b.ends_with('/') {
                b.to_string()
            } else {
                format!("{b}/")
            };
        }
    }
    let manifest = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let repo = manifest.parent().map(Path::to_path_buf).unwrap_or(manifest);
    folder_uri(&repo.join("docs").join("rules"))
}

/// SARIF level of a finding severity (SARIF has no "hint": info and hint are notes).
pub fn level(s: Severity) -> ResultLevel {
    match s {
        Severity::Error => ResultLevel::Error,
        Severity::Warning => ResultLevel::Warning,
        Severity::Info | Severity::Hint => ResultLevel::Note,
    }
}

fn config_level(s: config::Severity) -> Value {
    match s {
        config::Severity::Error => json!("error"),
        config::Severity::Warning => json!("warning"),
        config::Severity::Info | config::Severity::Hint => json!("note"),
        config::Severity::Off => json!("none"),
    }
}

fn pascal(id: &str) -> String {
    id.split('-')
        .map(|w| {
            let mut c = w.chars();
            match c.next() {
                Some(f) => f.to_ascii_uppercase().to_string() + c.as_str(),
                None => String::new(),
            }
        })
        .collect()
}

fn text(s: impl Into<String>) -> Message {
    Message {
        text: Some(s.into()),
        ..Message::default()
    }
}

fn mms(text: impl Into<String>, markdown: Option<String>) -> MultiformatMessageString {
    let mut m = MultiformatMessageString::builder()
        .text(text.into())
        .build();
    m.markdown = markdown;
    m
}

fn caution_for(id: &str) -> Option<String> {
    if MTBF_RULES.contains(&id) {
        Some(format!("{CDC_CAUTION} {}", mtbf::CAUTION))
    } else if NON_CDC_RULES.contains(&id) {
        None
    } else {
        Some(CDC_CAUTION.to_string())
    }
}

fn rule_descriptor(id: &str, default: config::Severity, base: &str) -> ReportingDescriptor {
    let summary = explain::summary(id);
    let page = explain::page(id);
    let caution = caution_for(id);
    let mut help_text = format!("{summary} Run `seam explain {id}` or see docs/rules/{id}.md.");
    if let Some(c) = &caution {
        help_text.push(' ');
        help_text.push_str(c);
    }
    let markdown = match page {
        Some(p) => {
            let mut md = p.trim_end().to_string();
            if let Some(c) = &caution {
                md.push_str("\n\n");
                md.push_str(c);
            }
            md
        }
        None => format!("{summary}\n\n(The page docs/rules/{id}.md is not written yet.)"),
    };
    let mut r = ReportingDescriptor::builder().id(id).build();
    r.name = Some(pascal(id));
    r.short_description = Some(mms(summary, None));
    r.full_description = Some(mms(
        match &caution {
            Some(c) => format!("{summary} {c}"),
            None => summary.to_string(),
        },
        None,
    ));
    r.help = Some(mms(help_text, Some(markdown)));
    r.help_uri = Some(format!("{base}{}.md", encode_path(id)));
    r.default_configuration = Some(ReportingConfiguration {
        level: Some(config_level(default)),
        enabled: Some(default != config::Severity::Off),
        ..ReportingConfiguration::default()
    });
    let mut tags = vec!["verilog".to_string(), "systemverilog".to_string()];
    if caution.is_some() {
        tags.push("cdc".to_string());
    }
    r.properties = Some(PropertyBag {
        tags: Some(tags),
        ..PropertyBag::default()
    });
    r
}

fn region(span: &Span, source: Option<&str>) -> Option<Region> {
    if span.line == 0 {
        return None;
    }
    let start_column = span.column.max(1) as i64;
    let (end_line, end_column) = if span.end_line < span.line
        || (span.end_line == span.line && span.end_column < span.column)
    {
        (span.line as i64, start_column)
    } else {
        (span.end_line as i64, span.end_column.max(1) as i64)
    };
    let snippet = source.and_then(|t| {
        let lines: Vec<&str> = t.lines().collect();
        let a = (span.line as usize).saturating_sub(1);
        let b = (end_line as usize).min(lines.len()).min(a + 20);
        if a >= lines.len() {
            return None;
        }
        Some(ArtifactContent {
            text: Some(lines[a..b.max(a + 1)].join("\n")),
            ..ArtifactContent::default()
        })
    });
    Some(Region {
        start_line: Some(span.line as i64),
        start_column: Some(start_column),
        end_line: Some(end_line),
        end_column: Some(end_column),
        snippet,
        ..Region::default()
    })
}

/// A workspace-relative path against `SRCROOT`; a path outside the workspace (absolute) as a
/// `file:` URI of its own.
fn artifact(file: &str) -> ArtifactLocation {
    let f = file.replace('\\', "/");
    let absolute = f.starts_with('/') || f.as_bytes().get(1) == Some(&b':');
    if absolute {
        let p = if f.starts_with('/') {
            f
        } else {
            format!("/{f}")
        };
        ArtifactLocation {
            uri: Some(format!("file://{}", encode_path(&p))),
            ..ArtifactLocation::default()
        }
    } else {
        ArtifactLocation {
            uri: Some(encode_path(&f)),
            uri_base_id: Some(SRCROOT.to_string()),
            ..ArtifactLocation::default()
        }
    }
}

fn location(span: &Span, message: Option<&str>, source: Option<&str>, id: Option<i64>) -> Location {
    Location {
        id,
        message: message.map(text),
        physical_location: Some(PhysicalLocation {
            artifact_location: Some(artifact(&span.file)),
            region: region(span, source),
            ..PhysicalLocation::default()
        }),
        ..Location::default()
    }
}

/// An inline waiver comment `seam: allow(a, b) reason` for `rule` on `line` or the line above:
/// (line, 1-based code-point column of the comment).
pub fn inline_waiver(source: &str, line: u32, rule: &str) -> Option<(u32, u32)> {
    let lines: Vec<&str> = source.lines().collect();
    for l in [line, line.saturating_sub(1)] {
        if l == 0 {
            continue;
        }
        let Some(t) = lines.get(l as usize - 1) else {
            continue;
        };
        let Some(at) = t.find("seam: allow(") else {
            continue;
        };
        let rest = &t[at + "seam: allow(".len()..];
        let Some(close) = rest.find(')') else {
            continue;
        };
        if rest[..close]
            .split(',')
            .any(|r| r.trim() == rule || r.trim() == "all")
        {
            let start = t[..at]
                .rfind("//")
                .or_else(|| t[..at].rfind("/*"))
                .unwrap_or(at);
            return Some((l, t[..start].chars().count() as u32 + 1));
        }
    }
    None
}

fn suppression(f: &Finding, source: Option<&str>) -> Suppression {
    let inline = source.and_then(|s| inline_waiver(s, f.span.line, &f.rule));
    let kind = if inline.is_some() {
        "inSource"
    } else {
        "external"
    };
    let mut s = Suppression::builder().kind(json!(kind)).build();
    s.status = Some(json!("accepted"));
    s.justification = f.waiver_reason.clone().filter(|r| !r.trim().is_empty());
    if let Some((line, column)) = inline {
        let span = Span {
            file: f.span.file.clone(),
            start: 0,
            end: 0,
            line,
            column,
            end_line: line,
            end_column: column,
        };
        let mut loc = location(&span, Some("waiver comment"), None, None);
        if let Some(r) = loc
            .physical_location
            .as_mut()
            .and_then(|p| p.region.as_mut())
        {
            r.end_column = None;
            r.end_line = None;
        }
        s.location = Some(loc);
    }
    s
}

fn result(f: &Finding, rule_index: Option<usize>, sources: &mut Sources) -> SarifResult {
    let src = sources.get(&f.span.file);
    let mut r = SarifResult::builder()
        .message(text(f.message.clone()))
        .build();
    r.rule_id = Some(f.rule.clone());
    r.rule_index = rule_index.map(|i| i as i64);
    r.level = Some(level(f.severity));
    r.locations = Some(vec![location(&f.span, None, src.as_deref(), None)]);
    if !f.related.is_empty() {
        let related = f
            .related
            .iter()
            .enumerate()
            .map(|(i, rel)| {
                let rs = sources.get(&rel.span.file);
                location(
                    &rel.span,
                    Some(&rel.message),
                    rs.as_deref(),
                    Some(i as i64 + 1),
                )
            })
            .collect();
        r.related_locations = Some(related);
    }
    r.suppressions = Some(if f.waived {
        vec![suppression(f, src.as_deref())]
    } else {
        Vec::new()
    });
    let mut props = BTreeMap::new();
    props.insert("severity".to_string(), json!(f.severity.as_str()));
    for (k, v) in [
        ("signal", &f.signal),
        ("sourceDomain", &f.source_domain),
        ("destinationDomain", &f.destination_domain),
    ] {
        if let Some(v) = v {
            props.insert(k.to_string(), json!(v));
        }
    }
    r.properties = Some(PropertyBag {
        additional_properties: props,
        ..PropertyBag::default()
    });
    r
}

/// Source texts by workspace-relative path, read once each.
struct Sources<'r> {
    read: &'r dyn Fn(&str) -> Option<String>,
    cache: BTreeMap<String, Option<String>>,
}

impl Sources<'_> {
    fn get(&mut self, file: &str) -> Option<String> {
        if !self.cache.contains_key(file) {
            let t = (self.read)(file);
            self.cache.insert(file.to_string(), t);
        }
        self.cache.get(file).cloned().flatten()
    }
}

/// The SARIF log of one run.
pub fn log(
    a: &Analysis,
    config: &Config,
    read: &dyn Fn(&str) -> Option<String>,
    root: &Path,
) -> Sarif {
    let base = docs_base();
    let rules: Vec<ReportingDescriptor> = RULES
        .iter()
        .map(|(id, sev)| rule_descriptor(id, *sev, &base))
        .collect();
    let mut driver = ToolComponent::builder().name("Seam").build();
    driver.version = Some(env!("CARGO_PKG_VERSION").to_string());
    driver.semantic_version = Some(env!("CARGO_PKG_VERSION").to_string());
    driver.full_name = Some(format!(
        "Seam {} clock-domain-crossing checker",
        env!("CARGO_PKG_VERSION")
    ));
    driver.short_description = Some(mms(
        "Clock-domain-crossing checks for Verilog and SystemVerilog.",
        None,
    ));
    driver.full_description = Some(mms(format!("{CDC_CAUTION} {}", mtbf::CAUTION), None));
    driver.rules = Some(rules);

    let mut sources = Sources {
        read,
        cache: BTreeMap::new(),
    };
    let results: Vec<SarifResult> = a
        .findings
        .iter()
        .map(|f| {
            let idx = RULES.iter().position(|(id, _)| *id == f.rule);
            result(f, idx, &mut sources)
        })
        .collect();

    let overrides: Vec<ConfigurationOverride> = RULES
        .iter()
        .enumerate()
        .filter(|(_, (id, sev))| config.severity(id) != *sev)
        .map(|(i, (id, _))| {
            let eff = config.severity(id);
            ConfigurationOverride::builder()
                .descriptor(ReportingDescriptorReference {
                    id: Some(id.to_string()),
                    index: Some(i as i64),
                    ..ReportingDescriptorReference::default()
                })
                .configuration(ReportingConfiguration {
                    level: Some(config_level(eff)),
                    enabled: Some(eff != config::Severity::Off),
                    ..ReportingConfiguration::default()
                })
                .build()
        })
        .collect();
    let mut invocation = Invocation::builder().execution_successful(true).build();
    if !overrides.is_empty() {
        invocation.rule_configuration_overrides = Some(overrides);
    }
    invocation.working_directory = Some(ArtifactLocation {
        uri: Some(folder_uri(root)),
        ..ArtifactLocation::default()
    });

    let mut bases = BTreeMap::new();
    bases.insert(
        SRCROOT.to_string(),
        ArtifactLocation {
            uri: Some(folder_uri(root)),
            description: Some(text("The workspace root (the folder of seam.toml).")),
            ..ArtifactLocation::default()
        },
    );

    let count = |s: CrossingStatus| a.crossings.iter().filter(|c| c.status == s).count();
    let mut props = BTreeMap::new();
    props.insert(
        "seam".to_string(),
        json!({
            "files": a.files,
            "modules": a.modules,
            "clocks": a.clocks.len(),
            "crossings": {
                "synchronized": count(CrossingStatus::Synchronized),
                "unsafe": count(CrossingStatus::Unsafe),
                "waived": count(CrossingStatus::Waived),
            },
        }),
    );

    let mut run = Run::builder()
        .tool(Tool::builder().driver(driver).build())
        .build();
    run.results = Some(results);
    run.invocations = Some(vec![invocation]);
    run.original_uri_base_ids = Some(bases);
    run.column_kind = Some(json!("unicodeCodePoints"));
    run.properties = Some(PropertyBag {
        additional_properties: props,
        ..PropertyBag::default()
    });

    let mut log = Sarif::builder()
        .version(json!("2.1.0"))
        .runs(vec![run])
        .build();
    log.schema = Some(SCHEMA_URI.to_string());
    log
}

/// The SARIF log as pretty JSON text.
pub fn render(
    a: &Analysis,
    config: &Config,
    read: &dyn Fn(&str) -> Option<String>,
    root: &Path,
) -> String {
    serde_json::to_string_pretty(&log(a, config, read, root)).unwrap_or_else(|_| "{}".to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inline_waiver_on_the_line_or_the_line_above() {
        let src = "a\n  // seam: allow(pulse-loss, low-mtbf) slow strobe\n  x <= y;\n";
        assert_eq!(inline_waiver(src, 3, "low-mtbf"), Some((2, 3)));
        assert_eq!(inline_waiver(src, 2, "pulse-loss"), Some((2, 3)));
        assert_eq!(inline_waiver(src, 3, "reconvergence"), None);
        assert_eq!(inline_waiver(src, 1, "low-mtbf"), None);
    }

    #[test]
    fn uris_are_encoded() {
        assert_eq!(encode_path("rtl/a b#.v"), "rtl/a%20b%23.v");
        assert!(is_absolute_uri("https://example.org/docs/"));
        assert!(!is_absolute_uri("docs/rules/"));
    }
}
