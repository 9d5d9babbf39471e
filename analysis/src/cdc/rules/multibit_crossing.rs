//! `multibit-crossing`: two or more bits of one source vector cross into one domain through
//! separate synchronizer chains with no safe scheme. Each chain is right on its own; the
//! chains resolve independently, so the destination can see a mixture of old and new bits.
//!
//! Safe (no finding): the vector is gray code of a counter (`cdc::schemes::gray_of`), it is
//! listed in `[static] signals` (it never becomes a crossing source), or it is read under a
//! synchronized enable (then it has no chain of its own and is a qualified crossing).

use std::collections::{BTreeMap, BTreeSet};

use crate::cdc::crossings::Crossings;
use crate::cdc::schemes::vector_crossings;
use crate::cdc::{related, short};
use crate::design::graph::targets;
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::Expr;
use crate::report::{Crossing, CrossingStatus};

pub const ID: &str = "multibit-crossing";

/// Registers of domain `dom` whose next state reads synchronized copies of two or more
/// different bits of `src`: where the separately synchronized bits meet.
pub(crate) fn meeting_points(ctx: &Ctx, cx: &Crossings, src: SigId, dom: &str) -> Vec<SigId> {
    let min = ctx.config.synchronizers.min_stages.max(1);
    // synchronized copy register → source bits it carries
    let mut carried: BTreeMap<SigId, BTreeSet<u32>> = BTreeMap::new();
    for (b, (leaf, k)) in &cx.schemes.carries {
        if leaf.0 == src && *k >= min {
            carried.entry(b.0).or_default().insert(leaf.1);
        }
    }
    let mut regs: Vec<(&SigId, &usize)> = ctx.g.reg_proc.iter().collect();
    regs.sort();
    let mut out = Vec::new();
    for (r, pi) in regs {
        // a register that only copies synchronized bits is a further stage, not a meeting
        let all_copies = (0..ctx.n.sigs[*r].width.unwrap_or(1).clamp(1, 256))
            .all(|b| cx.schemes.carries.contains_key(&(*r, b)));
        if ctx.domain_of_reg(*r) != Some(dom) || all_copies {
            continue;
        }
        let mut bits: BTreeSet<u32> = BTreeSet::new();
        for a in ctx.n.procs[*pi].assigns.iter().filter(|a| !a.in_reset) {
            if !targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(*r)) {
                continue;
            }
            let mut ids = a.rhs.idents();
            for g in &a.guards {
                ids.extend(g.cond.idents());
            }
            for id in ids {
                let Some(s) = ctx.g.sig(id) else { continue };
                for l in ctx.leaves(s).iter() {
                    if let Some(c) = carried.get(l) {
                        bits.extend(c.iter().copied());
                    }
                }
            }
        }
        if bits.len() >= 2 {
            out.push(*r);
        }
    }
    out
}

/// Whether the source's next state is built with XOR (it looks like gray code).
fn looks_encoded(ctx: &Ctx, src: SigId) -> bool {
    let Some(pi) = ctx.g.reg_proc.get(&src) else {
        return false;
    };
    let mut xor = false;
    for a in &ctx.n.procs[*pi].assigns {
        if targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(src)) {
            let mut look = |e: &Expr| {
                e.visit(&mut |x| {
                    if matches!(x, Expr::Binary { op, .. } if op == "^") {
                        xor = true;
                    }
                })
            };
            look(&a.rhs);
            for id in a.rhs.idents() {
                if let Some(s) = ctx.g.sig(id) {
                    for d in ctx.g.drivers.get(&s).cloned().unwrap_or_default() {
                        if let crate::design::graph::Driver::Comb(ci) = d {
                            look(&ctx.n.combs[ci].rhs);
                        }
                    }
                }
            }
        }
    }
    xor
}

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>, crossings: &mut [Crossing]) {
    for v in vector_crossings(ctx, cx) {
        let src_dom = ctx.leaf_domain(v.source).unwrap_or_default();
        let stage1: BTreeSet<SigId> = v.bits.iter().map(|b| b.0).collect();
        let dest_names: BTreeSet<String> = stage1.iter().map(|s| short(ctx, *s)).collect();
        if let Some(g) = cx.schemes.gray.get(&v.source) {
            for c in crossings.iter_mut() {
                if dest_names.contains(&c.destination) && c.source == short(ctx, v.source) {
                    c.scheme = Some(if g.counter == v.source {
                        "gray code (gray counter)".to_string()
                    } else {
                        format!("gray code of counter `{}`", short(ctx, g.counter))
                    });
                }
            }
            continue;
        }
        // report at the first stage-1 read in source order
        let mut dests: Vec<usize> = v.dests.clone();
        dests.sort_by_key(|i| {
            let s = &cx.dests[*i].read_span;
            (s.file.clone(), s.line, s.column)
        });
        let Some(first) = dests.first().map(|i| &cx.dests[*i]) else {
            continue;
        };
        let src = short(ctx, v.source);
        let w = ctx.n.sigs[v.source].width.unwrap_or(1);
        let what = if ctx.g.is_reg(v.source) {
            "register"
        } else {
            "input"
        };
        let hint = if looks_encoded(ctx, v.source) {
            " (it is XOR-encoded, but not as gray code of a counter that steps by one)"
        } else {
            ""
        };
        let mut f = Finding::new(
            ID,
            Severity::Error,
            first.read_span.clone(),
            format!(
                "{} bits of {what} `{src}` ({w} bits, domain {src_dom}) cross to domain {} through separate chains with no safe scheme{hint}: the bits can arrive in different cycles",
                v.bits.len(),
                v.dest_domain
            ),
        );
        f.signal = Some(src.clone());
        f.source_domain = Some(src_dom.clone());
        f.destination_domain = Some(v.dest_domain.clone());
        f.related.push(related(
            ctx,
            v.source,
            if ctx.g.is_reg(v.source) {
                "source register"
            } else {
                "asynchronous input"
            },
        ));
        // one bit path per stage-1 register (a vector register carries several bits)
        for s in &stage1 {
            let mut bits: Vec<u32> = v.bits.iter().filter(|b| b.0 == *s).map(|b| b.2).collect();
            bits.sort();
            let list = bits
                .iter()
                .map(|b| format!("[{b}]"))
                .collect::<Vec<_>>()
                .join(", ");
            f.related.push(related(
                ctx,
                *s,
                &format!(
                    "stage 1 of bit{} {list}",
                    if bits.len() > 1 { "s" } else { "" }
                ),
            ));
        }
        for m in meeting_points(ctx, cx, v.source, &v.dest_domain)
            .into_iter()
            .take(4)
        {
            f.related.push(related(ctx, m, "the bits meet again at"));
        }
        out.push(f);
        for c in crossings.iter_mut() {
            if dest_names.contains(&c.destination) && c.source == src {
                c.status = CrossingStatus::Unsafe;
                c.scheme = Some("separate chains per bit (multi-bit)".into());
            }
        }
    }
}
