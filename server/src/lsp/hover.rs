//! Hover cards: what the analysis knows about the signal under the cursor (its domain, clock,
//! kind, reset, synchronizer stage, fan-in domains), per instance of the enclosing module;
//! what this file alone shows when the design layer has nothing on it.

use std::collections::BTreeMap;

use seam_analysis::config::format_frequency;
use seam_analysis::model::{render, Direction, Edge, ItemKind, Module};
use seam_analysis::report::{Analysis, ClockInfo, RegisterInfo, SignalInfo, SignalKind};
use tower_lsp::lsp_types::{Hover, HoverContents, MarkupContent, MarkupKind, Position, Range, Url};

use super::convert::{span_range, TextView};
use super::documents::{self, Encoding};
use super::state::{DesignSnap, FileSnap, Shared};

pub const FOOTER: &str = "Seam's findings are structural and advisory.";
pub const FIGURES: &str = "Frequencies come from the project settings; MTBF figures are estimates from a published \
formula and the parameters given, not silicon data. Use the vendor's characterization data and your sign-off flow for release.";

fn edge_word(e: Edge) -> &'static str {
    match e {
        Edge::Posedge => "rising edge",
        Edge::Negedge => "falling edge",
        Edge::Any => "any edge",
    }
}

/// The module of `file` whose text holds `pos`.
pub fn module_at<'m>(
    modules: &'m [Module],
    view: &TextView,
    seq: u64,
    pos: Position,
    enc: Encoding,
) -> Option<&'m Module> {
    modules.iter().find(|m| {
        let r = span_range(Some(view), seq, &m.span, enc);
        r.start <= pos && pos <= r.end
    })
}

fn clock<'a>(a: &'a Analysis, name: Option<&str>) -> Option<&'a ClockInfo> {
    let name = name?;
    a.clocks.iter().find(|c| c.name == name)
}

/// One line per fact, for one register instance. `figures` is set when a number is shown.
fn register_lines(a: &Analysis, r: &RegisterInfo, figures: &mut bool) -> Vec<String> {
    let mut out = Vec::new();
    let c = clock(a, r.clock.as_deref());
    match (&r.domain, &r.clock) {
        (Some(d), Some(clk)) => {
            let mut s = format!("Domain **`{d}`**: clock `{clk}`, {}", edge_word(r.edge));
            if let Some(c) = c {
                if let Some(f) = c.frequency_hz {
                    s.push_str(&format!(", {}", format_frequency(f)));
                    *figures = true;
                }
                if let Some(g) = &c.group {
                    s.push_str(&format!(", group `{g}`"));
                }
                if c.root != *clk {
                    s.push_str(&format!(" (root `{}`)", c.root));
                }
            }
            out.push(s);
        }
        (None, Some(clk)) => out.push(format!("Clock `{clk}`, {} (no domain)", edge_word(r.edge))),
        (Some(d), None) => out.push(format!("Domain **`{d}`**")),
        (None, None) => {
            out.push("Domain: not known (its clock could not be traced to a root)".into())
        }
    }
    out.push("Kind: register".into());
    if let Some(q) = &r.derived_from {
        out.push(format!("Clocked by a flop-derived clock (from `{q}`)"));
    }
    match &r.reset {
        Some(rs) => out.push(format!("Reset: {rs}")),
        None => out.push("Reset: none asynchronous".into()),
    }
    if let (Some(src), Some(d)) = (&r.reset_source, &r.domain) {
        if let Some((k, n)) = src.own_stage {
            out.push(format!("Reset synchronizer: stage {k} of {n}"));
        } else if src.synchronized {
            out.push(format!("Reset release: in step with `{d}`"));
        } else {
            out.push(format!(
                "Reset release: asynchronous to `{d}` (see `async-reset-release`)"
            ));
        }
    }
    if let Some((k, n, from)) = &r.stage {
        out.push(format!("Synchronizer: stage {k} of {n} from `{from}`"));
    }
    out.extend(super::mtbf_view::stage_lines(a, r, figures));
    out
}

fn signal_lines(a: &Analysis, s: &SignalInfo, figures: &mut bool) -> Vec<String> {
    let mut out = Vec::new();
    let doms = s
        .domains
        .iter()
        .map(|d| format!("`{d}`"))
        .collect::<Vec<_>>()
        .join(", ");
    match s.kind {
        SignalKind::Register => {
            out.push("Kind: register".into());
            if !doms.is_empty() {
                out.push(format!("Domain: {doms}"));
            }
        }
        SignalKind::Combinational => {
            out.push("Kind: combinational".into());
            out.push(if doms.is_empty() {
                "Fan-in domains: none (constants or undriven)".into()
            } else {
                format!("Fan-in domains: {doms}")
            });
        }
        SignalKind::Input => {
            out.push("Kind: input".into());
            out.push(if doms.is_empty() {
                "Domain: none given (not constrained)".into()
            } else {
                format!("Domain: {doms}")
            });
        }
        SignalKind::Clock => {
            out.push("Kind: clock".into());
            // root and frequency from the clock table; how many registers it clocks here and
            // whether it is derived or gated come with the analysis' notes for the instance
            let clocks: Vec<&ClockInfo> = a
                .clocks
                .iter()
                .filter(|c| s.domains.contains(&c.domain) || s.domains.contains(&c.name))
                .collect();
            for c in clocks {
                let mut line = format!("Clock `{}` (root `{}`)", c.name, c.root);
                if let Some(f) = c.frequency_hz {
                    line.push_str(&format!(", {}", format_frequency(f)));
                    *figures = true;
                }
                if let Some(g) = &c.group {
                    line.push_str(&format!(", group `{g}`"));
                }
                out.push(line);
            }
        }
    }
    add_notes(&mut out, &s.notes, figures);
    out
}

/// Lowercase words, without Markdown marks and punctuation, for comparing lines.
fn normalized(s: &str) -> String {
    let kept: String = s
        .chars()
        .filter(|c| !"`*:,;.".contains(*c))
        .collect::<String>()
        .to_lowercase();
    kept.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The analysis' free-text notes, leaving out those that repeat a line already shown.
fn add_notes(out: &mut Vec<String>, notes: &[String], figures: &mut bool) {
    for n in notes {
        let nn = normalized(n);
        if nn.is_empty() || out.iter().any(|l| normalized(l) == nn) {
            continue;
        }
        if n.contains("MTBF") {
            *figures = true;
        }
        out.push(n.clone());
    }
}

/// What this file alone says about a name (no design-level data).
fn local_lines(m: &Module, name: &str) -> Option<Vec<String>> {
    let mut out = Vec::new();
    let mut known = false;
    if let Some(p) = m.ports.iter().find(|p| p.name == name) {
        known = true;
        let dir = match p.direction {
            Some(Direction::Input) => "input",
            Some(Direction::Output) => "output",
            Some(Direction::Inout) => "inout",
            Some(Direction::Ref) => "ref",
            None => "port",
        };
        out.push(format!("Port: {dir}"));
    }
    let items = m.all_items();
    for it in &items {
        match &it.kind {
            ItemKind::Decl(d) if d.name == name => known = true,
            ItemKind::PortDecl(p) if p.name == name => {
                known = true;
                if out.is_empty() {
                    out.push("Port".into());
                }
            }
            _ => {}
        }
    }
    let mut clocked: Vec<String> = Vec::new();
    let mut comb = false;
    for it in &items {
        match &it.kind {
            ItemKind::Process(p)
                if p.assigns.iter().any(|a| a.target.base_name() == Some(name)) =>
            {
                known = true;
                match &p.clock {
                    Some(ev) => {
                        let e = match ev.edge {
                            Edge::Posedge => "posedge ",
                            Edge::Negedge => "negedge ",
                            Edge::Any => "",
                        };
                        let s = format!("{e}{}", render(&ev.signal));
                        if !clocked.contains(&s) {
                            clocked.push(s);
                        }
                    }
                    None => comb = true,
                }
            }
            ItemKind::Assign(a) if a.target.base_name() == Some(name) => {
                known = true;
                comb = true;
            }
            _ => {}
        }
    }
    if !known {
        return None;
    }
    for c in &clocked {
        out.push(format!("Kind: register, written on `{c}` in this module"));
    }
    if comb && clocked.is_empty() {
        out.push("Kind: combinational".into());
    }
    out.push(format!(
        "No design-level data: module `{}` has no analysed instance yet (it is not reached from a top, or the design is still loading).",
        m.name
    ));
    Some(out)
}

/// The text of each design file whose buffer still matches the model the analysis used (a
/// fix's offsets are only right on that text), by display path.
pub fn design_texts<'a>(
    sh: &'a Shared,
    design: &'a DesignSnap,
) -> impl Fn(&str) -> Option<String> + 'a {
    move |p: &str| {
        let (u, d) = design
            .files
            .iter()
            .find(|(_, d)| d.display == p && !d.stale)?;
        let s = sh.file(u)?;
        (!documents::edited_since(&s.edits, d.good_seq)).then(|| s.text.to_string())
    }
}

/// `No automatic fix: <reason>` for each finding under the cursor that has no RTL fix.
fn no_fix_lines(
    design: &DesignSnap,
    display: &str,
    view: &TextView,
    seq: u64,
    pos: Position,
    enc: Encoding,
    texts: &seam_analysis::fix::TextOf,
) -> Vec<String> {
    use seam_analysis::fix;
    let models: std::collections::HashMap<&str, &seam_analysis::model::FileModel> = design
        .files
        .values()
        .map(|d| (d.display.as_str(), &*d.model))
        .collect();
    let model_of = |p: &str| models.get(p).copied();
    let mut out = Vec::new();
    for f in &design.analysis.findings {
        if f.waived || f.rule == "syntax-error" || f.span.file != display {
            continue;
        }
        let r = span_range(Some(view), seq, &f.span, enc);
        if !(r.start <= pos && pos <= r.end) {
            continue;
        }
        let fixes = fix::fixes_for(f, &model_of, texts);
        if fixes.iter().any(|x| x.kind != "waive") {
            continue;
        }
        if let Some(why) = fix::unavailable_reason(f, &model_of, texts) {
            let line = format!("No automatic fix: {why}");
            if !out.contains(&line) {
                out.push(line);
            }
        }
    }
    out
}

pub fn hover(
    design: &DesignSnap,
    key: &Url,
    file: &FileSnap,
    pos: Position,
    enc: Encoding,
    texts: &seam_analysis::fix::TextOf,
) -> Option<Hover> {
    let ch = documents::position_to_char(&file.text, pos, enc);
    let (ws, we) = documents::word_at(&file.text, ch)?;
    let name = file.text.slice(ws..we).to_string();
    let range = Range {
        start: documents::char_to_position(&file.text, ws, enc),
        end: documents::char_to_position(&file.text, we, enc),
    };
    let df = design.files.get(key)?;
    let view = TextView {
        text: &file.text,
        edits: &file.edits,
    };
    let module = module_at(&df.model.modules, &view, df.good_seq, pos, enc)?;
    let a = &design.analysis;

    // per instance: the lines that describe it; identical descriptions are grouped
    let mut figures = false;
    let mut groups: BTreeMap<Vec<String>, Vec<String>> = BTreeMap::new();
    let mut kind_word = "";
    for r in a
        .registers
        .iter()
        .filter(|r| r.module == module.name && r.signal == name)
    {
        kind_word = "register";
        let mut lines = register_lines(a, r, &mut figures);
        if let Some(s) = a
            .signals
            .iter()
            .find(|s| s.instance == r.instance && s.module == r.module && s.name == name)
        {
            add_notes(&mut lines, &s.notes, &mut figures);
        }
        groups.entry(lines).or_default().push(r.instance.clone());
    }
    if groups.is_empty() {
        for s in a
            .signals
            .iter()
            .filter(|s| s.module == module.name && s.name == name)
        {
            kind_word = match s.kind {
                SignalKind::Register => "register",
                SignalKind::Combinational => "net",
                SignalKind::Input => "input",
                SignalKind::Clock => "clock",
            };
            let lines = signal_lines(a, s, &mut figures);
            groups.entry(lines).or_default().push(s.instance.clone());
        }
    }
    // findings under the cursor without an RTL fix say why (the buffer must match the model)
    let no_fix = if documents::edited_since(&file.edits, df.good_seq) {
        Vec::new()
    } else {
        no_fix_lines(design, &df.display, &view, df.good_seq, pos, enc, texts)
    };
    let mut md = String::new();
    if groups.is_empty() {
        match local_lines(module, &name) {
            Some(lines) => {
                md.push_str(&format!("**`{name}`** in module `{}`\n\n", module.name));
                for l in lines {
                    md.push_str(&format!("- {l}\n"));
                }
            }
            None if !no_fix.is_empty() => {
                md.push_str(&format!("**`{name}`** in module `{}`\n", module.name))
            }
            None => return None,
        }
    } else {
        md.push_str(&format!(
            "**`{name}`** · {kind_word} in module `{}`\n",
            module.name
        ));
        let several = groups.len() > 1;
        for (lines, mut instances) in groups {
            instances.sort();
            let shown: Vec<String> = instances.iter().take(4).map(|i| format!("`{i}`")).collect();
            let more = instances.len().saturating_sub(4);
            let inst = if more > 0 {
                format!("{} and {more} more", shown.join(", "))
            } else {
                shown.join(", ")
            };
            md.push_str(&format!(
                "\n{} {inst}\n\n",
                if instances.len() == 1 {
                    "Instance"
                } else {
                    "Instances"
                }
            ));
            for l in lines {
                md.push_str(&format!("- {l}\n"));
            }
            if several {
                md.push('\n');
            }
        }
    }
    if !no_fix.is_empty() {
        md.push('\n');
        for l in &no_fix {
            md.push_str(&format!("{l}\n\n"));
        }
    }
    if df.stale {
        md.push_str(
            "\n_This file does not parse now: the facts are from its last version that did._\n",
        );
    }
    md.push_str(&format!(
        "\n---\n_{FOOTER}{}_\n",
        if figures {
            format!(" {FIGURES}")
        } else {
            String::new()
        }
    ));
    Some(Hover {
        contents: HoverContents::Markup(MarkupContent {
            kind: MarkupKind::Markdown,
            value: md,
        }),
        range: Some(range),
    })
}
