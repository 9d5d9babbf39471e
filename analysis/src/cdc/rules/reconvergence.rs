//! `reconvergence`: signals from one source domain, synchronized through separate chains,
//! meet again in destination logic within a few levels of logic. The chains can pass a
//! common change a cycle apart, so the meeting logic briefly sees a combination the source
//! never had.
//!
//! Not reported: bits of one vector (that is `multibit-crossing`, and gray decoding reads
//! only bits of one gray vector), signals from different source domains, and a register
//! bit that is a plain copy of one synchronized bit.

use std::collections::{BTreeMap, BTreeSet};

use crate::cdc::crossings::Crossings;
use crate::cdc::{in_trusted, related, short};
use crate::design::graph::{targets, BitSrc, Driver};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::{Expr, Select};

pub const ID: &str = "reconvergence";

/// Levels of logic searched from a register's next state back towards the chains: the
/// register's own expression is level 1, every combinational net passed adds one. Common
/// practice: meetings further away are usually separated by registers or handshakes.
pub const MAX_LEVELS: u32 = 4;

struct Meet {
    /// source signal → (synchronized copy registers, levels)
    by_source: BTreeMap<SigId, (BTreeSet<SigId>, u32)>,
}

fn collect(
    ctx: &Ctx,
    cx: &Crossings,
    e: &Expr,
    level: u32,
    min: u32,
    seen: &mut BTreeSet<SigId>,
    m: &mut Meet,
) {
    if level > MAX_LEVELS {
        return;
    }
    let visit = |id: &Expr, bit: Option<u32>, m: &mut Meet, seen: &mut BTreeSet<SigId>| {
        let Some(s) = ctx.g.sig(id) else { return };
        if ctx.g.is_reg(s) {
            let w = ctx.n.sigs[s].width.unwrap_or(1).clamp(1, 256);
            let bits: Vec<u32> = match bit {
                Some(b) => vec![b],
                None => (0..w).collect(),
            };
            for b in bits {
                if let Some((leaf, k)) = cx.schemes.carries.get(&(s, b)) {
                    if *k >= min {
                        let e = m
                            .by_source
                            .entry(leaf.0)
                            .or_insert((BTreeSet::new(), level));
                        e.0.insert(s);
                        e.1 = e.1.min(level);
                    }
                }
            }
            return;
        }
        if !seen.insert(s) {
            return;
        }
        for d in ctx.g.drivers.get(&s).cloned().unwrap_or_default() {
            let mut exprs: Vec<&Expr> = Vec::new();
            match d {
                Driver::Comb(ci) => exprs.push(&ctx.n.combs[ci].rhs),
                Driver::CombProc(pi, ai) => {
                    let a = &ctx.n.procs[pi].assigns[ai];
                    exprs.push(&a.rhs);
                    exprs.extend(a.guards.iter().map(|g| &g.cond));
                }
            }
            for x in exprs {
                collect(ctx, cx, x, level + 1, min, seen, m);
            }
        }
    };
    // constant bit selects name one bit; anything else reads the whole signal
    let mut stack = vec![e];
    while let Some(x) = stack.pop() {
        match x {
            Expr::Select { base, sel } if matches!(**base, Expr::Ident { .. }) => {
                let bit = match sel.as_ref() {
                    Select::Bit { index } => crate::design::graph::const_of(index).and_then(|k| {
                        ctx.g
                            .sig(base)
                            .and_then(|s| u32::try_from(k - ctx.n.sigs[s].lsb).ok())
                    }),
                    _ => None,
                };
                visit(base, bit, m, seen);
                if let Select::Bit { index } = sel.as_ref() {
                    stack.push(index);
                }
            }
            Expr::Ident { .. } => visit(x, None, m, seen),
            Expr::Const { .. } => {}
            Expr::Select { base, .. } => stack.push(base),
            Expr::Unary { arg, .. } => stack.push(arg),
            Expr::Binary { lhs, rhs, .. } => {
                stack.push(lhs);
                stack.push(rhs)
            }
            Expr::Ternary { cond, then, other } => {
                stack.push(cond);
                stack.push(then);
                stack.push(other)
            }
            Expr::Concat { parts } => stack.extend(parts.iter()),
            Expr::Repl { count, parts } => {
                stack.push(count);
                stack.extend(parts.iter())
            }
            Expr::Call { args, .. } => stack.extend(args.iter()),
            Expr::Opaque { reads, .. } => stack.extend(reads.iter()),
        }
    }
}

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>) {
    let min = ctx.config.synchronizers.min_stages.max(1);
    let mut regs: Vec<(&SigId, &usize)> = ctx.g.reg_proc.iter().collect();
    regs.sort();
    for (r, pi) in regs {
        let mut reported = false;
        if in_trusted(ctx, *r) || ctx.n.sigs[*r].name.is_empty() {
            continue;
        }
        let Some(dom) = ctx.domain_of_reg(*r) else {
            continue;
        };
        for a in ctx.n.procs[*pi].assigns.iter().filter(|a| !a.in_reset) {
            if !targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(*r)) {
                continue;
            }
            // a bit that copies one signal bit, under no guard, is not a meeting
            let w = ctx.g.width_of(&a.target).unwrap_or(1).clamp(1, 256);
            let copies = (0..w)
                .all(|b| matches!(ctx.g.bit_of(&a.rhs, b), BitSrc::Copy(..) | BitSrc::Const(_)));
            if copies && a.guards.is_empty() {
                continue;
            }
            let mut m = Meet {
                by_source: BTreeMap::new(),
            };
            let mut seen = BTreeSet::new();
            for g in &a.guards {
                collect(ctx, cx, &g.cond, 1, min, &mut seen, &mut m);
            }
            if copies && m.by_source.is_empty() {
                continue; // the guards combine nothing synchronized
            }
            collect(ctx, cx, &a.rhs, 1, min, &mut seen, &mut m);
            // group the sources by domain; two or more sources of one domain meet here
            let mut per_dom: BTreeMap<String, Vec<SigId>> = BTreeMap::new();
            for s in m.by_source.keys() {
                if let Some(d) = ctx.leaf_domain(*s) {
                    if d != dom {
                        per_dom.entry(d).or_default().push(*s);
                    }
                }
            }
            for (sd, srcs) in per_dom {
                if srcs.len() < 2 {
                    continue;
                }
                let names: Vec<String> = srcs.iter().map(|s| short(ctx, *s)).collect();
                let levels = srcs
                    .iter()
                    .filter_map(|s| m.by_source.get(s).map(|x| x.1))
                    .max()
                    .unwrap_or(1);
                let mut f = Finding::new(
                    ID,
                    Severity::Warning,
                    a.span.clone(),
                    format!(
                        "`{}` (domain {sd}) are synchronized separately and meet again at `{}` in domain {dom} ({levels} level(s) of logic): a change of both can be seen a cycle apart",
                        names.join("` and `"),
                        short(ctx, *r),
                    ),
                );
                f.signal = Some(names[0].clone());
                f.source_domain = Some(sd.clone());
                f.destination_domain = Some(dom.to_string());
                for s in &srcs {
                    f.related.push(related(ctx, *s, "source"));
                    if let Some((copies, _)) = m.by_source.get(s) {
                        for c in copies.iter().take(2) {
                            f.related.push(related(ctx, *c, "synchronized copy"));
                        }
                    }
                }
                f.related.push(related(ctx, *r, "meeting point"));
                out.push(f);
                reported = true;
            }
            if reported {
                break; // one finding per register
            }
        }
    }
}
