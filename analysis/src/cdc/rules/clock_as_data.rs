//! `clock-as-data`: a clock net is read as data (sampled by a flop, or used in logic other
//! than a recognized gate or declared clock cell). Its value at a clock edge is a race.

use std::collections::BTreeSet;

use crate::cdc::{in_trusted, related, short};
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::Expr;

pub const ID: &str = "clock-as-data";

pub fn check(ctx: &Ctx, out: &mut Vec<Finding>) {
    let clock_net = |s: usize| ctx.clock_nets.contains(&s) && !ctx.g.is_reg(s);
    let mut seen: BTreeSet<(String, usize)> = BTreeSet::new();
    let mut report = |s: usize, span: &crate::model::Span, out: &mut Vec<Finding>| {
        if in_trusted(ctx, s) || !seen.insert((span.file.clone(), span.start)) {
            return;
        }
        let mut f = Finding::new(
            ID,
            Severity::Warning,
            span.clone(),
            format!("clock `{}` is used as data here", short(ctx, s)),
        );
        f.signal = Some(short(ctx, s));
        f.related.push(related(ctx, s, "clock"));
        out.push(f);
    };
    for p in &ctx.n.procs {
        for a in &p.assigns {
            let mut exprs: Vec<&Expr> = vec![&a.rhs];
            exprs.extend(a.guards.iter().map(|g| &g.cond));
            for e in exprs {
                for id in e.idents() {
                    if let Some(s) = ctx.g.sig(id) {
                        if clock_net(s) {
                            report(s, &a.span, out);
                        }
                    }
                }
            }
        }
    }
    for c in &ctx.n.combs {
        let target_is_clock = crate::design::graph::targets(&c.target)
            .iter()
            .any(|t| ctx.g.sig(t).is_some_and(|s| ctx.clock_nets.contains(&s)));
        if target_is_clock || c.port {
            continue;
        }
        if let Expr::Call { name, .. } = &c.rhs {
            if name.starts_with("$seam_") {
                continue;
            }
        }
        for id in c.rhs.idents() {
            if let Some(s) = ctx.g.sig(id) {
                if clock_net(s) {
                    report(s, &c.span, out);
                }
            }
        }
    }
}
