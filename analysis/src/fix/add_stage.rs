//! Add one synchronizer stage (`low-mtbf`).
//!
//! In the module that holds the chain: one new one-bit register (`logic` in SystemVerilog
//! files, `reg` in Verilog files) on the last stage's clock and edge, with its asynchronous
//! reset and reset value, loading the old last stage; every other read of the old last stage
//! in the module then reads the new one. The chain gives stage 1 one more destination period
//! to resolve, and every reader sees the value one destination-clock cycle later; the title
//! says so, with what the MTBF model expects of the longer chain (an estimate).

use serde::{Deserialize, Serialize};

use super::text::{indent_at, indent_unit, line_end_incl, line_start, names_in, newline, word_in};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::finding::Finding;
use crate::model::{render, Edge, Expr, ItemKind, Language, Module, Process, ProcessKind};

/// What the design layer found for the chain (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StageHint {
    /// Display path of the chain's file.
    pub file: String,
    pub module: String,
    /// The old last stage as the module names it.
    pub last: String,
    /// `span.start` of its process (clock, edge and reset of the new stage).
    pub last_proc: usize,
    /// Its constant reset value, when it has an asynchronous reset.
    pub reset_value: Option<bool>,
    /// Stages now.
    pub stages: u32,
    /// The synchronized signal, for the comment.
    pub source: String,
    /// Estimated MTBF with one more stage (fleet), as printed.
    pub after: String,
    pub target_years: f64,
    /// Fewest stages that meet the target (up to 10), per the model.
    pub needed: Option<u32>,
    /// The stage before the last, when the last is an output port: the new stage goes
    /// between them (the port keeps its name, its readers outside see one cycle more).
    #[serde(default)]
    pub before: Option<String>,
}

fn top_process(m: &Module, start: usize) -> Option<&Process> {
    m.items.iter().find_map(|it| match &it.kind {
        ItemKind::Process(p) if p.span.start == start => Some(p),
        _ => None,
    })
}

fn edge_kw(e: Edge) -> Option<&'static str> {
    match e {
        Edge::Posedge => Some("posedge"),
        Edge::Negedge => Some("negedge"),
        Edge::Any => None,
    }
}

/// The new stage's name: the old one with its trailing number raised (`meta_s2` →
/// `meta_s3`), else `<last>_stage<N+1>`; numbered on while the module or file uses it.
fn stage_name(last: &str, next: u32, m: &Module, text: &str) -> String {
    let taken = names_in(m);
    let free = |c: &str| !taken.contains(c) && !word_in(text, c);
    let digits = last.len() - last.trim_end_matches(|c: char| c.is_ascii_digit()).len();
    if digits > 0 && digits < last.len() && digits <= 6 {
        let (stem, num) = last.split_at(last.len() - digits);
        if let Ok(k) = num.parse::<u32>() {
            for i in 1..100 {
                let c = format!("{stem}{}", k + i);
                if free(&c) {
                    return c;
                }
            }
        }
    }
    for i in 0..1000u32 {
        let c = format!("{last}_stage{}", next + i);
        if free(&c) {
            return c;
        }
    }
    format!("{last}_seam_stage{next}")
}

/// Byte ranges of every whole-word `name` in `text[from..to]` outside comments and strings.
fn occurrences(text: &str, from: usize, to: usize, name: &str) -> Vec<usize> {
    let b = text.as_bytes();
    let to = to.min(b.len());
    let is_w = |c: u8| c.is_ascii_alphanumeric() || c == b'_' || c == b'$';
    let mut out = Vec::new();
    let mut i = from;
    while i < to {
        if b[i] == b'/' && b.get(i + 1) == Some(&b'/') {
            while i < to && b[i] != b'\n' {
                i += 1;
            }
        } else if b[i] == b'/' && b.get(i + 1) == Some(&b'*') {
            i += 2;
            while i < to && !(b[i] == b'*' && b.get(i + 1) == Some(&b'/')) {
                i += 1;
            }
            i += 2;
        } else if b[i] == b'"' {
            i += 1;
            while i < to && b[i] != b'"' {
                i += if b[i] == b'\\' { 2 } else { 1 };
            }
            i += 1;
        } else if is_w(b[i]) {
            let s = i;
            while i < to && is_w(b[i]) {
                i += 1;
            }
            // a word right after `.` or `\` is a hierarchical part or escaped name, not ours
            let prev = s.checked_sub(1).map(|p| b[p]);
            if &text[s..i] == name && prev != Some(b'.') && prev != Some(b'\\') {
                out.push(s);
            }
        } else {
            i += 1;
        }
    }
    out
}

/// Where `e` reads `name` (identifier starts and ends).
fn reads_in(e: &Expr, name: &str, out: &mut Vec<(usize, usize)>) {
    for id in e.idents() {
        if let Expr::Ident { name: n, loc } = id {
            if n == name {
                out.push((loc.start as usize, loc.end as usize));
            }
        }
    }
}

/// Where a target expression writes `name` (the written names, not index reads).
fn writes_in(e: &Expr, name: &str, out: &mut Vec<usize>) {
    match e {
        Expr::Ident { name: n, loc } if n == name => out.push(loc.start as usize),
        Expr::Select { base, .. } => writes_in(base, name, out),
        Expr::Concat { parts } => parts.iter().for_each(|p| writes_in(p, name, out)),
        _ => {}
    }
}

/// Index reads inside a target (`mem[last] <= ...`).
fn target_reads(e: &Expr, name: &str, out: &mut Vec<(usize, usize)>) {
    match e {
        Expr::Select { base, sel } => {
            target_reads(base, name, out);
            match sel.as_ref() {
                crate::model::Select::Bit { index } => reads_in(index, name, out),
                crate::model::Select::Part { msb, lsb } => {
                    reads_in(msb, name, out);
                    reads_in(lsb, name, out)
                }
                crate::model::Select::Up { base, width }
                | crate::model::Select::Down { base, width } => {
                    reads_in(base, name, out);
                    reads_in(width, name, out)
                }
            }
        }
        Expr::Concat { parts } => parts.iter().for_each(|p| target_reads(p, name, out)),
        _ => {}
    }
}

/// The edits, or why the fix cannot be made on this text.
pub fn fix<'m>(
    f: &Finding,
    h: &StageHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let model = files(&h.file).ok_or("the chain's file is not in the design")?;
    let text = text_of(&h.file).ok_or("the chain's file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == h.module)
        .ok_or("the chain's module is gone")?;
    let lp = top_process(m, h.last_proc)
        .ok_or("the last stage's process sits inside a generate block (not rewritten)")?;
    let clock = lp
        .clock
        .as_ref()
        .ok_or("the last stage's process has no clock")?;
    let edge = edge_kw(clock.edge).ok_or("the last stage's process has no clock edge")?;
    let clk = render(&clock.signal);
    if !matches!(clock.signal, Expr::Ident { .. }) {
        return Err(format!("the clock `{clk}` is not a plain name"));
    }
    let reset = match lp.async_controls.as_slice() {
        [] => None,
        [c] => {
            let sig = render(&c.signal);
            if !matches!(c.signal, Expr::Ident { .. }) {
                return Err(format!("the reset `{sig}` is not a plain name"));
            }
            let ev = lp
                .events
                .iter()
                .find(|e| render(&e.signal) == sig)
                .ok_or("the reset is not in the event list")?;
            let ev_edge = edge_kw(ev.edge).ok_or("the reset has no edge")?;
            Some((sig, c.active_high, ev_edge))
        }
        _ => return Err("the last stage has several asynchronous controls".into()),
    };
    if reset.is_some() && h.reset_value.is_none() {
        return Err("the last stage's reset value is not known".into());
    }
    let name = h.last.as_str();
    let sv = model.language == Language::SystemVerilog;
    let kw = if sv && lp.kind == ProcessKind::AlwaysFf {
        "always_ff"
    } else {
        "always"
    };
    if let Some(prev) = &h.before {
        let clocking = Clocking {
            clk: &clk,
            edge,
            reset: reset.as_ref().map(|(s, hi, e)| (s.as_str(), *hi, *e)),
            kw,
        };
        return in_front_of_port(f, h, m, lp, &text, prev, sv, &clocking);
    }

    // every use of the old last stage in the module: reads are redirected, writes and its
    // declaration stay; a use the model does not show (a macro, an `initial` block, a
    // generate block, a function) stops the fix rather than be missed
    let mut reads: Vec<(usize, usize)> = Vec::new();
    let mut writes: Vec<usize> = Vec::new();
    let mut decl_spans: Vec<(usize, usize)> = Vec::new();
    for it in &m.items {
        match &it.kind {
            ItemKind::Process(p) => {
                if p.events.iter().any(|e| e.signal.reads().contains(&name)) {
                    return Err(format!(
                        "`{name}` is in an event list (a clock or a reset): not rewritten"
                    ));
                }
                for a in &p.assigns {
                    reads_in(&a.rhs, name, &mut reads);
                    for g in &a.guards {
                        reads_in(&g.cond, name, &mut reads);
                    }
                    writes_in(&a.target, name, &mut writes);
                    target_reads(&a.target, name, &mut reads);
                }
            }
            ItemKind::Assign(a) => {
                reads_in(&a.rhs, name, &mut reads);
                target_reads(&a.target, name, &mut reads);
            }
            ItemKind::Instance(i) => {
                for c in i.connections.iter().chain(i.params.iter()) {
                    if let Some(e) = &c.expr {
                        reads_in(e, name, &mut reads);
                    }
                }
            }
            ItemKind::Decl(d) => {
                if d.name == name {
                    decl_spans.push((d.span.start, d.span.end));
                    decl_spans.push((it.span.start, it.span.end));
                }
                if let Some(e) = &d.init {
                    reads_in(e, name, &mut reads);
                }
            }
            _ => {}
        }
    }
    reads.sort();
    reads.dedup();
    for &(s, e) in &reads {
        if text.get(s..e) != Some(name) {
            return Err(format!("`{name}` is read inside a macro"));
        }
    }
    let decl = decl_spans
        .iter()
        .copied()
        .min()
        .ok_or(format!("`{name}` is not declared in the module body"))?;
    for at in occurrences(&text, m.span.start, m.span.end, name) {
        let known = reads.iter().any(|r| r.0 == at)
            || writes.contains(&at)
            || decl_spans.iter().any(|(s, e)| *s <= at && at < *e);
        if !known {
            let line = text.get(..at).map_or(0, |t| t.matches('\n').count()) + 1;
            return Err(format!(
                "`{name}` is used on line {line} where the fix cannot follow it (a macro, a generate block, an initial block or a function)"
            ));
        }
    }
    if reads.is_empty() {
        return Err(format!("`{name}` is not read in `{}`", m.name));
    }

    let nl = newline(&text);
    let u = indent_unit(&text);
    let next = h.stages + 1;
    let new = stage_name(name, next, m, &text);

    // the declaration goes on the line after the old one's (it precedes every read)
    let decl_end = decl_spans
        .iter()
        .map(|x| x.1)
        .max()
        .unwrap_or(decl.1)
        .min(text.len());
    let after_decl = line_end_incl(&text, decl_end.saturating_sub(1).max(decl.0));
    let rest = text.get(decl_end..after_decl).unwrap_or("");
    let code = rest.split("//").next().unwrap_or("").trim();
    let ends_here = code.ends_with(';')
        || (code.is_empty()
            && text
                .get(..decl_end)
                .is_some_and(|t| t.trim_end().ends_with(';')));
    if !ends_here || rest.contains("/*") {
        return Err(format!("the declaration of `{name}` does not end its line"));
    }
    let dind = indent_at(&text, decl.0);
    let decl_text = if text
        .get(..after_decl)
        .is_some_and(|t| t.ends_with(['\n', '\r']))
    {
        format!("{dind}{} {new};{nl}", if sv { "logic" } else { "reg" })
    } else {
        format!("{nl}{dind}{} {new};", if sv { "logic" } else { "reg" })
    };

    // the process goes on the line after the last stage's process
    let pend = lp.span.end.min(text.len());
    let after_proc = line_end_incl(&text, pend.saturating_sub(1).max(lp.span.start));
    let rest = text.get(pend..after_proc).unwrap_or("");
    if !(rest.trim().is_empty() || rest.trim_start().starts_with("//")) {
        return Err("the last stage's process does not end its line".into());
    }
    if !text
        .get(line_start(&text, lp.span.start)..lp.span.start)
        .is_some_and(|s| s.trim().is_empty())
    {
        return Err("the last stage's process does not start its line".into());
    }
    let ind = indent_at(&text, lp.span.start);
    let events = match &reset {
        Some((sig, _, e)) => format!("{edge} {clk} or {e} {sig}"),
        None => format!("{edge} {clk}"),
    };
    let mut b = String::new();
    if !text
        .get(..after_proc)
        .is_some_and(|t| t.ends_with(['\n', '\r']))
    {
        b.push_str(nl);
    }
    b.push_str(nl);
    b.push_str(&format!(
        "{ind}// stage {next} of the `{}` synchronizer (quick fix: +1 `{clk}` cycle of latency){nl}",
        h.source
    ));
    b.push_str(&format!("{ind}{kw} @({events}) begin{nl}"));
    match &reset {
        Some((sig, high, _)) => {
            let v = if h.reset_value == Some(true) {
                "1'b1"
            } else {
                "1'b0"
            };
            let cond = if *high {
                sig.clone()
            } else {
                format!("!{sig}")
            };
            b.push_str(&format!("{ind}{u}if ({cond}) {new} <= {v};{nl}"));
            b.push_str(&format!("{ind}{u}else {new} <= {name};{nl}"));
        }
        None => b.push_str(&format!("{ind}{u}{new} <= {name};{nl}")),
    }
    b.push_str(&format!("{ind}end{nl}"));
    let edits = stage_edits(
        &h.file,
        &text,
        (after_decl, decl_text),
        (after_proc, b),
        &reads,
        &new,
    );
    let outlook = outlook(h);
    Ok(Fix {
        title: format!(
            "Add one synchronizer stage after `{name}` (+1 `{clk}` cycle of latency; {outlook})"
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "add-stage".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits,
    })
}

/// What the model expects of the longer chain, for the title (an estimate).
fn outlook(h: &StageHint) -> String {
    let next = h.stages + 1;
    match h.needed {
        Some(k) if k <= next => format!(
            "estimated MTBF {} with {next} stages, target {} years",
            h.after, h.target_years
        ),
        Some(k) => format!(
            "estimated MTBF {} with {next} stages, still below the target of {} years: {k} stages would meet it",
            h.after, h.target_years
        ),
        None => format!(
            "estimated MTBF {} with {next} stages, still below the target of {} years: no stage count up to 10 meets it",
            h.after, h.target_years
        ),
    }
}

/// Clock, edge, reset (name, active high, edge) and process keyword of the new stage.
struct Clocking<'a> {
    clk: &'a str,
    edge: &'a str,
    reset: Option<(&'a str, bool, &'a str)>,
    kw: &'a str,
}

/// The new stage's process text, `new <= from`, indented at `ind`.
fn stage_process(
    c: &Clocking,
    h: &StageHint,
    (new, from, k): (&str, &str, u32),
    ind: &str,
    text: &str,
) -> String {
    let nl = newline(text);
    let u = indent_unit(text);
    let events = match c.reset {
        Some((sig, _, e)) => format!("{} {} or {e} {sig}", c.edge, c.clk),
        None => format!("{} {}", c.edge, c.clk),
    };
    let mut b = format!(
        "{ind}// stage {k} of the `{}` synchronizer (quick fix: +1 `{}` cycle of latency){nl}",
        h.source, c.clk
    );
    b.push_str(&format!("{ind}{} @({events}) begin{nl}", c.kw));
    match c.reset {
        Some((sig, high, _)) => {
            let v = if h.reset_value == Some(true) {
                "1'b1"
            } else {
                "1'b0"
            };
            let cond = if high {
                sig.to_string()
            } else {
                format!("!{sig}")
            };
            b.push_str(&format!("{ind}{u}if ({cond}) {new} <= {v};{nl}"));
            b.push_str(&format!("{ind}{u}else {new} <= {from};{nl}"));
        }
        None => b.push_str(&format!("{ind}{u}{new} <= {from};{nl}")),
    }
    b.push_str(&format!("{ind}end{nl}"));
    b
}

/// The line after `at`'s line, when the item ending at `end` ends its line (a `;` there or
/// before, then only blanks or a line comment).
fn after_line(text: &str, start: usize, end: usize) -> Option<usize> {
    let end = end.min(text.len());
    let after = line_end_incl(text, end.saturating_sub(1).max(start));
    let rest = text.get(end..after)?;
    let code = rest.split("//").next().unwrap_or("").trim();
    let ends = code.is_empty() || code == ";" || code.ends_with(';');
    (ends && !rest.contains("/*")).then_some(after)
}

/// The last stage is an output port: a new stage goes between the stage before it and the
/// port, whose loads now read the new stage; the port keeps its name and its readers.
#[allow(clippy::too_many_arguments)]
fn in_front_of_port(
    f: &Finding,
    h: &StageHint,
    m: &Module,
    lp: &Process,
    text: &str,
    prev: &str,
    sv: bool,
    c: &Clocking,
) -> Result<Fix, String> {
    let name = h.last.as_str();
    let mut reads: Vec<(usize, usize)> = Vec::new();
    for a in lp.assigns.iter().filter(|a| !a.in_reset) {
        let mut w = Vec::new();
        writes_in(&a.target, name, &mut w);
        if !w.is_empty() {
            reads_in(&a.rhs, prev, &mut reads);
        }
    }
    reads.sort();
    reads.dedup();
    if reads.is_empty() {
        return Err(format!("`{name}` does not load `{prev}`"));
    }
    for &(s, e) in &reads {
        if text.get(s..e) != Some(prev) {
            return Err(format!("`{prev}` is read inside a macro"));
        }
    }
    let decl = m
        .items
        .iter()
        .find_map(|it| match &it.kind {
            ItemKind::Decl(d) if d.name == prev => {
                Some((it.span.start.min(d.span.start), it.span.end.max(d.span.end)))
            }
            _ => None,
        })
        .ok_or(format!("`{prev}` is not declared in the module body"))?;
    let after_decl = after_line(text, decl.0, decl.1)
        .ok_or(format!("the declaration of `{prev}` does not end its line"))?;
    let pend = lp.span.end.min(text.len());
    let after_proc = after_line(text, lp.span.start, pend)
        .ok_or("the last stage's process does not end its line")?;
    if !text
        .get(line_start(text, lp.span.start)..lp.span.start)
        .is_some_and(|s| s.trim().is_empty())
    {
        return Err("the last stage's process does not start its line".into());
    }
    let nl = newline(text);
    let new = stage_name(prev, h.stages, m, text);
    let dind = indent_at(text, decl.0);
    let kw = if sv { "logic" } else { "reg" };
    let decl_text = if text
        .get(..after_decl)
        .is_some_and(|t| t.ends_with(['\n', '\r']))
    {
        format!("{dind}{kw} {new};{nl}")
    } else {
        format!("{nl}{dind}{kw} {new};")
    };
    let mut b = String::new();
    if !text
        .get(..after_proc)
        .is_some_and(|t| t.ends_with(['\n', '\r']))
    {
        b.push_str(nl);
    }
    b.push_str(nl);
    let ind = indent_at(text, lp.span.start);
    b.push_str(&stage_process(c, h, (&new, prev, h.stages), &ind, text));
    let edits = stage_edits(
        &h.file,
        text,
        (after_decl, decl_text),
        (after_proc, b),
        &reads,
        &new,
    );
    Ok(Fix {
        title: format!(
            "Add one synchronizer stage before the output `{name}` (+1 `{}` cycle of latency; {})",
            c.clk,
            outlook(h)
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "add-stage".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits,
    })
}

/// The edits of an added stage: its declaration, its process (with a blank line before the
/// item after it), and every moved read renamed to the new stage.
fn stage_edits(
    file: &str,
    text: &str,
    (after_decl, decl_text): (usize, String),
    (after_proc, mut process): (usize, String),
    reads: &[(usize, usize)],
    new: &str,
) -> Vec<TextEdit> {
    let nl = newline(text);
    let next_line = text
        .get(after_proc..)
        .and_then(|t| t.lines().next())
        .unwrap_or("");
    if !next_line.trim().is_empty() && !next_line.trim_start().starts_with("endmodule") {
        process.push_str(nl);
    }
    let edit = |start: usize, end: usize, text: String| TextEdit {
        file: file.to_string(),
        start,
        end,
        text,
    };
    let mut edits = vec![
        edit(after_decl, after_decl, decl_text),
        edit(after_proc, after_proc, process),
    ];
    edits.extend(reads.iter().map(|&(s, e)| edit(s, e, new.to_string())));
    edits
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::finding::Severity;
    use crate::model::{FileModel, Span};
    use crate::parse::{parse_file, MacroTable, ParseOptions};

    /// Parse `src` (sv-parser, through Seam's front end) and plan a stage after `s2`, whose
    /// process is the one that loads it.
    fn run(src: &str) -> Result<(Fix, String), String> {
        let macros = MacroTable::with_defines([("SYNTHESIS", None)]);
        let model: FileModel = parse_file(
            "t.v",
            "t.v",
            src.as_bytes(),
            &macros,
            &ParseOptions::default(),
        )
        .model;
        assert!(model.problems.is_empty(), "{:?}", model.problems);
        let m = &model.modules[0];
        let lp = m
            .items
            .iter()
            .find_map(|it| match &it.kind {
                ItemKind::Process(p)
                    if p.assigns.iter().any(|a| a.target.base_name() == Some("s2")) =>
                {
                    Some(p.span.start)
                }
                _ => None,
            })
            .expect("the last stage's process");
        let h = StageHint {
            file: "t.v".into(),
            module: m.name.clone(),
            last: "s2".into(),
            last_proc: lp,
            reset_value: None,
            stages: 2,
            source: "d".into(),
            after: "1.00e+20 years".into(),
            target_years: 1000.0,
            needed: Some(3),
            before: None,
        };
        let f = Finding::new("low-mtbf", Severity::Warning, Span::default(), "m");
        let files = [model.clone()];
        let of = super::super::in_slice(&files);
        let text = src.to_string();
        let text_of = move |p: &str| (p == "t.v").then(|| text.clone());
        let fx = fix(&f, &h, &of, &text_of)?;
        let edits: Vec<&TextEdit> = fx.edits.iter().collect();
        let out = super::super::apply(src, &edits).expect("edits apply");
        Ok((fx, out))
    }

    const HEAD: &str = "module t (input clk, input d, output reg [3:0] n);\n  reg s1, s2;\n  always @(posedge clk) begin\n    s1 <= d;\n    s2 <= s1;\n  end\n";

    #[test]
    fn readers_move_to_the_new_stage_and_the_title_says_the_cost() {
        let src = format!("{HEAD}  always @(posedge clk) if (s2) n <= n + 4'd1;\nendmodule\n");
        let (fx, out) = run(&src).unwrap();
        assert!(out.contains("  reg s1, s2;\n  reg s3;\n"), "{out}");
        assert!(out.contains("    s3 <= s2;\n"), "{out}");
        assert!(out.contains("if (s3) n <= n + 4'd1;"), "{out}");
        assert!(
            fx.title.contains("+1 `clk` cycle of latency") && fx.title.contains("estimated"),
            "{}",
            fx.title
        );
        // the fixed text parses again, and the new stage is a process of the module
        let again = parse_file(
            "t.v",
            "t.v",
            out.as_bytes(),
            &MacroTable::default(),
            &ParseOptions::default(),
        )
        .model;
        assert!(again.problems.is_empty(), "{:?}", again.problems);
        assert_eq!(again.modules[0].processes().count(), 3);
    }

    #[test]
    fn uses_the_model_cannot_follow_stop_the_fix() {
        // an initial block, a comment and a string: only the initial block counts
        let src = format!(
            "{HEAD}  // s2 is the last stage\n  always @(posedge clk) if (s2) n <= n + 4'd1;\n  initial $display(\"s2 %b\", s2);\nendmodule\n"
        );
        let e = run(&src).unwrap_err();
        assert!(e.contains("line 9"), "{e}");
        // a read inside a generate block
        let src = format!(
            "{HEAD}  generate if (1) begin : g\n    always @(posedge clk) if (s2) n <= n + 4'd1;\n  end endgenerate\nendmodule\n"
        );
        assert!(run(&src).unwrap_err().contains("cannot follow"));
        // the last stage used as a clock
        let src = format!("{HEAD}  always @(posedge s2) n <= n + 4'd1;\nendmodule\n");
        assert!(run(&src).unwrap_err().contains("event list"));
    }

    #[test]
    fn names_and_words() {
        let t = "a s2 b.s2 \\s2 // s2\n/* s2 */ \"s2\" s2x s2";
        assert_eq!(occurrences(t, 0, t.len(), "s2"), vec![2, t.len() - 2]);
        let src = format!("{HEAD}endmodule\n");
        let macros = MacroTable::default();
        let m = parse_file(
            "t.v",
            "t.v",
            src.as_bytes(),
            &macros,
            &ParseOptions::default(),
        )
        .model;
        let md = &m.modules[0];
        assert_eq!(stage_name("s2", 3, md, &src), "s3");
        assert_eq!(stage_name("s1", 3, md, &src), "s3"); // s2 is taken
        assert_eq!(stage_name("q", 3, md, &src), "q_stage3");
        assert_eq!(stage_name("q", 3, md, "wire q_stage3;"), "q_stage4");
    }
}
