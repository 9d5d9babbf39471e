//! Code lens on each module header: the clock domains of its registers and the crossings that
//! end in it. Clicking runs `seam.moduleCrossings`, which lists them.

use std::collections::{BTreeMap, BTreeSet};

use seam_analysis::report::{Crossing, CrossingStatus};
use serde_json::{json, Value};
use tower_lsp::lsp_types::{CodeLens, Command, Url};

use super::convert::{span_range, TextView};
use super::documents::Encoding;
use super::inlay::local_registers;
use super::state::{DesignSnap, FileSnap};
use super::CMD_MODULE;

/// Crossings that end in `module`: the destination register is one of its registers (names
/// are compared as hierarchical paths, a shorter one matching at a `.` boundary), or the read
/// is inside the module's text.
pub fn crossings_into<'a>(design: &'a DesignSnap, module: &str) -> Vec<&'a Crossing> {
    let a = &design.analysis;
    let regs: Vec<String> = a
        .registers
        .iter()
        .filter(|r| r.module == module)
        .map(|r| format!("{}.{}", r.instance, r.signal))
        .collect();
    let same_path = |full: &str, other: &str| {
        full == other
            || full.ends_with(&format!(".{other}"))
            || other.ends_with(&format!(".{full}"))
    };
    let inside = |c: &Crossing| {
        design.files.values().any(|f| {
            f.display == c.span.file
                && f.model.modules.iter().any(|m| {
                    m.name == module && m.span.start <= c.span.start && c.span.end <= m.span.end
                })
        })
    };
    a.crossings
        .iter()
        .filter(|c| regs.iter().any(|r| same_path(r, &c.destination)) || inside(c))
        .collect()
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

pub fn title(
    design: &DesignSnap,
    module: &str,
    local: &BTreeMap<String, BTreeSet<String>>,
) -> String {
    let a = &design.analysis;
    let regs: Vec<_> = a.registers.iter().filter(|r| r.module == module).collect();
    if regs.is_empty() {
        let clocks: BTreeSet<&String> = local.values().flatten().collect();
        if clocks.is_empty() {
            return "no clocked registers".into();
        }
        let list = clocks.into_iter().cloned().collect::<Vec<_>>().join(", ");
        return format!("written on {list} · domains not known yet (no analysed instance)");
    }
    let doms: BTreeSet<String> = regs
        .iter()
        .map(|r| r.domain.clone().unwrap_or_else(|| "no domain".into()))
        .collect();
    let dom_text = format!(
        "{}: {}",
        if doms.len() == 1 {
            "1 domain"
        } else {
            "domains"
        },
        doms.into_iter().collect::<Vec<_>>().join(", ")
    );
    let cs = crossings_into(design, module);
    if cs.is_empty() {
        return format!("{dom_text} · no crossings in");
    }
    let unsafe_n = cs
        .iter()
        .filter(|c| c.status == CrossingStatus::Unsafe)
        .count();
    let sync_n = cs
        .iter()
        .filter(|c| c.status == CrossingStatus::Synchronized)
        .count();
    let waived_n = cs
        .iter()
        .filter(|c| c.status == CrossingStatus::Waived)
        .count();
    let mut parts = Vec::new();
    if unsafe_n > 0 {
        parts.push(format!("{unsafe_n} unsafe"));
    }
    if sync_n > 0 {
        parts.push(format!("{sync_n} synchronized"));
    }
    if waived_n > 0 {
        parts.push(format!("{waived_n} waived"));
    }
    format!(
        "{dom_text} · {} in ({})",
        plural(cs.len(), "crossing", "crossings"),
        parts.join(", ")
    )
}

pub fn lenses(
    design: &DesignSnap,
    key: &Url,
    uri: &Url,
    file: &FileSnap,
    enc: Encoding,
) -> Vec<CodeLens> {
    let Some(df) = design.files.get(key) else {
        return vec![];
    };
    let view = TextView {
        text: &file.text,
        edits: &file.edits,
    };
    let mut out: Vec<CodeLens> = df
        .model
        .modules
        .iter()
        .map(|m| {
            let range = span_range(Some(&view), df.good_seq, &m.name_span, enc);
            let t = title(design, &m.name, &local_registers(m));
            CodeLens {
                range,
                command: Some(Command {
                    title: t,
                    command: CMD_MODULE.into(),
                    arguments: Some(vec![json!(uri.to_string()), json!(m.name)]),
                }),
                data: None,
            }
        })
        .collect();
    // a second lens on each top module: the design MTBF and the weakest synchronizer
    let tops = &design.analysis.mtbf.tops;
    if let Some(t) = super::mtbf_view::top_lens_title(&design.analysis.mtbf) {
        for m in df.model.modules.iter().filter(|m| tops.contains(&m.name)) {
            out.push(CodeLens {
                range: span_range(Some(&view), df.good_seq, &m.name_span, enc),
                command: Some(Command {
                    title: t.clone(),
                    command: super::CMD_MTBF.into(),
                    arguments: Some(vec![json!(uri.to_string())]),
                }),
                data: None,
            });
        }
    }
    out
}

/// `seam.moduleCrossings`: the crossings into a module, as a message and as JSON.
pub fn module_crossings(design: &DesignSnap, module: &str) -> (String, Value) {
    let cs = crossings_into(design, module);
    if cs.is_empty() {
        return (
            format!("Seam: no domain crossings end in module {module}."),
            json!([]),
        );
    }
    let mut lines = vec![format!("Seam: crossings into module {module}:")];
    let mut list = Vec::new();
    for c in cs {
        let status = match c.status {
            CrossingStatus::Unsafe => "unsafe",
            CrossingStatus::Synchronized => "synchronized",
            CrossingStatus::Waived => "waived",
        };
        let how = c
            .scheme
            .clone()
            .map(|s| format!(", {s}"))
            .unwrap_or_default();
        lines.push(format!(
            "{} ({}) → {} ({}): {status}{how}",
            c.source, c.source_domain, c.destination, c.destination_domain
        ));
        list.push(json!({
            "source": c.source, "destination": c.destination,
            "source_domain": c.source_domain, "destination_domain": c.destination_domain,
            "status": status, "scheme": c.scheme, "bits": c.bits,
        }));
    }
    (lines.join("\n"), Value::Array(list))
}
