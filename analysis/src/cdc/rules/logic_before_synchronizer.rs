//! `logic-before-synchronizer`: the first stage of a chain samples logic of source-domain
//! signals (a gate of two or more source bits, a multi-bit comparison, a function) instead
//! of one register bit: the logic can glitch, and the chain then synchronizes the glitch.

use crate::cdc::crossings::{Crossings, DIn};
use crate::cdc::{in_trusted, related, short};
use crate::design::Ctx;
use crate::finding::{Finding, Severity};

pub const ID: &str = "logic-before-synchronizer";

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>) {
    for d in &cx.dests {
        if d.qualified || d.scheme.is_some() || in_trusted(ctx, d.reg) {
            continue;
        }
        let Some((
            _,
            DIn::Logic {
                foreign,
                foreign_bits,
            },
            len,
        )) = d
            .bits
            .iter()
            .find(|(_, din, len)| matches!(din, DIn::Logic { .. }) && *len >= 2)
        else {
            continue;
        };
        let src_dom = ctx.leaf_domain(foreign[0]).unwrap_or_default();
        // logic that merges several source domains names them all
        let mut doms: Vec<String> = foreign.iter().filter_map(|s| ctx.leaf_domain(*s)).collect();
        doms.sort();
        doms.dedup();
        let from = if doms.len() > 1 {
            format!("domains {}", doms.join(", "))
        } else {
            format!("domain {src_dom}")
        };
        let names: Vec<String> = foreign.iter().map(|s| short(ctx, *s)).collect();
        let mut f = Finding::new(
            ID,
            Severity::Error,
            d.read_span.clone(),
            format!(
                "stage 1 `{}` (domain {}) of a {len}-stage chain samples logic of {foreign_bits} bits from {from} (`{}`); synchronize one register bit, then combine",
                short(ctx, d.reg),
                d.domain,
                names.join("`, `"),
            ),
        );
        f.signal = Some(names[0].clone());
        f.source_domain = Some(src_dom);
        f.destination_domain = Some(d.domain.clone());
        for s in foreign {
            f.related.push(related(ctx, *s, "source"));
        }
        f.related.push(related(ctx, d.reg, "stage 1"));
        out.push(f);
    }
}
