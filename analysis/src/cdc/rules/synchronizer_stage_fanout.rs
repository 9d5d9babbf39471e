//! `synchronizer-stage-fanout`: a stage before `min_stages` is read by anything but the next
//! stage. Its value may still be metastable; logic reading it sees a different value from
//! the next stage. Reading later stages (edge detects, pulse outputs) is fine.

use std::collections::HashSet;

use crate::cdc::crossings::Crossings;
use crate::cdc::{in_trusted, related, short};
use crate::design::graph::BitSrc;
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::{Expr, Select, Span};

pub const ID: &str = "synchronizer-stage-fanout";

/// Reads of (signal, bit) in an expression: bit `None` when the whole signal is read.
fn reads(ctx: &Ctx, e: &Expr, out: &mut Vec<(SigId, Option<u32>)>) {
    match e {
        Expr::Select { base, sel } if matches!(**base, Expr::Ident { .. }) => {
            match ctx.g.bit_of(e, 0) {
                BitSrc::Copy(s, b) if matches!(sel.as_ref(), Select::Bit { .. }) => {
                    out.push((s, Some(b)))
                }
                _ => {
                    if let Some(s) = ctx.g.sig(base) {
                        out.push((s, None));
                    }
                }
            }
            if let Select::Bit { index } = sel.as_ref() {
                reads(ctx, index, out);
            }
        }
        Expr::Ident { .. } => {
            if let Some(s) = ctx.g.sig(e) {
                out.push((s, None));
            }
        }
        _ => {
            let mut kids = Vec::new();
            match e {
                Expr::Select { base, .. } => kids.push(&**base),
                Expr::Unary { arg, .. } => kids.push(&**arg),
                Expr::Binary { lhs, rhs, .. } => kids.extend([&**lhs, &**rhs]),
                Expr::Ternary { cond, then, other } => kids.extend([&**cond, &**then, &**other]),
                Expr::Concat { parts } | Expr::Repl { parts, .. } => kids.extend(parts.iter()),
                Expr::Call { args, .. } => kids.extend(args.iter()),
                Expr::Opaque { reads, .. } => kids.extend(reads.iter()),
                _ => {}
            }
            for k in kids {
                reads(ctx, k, out);
            }
        }
    }
}

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>) {
    let min = ctx.config.synchronizers.min_stages.max(1);
    // every early stage bit of a chain that reaches min_stages
    let mut early: Vec<((SigId, u32), u32)> = cx
        .stage_bits
        .iter()
        .filter(|(_, st)| st.0 < min && st.1 >= min)
        .map(|(b, st)| (*b, st.0))
        .collect();
    early.sort();
    if early.is_empty() {
        return;
    }
    // all reads in the design, with where they are
    let mut places: Vec<(Vec<(SigId, Option<u32>)>, Option<SigId>, Span)> = Vec::new();
    for p in &ctx.n.procs {
        for a in &p.assigns {
            let mut r = Vec::new();
            reads(ctx, &a.rhs, &mut r);
            for g in &a.guards {
                reads(ctx, &g.cond, &mut r);
            }
            let target = crate::design::graph::targets(&a.target)
                .first()
                .and_then(|t| ctx.g.sig(t));
            places.push((r, target, a.span.clone()));
        }
    }
    for c in &ctx.n.combs {
        let mut r = Vec::new();
        reads(ctx, &c.rhs, &mut r);
        let target = crate::design::graph::targets(&c.target)
            .first()
            .and_then(|t| ctx.g.sig(t));
        places.push((r, target, c.span.clone()));
    }
    let mut reported: HashSet<SigId> = HashSet::new();
    for ((s, b), k) in early {
        if in_trusted(ctx, s) || reported.contains(&s) {
            continue;
        }
        let followers = cx.same_clock_followers(ctx, (s, b));
        let mut allowed: HashSet<SigId> = followers.iter().map(|f| f.bit.0).collect();
        for f in &followers {
            allowed.extend(f.hops.iter().copied());
        }
        for (r, target, span) in &places {
            // a read of an alias (port, wire) counts as a read of the stage it copies
            let hit = r.iter().any(|(rs, rb)| {
                if *rs == s && rb.is_none_or(|x| x == b) {
                    return true;
                }
                let w = ctx.n.sigs[*rs].width.unwrap_or(1);
                let probe = match rb {
                    Some(x) => Some(*x),
                    None if w == 1 => Some(0),
                    None => None,
                };
                probe.is_some_and(|pb| {
                    let (ls, lb, _) = ctx.g.through_copies(*rs, pb);
                    (ls, lb) == (s, b) && *rs != s
                })
            });
            if !hit {
                continue;
            }
            if target.is_some_and(|t| allowed.contains(&t)) {
                continue;
            }
            let mut f = Finding::new(
                ID,
                Severity::Warning,
                span.clone(),
                format!(
                    "stage {k} `{}` of a synchronizer is read here, before stage {min}; it can still be metastable (read the last stage instead)",
                    short(ctx, s)
                ),
            );
            f.signal = Some(short(ctx, s));
            f.destination_domain = ctx.domain_of_reg(s).map(|d| d.to_string());
            f.source_domain = cx.stage_bits.get(&(s, b)).map(|st| st.2.clone());
            f.related.push(related(ctx, s, &format!("stage {k}")));
            out.push(f);
            reported.insert(s);
            break;
        }
    }
}
