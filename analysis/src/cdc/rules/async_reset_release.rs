//! `async-reset-release`: a flop's asynchronous reset is released asynchronously to its
//! clock. Its reset tree ends in a top-level input, or in a register or reset synchronizer
//! of another domain, or in a reset synchronizer with too few stages or the wrong polarity,
//! with no reset synchronizer of the flop's own domain in between. One finding per process
//! (per instance; the same place in several instances with the same message is one). Also:
//! a reset synchronizer that shifts in its own reset value, whose output never releases.

use crate::cdc::resets::{bit_name, Problem, Resets};
use crate::cdc::{in_trusted, related, short};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Severity};

pub const ID: &str = "async-reset-release";

pub fn check(ctx: &Ctx, rs: &Resets, out: &mut Vec<Finding>) {
    let min = ctx.config.synchronizers.min_stages.max(1);
    for p in &rs.procs {
        if p.exempt || p.regs.iter().all(|r| in_trusted(ctx, *r)) {
            continue;
        }
        let Some((ctl, (_, problem))) = p
            .controls
            .iter()
            .find_map(|c| c.problems.first().map(|x| (c, x)))
        else {
            continue;
        };
        let sig_text = crate::model::render(&ctl.signal);
        let sig_local = sig_text.rsplit('.').next().unwrap_or(&sig_text).to_string();
        let regs = reg_list(ctx, &p.regs);
        let dom = &p.domain;
        let logic = if ctl.problems.iter().any(|(l, _)| l.logic) {
            "through logic, "
        } else {
            ""
        };
        let (src_sig, src_dom, why) = match problem {
            Problem::TopInput { port, domain } => (
                *port,
                domain
                    .clone()
                    .unwrap_or_else(|| crate::design::async_domain(&ctx.n.sigs[*port].local)),
                format!(
                    "{logic}it comes from top-level input `{}` with no reset synchronizer for {dom}",
                    short(ctx, *port)
                ),
            ),
            Problem::OtherDomain { reg, domain } => (
                reg.0,
                domain.clone(),
                format!(
                    "{logic}it comes from register `{}` of domain {domain} with no reset synchronizer for {dom}",
                    bit_name(ctx, *reg)
                ),
            ),
            Problem::WrongDomain { reg, domain } => (
                reg.0,
                domain.clone(),
                format!(
                    "{logic}it comes from reset synchronizer `{}`, which is clocked in domain {domain}, not {dom}",
                    bit_name(ctx, *reg)
                ),
            ),
            Problem::TooFewStages { reg, k } => (
                reg.0,
                dom.clone(),
                format!(
                    "{logic}it taps reset synchronizer `{}` after {k} stage(s), fewer than `min_stages` = {min}",
                    bit_name(ctx, *reg)
                ),
            ),
            Problem::Polarity { reg } => (
                reg.0,
                dom.clone(),
                format!(
                    "{logic}it uses reset synchronizer `{}` with the opposite polarity, so the flop leaves reset when the raw reset asserts",
                    bit_name(ctx, *reg)
                ),
            ),
        };
        let more = ctl.problems.len().saturating_sub(1);
        let more = if more > 0 {
            format!(" (and {more} more source(s) like it)")
        } else {
            String::new()
        };
        let span = ctx.n.procs[p.proc].span.clone();
        let mut f = Finding::new(
            ID,
            Severity::Warning,
            span,
            format!(
                "the asynchronous reset `{sig_local}` of {regs} (domain {dom}) is released asynchronously: {why}{more}"
            ),
        );
        f.signal = Some(short(ctx, src_sig));
        f.source_domain = Some(src_dom);
        f.destination_domain = Some(dom.clone());
        for (_, pr) in &ctl.problems {
            let (s, w) = match pr {
                Problem::TopInput { port, .. } => (*port, "reset input"),
                Problem::OtherDomain { reg, .. } => (reg.0, "reset source register"),
                Problem::WrongDomain { reg, .. } => (reg.0, "reset synchronizer of another domain"),
                Problem::TooFewStages { reg, .. } => (reg.0, "reset synchronizer stage"),
                Problem::Polarity { reg } => (reg.0, "reset synchronizer"),
            };
            f.related.push(related(ctx, s, w));
            if f.related.len() >= 4 {
                break;
            }
        }
        if let Some(r) = p.regs.first() {
            f.related.push(related(ctx, *r, "reset register"));
        }
        out.push(f);
    }
    // a reset synchronizer that shifts in the level its reset sets never releases
    for (first, span) in &rs.stuck_used {
        if in_trusted(ctx, first.0) {
            continue;
        }
        let Some(st) = rs.stages.get(first) else {
            continue;
        };
        let dom = ctx
            .domain_of_reg(first.0)
            .unwrap_or("an unknown domain")
            .to_string();
        let v = u8::from(st.reset_value);
        let mut f = Finding::new(
            ID,
            Severity::Warning,
            span.clone(),
            format!(
                "reset synchronizer `{}` (domain {dom}) shifts in {v}, the level its reset sets: the reset it drives never releases (shift in {}, the inactive level)",
                bit_name(ctx, *first),
                1 - v
            ),
        );
        f.signal = Some(short(ctx, first.0));
        f.source_domain = Some(dom.clone());
        f.destination_domain = Some(dom);
        f.related
            .push(related(ctx, first.0, "reset synchronizer stage 1"));
        out.push(f);
    }
}

fn reg_list(ctx: &Ctx, regs: &[SigId]) -> String {
    let names: Vec<String> = regs
        .iter()
        .filter(|r| !ctx.n.sigs[**r].name.is_empty())
        .map(|r| format!("`{}`", short(ctx, *r)))
        .collect();
    match names.len() {
        0 => "its registers".into(),
        1..=3 => names.join(", "),
        n => format!("{} and {} more", names[..2].join(", "), n - 2),
    }
}
