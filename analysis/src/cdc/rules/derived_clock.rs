//! `derived-clock`: a register's output (directly or through buffers) is used as a clock.
//! Its registers are in the parent's domain, but the divided clock adds skew and needs its
//! own timing constraints; a clock enable on the parent clock is the usual remedy.

use std::collections::BTreeMap;

use crate::cdc::{in_trusted, related, short};
use crate::design::Ctx;
use crate::finding::{Finding, Severity};

pub const ID: &str = "derived-clock";

pub fn check(ctx: &Ctx, out: &mut Vec<Finding>) {
    // one finding per (divider register, process using it)
    let mut by_proc: BTreeMap<usize, usize> = BTreeMap::new();
    for (s, rc) in &ctx.reg_clock {
        if rc.trace.derived.is_empty() || in_trusted(ctx, *s) {
            continue;
        }
        by_proc.insert(ctx.g.reg_proc[s], *s);
    }
    for (pi, s) in by_proc {
        let rc = &ctx.reg_clock[&s];
        let divider = rc.trace.derived[0];
        let p = &ctx.n.procs[pi];
        let clock_text = p
            .clock
            .as_ref()
            .map(|(e, _)| crate::model::render(e))
            .unwrap_or_default();
        let local = clock_text
            .rsplit('.')
            .next()
            .unwrap_or(&clock_text)
            .to_string();
        let dom = rc
            .domain
            .clone()
            .unwrap_or_else(|| "an unknown domain".into());
        let mut f = Finding::new(
            ID,
            Severity::Warning,
            p.span.clone(),
            format!(
                "`{local}` is the output of register `{}` used as a clock; its registers are in domain {dom}. Prefer a clock enable on the parent clock",
                short(ctx, divider)
            ),
        );
        f.signal = Some(short(ctx, divider));
        f.source_domain = rc.domain.clone();
        f.destination_domain = rc.domain.clone();
        f.related.push(related(ctx, divider, "divider register"));
        out.push(f);
    }
}
