//! CDC rules over an elaborated design. `crossings` recognises synchronizers and classifies
//! every crossing once; each rule in `rules/` turns that into findings of one kind.

pub mod bitval;
pub mod crossings;
mod funcall;
pub mod mtbf_table;
pub mod resets;
pub mod rules;
pub mod schemes;
pub mod waivers;

use std::collections::HashMap;

use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::{Finding, Related};
use crate::report::Crossing;

pub struct CdcResult {
    pub findings: Vec<Finding>,
    pub crossings: Vec<Crossing>,
    /// Per register: (stage k, of N, source domain) of its first stage bit.
    pub stages: HashMap<SigId, (u32, u32, String)>,
    /// Per register: its reset tree (registers with an asynchronous control only).
    pub resets: HashMap<SigId, crate::report::ResetSource>,
    /// Per register: (stage k, of N) of its first reset-synchronizer stage bit.
    pub reset_stages: HashMap<SigId, (u32, u32)>,
    /// Hover notes per register from the multi-bit schemes (`schemes::notes`).
    pub scheme_notes: HashMap<SigId, Vec<String>>,
    /// MTBF of every synchronizer and of the design (`mtbf_table`).
    pub mtbf: crate::report::MtbfReport,
}

/// Hierarchical name without the top module: `u_log.alarm`.
pub fn short(ctx: &Ctx, s: SigId) -> String {
    let n = &ctx.n.sigs[s].name;
    n.split_once('.')
        .map(|(_, r)| r.to_string())
        .unwrap_or(n.clone())
}

pub fn related(ctx: &Ctx, s: SigId, what: &str) -> Related {
    Related {
        span: ctx.sig_span(s),
        message: format!("{what}: {}", short(ctx, s)),
    }
}

/// Findings inside trusted synchronizer modules are not reported (their use is checked).
pub fn in_trusted(ctx: &Ctx, s: SigId) -> bool {
    ctx.n.insts[ctx.n.sigs[s].inst].trusted
}

/// The outermost trusted synchronizer instance (module or `synchronizer` cell) that holds `s`.
pub fn trusted_instance(ctx: &Ctx, s: SigId) -> Option<usize> {
    let mut i = ctx.n.sigs[s].inst;
    let cell = matches!(
        ctx.n.insts[i].cell,
        Some(crate::config::Cell::Synchronizer { .. })
    );
    if cell {
        return Some(i);
    }
    if !ctx.n.insts[i].trusted {
        return None;
    }
    while let Some(p) = ctx.n.insts[i].parent {
        if !ctx.n.insts[p].trusted {
            break;
        }
        i = p;
    }
    Some(i)
}

pub fn run(ctx: &Ctx) -> CdcResult {
    let cx = crossings::Crossings::compute(ctx);
    let mut findings = Vec::new();
    let mut crossings = Vec::new();
    rules::unsynchronized_crossing::check(ctx, &cx, &mut findings, &mut crossings);
    rules::multibit_crossing::check(ctx, &cx, &mut findings, &mut crossings);
    rules::reconvergence::check(ctx, &cx, &mut findings);
    rules::logic_before_synchronizer::check(ctx, &cx, &mut findings);
    rules::synchronizer_stage_fanout::check(ctx, &cx, &mut findings);
    rules::derived_clock::check(ctx, &mut findings);
    rules::gated_clock::check(ctx, &mut findings);
    rules::clock_as_data::check(ctx, &mut findings);
    rules::pulse_loss::check(ctx, &cx, &mut findings);
    let mtbf = mtbf_table::compute(ctx, &cx);
    rules::low_mtbf::check(ctx, &mtbf, &mut findings);
    let rs = resets::Resets::compute(ctx, &cx);
    rules::async_reset_release::check(ctx, &rs, &mut findings);
    let reset_stages: HashMap<SigId, (u32, u32)> = rs
        .sources
        .iter()
        .filter_map(|(s, src)| src.own_stage.map(|st| (*s, st)))
        .collect();
    let mut stages: HashMap<SigId, (u32, u32, String)> = HashMap::new();
    for ((s, _), st) in &cx.stage_bits {
        let e = stages.entry(*s).or_insert_with(|| st.clone());
        if st.0 < e.0 {
            *e = st.clone();
        }
    }
    crate::fix::plan::annotate(ctx, &cx, &mut findings);
    // the same module instantiated several times reports each place once
    let mut seen = std::collections::HashSet::new();
    findings.retain(|f| {
        seen.insert((
            f.rule.clone(),
            f.span.file.clone(),
            f.span.start,
            f.message.clone(),
        ))
    });
    CdcResult {
        findings,
        crossings,
        stages,
        resets: rs.sources,
        reset_stages,
        scheme_notes: schemes::notes(ctx, &cx),
        mtbf,
    }
}
