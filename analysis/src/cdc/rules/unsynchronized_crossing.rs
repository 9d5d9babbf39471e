//! `unsynchronized-crossing`: a register (or memory write port, or clock-gate enable) in
//! domain B samples a signal from domain A or an async input with no synchronizer chain and
//! no safe scheme. Also records every crossing (safe or not) for the report tables.

use crate::cdc::crossings::{Crossings, DIn};
use crate::cdc::{in_trusted, related, short};
use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::report::{Crossing, CrossingStatus};

pub const ID: &str = "unsynchronized-crossing";

pub fn check(ctx: &Ctx, cx: &Crossings, out: &mut Vec<Finding>, crossings: &mut Vec<Crossing>) {
    let min = ctx.config.synchronizers.min_stages.max(1);
    for d in &cx.dests {
        let src_dom = d.sources.keys().next().cloned().unwrap_or_default();
        let src = d.sources.values().flatten().next().copied();
        let any_logic_chain = d
            .bits
            .iter()
            .any(|(_, din, len)| matches!(din, DIn::Logic { .. }) && *len >= 2);
        let shortest = d
            .bits
            .iter()
            .filter(|(_, din, _)| matches!(din, DIn::Single { .. }))
            .map(|b| b.2)
            .min();
        let synced = !d.bits.is_empty()
            && d.bits
                .iter()
                .all(|(_, din, len)| matches!(din, DIn::Single { .. }) && *len >= min);
        let is_stage_later = cx.stage_bits.keys().any(|(s, _)| *s == d.reg) && synced;
        let width = ctx.n.sigs[d.reg].width.unwrap_or(1);
        let mut c = Crossing {
            source_domain: src_dom.clone(),
            destination_domain: d.domain.clone(),
            source: src.map(|s| short(ctx, s)).unwrap_or_default(),
            destination: short(ctx, d.reg),
            status: CrossingStatus::Synchronized,
            scheme: None,
            stages: None,
            bits: width,
            span: d.read_span.clone(),
        };
        if synced {
            c.scheme = Some(format!("{}-flop chain", shortest.unwrap_or(min)));
            c.stages = shortest;
            let _ = is_stage_later;
            crossings.push(c);
            continue;
        }
        if let Some(s) = &d.scheme {
            c.scheme = Some(s.clone());
            crossings.push(c);
            continue;
        }
        if d.qualified {
            c.scheme = Some("qualified by a synchronized enable".into());
            crossings.push(c);
            continue;
        }
        if any_logic_chain {
            // reported as logic-before-synchronizer instead
            c.status = CrossingStatus::Unsafe;
            c.scheme = Some("logic before the first stage".into());
            crossings.push(c);
            continue;
        }
        c.status = CrossingStatus::Unsafe;
        crossings.push(c);
        if in_trusted(ctx, d.reg) {
            continue;
        }
        let reg = short(ctx, d.reg);
        let srcs: Vec<String> = d
            .sources
            .values()
            .flatten()
            .map(|s| short(ctx, *s))
            .collect();
        let memory = ctx.n.sigs[d.reg].memory;
        let what = if memory {
            "memory write port"
        } else {
            "register"
        };
        let mut reason = match shortest {
            Some(n) if n > 1 => format!("a chain of {n} stage(s), fewer than `min_stages` = {min}"),
            _ => "no synchronizer".to_string(),
        };
        // a trusted synchronizer on the wrong clock: its output is still in the source domain
        if let Some(ti) = d
            .sources
            .values()
            .flatten()
            .find_map(|s| crate::cdc::trusted_instance(ctx, *s))
        {
            let inst = &ctx.n.insts[ti];
            let path = inst
                .path
                .split_once('.')
                .map(|(_, r)| r)
                .unwrap_or(&inst.path);
            reason.push_str(&format!(
                " (`{path}` is a trusted synchronizer `{}`, but it is clocked in domain {src_dom}, not {})",
                inst.module, d.domain
            ));
        }
        let mut f = Finding::new(
            ID,
            Severity::Error,
            d.read_span.clone(),
            format!(
                "`{}` (domain {}) is sampled by {what} `{reg}` in domain {} with {reason}",
                srcs.join("`, `"),
                src_dom,
                d.domain
            ),
        );
        f.signal = Some(srcs.first().cloned().unwrap_or_default());
        f.source_domain = Some(src_dom.clone());
        f.destination_domain = Some(d.domain.clone());
        for s in d.sources.values().flatten() {
            f.related.push(related(
                ctx,
                *s,
                if ctx.g.is_reg(*s) {
                    "source register"
                } else {
                    "asynchronous input"
                },
            ));
        }
        for (_, din, _) in &d.bits {
            if let DIn::Single { hops, .. } = din {
                for h in hops
                    .iter()
                    .filter(|h| ctx.n.sigs[**h].span.line > 0)
                    .take(4)
                {
                    f.related.push(related(ctx, *h, "through"));
                }
                break;
            }
        }
        f.related.push(related(ctx, d.reg, "destination register"));
        out.push(f);
    }
    // enables of clock gates are data sampled by the gated clock
    for (s, rc) in &ctx.reg_clock {
        let Some(dom) = rc.domain.as_deref() else {
            continue;
        };
        let enables = rc.trace.cell_enables.iter().map(|(sp, e)| (sp, e)).chain(
            rc.trace
                .gates
                .iter()
                .flat_map(|(sp, es)| es.iter().map(move |e| (sp, e))),
        );
        for (span, e) in enables {
            for id in e.idents() {
                let Some(es) = ctx.g.sig(id) else { continue };
                for &l in ctx.leaves(es).iter() {
                    let Some(ld) = ctx.leaf_domain(l) else {
                        continue;
                    };
                    if ld == dom || ctx.is_static(l) {
                        continue;
                    }
                    // an enable that is itself a synchronizer stage output is fine
                    let staged = (0..ctx.n.sigs[l].width.unwrap_or(1))
                        .any(|b| cx.stage_bits.get(&(l, b)).is_some_and(|st| st.0 >= min));
                    if staged {
                        continue;
                    }
                    let mut f = Finding::new(
                        ID,
                        Severity::Error,
                        span.clone(),
                        format!(
                            "clock-gate enable `{}` (domain {ld}) is sampled by the gated clock of domain {dom} with no synchronizer",
                            short(ctx, l)
                        ),
                    );
                    f.signal = Some(short(ctx, l));
                    f.source_domain = Some(ld.clone());
                    f.destination_domain = Some(dom.to_string());
                    f.related.push(related(ctx, l, "enable source"));
                    f.related.push(related(ctx, *s, "gated register"));
                    out.push(f);
                }
            }
        }
    }
}
