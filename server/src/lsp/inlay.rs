//! Inlay hints: the clock domain after each register's declaration. Where the design layer has
//! no instance of a module, the clock event the register is written on in this file.

use std::collections::{BTreeMap, BTreeSet};

use seam_analysis::model::{render, Edge, ItemKind, Module, Span};
use tower_lsp::lsp_types::{InlayHint, InlayHintLabel, InlayHintTooltip, Position, Range, Url};

use super::convert::{span_range, TextView};
use super::documents::{self, Encoding};
use super::state::{DesignSnap, FileSnap};

/// Just after `name` inside the (current) range of `span`; the span's end when it is not there.
pub fn after_name(file: &FileSnap, seq: u64, span: &Span, name: &str, enc: Encoding) -> Position {
    let view = TextView {
        text: &file.text,
        edits: &file.edits,
    };
    let r = span_range(Some(&view), seq, span, enc);
    let a = documents::position_to_char(&file.text, r.start, enc);
    let b = documents::position_to_char(&file.text, r.end, enc).max(a);
    let text = file.text.slice(a..b).to_string();
    // the name as a whole word
    let mut from = 0;
    while let Some(i) = text[from..].find(name) {
        let s = from + i;
        let e = s + name.len();
        let before = text[..s].chars().next_back();
        let after = text[e..].chars().next();
        let word = |c: Option<char>| c.is_some_and(|c| c.is_alphanumeric() || c == '_' || c == '$');
        if !word(before) && !word(after) {
            let chars = text[..e].chars().count();
            return documents::char_to_position(&file.text, a + chars, enc);
        }
        from = e;
    }
    r.end
}

fn declaration<'m>(m: &'m Module, name: &str) -> Option<&'m Span> {
    if let Some(p) = m.ports.iter().find(|p| p.name == name) {
        return Some(&p.span);
    }
    m.all_items().into_iter().find_map(|it| match &it.kind {
        ItemKind::Decl(d) if d.name == name => Some(&d.span),
        _ => None,
    })
}

/// Registers of a module by this file alone: name → clock events it is written on.
pub fn local_registers(m: &Module) -> BTreeMap<String, BTreeSet<String>> {
    let mut out: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for p in m.processes() {
        let Some(ev) = &p.clock else { continue };
        let e = match ev.edge {
            Edge::Posedge => "posedge ",
            Edge::Negedge => "negedge ",
            Edge::Any => "",
        };
        for a in &p.assigns {
            if let Some(n) = a.target.base_name() {
                if !p.locals.iter().any(|l| l == n) {
                    out.entry(n.to_string())
                        .or_default()
                        .insert(format!("{e}{}", render(&ev.signal)));
                }
            }
        }
    }
    out
}

pub fn hints(
    design: &DesignSnap,
    key: &Url,
    file: &FileSnap,
    range: Range,
    enc: Encoding,
) -> Vec<InlayHint> {
    let Some(df) = design.files.get(key) else {
        return vec![];
    };
    let a = &design.analysis;
    let mut out = Vec::new();
    for m in &df.model.modules {
        let regs: Vec<_> = a.registers.iter().filter(|r| r.module == m.name).collect();
        if !regs.is_empty() {
            // one hint per declaration; instances in different domains are all named
            let mut by_decl: BTreeMap<(usize, String), (Span, BTreeSet<String>)> = BTreeMap::new();
            for r in regs {
                if r.span.file != df.display {
                    continue;
                }
                let span = declaration(m, &r.signal)
                    .cloned()
                    .unwrap_or_else(|| r.span.clone());
                let d = r.domain.clone().unwrap_or_else(|| "no domain".into());
                by_decl
                    .entry((span.start, r.signal.clone()))
                    .or_insert_with(|| (span, BTreeSet::new()))
                    .1
                    .insert(d);
            }
            for ((_, name), (span, doms)) in by_decl {
                let pos = after_name(file, df.good_seq, &span, &name, enc);
                let label = doms.iter().cloned().collect::<Vec<_>>().join(" | ");
                out.push(hint(
                    pos,
                    format!("‹{label}›"),
                    format!(
                        "Clock domain of register `{name}` (every instance of `{}`)",
                        m.name
                    ),
                ));
            }
        } else {
            for (name, events) in local_registers(m) {
                let Some(span) = declaration(m, &name) else {
                    continue;
                };
                let pos = after_name(file, df.good_seq, span, &name, enc);
                let label = events.iter().cloned().collect::<Vec<_>>().join(" | ");
                out.push(hint(
                    pos,
                    format!("‹{label}›"),
                    format!("Register `{name}` is written on `{label}`; its design-level domain is not known (no analysed instance of `{}`)", m.name),
                ));
            }
        }
    }
    out.retain(|h| h.position >= range.start && h.position <= range.end);
    out.sort_by_key(|h| h.position);
    out
}

fn hint(position: Position, label: String, tooltip: String) -> InlayHint {
    InlayHint {
        position,
        label: InlayHintLabel::String(label),
        kind: None,
        text_edits: None,
        tooltip: Some(InlayHintTooltip::String(tooltip)),
        padding_left: Some(true),
        padding_right: None,
        data: None,
    }
}
