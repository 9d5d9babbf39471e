//! Insert a toggle pulse synchronizer for a one-cycle pulse that crosses from a faster clock
//! into a slower one (`unsynchronized-crossing` where a level chain could miss the pulse).
//!
//! In the module that holds both the pulse register and its reader: a toggle register on the
//! source clock, inverted on each pulse; an N-stage chain on the destination clock plus one
//! more flop; and every read of the pulse replaced by the XOR of the last two flops, a pulse
//! one destination cycle long per source pulse. The toggle idea is common practice; the
//! latency and spacing stated in the title follow from the chain (N..N+1 destination cycles
//! after the toggle flips; two pulses closer than about N+1 destination cycles may merge).

use serde::{Deserialize, Serialize};

use super::synchronizer::{
    clocking, process_keyword, read_ranges, reset_test, shift_process, top_process, Shape, SyncHint,
};
use super::text::{fresh_names, ident_of, indent_at, indent_unit, line_start, names_in, newline};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::cdc::crossings::Dest;
use crate::cdc::short;
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::Finding;
use crate::model::Language;

/// What the design layer found for a fast pulse crossing (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PulseHint {
    /// The destination side, as for a level synchronizer (its reset value is unused: the
    /// chain resets to the toggle's reset value, 0).
    pub dest: SyncHint,
    /// The pulse register's name in the module.
    pub source: String,
    /// `span.start` of the pulse register's process (its clock, edge and reset).
    pub source_proc: usize,
}

/// Design-side checks: the pulse register and its reader must sit in one module instance,
/// in the same file, so that both new processes go into that module.
pub(super) fn plan(ctx: &Ctx, d: &Dest, leaf: SigId, dest: SyncHint) -> Result<PulseHint, String> {
    let si = ctx.n.sigs[leaf].inst;
    let di = ctx.n.sigs[d.reg].inst;
    if si != di {
        return Err(format!(
            "`{}` is a one-cycle pulse from a faster domain in another module (`{}`) than its reader (`{}`): a pulse synchronizer is inserted only when both are in one module (use a toggle synchronizer or a handshake by hand)",
            short(ctx, leaf),
            ctx.n.insts[si].module,
            ctx.n.insts[di].module
        ));
    }
    let sp = ctx
        .g
        .reg_proc
        .get(&leaf)
        .map(|pi| &ctx.n.procs[*pi])
        .ok_or("the pulse register's process was not found")?;
    let dp = &ctx.n.procs[ctx.g.reg_proc[&d.reg]];
    if sp.file != dp.file {
        return Err("the pulse register's process comes from another file (an include?)".into());
    }
    let source = ctx.n.sigs[leaf].local.clone();
    if !source
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || c == '_')
    {
        return Err(format!("`{source}` is not a plain name of the module"));
    }
    Ok(PulseHint {
        dest,
        source,
        source_proc: sp.span.start,
    })
}

/// The edits, or why the fix cannot be made on this text.
pub fn fix<'m>(
    f: &Finding,
    h: &PulseHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let d = &h.dest;
    let model = files(&d.file).ok_or("the module's file is not in the design")?;
    let text = text_of(&d.file).ok_or("the module's file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == d.module)
        .ok_or("the module is gone")?;
    let dest = top_process(m, d.dest_proc)
        .ok_or("the destination process sits inside a generate block (not rewritten)")?;
    let src = top_process(m, h.source_proc)
        .ok_or("the pulse register's process sits inside a generate block (not rewritten)")?;
    let dc = clocking(dest, "destination")?;
    let sc = clocking(src, "source")?;
    let mut procs = Vec::new();
    for s in &d.procs {
        procs.push(
            top_process(m, *s)
                .ok_or("a reading process sits inside a generate block (not rewritten)")?,
        );
    }
    if procs.is_empty() {
        procs.push(dest);
    }
    let ranges = read_ranges(&text, &procs, &d.base, d.bit)?;

    let n = d.stages.max(2);
    let read_text = match d.bit {
        Some(b) => format!("{}[{b}]", d.base),
        None => d.base.clone(),
    };
    let taken = names_in(m);
    let chain = fresh_names(&ident_of(&read_text), "psync", n + 1, &taken, &text);
    let toggle = fresh_names(&h.source, "tgl", 1, &taken, &text)
        .pop()
        .ok_or("no free name for the toggle register")?;
    let (a, b) = match chain.as_slice() {
        [.., a, b] => (a.clone(), b.clone()),
        _ => return Err("no free names for the chain".into()),
    };

    let at_dst_proc = procs
        .iter()
        .map(|p| p.span.start)
        .min()
        .unwrap_or(dest.span.start);
    let at_dst = line_start(&text, at_dst_proc);
    let at_src = line_start(&text, src.span.start);
    for (at, p) in [(at_dst, at_dst_proc), (at_src, src.span.start)] {
        if !text.get(at..p).is_some_and(|s| s.trim().is_empty()) {
            return Err("a process does not start its line".into());
        }
    }
    if at_dst == at_src {
        return Err("the pulse register and its reader are in one process".into());
    }
    let u = indent_unit(&text);
    let nl = newline(&text);
    let sv = model.language == Language::SystemVerilog;
    let (dclk, sclk) = (dc.clk.clone(), sc.clk.clone());

    // registers without a reset start from a declaration value (an FPGA power-up value;
    // ASIC flows ignore it), so that the toggle and the chain never stay unknown
    let init = |reset: &Option<(String, bool, &'static str)>, nm: &str| match reset {
        Some(_) => nm.to_string(),
        None => format!("{nm} = 1'b0"),
    };
    let mut decls: Vec<String> = vec![init(&sc.reset, &toggle)];
    decls.extend(chain.iter().map(|c| init(&dc.reset, c)));
    let decl_ind = indent_at(&text, at_dst_proc.min(src.span.start));
    let mut decl = format!(
        "{decl_ind}// toggle pulse synchronizer for `{}` into `{dclk}` (quick fix){nl}",
        h.source
    );
    decl.push_str(&format!(
        "{decl_ind}{} {};{nl}",
        if sv { "logic" } else { "reg" },
        decls.join(", ")
    ));
    if sc.reset.is_none() || dc.reset.is_none() {
        decl.push_str(&format!(
            "{decl_ind}// without a reset these start from their declaration value (FPGA power-up); add a reset for ASIC flows{nl}"
        ));
    }

    let s_ind = indent_at(&text, src.span.start);
    let mut tog = format!(
        "{s_ind}// flips once per pulse of `{}` (on `{sclk}`){nl}",
        h.source
    );
    // `if (pulse) t <= ~t` rather than `t <= t ^ pulse`: the same flop, but an unknown pulse
    // before the source's first edge does not make the toggle unknown in simulation
    let kw = process_keyword(sv, src.kind);
    let (e, src_name) = (sc.edge, &h.source);
    match &sc.reset {
        Some((sig, high, ev)) => {
            tog.push_str(&format!(
                "{s_ind}{kw} @({e} {sclk} or {ev} {sig}) begin{nl}{s_ind}{u}if ({}) begin{nl}{s_ind}{u}{u}{toggle} <= 1'b0;{nl}{s_ind}{u}end else if ({src_name}) begin{nl}{s_ind}{u}{u}{toggle} <= ~{toggle};{nl}{s_ind}{u}end{nl}{s_ind}end{nl}",
                reset_test(sig, *high)
            ));
        }
        None => tog.push_str(&format!(
            "{s_ind}{kw} @({e} {sclk}) begin{nl}{s_ind}{u}if ({src_name}) begin{nl}{s_ind}{u}{u}{toggle} <= ~{toggle};{nl}{s_ind}{u}end{nl}{s_ind}end{nl}"
        )),
    }
    tog.push_str(nl);

    let d_ind = indent_at(&text, at_dst_proc);
    let mut chn = format!(
        "{d_ind}// {n}-flop chain on `{dclk}` plus one flop; `{a} ^ {b}` is one `{dclk}` cycle per pulse{nl}"
    );
    chn.push_str(&shift_process(
        &Shape {
            ind: &d_ind,
            unit: &u,
            nl,
            keyword: process_keyword(sv, dest.kind),
        },
        &dc,
        false,
        &toggle,
        &chain,
    ));
    chn.push_str(nl);

    // the declarations go first, before whichever new process comes first in the text
    let (first, second) = if at_src < at_dst {
        ((at_src, decl + &tog), (at_dst, chn))
    } else {
        ((at_dst, decl + &chn), (at_src, tog))
    };
    let mut edits = vec![
        TextEdit {
            file: d.file.clone(),
            start: first.0,
            end: first.0,
            text: first.1,
        },
        TextEdit {
            file: d.file.clone(),
            start: second.0,
            end: second.0,
            text: second.1,
        },
    ];
    for (s, e) in ranges {
        edits.push(TextEdit {
            file: d.file.clone(),
            start: s,
            end: e,
            text: format!("({a} ^ {b})"),
        });
    }
    Ok(Fix {
        title: format!(
            "Insert a toggle pulse synchronizer for `{read_text}` into `{dclk}` (+{n}..{} `{dclk}` cycles and one `{sclk}` cycle of latency; pulses must be at least ~{} `{dclk}` cycles apart; review: the crossing analysis is advisory)",
            n + 1,
            n + 1
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "pulse-synchronizer".into(),
        scope: format!("{}::{}", d.file, d.module),
        edits,
    })
}
