//! `pulse-loss`: a one-cycle pulse crosses from a faster to a slower domain through a level
//! chain. The slower clock can miss it entirely; use a toggle (pulse) synchronizer or a
//! handshake. Needs both clock frequencies in `[clocks]`.

use crate::cdc::crossings::{Crossings, DIn};
use crate::cdc::{in_trusted, related, short};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::Expr;

pub const ID: &str = "pulse-loss";

/// A one-bit register that is set under a condition and cleared otherwise (a strobe), or
/// loaded from an edge detect `a & ~b`.
pub(crate) fn is_pulse(ctx: &Ctx, s: SigId) -> bool {
    if ctx.n.sigs[s].width.unwrap_or(1) != 1 {
        return false;
    }
    let pi = ctx.g.reg_proc[&s];
    let assigns: Vec<_> = ctx.n.procs[pi]
        .assigns
        .iter()
        .filter(|a| {
            !a.in_reset
                && crate::design::graph::targets(&a.target)
                    .iter()
                    .any(|t| ctx.g.sig(t) == Some(s))
        })
        .collect();
    if assigns.is_empty() {
        return false;
    }
    let consts: Vec<Option<u64>> = assigns
        .iter()
        .map(|a| match &a.rhs {
            Expr::Const { value, .. } => *value,
            _ => None,
        })
        .collect();
    let strobe = consts.iter().all(|c| c.is_some())
        && consts.contains(&Some(1))
        && consts.contains(&Some(0))
        && assigns
            .iter()
            .zip(&consts)
            .filter(|(_, c)| **c == Some(1))
            .all(|(a, _)| !a.guards.is_empty());
    let edge_detect = assigns.len() == 1
        && matches!(&assigns[0].rhs, Expr::Binary { op, lhs, rhs } if (op == "&" || op == "&&")
            && (matches!(&**rhs, Expr::Unary { op, .. } if op == "~" || op == "!")
                || matches!(&**lhs, Expr::Unary { op, .. } if op == "~" || op == "!")));
    strobe || edge_detect
}

fn freq(ctx: &Ctx, s: SigId) -> Option<f64> {
    let root = ctx.reg_clock.get(&s)?.root.as_ref()?;
    ctx.config.clocks.get(root)?.frequency_hz
}

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>) {
    for d in &cx.dests {
        if in_trusted(ctx, d.reg) {
            continue;
        }
        for (_, din, len) in &d.bits {
            let DIn::Single { leaf, .. } = din else {
                continue;
            };
            let src = leaf.0;
            if *len < 2 || !ctx.g.is_reg(src) || !is_pulse(ctx, src) {
                continue;
            }
            let (Some(fs), Some(fd)) = (freq(ctx, src), freq(ctx, d.reg)) else {
                continue;
            };
            if fs <= fd {
                continue;
            }
            let sd = ctx.domain_of_reg(src).unwrap_or("?").to_string();
            let mut f = Finding::new(
                ID,
                Severity::Warning,
                d.read_span.clone(),
                format!(
                    "`{}` is a one-cycle pulse in domain {sd} ({}) crossing to the slower domain {} ({}) through a level chain: it can be missed; use a toggle synchronizer or a handshake",
                    short(ctx, src),
                    crate::config::format_frequency(fs),
                    d.domain,
                    crate::config::format_frequency(fd)
                ),
            );
            f.signal = Some(short(ctx, src));
            f.source_domain = Some(sd);
            f.destination_domain = Some(d.domain.clone());
            f.related.push(related(ctx, src, "pulse register"));
            f.related.push(related(ctx, d.reg, "stage 1"));
            out.push(f);
        }
    }
}
