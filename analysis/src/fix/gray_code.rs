//! Carry a binary counter across as gray code (`multibit-crossing`, and
//! `unsynchronized-crossing` of a whole counter), DESIGN.md section 7.
//!
//! Source side: a register `<cnt>_gray` on the counter's clock, edge and reset, loaded every
//! cycle with `cnt ^ (cnt >> 1)`: one source cycle later than the counter, and gray code of a
//! counter, so Seam's own gray recognition accepts it. Destination side: an N-stage
//! synchronizer (one vector register per stage) on the destination clock, edge and reset,
//! a loop-free gray-to-binary decode `<cnt>_bin = g ^ (g >> 1) ^ ... ^ (g >> W-1)`, and every
//! read of `cnt` in the destination-domain processes replaced by `<cnt>_bin`. Latency: +1
//! source cycle and +N destination cycles; the title says so. Existing per-bit stages stay
//! (nothing the user wrote is deleted): they become a plain pipeline of the decoded value.
//!
//! Offered only where it is correct: the counter only holds or steps by one (mod 2^W), a
//! constant load is allowed only as a synchronous reset (the outermost `if`, on a condition
//! that does not read the counter), and source and destination are in one module.

use std::collections::{BTreeSet, HashMap};

use serde::{Deserialize, Serialize};

use super::text::{fresh_names, indent_at, indent_unit, line_start, names_in, newline, word_in};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::cdc::crossings::{Crossings, DIn, Dest};
use crate::cdc::rules::multibit_crossing;
use crate::cdc::schemes::{counter_moves, vector_crossings};
use crate::cdc::{in_trusted, short};
use crate::design::graph::{const_of, targets};
use crate::design::netlist::{FAssign, SigId};
use crate::design::Ctx;
use crate::finding::Finding;
use crate::model::{render, Edge, Expr, ItemKind, Language, Module, Process, ProcessKind};

/// What the design layer found for a counter crossing (see `plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GrayHint {
    /// Display path of the module's file (source and destination are in it).
    pub file: String,
    pub module: String,
    /// The counter as the module names it.
    pub counter: String,
    pub width: u32,
    /// The counter's asynchronous reset value, when its process has an asynchronous reset.
    pub reset_value: Option<u64>,
    /// The value the counter starts from after a reset (0 when it has none): the
    /// destination stages reset to its gray code, so the decoded value agrees.
    pub start_value: u64,
    /// `span.start` of the counter's process (the gray register's clock, edge and reset).
    pub src_proc: usize,
    /// `span.start` of the destination register's process (the synchronizer's clock).
    pub dest_proc: usize,
    /// `span.start` of every destination-domain process whose reads of the counter change.
    pub procs: Vec<usize>,
    pub stages: u32,
}

// ------------------------------------------------------------------ the design half

fn dest_of<'c>(ctx: &Ctx, cx: &'c Crossings, f: &Finding) -> Option<&'c Dest> {
    let name = f
        .related
        .iter()
        .find_map(|r| r.message.strip_prefix("destination register: "))?;
    cx.dests
        .iter()
        .find(|d| d.read_span == f.span && short(ctx, d.reg) == name)
}

/// The one source register of an `unsynchronized-crossing`, when two or more of its bits (or
/// logic of it) cross at once: a candidate for gray code rather than a synchronizer.
pub(crate) fn whole_bus(ctx: &Ctx, cx: &Crossings, f: &Finding) -> bool {
    let Some(d) = dest_of(ctx, cx, f) else {
        return false;
    };
    let leaves: BTreeSet<SigId> = d.sources.values().flatten().copied().collect();
    let [src] = leaves.into_iter().collect::<Vec<_>>()[..] else {
        return false;
    };
    if !ctx.g.is_reg(src) || ctx.n.sigs[src].width.unwrap_or(1) < 2 {
        return false;
    }
    let mut bits = BTreeSet::new();
    for (_, din, _) in &d.bits {
        match din {
            DIn::Single { leaf, .. } if leaf.0 == src => {
                bits.insert(leaf.1);
            }
            DIn::Logic { .. } => return true,
            _ => {}
        }
    }
    bits.len() >= 2
}

/// The counter, destination domain and destination register of a finding.
fn crossing_of(ctx: &Ctx, cx: &Crossings, f: &Finding) -> Result<(SigId, String, SigId), String> {
    if f.rule == multibit_crossing::ID {
        let dom = f
            .destination_domain
            .clone()
            .ok_or("the finding names no destination domain")?;
        let v = vector_crossings(ctx, cx)
            .into_iter()
            .find(|v| v.dest_domain == dom && f.signal.as_deref() == Some(&short(ctx, v.source)))
            .ok_or("the crossing was not found again")?;
        let dest = v
            .dests
            .iter()
            .map(|i| &cx.dests[*i])
            .find(|d| d.read_span == f.span)
            .map(|d| d.reg)
            .or(v.bits.first().map(|b| b.0))
            .ok_or("the crossing was not found again")?;
        return Ok((v.source, dom, dest));
    }
    let d = dest_of(ctx, cx, f).ok_or("the crossing was not found again")?;
    let leaves: BTreeSet<SigId> = d.sources.values().flatten().copied().collect();
    match leaves.into_iter().collect::<Vec<_>>()[..] {
        [one] => Ok((one, d.domain.clone(), d.reg)),
        _ => Err(format!(
            "several signals cross into `{}`: not one counter",
            short(ctx, d.reg)
        )),
    }
}

/// Non-reset assignments that write `r`.
fn assigns<'c>(ctx: &'c Ctx, r: SigId) -> Vec<&'c FAssign> {
    let Some(pi) = ctx.g.reg_proc.get(&r) else {
        return vec![];
    };
    ctx.n.procs[*pi]
        .assigns
        .iter()
        .filter(|a| targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(r)))
        .collect()
}

/// Why `r` is not a counter that holds or steps by one (for the refusal).
fn why_not_counter(ctx: &Ctx, r: SigId) -> String {
    let name = short(ctx, r);
    let tail = "gray code is safe only for a counter that holds or steps by one per source cycle (a jump changes several gray bits at once)";
    for a in assigns(ctx, r).into_iter().filter(|a| !a.in_reset) {
        if !matches!(a.target, Expr::Ident { .. }) {
            return format!(
                "`{name}` is written in parts (`{}`): {tail}",
                render(&a.target)
            );
        }
        for id in a.rhs.idents() {
            let Some(s) = ctx.g.sig(id) else { continue };
            if s == r {
                continue;
            }
            let other: Vec<SigId> = ctx.leaves(s).iter().copied().filter(|l| *l != r).collect();
            if let Some(l) = other.first() {
                let what = if ctx.n.top_inputs.contains(l) {
                    "input"
                } else {
                    "signal"
                };
                return format!(
                    "`{name}` is loaded from {what} `{}`, not only from itself: not a counter; {tail}",
                    short(ctx, *l)
                );
            }
        }
        let mut step = None;
        a.rhs.visit(&mut |x| {
            if let Expr::Binary { op, rhs, lhs } = x {
                if op == "+" || op == "-" {
                    for side in [lhs, rhs] {
                        if let Expr::Const { value: Some(v), .. } = side.as_ref() {
                            if *v > 1 {
                                step.get_or_insert(*v);
                            }
                        }
                    }
                }
            }
        });
        if let Some(k) = step {
            return format!("`{name}` steps by {k}, not by one: {tail}");
        }
    }
    format!("`{name}` is not a counter (its next state is not itself, itself plus or minus one, or its reset value): {tail}")
}

/// The constant of the asynchronous reset branch of `r`, when every such load agrees.
fn async_reset_value(ctx: &Ctx, r: SigId) -> Option<u64> {
    let mut v = None;
    for a in assigns(ctx, r).into_iter().filter(|a| a.in_reset) {
        match (&a.target, &a.rhs) {
            (Expr::Ident { .. }, Expr::Const { value: Some(c), .. })
                if v.is_none() || v == Some(*c) =>
            {
                v = Some(*c)
            }
            _ => return None,
        }
    }
    v
}

/// A constant load outside the reset branch must be a synchronous reset: the outermost `if`
/// of the process, on a condition that does not read the counter. Anything else (a wrap to
/// zero, a clear in the middle of the count) jumps several gray bits at once.
fn sync_reset_value(ctx: &Ctx, r: SigId, consts: &[u64]) -> Result<Option<u64>, String> {
    if consts.is_empty() {
        return Ok(None);
    }
    let name = short(ctx, r);
    let w = ctx.n.sigs[r].width.unwrap_or(1);
    let refuse = format!(
        "`{name}` is loaded with a constant while it counts (a wrap or a clear): that jump changes several gray bits at once, so the destination could see a value `{name}` never held. Gray code needs a counter that only holds or steps by one (mod 2^{w}); use a handshake instead"
    );
    let all: Vec<&FAssign> = assigns(ctx, r)
        .into_iter()
        .filter(|a| !a.in_reset)
        .collect();
    let loads: Vec<&&FAssign> = all
        .iter()
        .filter(|a| matches!(a.rhs, Expr::Const { .. }))
        .collect();
    let ([load], 1) = (loads.as_slice(), consts.len()) else {
        return Err(refuse);
    };
    let [g] = load.guards.as_slice() else {
        return Err(refuse);
    };
    let reads_itself = g.cond.idents().iter().any(|i| ctx.g.sig(i) == Some(r));
    if !g.polarity || reads_itself {
        return Err(refuse);
    }
    let key = render(&g.cond);
    for a in all.iter().filter(|a| !matches!(a.rhs, Expr::Const { .. })) {
        match a.guards.first() {
            Some(h) if !h.polarity && render(&h.cond) == key => {}
            _ => return Err(refuse),
        }
    }
    match load.rhs {
        Expr::Const { value: Some(v), .. } => Ok(Some(v)),
        _ => Err(refuse),
    }
}

/// The design half: whether the crossing of `f` is a counter that can be carried as gray code
/// in its own module, and what the text half needs.
pub(crate) fn plan(ctx: &Ctx, cx: &Crossings, f: &Finding) -> Result<GrayHint, String> {
    let (cnt, dom, dest) = crossing_of(ctx, cx, f)?;
    let name = short(ctx, cnt);
    if !ctx.g.is_reg(cnt) {
        return Err(format!(
            "`{name}` is an input, not a counter register: gray code needs a counter in the source domain"
        ));
    }
    let sig = &ctx.n.sigs[cnt];
    if sig.memory {
        return Err(format!("`{name}` is a memory, not a counter"));
    }
    let w = sig.width.unwrap_or(1);
    if !(2..=64).contains(&w) {
        return Err(format!(
            "`{name}` has {w} bit(s) (or a width Seam could not work out): gray code is offered for counters of 2 to 64 bits"
        ));
    }
    if in_trusted(ctx, cnt) {
        return Err(format!(
            "`{name}` is inside a trusted synchronizer: not rewritten"
        ));
    }
    let Some((_, _, consts)) = counter_moves(ctx, cnt) else {
        return Err(why_not_counter(ctx, cnt));
    };
    let sync_reset = sync_reset_value(ctx, cnt, &consts)?;
    let local = sig.local.clone();
    if !local.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
        return Err(format!("`{local}` is not a plain name of the module"));
    }
    let inst = sig.inst;
    let (fi, mi) = ctx.n.insts[inst]
        .def
        .ok_or("the counter's module has no definition")?;
    let module = ctx.files[fi].modules[mi].name.clone();
    let spi = ctx.g.reg_proc[&cnt];
    let sp = &ctx.n.procs[spi];
    if sp.file != fi {
        return Err("the counter's process comes from another file (an include?)".into());
    }
    let reset_value = match sp.async_controls.len() {
        0 => None,
        1 => Some(
            async_reset_value(ctx, cnt)
                .ok_or(format!("the reset value of `{name}` is not a constant"))?,
        ),
        _ => return Err(format!("`{name}` has several asynchronous controls")),
    };
    // every register of the destination domain that reads the counter: directly, in this
    // instance (then its read is rewritten), or through logic or a port (then no fix)
    let mut proc_dom: HashMap<usize, &str> = HashMap::new();
    for (r, pi) in &ctx.g.reg_proc {
        if let Some(d) = ctx.domain_of_reg(*r) {
            proc_dom.entry(*pi).or_insert(d);
        }
    }
    let mut procs: BTreeSet<usize> = BTreeSet::new();
    for (pi, p) in ctx.n.procs.iter().enumerate() {
        if p.clock.is_none() || proc_dom.get(&pi).copied() != Some(dom.as_str()) {
            continue;
        }
        let mut direct = false;
        let elsewhere = p.inst != inst || p.file != fi;
        for a in &p.assigns {
            let mut ids = a.target.idents();
            ids.extend(a.rhs.idents());
            for g in &a.guards {
                ids.extend(g.cond.idents());
            }
            for id in ids {
                let Some(s) = ctx.g.sig(id) else { continue };
                if s == cnt {
                    direct = true;
                } else if !ctx.g.is_reg(s)
                    && !ctx.n.top_inputs.contains(&s)
                    && ctx.leaves(s).contains(&cnt)
                {
                    let reader = targets(&a.target)
                        .first()
                        .and_then(|t| ctx.g.sig(t))
                        .map(|t| short(ctx, t))
                        .unwrap_or_default();
                    return Err(if elsewhere {
                        format!(
                            "`{name}` is read by `{reader}` (domain {dom}) outside its module `{module}`: source and destination are in different modules, not rewritten automatically (carry it as gray code by hand)"
                        )
                    } else {
                        format!(
                            "`{name}` reaches `{reader}` (domain {dom}) through `{}`: only direct reads in the counter's module are rewritten (carry it as gray code by hand)",
                            short(ctx, s)
                        )
                    });
                }
            }
        }
        if !direct {
            continue;
        }
        if elsewhere {
            return Err(format!(
                "`{name}` is read in domain {dom} outside its module `{module}`: source and destination are in different modules, not rewritten automatically (carry it as gray code by hand)"
            ));
        }
        procs.insert(p.span.start);
    }
    let dpi = *ctx
        .g
        .reg_proc
        .get(&dest)
        .ok_or("the destination register has no process")?;
    let dest_proc = ctx.n.procs[dpi].span.start;
    if !procs.contains(&dest_proc) {
        return Err(format!(
            "`{}` does not read `{name}` directly",
            short(ctx, dest)
        ));
    }
    // every instance of the module must cross the same way, or the edit would add latency
    // where nothing crosses
    let dl = &ctx.n.sigs[dest].local;
    for (ii, other) in ctx.n.insts.iter().enumerate() {
        if other.def != Some((fi, mi)) || ii == inst {
            continue;
        }
        let at = |l: &str| ctx.n.by_name.get(&format!("{}.{l}", other.path)).copied();
        let crosses = match (at(&local), at(dl)) {
            (Some(c), Some(d)) => {
                let (a, b) = (ctx.domain_of_reg(c), ctx.domain_of_reg(d));
                a.is_some() && b.is_some() && a != b
            }
            _ => false,
        };
        if !crosses {
            return Err(format!(
                "instance `{}` of `{module}` does not cross here (one clock drives both sides): the module is not rewritten automatically",
                other.path
            ));
        }
    }
    Ok(GrayHint {
        file: ctx.files[fi].path.clone(),
        module,
        counter: local,
        width: w,
        reset_value,
        start_value: reset_value.or(sync_reset).unwrap_or(0),
        src_proc: sp.span.start,
        dest_proc,
        procs: procs.into_iter().collect(),
        stages: ctx.config.synchronizers.min_stages.max(2),
    })
}

// -------------------------------------------------------------------- the text half

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

/// A process's clocking as text: (keyword, event list, reset condition).
fn clocking(
    p: &Process,
    sv: bool,
    what: &str,
) -> Result<(&'static str, String, Option<String>), String> {
    let c = p
        .clock
        .as_ref()
        .ok_or(format!("the {what} process has no clock"))?;
    let edge = edge_kw(c.edge).ok_or(format!("the {what} clock has no edge"))?;
    if !matches!(c.signal, Expr::Ident { .. }) {
        return Err(format!(
            "the {what} clock `{}` is not a plain name",
            render(&c.signal)
        ));
    }
    let mut events = format!("{edge} {}", render(&c.signal));
    let reset = match p.async_controls.as_slice() {
        [] => None,
        [a] => {
            if !matches!(a.signal, Expr::Ident { .. }) {
                return Err(format!("the {what} reset is not a plain name"));
            }
            let sig = render(&a.signal);
            let ev = p
                .events
                .iter()
                .find(|e| render(&e.signal) == sig)
                .and_then(|e| edge_kw(e.edge))
                .ok_or(format!("the {what} reset is not an edge of the event list"))?;
            events.push_str(&format!(" or {ev} {sig}"));
            Some(if a.active_high {
                sig
            } else {
                format!("!{sig}")
            })
        }
        _ => {
            return Err(format!(
                "the {what} process has several asynchronous controls"
            ))
        }
    };
    let kw = if sv && p.kind == ProcessKind::AlwaysFf {
        "always_ff"
    } else {
        "always"
    };
    Ok((kw, events, reset))
}

/// A name `<base>_<suffix>` (or `<base>_<suffix>_<n>`) used nowhere in the module or file.
fn fresh(base: &str, suffix: &str, taken: &BTreeSet<String>, text: &str) -> String {
    for n in 1..1000 {
        let c = if n == 1 {
            format!("{base}_{suffix}")
        } else {
            format!("{base}_{suffix}_{n}")
        };
        if !taken.contains(&c) && !word_in(text, &c) {
            return c;
        }
    }
    format!("{base}_seam_{suffix}")
}

/// Where a name is declared inside the module body (`None` for ANSI ports and unknowns).
fn decl_start(m: &Module, name: &str) -> Option<usize> {
    m.all_items().into_iter().find_map(|it| match &it.kind {
        ItemKind::Decl(d) if d.name == name => Some(d.span.start),
        ItemKind::PortDecl(p) if p.name == name => Some(p.span.start),
        _ => None,
    })
}

fn gray(v: u64, w: u32) -> u64 {
    let mask = if w >= 64 { u64::MAX } else { (1u64 << w) - 1 };
    (v ^ (v >> 1)) & mask
}

/// The edits, or why the fix cannot be made on this text.
pub fn fix<'m>(
    f: &Finding,
    h: &GrayHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let model = files(&h.file).ok_or("the file is not in the design")?;
    let text = text_of(&h.file).ok_or("the file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == h.module)
        .ok_or("the module is gone")?;
    let sv = model.language == Language::SystemVerilog;
    let q = h.counter.as_str();
    let w = h.width;
    let sp = top_process(m, h.src_proc)
        .ok_or("the counter's process sits inside a generate block (not rewritten)")?;
    let dp = top_process(m, h.dest_proc)
        .ok_or("the destination process sits inside a generate block (not rewritten)")?;
    let (skw, sev, srst) = clocking(sp, sv, "counter's")?;
    let (dkw, dev, drst) = clocking(dp, sv, "destination")?;
    let sclk = sp
        .clock
        .as_ref()
        .map(|c| render(&c.signal))
        .unwrap_or_default();
    let dclk = dp
        .clock
        .as_ref()
        .map(|c| render(&c.signal))
        .unwrap_or_default();
    if srst.is_some() != h.reset_value.is_some() {
        return Err("the counter's reset changed since the analysis".into());
    }

    // the declared range, literal and of the analysed width (a parameter could differ per instance)
    let packed = m
        .all_items()
        .into_iter()
        .find_map(|it| match &it.kind {
            ItemKind::Decl(d) if d.name == q => Some((
                d.packed.clone(),
                d.unpacked.is_empty(),
                d.type_name.is_none(),
            )),
            ItemKind::PortDecl(p) if p.name == q => Some((
                p.packed.clone(),
                p.unpacked.is_empty(),
                p.type_name.is_none(),
            )),
            _ => None,
        })
        .or_else(|| {
            m.ports.iter().find(|p| p.name == q).map(|p| {
                (
                    p.packed.clone(),
                    p.unpacked.is_empty(),
                    p.type_name.is_none(),
                )
            })
        })
        .ok_or_else(|| format!("`{q}` has no declaration in the module"))?;
    let range = match (packed.0.as_slice(), packed.1, packed.2) {
        ([r], true, true) => {
            let (Some(msb), Some(lsb)) = (const_of(&r.msb), const_of(&r.lsb)) else {
                return Err(format!(
                    "the width of `{q}` depends on a parameter: not rewritten automatically"
                ));
            };
            let span = msb.checked_sub(lsb).map(|d| d.unsigned_abs());
            if span.and_then(|d| d.checked_add(1)) != Some(u64::from(w)) {
                return Err(format!("the declared width of `{q}` is not {w} bits"));
            }
            format!("[{msb}:{lsb}] ")
        }
        _ => return Err(format!("`{q}` is not a plain vector")),
    };

    // the reads to replace, in every destination-domain process that reads the counter
    let mut ranges: BTreeSet<(usize, usize)> = BTreeSet::new();
    let mut first = usize::MAX;
    for s in &h.procs {
        let p = top_process(m, *s)
            .ok_or("a reading process sits inside a generate block (not rewritten)")?;
        first = first.min(p.span.start);
        for a in &p.assigns {
            let mut exprs = vec![&a.target, &a.rhs];
            exprs.extend(a.guards.iter().map(|g| &g.cond));
            for e in exprs {
                for id in e.idents() {
                    let Expr::Ident { name, loc } = id else {
                        continue;
                    };
                    if name != q {
                        continue;
                    }
                    let (st, en) = (loc.start as usize, loc.end as usize);
                    if text.get(st..en) != Some(q) {
                        return Err(format!("`{q}` is read inside a macro"));
                    }
                    ranges.insert((st, en));
                }
            }
        }
    }
    if ranges.is_empty() || first == usize::MAX {
        return Err(format!("no read of `{q}` to replace"));
    }
    let at = line_start(&text, first);
    if !text.get(at..first).is_some_and(|s| s.trim().is_empty()) {
        return Err("the process does not start its line".into());
    }
    // everything the new code names must be declared before it
    let mut used = vec![q.to_string(), sclk.clone(), dclk.clone()];
    for p in [sp, dp] {
        used.extend(p.async_controls.iter().map(|c| render(&c.signal)));
    }
    if let Some(n) = used
        .iter()
        .find(|n| decl_start(m, n).is_some_and(|d| d >= at))
    {
        return Err(format!(
            "`{n}` is declared after the first process that reads `{q}`"
        ));
    }

    let taken = names_in(m);
    let g = fresh(q, "gray", &taken, &text);
    let bin = fresh(q, "bin", &taken, &text);
    let n = h.stages.max(2);
    let stages = fresh_names(&g, "sync", n, &taken, &text);
    let last = stages.last().cloned().ok_or("no stages")?;
    let ind = indent_at(&text, first);
    let u = indent_unit(&text);
    let nl = newline(&text);
    let decl_kw = if sv { "logic" } else { "reg" };
    let cst = |v: u64| format!("{w}'d{v}");

    let mut b = String::new();
    b.push_str(&format!(
        "{ind}// quick fix: `{q}` crosses to `{dclk}` as gray code (+1 `{sclk}` cycle, +{n} `{dclk}` cycles of latency){nl}"
    ));
    // source side: gray code of the counter, one source cycle later
    b.push_str(&format!("{ind}{decl_kw} {range}{g};{nl}"));
    b.push_str(&format!("{ind}{skw} @({sev}) begin{nl}"));
    match (&srst, h.reset_value) {
        (Some(c), Some(v)) => {
            b.push_str(&format!("{ind}{u}if ({c}) {g} <= {};{nl}", cst(gray(v, w))));
            b.push_str(&format!("{ind}{u}else {g} <= {q} ^ ({q} >> 1);{nl}"));
        }
        _ => b.push_str(&format!("{ind}{u}{g} <= {q} ^ ({q} >> 1);{nl}")),
    }
    b.push_str(&format!("{ind}end{nl}"));
    // destination side: one vector register per stage, then gray to binary
    b.push_str(&format!("{ind}{decl_kw} {range}{};{nl}", stages.join(", ")));
    b.push_str(&format!("{ind}{dkw} @({dev}) begin{nl}"));
    let shifts = |b: &mut String, depth: &str| {
        for (k, s) in stages.iter().enumerate() {
            let from = if k == 0 {
                g.as_str()
            } else {
                stages[k - 1].as_str()
            };
            b.push_str(&format!("{depth}{s} <= {from};{nl}"));
        }
    };
    match &drst {
        Some(c) => {
            b.push_str(&format!("{ind}{u}if ({c}) begin{nl}"));
            for s in &stages {
                b.push_str(&format!(
                    "{ind}{u}{u}{s} <= {};{nl}",
                    cst(gray(h.start_value, w))
                ));
            }
            b.push_str(&format!("{ind}{u}end else begin{nl}"));
            shifts(&mut b, &format!("{ind}{u}{u}"));
            b.push_str(&format!("{ind}{u}end{nl}"));
        }
        None => shifts(&mut b, &format!("{ind}{u}")),
    }
    b.push_str(&format!("{ind}end{nl}"));
    let mut decode = vec![last.clone()];
    decode.extend((1..w).map(|k| format!("({last} >> {k})")));
    b.push_str(&format!(
        "{ind}wire {range}{bin} = {};{nl}{nl}",
        decode.join(" ^ ")
    ));

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
            text: bin.clone(),
        });
    }
    Ok(Fix {
        title: format!(
            "Carry `{q}` to `{dclk}` as gray code (adds 1 `{sclk}` cycle and {n} `{dclk}` cycles of latency)"
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "gray-code".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gray_of_values() {
        // common practice: gray(v) = v ^ (v >> 1); consecutive codes differ in one bit
        assert_eq!(gray(0, 4), 0);
        assert_eq!(gray(7, 4), 0b0100);
        assert_eq!(gray(8, 4), 0b1100);
        for v in 0..16u64 {
            assert_eq!((gray(v, 4) ^ gray((v + 1) & 15, 4)).count_ones(), 1);
        }
        assert_eq!(gray(u64::MAX, 64), 1u64 << 63);
    }

    const SRC: &str = "module m (input clk_a, input clk_b, input en, output reg [3:0] q);\n  reg [3:0] c;\n  always @(posedge clk_a) if (en) c <= c + 4'd1;\n  always @(posedge clk_b) q <= c;\nendmodule\n";

    fn analysed(src: &str) -> (Vec<crate::model::FileModel>, crate::report::Analysis) {
        use crate::parse::{parse_file, MacroTable, ParseOptions};
        let macros = MacroTable::with_defines([("SYNTHESIS", None)]);
        let r = parse_file(
            "t.v",
            "t.v",
            src.as_bytes(),
            &macros,
            &ParseOptions::default(),
        );
        let models = vec![r.model];
        let a = crate::analyze(&models, &crate::config::Config::default());
        (models, a)
    }

    /// The plan on parsed text (sv-parser through Seam's front end), then the edits on the
    /// text the editor has now: whole, cut anywhere or shifted by a multi-byte character
    /// (a buffer mid-edit). Never a panic; either a reason or edits that `apply` checks.
    #[test]
    fn stale_or_cut_text_never_panics() {
        let (models, a) = analysed(SRC);
        let f = a
            .findings
            .iter()
            .find(|f| matches!(f.fix, Some(super::super::FixHint::GrayCode(_))))
            .unwrap_or_else(|| panic!("no gray-code hint: {:#?}", a.findings));
        let Some(super::super::FixHint::GrayCode(h)) = &f.fix else {
            unreachable!()
        };
        let files = super::super::in_slice(&models);
        let fx = fix(f, h, &files, &|_| Some(SRC.to_string())).expect("a fix on the analysed text");
        let edits: Vec<&TextEdit> = fx.edits.iter().collect();
        let out = super::super::apply(SRC, &edits).expect("edits apply");
        assert!(out.contains("q <= c_bin;") && out.contains("c_gray <= c ^ (c >> 1);"));
        let mut texts: Vec<String> = (0..SRC.len()).map(|k| SRC[..k].to_string()).collect();
        texts.extend(
            (0..SRC.len())
                .step_by(7)
                .map(|k| format!("{}\u{e9}{}", &SRC[..k], &SRC[k..])),
        );
        for t in texts {
            if let Ok(fx) = fix(f, h, &files, &|_| Some(t.clone())) {
                let edits: Vec<&TextEdit> = fx.edits.iter().collect();
                let _ = super::super::apply(&t, &edits);
            }
        }
    }

    /// No fix for a counter that steps by two, with the reason (the plan on parsed text).
    #[test]
    fn a_step_of_two_is_refused_with_the_reason() {
        let (_, a) = analysed(&SRC.replace("c + 4'd1", "c + 4'd2"));
        let reasons: Vec<String> = a
            .findings
            .iter()
            .filter_map(|f| match &f.fix {
                Some(super::super::FixHint::Unavailable { reason }) => Some(reason.clone()),
                _ => None,
            })
            .collect();
        assert!(
            reasons.iter().any(|r| r.contains("`c` steps by 2")),
            "{reasons:?}"
        );
    }
}
