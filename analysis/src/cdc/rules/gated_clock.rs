//! `gated-clock`: plain logic other than a buffer or inverter sits in a clock path. A gate
//! built from ordinary logic can glitch and adds skew; use a clock enable, or a clock-gate
//! cell declared in `[cells]`.

use std::collections::BTreeSet;

use crate::cdc::in_trusted;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::model::render;

pub const ID: &str = "gated-clock";

pub fn check(ctx: &Ctx, out: &mut Vec<Finding>) {
    let mut seen: BTreeSet<(String, usize)> = BTreeSet::new();
    let mut regs: Vec<_> = ctx.reg_clock.iter().collect();
    regs.sort_by_key(|(s, _)| **s);
    for (s, rc) in regs {
        if in_trusted(ctx, *s) {
            continue;
        }
        for (span, enables) in &rc.trace.gates {
            if !seen.insert((span.file.clone(), span.start)) {
                continue;
            }
            let en: Vec<String> = enables
                .iter()
                .map(|e| render(e).rsplit('.').next().unwrap_or("").to_string())
                .collect();
            let dom = rc.domain.clone().unwrap_or_else(|| "?".into());
            let mut f = Finding::new(
                ID,
                Severity::Warning,
                span.clone(),
                format!(
                    "clock of domain {dom} is gated by plain logic (enable: `{}`); use a clock enable or a declared clock-gate cell",
                    en.join("`, `")
                ),
            );
            f.source_domain = rc.domain.clone();
            f.destination_domain = rc.domain.clone();
            f.signal = en.first().cloned();
            out.push(f);
        }
    }
}
