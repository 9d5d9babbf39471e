//! Insert an N-flop synchronizer for a single-bit level crossing (`unsynchronized-crossing`).
//!
//! In the destination module: stage registers (`logic` in SystemVerilog files, `reg` in
//! Verilog files), one process on the destination clock and edge, reset (when the destination
//! flop has an asynchronous reset) to the source's reset value, and every read of the crossing
//! signal in the destination processes replaced by the last stage. Adds N destination clock
//! cycles of latency, which the title says.

use std::collections::BTreeSet;

use serde::{Deserialize, Serialize};

use super::text::{
    bit_select_end, fresh_names, ident_of, indent_at, indent_unit, line_start, names_in, newline,
};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::finding::Finding;
use crate::model::{render, Edge, Expr, ItemKind, Language, Process, ProcessKind};

/// What the design layer found for this crossing (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SyncHint {
    /// Display path of the destination module's file.
    pub file: String,
    pub module: String,
    /// The crossing signal as the destination module names it.
    pub base: String,
    /// Its bit, when the module reads one bit of a vector (`bus[3]`).
    pub bit: Option<i64>,
    /// `span.start` of the destination register's process (its clock, edge and reset).
    pub dest_proc: usize,
    /// `span.start` of every process of that clock and edge whose reads are replaced.
    pub procs: Vec<usize>,
    /// The source register's reset value, when it has a constant one.
    pub reset_value: Option<bool>,
    pub stages: u32,
}

/// A process that is a direct item of the module (not inside a generate block).
pub(super) fn top_process(m: &crate::model::Module, start: usize) -> Option<&Process> {
    m.items.iter().find_map(|it| match &it.kind {
        ItemKind::Process(p) if p.span.start == start => Some(p),
        _ => None,
    })
}

/// The edits, or why the fix cannot be made on this text.
pub fn fix<'m>(
    f: &Finding,
    h: &SyncHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let model = files(&h.file).ok_or("the destination file is not in the design")?;
    let text = text_of(&h.file).ok_or("the destination file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == h.module)
        .ok_or("the destination module is gone")?;
    let dest = top_process(m, h.dest_proc)
        .ok_or("the destination process sits inside a generate block (not rewritten)")?;
    let Clocking { edge, clk, reset } = clocking(dest, "destination")?;
    let mut procs: Vec<&Process> = Vec::new();
    for s in &h.procs {
        procs.push(
            top_process(m, *s)
                .ok_or("a reading process sits inside a generate block (not rewritten)")?,
        );
    }
    if procs.is_empty() {
        procs.push(dest);
    }

    // the reads to replace: `base` (or `base[bit]`), in the right-hand sides and conditions
    let read_text = match h.bit {
        Some(b) => format!("{}[{b}]", h.base),
        None => h.base.clone(),
    };
    let ranges = read_ranges(&text, &procs, &h.base, h.bit)?;

    let at_proc = procs
        .iter()
        .map(|p| p.span.start)
        .min()
        .unwrap_or(dest.span.start);
    let at = line_start(&text, at_proc);
    if !text.get(at..at_proc).is_some_and(|s| s.trim().is_empty()) {
        return Err("the process does not start its line".into());
    }
    let n = h.stages.max(2);
    let names = fresh_names(&ident_of(&read_text), "sync", n, &names_in(m), &text);
    let last = names.last().cloned().unwrap_or_default();
    let ind = indent_at(&text, at_proc);
    let u = indent_unit(&text);
    let nl = newline(&text);
    let sv = model.language == Language::SystemVerilog;
    let mut b = String::new();
    b.push_str(&format!(
        "{ind}// {n}-flop synchronizer for `{read_text}` on `{clk}` (quick fix: {n} cycles of latency){nl}"
    ));
    b.push_str(&format!(
        "{ind}{} {};{nl}",
        if sv { "logic" } else { "reg" },
        names.join(", ")
    ));
    let shape = Shape {
        ind: &ind,
        unit: &u,
        nl,
        keyword: process_keyword(sv, dest.kind),
    };
    let clocking = Clocking {
        edge,
        clk: clk.clone(),
        reset,
    };
    b.push_str(&shift_process(
        &shape,
        &clocking,
        h.reset_value == Some(true),
        &read_text,
        &names,
    ));
    b.push_str(nl);

    let mut edits = vec![TextEdit {
        file: h.file.clone(),
        start: at,
        end: at,
        text: b,
    }];
    for (s, e) in ranges {
        edits.push(TextEdit {
            file: h.file.clone(),
            start: s,
            end: e,
            text: last.clone(),
        });
    }
    Ok(Fix {
        title: format!(
            "Insert a {n}-flop synchronizer for `{read_text}` on `{clk}` (adds {n} `{clk}` cycles of latency)"
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "synchronizer".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits,
    })
}

/// A process's clock edge and name, and its one asynchronous reset (signal, active high,
/// event edge): what inserted stages copy so that they sit in the same domain.
pub(super) struct Clocking {
    pub edge: &'static str,
    pub clk: String,
    pub reset: Option<(String, bool, &'static str)>,
}

fn edge_word(e: Edge) -> Option<&'static str> {
    match e {
        Edge::Posedge => Some("posedge"),
        Edge::Negedge => Some("negedge"),
        Edge::Any => None,
    }
}

/// The clocking of a process whose clock is a plain name; `what` names it in the reason.
pub(super) fn clocking(p: &Process, what: &str) -> Result<Clocking, String> {
    let clock = p
        .clock
        .as_ref()
        .ok_or_else(|| format!("the {what} process has no clock"))?;
    let edge =
        edge_word(clock.edge).ok_or_else(|| format!("the {what} process has no clock edge"))?;
    let clk = render(&clock.signal);
    if !matches!(clock.signal, Expr::Ident { .. }) {
        return Err(format!("the {what} clock `{clk}` is not a plain name"));
    }
    let reset = match p.async_controls.as_slice() {
        [] => None,
        [c] => {
            let sig = render(&c.signal);
            let ev = p
                .events
                .iter()
                .find(|e| render(&e.signal) == sig)
                .ok_or("the reset is not in the event list")?;
            let ev_edge = edge_word(ev.edge).ok_or("the reset has no edge")?;
            Some((sig, c.active_high, ev_edge))
        }
        _ => return Err(format!("the {what} flop has several asynchronous controls")),
    };
    Ok(Clocking { edge, clk, reset })
}

/// How inserted text is laid out: indentation, its unit, line break, process keyword.
pub(super) struct Shape<'a> {
    pub ind: &'a str,
    pub unit: &'a str,
    pub nl: &'a str,
    pub keyword: &'static str,
}

/// `always_ff` in SystemVerilog files when the model process is one, else `always`.
pub(super) fn process_keyword(sv: bool, kind: ProcessKind) -> &'static str {
    if sv && kind == ProcessKind::AlwaysFf {
        "always_ff"
    } else {
        "always"
    }
}

/// One process shifting `from` through `names` on the clocking (reset to `reset_one` when
/// it has a reset), ending with its `end` line.
pub(super) fn shift_process(
    s: &Shape,
    c: &Clocking,
    reset_one: bool,
    from: &str,
    names: &[String],
) -> String {
    let (ind, u, nl) = (s.ind, s.unit, s.nl);
    let mut b = String::new();
    let events = match &c.reset {
        Some((sig, _, e)) => format!("{} {} or {e} {sig}", c.edge, c.clk),
        None => format!("{} {}", c.edge, c.clk),
    };
    b.push_str(&format!("{ind}{} @({events}) begin{nl}", s.keyword));
    let shifts = |b: &mut String, depth: &str| {
        for (k, nm) in names.iter().enumerate() {
            let src = if k == 0 { from } else { names[k - 1].as_str() };
            b.push_str(&format!("{depth}{nm} <= {src};{nl}"));
        }
    };
    match &c.reset {
        Some((sig, high, _)) => {
            let v = if reset_one { "1'b1" } else { "1'b0" };
            b.push_str(&format!(
                "{ind}{u}if ({}) begin{nl}",
                reset_test(sig, *high)
            ));
            for nm in names {
                b.push_str(&format!("{ind}{u}{u}{nm} <= {v};{nl}"));
            }
            b.push_str(&format!("{ind}{u}end else begin{nl}"));
            shifts(&mut b, &format!("{ind}{u}{u}"));
            b.push_str(&format!("{ind}{u}end{nl}"));
        }
        None => shifts(&mut b, &format!("{ind}{u}")),
    }
    b.push_str(&format!("{ind}end{nl}"));
    b
}

/// The condition that is true while the reset is asserted.
pub(super) fn reset_test(sig: &str, active_high: bool) -> String {
    if active_high {
        sig.to_string()
    } else {
        format!("!{sig}")
    }
}

/// The byte ranges of every read of `base` (or `base[bit]`) in the processes' right-hand
/// sides and conditions (reset branches excluded); refused when a read comes from a macro.
pub(super) fn read_ranges(
    text: &str,
    procs: &[&Process],
    base: &str,
    bit: Option<i64>,
) -> Result<BTreeSet<(usize, usize)>, String> {
    let mut ranges: BTreeSet<(usize, usize)> = BTreeSet::new();
    for p in procs {
        for a in p.assigns.iter().filter(|a| !a.in_reset) {
            let exprs = std::iter::once(&a.rhs).chain(a.guards.iter().map(|g| &g.cond));
            for e in exprs {
                for id in e.idents() {
                    let Expr::Ident { name, loc } = id else {
                        continue;
                    };
                    if name != base {
                        continue;
                    }
                    let (s, e) = (loc.start as usize, loc.end as usize);
                    if text.get(s..e) != Some(base) {
                        return Err(format!("`{base}` is read inside a macro"));
                    }
                    let end = match bit {
                        None => e,
                        Some(b) => match bit_select_end(text, e, b) {
                            Some(end) => end,
                            None => continue, // another bit of the vector
                        },
                    };
                    ranges.insert((s, end));
                }
            }
        }
    }
    if ranges.is_empty() {
        let read = match bit {
            Some(b) => format!("{base}[{b}]"),
            None => base.to_string(),
        };
        return Err(format!("no read of `{read}` to replace"));
    }
    Ok(ranges)
}
