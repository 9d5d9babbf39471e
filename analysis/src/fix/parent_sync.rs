//! Insert an N-flop synchronizer in the parent, at one instance's port connection, for a
//! single-bit level crossing (`unsynchronized-crossing`) into a module of which only some
//! instances cross: a synchronizer inside the module would delay the instances that do not.
//!
//! The stages are clocked by the parent net that drives the instance's destination clock
//! port (same edge; same reset when the destination flop's reset is a port too), and the
//! connection expression is replaced by the last stage. Adds N destination clock cycles of
//! latency to that instance only.

use serde::{Deserialize, Serialize};

use super::plan::{is_flagged, reset_value, single_leaf};
use super::synchronizer::{clocking, process_keyword, shift_process, Clocking, Shape};
use super::text::{
    bit_select_end, fresh_names, ident_of, indent_at, indent_unit, line_start, names_in, newline,
};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::cdc::crossings::{Crossings, Dest};
use crate::cdc::short;
use crate::design::graph::{const_of, targets};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::Finding;
use crate::model::{
    render, Direction, Expr, Instance, ItemKind, Language, Module, ProcessKind, Select,
};

/// A port of the child module: its name and its position (for ordered connections).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PortRef {
    pub name: String,
    pub index: usize,
}

/// What the design layer found for a crossing at one instance (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ParentHint {
    /// Display path of the parent module's file.
    pub file: String,
    pub module: String,
    /// The child instance's name in the parent, and its module.
    pub instance: String,
    pub child: String,
    /// The child's input port the crossing signal enters by.
    pub port: PortRef,
    /// The child's clock port of the destination flop, and its edge.
    pub clock: PortRef,
    pub posedge: bool,
    /// The child's reset port of the destination flop: (port, active high, event posedge).
    pub reset: Option<(PortRef, bool, bool)>,
    /// The source register's reset value, when it has a constant one.
    pub reset_value: Option<bool>,
    /// The destination process is `always_ff` (the keyword used in SystemVerilog parents).
    pub always_ff: bool,
    pub stages: u32,
}

fn port_of(m: &Module, name: &str) -> Result<PortRef, String> {
    m.ports
        .iter()
        .position(|p| p.name == name)
        .map(|index| PortRef {
            name: name.to_string(),
            index,
        })
        .ok_or_else(|| format!("`{name}` is not a port of `{}`", m.name))
}

/// Whether `s` is an input port of its instance.
fn is_input(ctx: &Ctx, s: SigId) -> bool {
    matches!(ctx.n.sigs[s].port, Some(Direction::Input))
}

/// Design-side checks for a crossing at instance `d.reg`'s module that not every instance
/// shares. The reason is phrased to follow "...but ".
#[allow(clippy::too_many_arguments)]
pub(super) fn plan(
    ctx: &Ctx,
    cx: &Crossings,
    d: &Dest,
    leaf: SigId,
    leaf_bit: u32,
    base: &str,
    bit: Option<i64>,
    flagged: &std::collections::HashSet<(String, usize)>,
) -> Result<ParentHint, String> {
    if let Some(b) = bit {
        return Err(format!(
            "the module reads bit {b} of `{base}`: the whole vector enters at the port (synchronize by hand)"
        ));
    }
    let ci = ctx.n.sigs[d.reg].inst;
    let child = &ctx.n.insts[ci];
    let pi = child
        .parent
        .ok_or_else(|| format!("`{}` is a top module", child.module))?;
    let parent = &ctx.n.insts[pi];
    let (cfi, cmi) = child.def.ok_or("the module has no definition")?;
    let (pfi, pmi) = parent.def.ok_or("the parent has no module definition")?;
    let inst_name = child
        .path
        .strip_prefix(&format!("{}.", parent.path))
        .unwrap_or(&child.path)
        .to_string();
    if !inst_name
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '$')
    {
        return Err(format!(
            "`{}` sits in a generate block or an instance array (not rewritten)",
            child.path
        ));
    }
    let cm = &ctx.files[cfi].modules[cmi];
    // the crossing signal must be the child's input port itself
    let port_sig = ctx
        .n
        .by_name
        .get(&format!("{}.{base}", child.path))
        .copied()
        .filter(|s| is_input(ctx, *s))
        .ok_or_else(|| format!("`{base}` is not an input port of `{}`", child.module))?;
    let port = port_of(cm, base)?;
    // the destination flop's clock (and reset) must be child ports driven by plain names
    let dproc = &ctx.n.procs[ctx.g.reg_proc[&d.reg]];
    let mp = cm
        .all_items()
        .into_iter()
        .find_map(|it| match &it.kind {
            ItemKind::Process(p) if p.span == dproc.span => Some(p),
            _ => None,
        })
        .ok_or("the destination process was not found in the module")?;
    let c = clocking(mp, "destination")?;
    let clk_sig = ctx
        .n
        .by_name
        .get(&format!("{}.{}", child.path, c.clk))
        .copied();
    if !clk_sig.is_some_and(|s| is_input(ctx, s)) {
        return Err(format!(
            "the destination clock `{}` is not an input port of `{}`",
            c.clk, child.module
        ));
    }
    let clock = port_of(cm, &c.clk)?;
    let reset = match &c.reset {
        None => None,
        Some((sig, high, ev)) => {
            let rs = ctx.n.by_name.get(&format!("{}.{sig}", child.path)).copied();
            if !rs.is_some_and(|s| is_input(ctx, s)) {
                return Err(format!(
                    "the destination flop's reset `{sig}` is not an input port of `{}`",
                    child.module
                ));
            }
            Some((port_of(cm, sig)?, *high, *ev == "posedge"))
        }
    };
    // every clocked reader of the source inside the instance must be on the destination
    // clock and edge: the synchronized port would be wrong for any other
    let me = &ctx.reg_clock[&d.reg];
    let inside = format!("{}.", child.path);
    for p in &ctx.n.procs {
        let pin = &ctx.n.insts[p.inst].path;
        if p.clock.is_none() || !(p.inst == ci || pin.starts_with(&inside)) {
            continue;
        }
        for a in p.assigns.iter().filter(|a| !a.in_reset) {
            let reads = std::iter::once(&a.rhs)
                .chain(a.guards.iter().map(|g| &g.cond))
                .flat_map(|e| e.idents())
                .filter_map(|id| ctx.g.sig(id))
                .any(|s| {
                    s == port_sig
                        || ctx.leaves(s).contains(&port_sig)
                        || ctx.leaves(s).contains(&leaf)
                });
            if !reads {
                continue;
            }
            for t in targets(&a.target) {
                let Some(r) = ctx.g.sig(t) else { continue };
                let Some(rc) = ctx.reg_clock.get(&r) else {
                    continue;
                };
                if rc.root != me.root || rc.edge != me.edge {
                    return Err(format!(
                        "`{}` also reaches `{}` on another clock or edge inside `{}`",
                        short(ctx, port_sig),
                        short(ctx, r),
                        child.path
                    ));
                }
            }
        }
    }
    // every instance of the parent gets the synchronizer: each must cross the same way
    let local = &ctx.n.sigs[d.reg].local;
    for (qi, q) in ctx.n.insts.iter().enumerate() {
        if qi == pi || q.def != Some((pfi, pmi)) {
            continue;
        }
        let reg = ctx
            .n
            .by_name
            .get(&format!("{}.{inst_name}.{local}", q.path))
            .copied();
        let crosses = reg.is_some_and(|r| {
            cx.dests
                .iter()
                .any(|d2| d2.reg == r && is_flagged(d2, flagged) && single_leaf(d2).is_some())
        });
        if !crosses {
            return Err(format!(
                "the parent `{}` is instantiated several times and in `{}` the instance `{inst_name}` does not cross: a synchronizer in `{}` would delay it too",
                parent.module, q.path, parent.module
            ));
        }
    }
    Ok(ParentHint {
        file: ctx.files[pfi].path.clone(),
        module: ctx.files[pfi].modules[pmi].name.clone(),
        instance: inst_name,
        child: child.module.clone(),
        port,
        clock,
        posedge: c.edge == "posedge",
        reset,
        reset_value: if ctx.g.is_reg(leaf) {
            reset_value(ctx, (leaf, leaf_bit))
        } else {
            None
        },
        always_ff: mp.kind == ProcessKind::AlwaysFf,
        stages: ctx.config.synchronizers.min_stages.max(2),
    })
}

/// The connection of port `p` in an instance: named, or by position.
fn connection<'i>(i: &'i Instance, p: &PortRef) -> Result<Option<&'i Expr>, String> {
    if i.wildcard {
        return Err(format!(
            "`{}` is connected with `.*`: write the connection of `{}` out to synchronize it",
            i.name, p.name
        ));
    }
    let named = i.connections.iter().any(|c| c.port.is_some());
    let c = if named {
        i.connections
            .iter()
            .find(|c| c.port.as_deref() == Some(p.name.as_str()))
    } else {
        i.connections.get(p.index)
    };
    Ok(c.and_then(|c| c.expr.as_ref()))
}

/// A plain name connection, as that name.
fn plain_name(e: Option<&Expr>) -> Option<&str> {
    match e {
        Some(Expr::Ident { name, .. }) if !name.contains('.') => Some(name),
        _ => None,
    }
}

/// Whether the parent declares `name` (a port or a declaration), so that it may be read
/// before the instance that uses it.
fn declared(m: &Module, name: &str) -> bool {
    m.ports.iter().any(|p| p.name == name)
        || m.all_items().iter().any(|it| match &it.kind {
            ItemKind::Decl(d) => d.name == name,
            ItemKind::PortDecl(p) => p.name == name,
            _ => false,
        })
}

/// The edits, or why the fix cannot be made on this text.
pub fn fix<'m>(
    f: &Finding,
    h: &ParentHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let model = files(&h.file).ok_or("the parent file is not in the design")?;
    let text = text_of(&h.file).ok_or("the parent file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == h.module)
        .ok_or("the parent module is gone")?;
    let (item, inst) = m
        .items
        .iter()
        .find_map(|it| match &it.kind {
            ItemKind::Instance(i) if i.name == h.instance => Some((it, i)),
            _ => None,
        })
        .ok_or_else(|| {
            format!(
                "the instance `{}` is not a direct item of `{}` (a generate block?)",
                h.instance, h.module
            )
        })?;
    if !inst.array.is_empty() {
        return Err(format!("`{}` is an instance array", h.instance));
    }
    // the connection must be a plain name or a constant bit select of one
    let conn = connection(inst, &h.port)?.ok_or_else(|| {
        format!(
            "the port `{}` of `{}` is not connected",
            h.port.name, h.instance
        )
    })?;
    let (name, range, shown) = match conn {
        Expr::Ident { name, loc } if !name.contains('.') => {
            let r = (loc.start as usize, loc.end as usize);
            (name.clone(), r, name.clone())
        }
        Expr::Select { base, sel } => match (base.as_ref(), sel.as_ref()) {
            (Expr::Ident { name, loc }, Select::Bit { index }) if !name.contains('.') => {
                let i = const_of(index).ok_or_else(|| {
                    format!(
                        "the connection `{}` of `{}` has a bit index that is not a number",
                        render(conn),
                        h.port.name
                    )
                })?;
                let end = bit_select_end(&text, loc.end as usize, i).ok_or_else(|| {
                    format!("the bit select `{}` is not written plainly", render(conn))
                })?;
                (
                    name.clone(),
                    (loc.start as usize, end),
                    format!("{name}[{i}]"),
                )
            }
            _ => {
                return Err(format!(
                    "the connection `{}` of `{}.{}` is not a plain name or bit select: synchronize by hand",
                    render(conn),
                    h.instance,
                    h.port.name
                ))
            }
        },
        _ => {
            return Err(format!(
                "the connection `{}` of `{}.{}` is an expression, not a plain name or bit select: synchronize by hand",
                render(conn),
                h.instance,
                h.port.name
            ))
        }
    };
    if text.get(range.0..range.0 + name.len()) != Some(name.as_str()) {
        return Err(format!("the connection `{shown}` comes from a macro"));
    }
    if !declared(m, &name) {
        return Err(format!(
            "`{name}` is not declared in `{}` (an implicit net)",
            h.module
        ));
    }
    let clk = plain_name(connection(inst, &h.clock)?).ok_or_else(|| {
        format!(
            "the clock connection of `{}.{}` is not a plain name",
            h.instance, h.clock.name
        )
    })?;
    let reset = match &h.reset {
        None => None,
        Some((p, high, pos)) => {
            let r = plain_name(connection(inst, p)?).ok_or_else(|| {
                format!(
                    "the reset connection of `{}.{}` is not a plain name",
                    h.instance, p.name
                )
            })?;
            Some((
                r.to_string(),
                *high,
                if *pos { "posedge" } else { "negedge" },
            ))
        }
    };

    let at_item = item.span.start;
    let at = line_start(&text, at_item);
    if !text.get(at..at_item).is_some_and(|s| s.trim().is_empty()) {
        return Err("the instance does not start its line".into());
    }
    let n = h.stages.max(2);
    let names = fresh_names(&ident_of(&shown), "sync", n, &names_in(m), &text);
    let last = names.last().cloned().ok_or("no free names")?;
    let ind = indent_at(&text, at_item);
    let u = indent_unit(&text);
    let nl = newline(&text);
    let sv = model.language == Language::SystemVerilog;
    let kind = if h.always_ff {
        ProcessKind::AlwaysFf
    } else {
        ProcessKind::Always
    };
    let mut b = format!(
        "{ind}// {n}-flop synchronizer for `{shown}` into `{}.{}` on `{clk}` (quick fix: {n} cycles of latency for `{}` only){nl}",
        h.instance, h.port.name, h.instance
    );
    b.push_str(&format!(
        "{ind}{} {};{nl}",
        if sv { "logic" } else { "reg" },
        names.join(", ")
    ));
    b.push_str(&shift_process(
        &Shape {
            ind: &ind,
            unit: &u,
            nl,
            keyword: process_keyword(sv, kind),
        },
        &Clocking {
            edge: if h.posedge { "posedge" } else { "negedge" },
            clk: clk.to_string(),
            reset,
        },
        h.reset_value == Some(true),
        &shown,
        &names,
    ));
    b.push_str(nl);
    Ok(Fix {
        title: format!(
            "Insert a {n}-flop synchronizer for `{shown}` at `{}.{}` in `{}` on `{clk}` (adds {n} `{clk}` cycles of latency to `{}` only; review: the crossing analysis is advisory)",
            h.instance, h.port.name, h.module, h.instance
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "parent-synchronizer".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits: vec![
            TextEdit {
                file: h.file.clone(),
                start: at,
                end: at,
                text: b,
            },
            TextEdit {
                file: h.file.clone(),
                start: range.0,
                end: range.1,
                text: last,
            },
        ],
    })
}
