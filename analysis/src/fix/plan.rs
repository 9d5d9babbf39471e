//! The design half of the quick fixes: while the rules run (the elaborated design is at hand),
//! decide for each finding whether an RTL fix is correct there, and record what the text half
//! needs in `Finding::fix` — or why no fix is offered.

use std::collections::HashSet;

use super::add_stage::StageHint;
use super::enable_strobe::StrobeHint;
use super::gray_code;
use super::synchronizer::SyncHint;
use super::{parent_sync, pulse_sync, FixHint};
use crate::cdc::crossings::{Bit, Crossings, DIn, Dest};
use crate::cdc::rules::{
    derived_clock, low_mtbf, multibit_crossing, pulse_loss, unsynchronized_crossing,
};
use crate::cdc::short;
use crate::design::graph::{const_of, targets, BitSrc};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::finding::Finding;
use crate::model::{Expr, Select};

pub fn annotate(ctx: &Ctx, cx: &Crossings, findings: &mut [Finding]) {
    let flagged: HashSet<(String, usize)> = findings
        .iter()
        .filter(|f| f.rule == unsynchronized_crossing::ID)
        .map(|f| (f.span.file.clone(), f.span.start))
        .collect();
    let mut mtbf: Option<crate::report::MtbfReport> = None;
    for f in findings.iter_mut() {
        if f.fix.is_some() {
            continue;
        }
        if f.rule == unsynchronized_crossing::ID {
            f.fix = Some(match sync_hint(ctx, cx, f, &flagged) {
                Ok(h) => h,
                // a whole counter read raw: gray code instead of a synchronizer
                Err(reason) if gray_code::whole_bus(ctx, cx, f) => {
                    match gray_code::plan(ctx, cx, f) {
                        Ok(h) => FixHint::GrayCode(h),
                        Err(g) => FixHint::Unavailable {
                            reason: format!("{reason}; no gray-code fix: {g}"),
                        },
                    }
                }
                Err(reason) => FixHint::Unavailable { reason },
            });
        } else if f.rule == multibit_crossing::ID {
            f.fix = Some(match gray_code::plan(ctx, cx, f) {
                Ok(h) => FixHint::GrayCode(h),
                Err(reason) => FixHint::Unavailable { reason },
            });
        } else if f.rule == derived_clock::ID {
            f.fix = Some(match strobe_hint(ctx, f) {
                Ok(h) => FixHint::EnableStrobe(h),
                Err(reason) => FixHint::Unavailable { reason },
            });
        } else if f.rule == low_mtbf::ID {
            // the table is rebuilt only when a low-mtbf finding needs it
            let table = mtbf.get_or_insert_with(|| crate::cdc::mtbf_table::compute(ctx, cx));
            f.fix = Some(match stage_hint(ctx, table, f) {
                Ok(h) => FixHint::AddStage(h),
                Err(reason) => FixHint::Unavailable { reason },
            });
        }
    }
}

/// The (divider, bit) a process's clock is, through plain copies.
fn clock_bit(ctx: &Ctx, pi: usize) -> Option<(Bit, crate::model::Edge)> {
    let (e, edge) = ctx.n.procs[pi].clock.as_ref()?;
    match ctx.g.bit_of(e, 0) {
        BitSrc::Copy(s, b) => {
            let (ls, lb, _) = ctx.g.through_copies(s, b);
            Some(((ls, lb), *edge))
        }
        _ => None,
    }
}

fn strobe_hint(ctx: &Ctx, f: &Finding) -> Result<StrobeHint, String> {
    let pi = ctx
        .n
        .procs
        .iter()
        .position(|p| p.span == f.span)
        .ok_or("the process was not found again")?;
    let ((q, k), _) = clock_bit(ctx, pi).ok_or(
        "the clock reaches the process through logic (an inverter?): not rewritten automatically",
    )?;
    if !ctx.g.is_reg(q) {
        return Err("the clock is not a register bit".into());
    }
    let inst = ctx.n.sigs[q].inst;
    let (fi, mi) = ctx.n.insts[inst].def.ok_or("no module definition")?;
    let dp = ctx.g.reg_proc[&q];
    if ctx
        .reg_clock
        .get(&q)
        .is_some_and(|rc| !rc.trace.derived.is_empty())
    {
        return Err("the divider is itself on a derived clock (a ripple chain): not rewritten automatically".into());
    }
    if ctx.n.procs[dp].file != fi {
        return Err("the divider's process comes from another file".into());
    }
    // every process on this clock bit, all in this instance
    let mut procs = Vec::new();
    for (i, p) in ctx.n.procs.iter().enumerate() {
        if p.clock.is_none() || clock_bit(ctx, i).map(|c| c.0) != Some((q, k)) {
            continue;
        }
        if p.inst != inst || p.file != fi {
            return Err(format!(
                "the derived clock leaves the module `{}` (it clocks logic elsewhere): no clock-enable rewrite",
                ctx.n.insts[inst].module
            ));
        }
        procs.push(p.span.start);
    }
    // the clock must not leave through a port (an output, or a child instance's input)
    let clock_nets: Vec<SigId> = ctx
        .reg_clock
        .values()
        .filter(|rc| rc.trace.derived.contains(&q))
        .flat_map(|rc| rc.trace.nets.iter().copied())
        .collect();
    for c in &ctx.n.combs {
        let leaves_via_port = c.port
            && c.rhs.idents().iter().any(|id| {
                ctx.g
                    .sig(id)
                    .is_some_and(|s| s == q || clock_nets.contains(&s))
            });
        if leaves_via_port {
            return Err(format!(
                "the derived clock leaves the module `{}` through a port: no clock-enable rewrite",
                ctx.n.insts[inst].module
            ));
        }
    }
    if ctx.n.sigs[q].port == Some(crate::model::Direction::Output) {
        return Err(
            "the divider register is an output port: the derived clock leaves the module".into(),
        );
    }
    let local = ctx.n.sigs[q].local.clone();
    if !local.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
        return Err(format!("`{local}` is not a plain name of the module"));
    }
    let w = ctx.n.sigs[q].width.unwrap_or(1);
    Ok(StrobeHint {
        file: ctx.files[fi].path.clone(),
        module: ctx.files[fi].modules[mi].name.clone(),
        divider: local,
        bit: (w > 1).then(|| k as i64 + ctx.n.sigs[q].lsb),
        divider_proc: ctx.n.procs[dp].span.start,
        procs,
    })
}

pub(super) fn is_flagged(d: &Dest, flagged: &HashSet<(String, usize)>) -> bool {
    flagged.contains(&(d.read_span.file.clone(), d.read_span.start))
}

pub(super) fn freq(ctx: &Ctx, s: SigId) -> Option<f64> {
    let root = ctx.reg_clock.get(&s)?.root.as_ref()?;
    ctx.config.clocks.get(root)?.frequency_hz
}

/// One-bit reads in `e` of the leaf signal (through plain copies): a one-bit name or a
/// constant bit select of a name, as (local name, bit index as written, several bits, leaf
/// bit). A read of several of its bits at once (or of logic of it) has `several` set.
type Read = (String, Option<i64>, bool, u32);

fn reads_of_leaf(ctx: &Ctx, e: &Expr, leaf: SigId, out: &mut Vec<Read>) {
    let hit = |x: &Expr| -> Option<u32> {
        match ctx.g.bit_of(x, 0) {
            BitSrc::Copy(s, b) => {
                let (ls, lb, _) = ctx.g.through_copies(s, b);
                (ls == leaf).then_some(lb)
            }
            _ => None,
        }
    };
    match e {
        Expr::Ident { .. } => {
            let Some(s) = ctx.g.sig(e) else { return };
            if let Some(lb) = hit(e) {
                let wide = ctx.n.sigs[s].width.unwrap_or(1) != 1;
                out.push((ctx.n.sigs[s].local.clone(), None, wide, lb));
            } else if ctx.leaves(s).contains(&leaf) {
                out.push((ctx.n.sigs[s].local.clone(), None, true, 0)); // through logic
            }
        }
        Expr::Select { base, sel } => {
            if let (Expr::Ident { .. }, Select::Bit { index }) = (base.as_ref(), sel.as_ref()) {
                if let (Some(i), Some(s)) = (const_of(index), ctx.g.sig(base)) {
                    if let Some(lb) = hit(e) {
                        out.push((ctx.n.sigs[s].local.clone(), Some(i), false, lb));
                        reads_of_leaf(ctx, index, leaf, out);
                        return;
                    }
                }
            }
            reads_of_leaf(ctx, base, leaf, out);
            match sel.as_ref() {
                Select::Bit { index } => reads_of_leaf(ctx, index, leaf, out),
                Select::Part { msb, lsb } => {
                    reads_of_leaf(ctx, msb, leaf, out);
                    reads_of_leaf(ctx, lsb, leaf, out)
                }
                Select::Up { base, width } | Select::Down { base, width } => {
                    reads_of_leaf(ctx, base, leaf, out);
                    reads_of_leaf(ctx, width, leaf, out)
                }
            }
        }
        Expr::Unary { arg, .. } => reads_of_leaf(ctx, arg, leaf, out),
        Expr::Binary { lhs, rhs, .. } => {
            reads_of_leaf(ctx, lhs, leaf, out);
            reads_of_leaf(ctx, rhs, leaf, out)
        }
        Expr::Ternary { cond, then, other } => {
            for x in [cond, then, other] {
                reads_of_leaf(ctx, x, leaf, out)
            }
        }
        Expr::Concat { parts } | Expr::Repl { parts, .. } => {
            parts.iter().for_each(|p| reads_of_leaf(ctx, p, leaf, out))
        }
        Expr::Call { args, .. } => args.iter().for_each(|p| reads_of_leaf(ctx, p, leaf, out)),
        Expr::Opaque { reads, .. } => reads.iter().for_each(|p| reads_of_leaf(ctx, p, leaf, out)),
        Expr::Const { .. } => {}
    }
}

/// The one source register or input of a crossing, when every crossing bit of the
/// destination is a single bit of it (a one-bit copy, or a one-bit enable of a wide register).
pub(super) fn single_leaf(d: &Dest) -> Option<SigId> {
    let mut leaf = None;
    for (_, din, _) in &d.bits {
        match din {
            DIn::Single { leaf: (l, _), .. } if leaf.is_none() || leaf == Some(*l) => {
                leaf = Some(*l)
            }
            _ => return None,
        }
    }
    leaf
}

fn assigns_of<'c>(
    ctx: &'c Ctx,
    r: SigId,
) -> impl Iterator<Item = &'c crate::design::netlist::FAssign> + 'c {
    let pi = ctx.g.reg_proc[&r];
    ctx.n.procs[pi]
        .assigns
        .iter()
        .filter(move |a| !a.in_reset && targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(r)))
}

/// The constant a register bit takes in its reset branch.
pub(super) fn reset_value(ctx: &Ctx, (s, b): Bit) -> Option<bool> {
    let pi = *ctx.g.reg_proc.get(&s)?;
    let mut v = None;
    for a in ctx.n.procs[pi].assigns.iter().filter(|a| a.in_reset) {
        if let Some(off) = ctx.g.target_bit_offset(&a.target, s, b) {
            match ctx.g.bit_of(&a.rhs, off) {
                BitSrc::Const(c) if v.is_none() || v == Some(c) => v = Some(c),
                _ => return None,
            }
        }
    }
    v
}

fn sync_hint(
    ctx: &Ctx,
    cx: &Crossings,
    f: &Finding,
    flagged: &HashSet<(String, usize)>,
) -> Result<FixHint, String> {
    let dest_name = f
        .related
        .iter()
        .find_map(|r| r.message.strip_prefix("destination register: "))
        .ok_or("a clock-gate enable crossing: synchronize the enable by hand")?;
    let d = cx
        .dests
        .iter()
        .find(|d| d.read_span == f.span && short(ctx, d.reg) == dest_name)
        .ok_or("the crossing was not found again")?;
    if ctx.n.sigs[d.reg].memory {
        return Err("the destination is a memory write port: no synchronizer is inserted".into());
    }
    let leaf = match single_leaf(d) {
        Some(l) => l,
        None if d.bits.iter().any(|(_, din, _)| matches!(din, DIn::Logic { .. })) => {
            return Err("logic of several source bits crosses: synchronize a register bit".into())
        }
        None => {
            return Err(
                "several source bits cross: separate synchronizers would let them arrive in different cycles (a multi-bit scheme is needed)"
                    .into(),
            )
        }
    };
    let pi = ctx.g.reg_proc[&d.reg];
    let proc = &ctx.n.procs[pi];
    let inst = ctx.n.sigs[d.reg].inst;
    let (fi, mi) = ctx.n.insts[inst]
        .def
        .ok_or("the destination has no module definition")?;
    if proc.file != fi {
        return Err("the destination process comes from another file (an include?)".into());
    }
    let mut reads = Vec::new();
    for a in assigns_of(ctx, d.reg) {
        reads_of_leaf(ctx, &a.rhs, leaf, &mut reads);
        for g in &a.guards {
            reads_of_leaf(ctx, &g.cond, leaf, &mut reads);
        }
    }
    reads.sort();
    reads.dedup();
    if reads.iter().any(|r| r.2) {
        return Err(format!(
            "several bits of `{}` (or logic of it) are read: not a single-bit crossing",
            short(ctx, leaf)
        ));
    }
    let (base, bit, leaf_bit) = match reads.as_slice() {
        [one] => (one.0.clone(), one.1, one.3),
        [] => {
            return Err(format!(
                "`{}` reaches `{dest_name}` through logic: synchronize it at its source",
                short(ctx, leaf)
            ))
        }
        _ => {
            return Err(
                "several bits or names of the source are read: not one single-bit crossing".into(),
            )
        }
    };
    if !base
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '$')
    {
        return Err(format!("`{base}` is not a plain name of the module"));
    }
    // one-cycle pulses need a pulse synchronizer when they may be faster than the reader
    let mut fast_pulse = false;
    if ctx.g.is_reg(leaf) && pulse_loss::is_pulse(ctx, leaf) {
        match (freq(ctx, leaf), freq(ctx, d.reg)) {
            (Some(fs), Some(fd)) if fs <= fd => {}
            (Some(_), Some(_)) => fast_pulse = true,
            _ => {
                return Err(format!(
                    "`{}` is a one-cycle pulse and the clock frequencies are not given: a level synchronizer may miss it",
                    short(ctx, leaf)
                ))
            }
        }
    }
    // every instance of the module must cross, or the synchronizer belongs in the parent
    let local = &ctx.n.sigs[d.reg].local;
    for (ii, other) in ctx.n.insts.iter().enumerate() {
        if other.def != Some((fi, mi)) || ii == inst {
            continue;
        }
        let reg = ctx
            .n
            .by_name
            .get(&format!("{}.{local}", other.path))
            .copied();
        let crosses = reg.is_some_and(|r| {
            cx.dests
                .iter()
                .any(|d2| d2.reg == r && is_flagged(d2, flagged) && single_leaf(d2).is_some())
        });
        if !crosses && fast_pulse {
            return Err(format!(
                "`{}` is a one-cycle pulse from a faster domain and instance `{}` of `{}` does not cross here: no pulse synchronizer is inserted (a level chain at the port would miss pulses)",
                short(ctx, leaf), other.path, other.module
            ));
        }
        if !crosses {
            // the synchronizer belongs at this instance's port connection in the parent
            return parent_sync::plan(ctx, cx, d, leaf, leaf_bit, &base, bit, flagged)
                .map(FixHint::ParentSync)
                .map_err(|why| format!(
                    "instance `{}` of `{}` does not cross here, so the synchronizer belongs at the port connection in the parent, but {why}",
                    other.path, other.module
                ));
        }
    }
    // every flagged reader of the same bit on the same clock and edge in this instance
    let me = &ctx.reg_clock[&d.reg];
    let mut procs: Vec<usize> = vec![proc.span.start];
    for d2 in &cx.dests {
        if ctx.n.sigs[d2.reg].inst != inst || !is_flagged(d2, flagged) {
            continue;
        }
        let rc = &ctx.reg_clock[&d2.reg];
        if rc.root != me.root || rc.edge != me.edge {
            continue;
        }
        if single_leaf(d2) == Some(leaf) {
            let p2 = &ctx.n.procs[ctx.g.reg_proc[&d2.reg]];
            if p2.file == fi && !procs.contains(&p2.span.start) {
                procs.push(p2.span.start);
            }
        }
    }
    let h = SyncHint {
        file: ctx.files[fi].path.clone(),
        module: ctx.files[fi].modules[mi].name.clone(),
        base,
        bit,
        dest_proc: proc.span.start,
        procs,
        reset_value: if ctx.g.is_reg(leaf) {
            reset_value(ctx, (leaf, leaf_bit))
        } else {
            None
        },
        stages: ctx.config.synchronizers.min_stages.max(2),
    };
    if fast_pulse {
        return pulse_sync::plan(ctx, d, leaf, h).map(FixHint::PulseSync);
    }
    Ok(FixHint::Synchronizer(h))
}

/// Fleet MTBF (log10 s) of one bit through `n` stages on the chain's clock, as the table
/// models it (the new stage is on the last stage's clock and edge, one full period on).
fn stage_fleet_log10(
    params: &crate::mtbf::MtbfParams,
    s: &crate::report::SyncMtbf,
    n: u32,
) -> Option<f64> {
    use crate::mtbf::{crossing_log10_seconds, synchronizer_mtbf, MtbfResult, SyncInput};
    let f_clk = s.dest_clock_hz?;
    let input = SyncInput {
        stages: n,
        dest_clock_hz: f_clk,
        f_data_hz: s.f_data_hz?,
        stage_time_s: crate::cdc::mtbf_table::stage_time_s(
            1.0 / f_clk,
            n.saturating_sub(1),
            s.half_period_steps,
        ),
        bits: 1,
    };
    match synchronizer_mtbf(params, &input).ok()? {
        MtbfResult::Seconds { log10_s, .. } => crossing_log10_seconds(log10_s, 1, params.units),
        MtbfResult::Infinite => Some(f64::INFINITY),
        MtbfResult::NoSettlingSlack => None,
    }
}

/// Add a stage (`low-mtbf`): the finding's chain must be one bit, every stage a plain
/// one-bit register of one module instance this file holds (not a trusted synchronizer or
/// cell), in top-level processes; the last stage loads only the stage before it.
fn stage_hint(ctx: &Ctx, r: &crate::report::MtbfReport, f: &Finding) -> Result<StageHint, String> {
    use crate::mtbf::{format_years, MtbfParams, DEFAULT_MAX_STAGES, SECONDS_PER_YEAR};
    use crate::report::SyncEstimate;
    let s = r
        .synchronizers
        .iter()
        .find(|s| s.span == f.span && f.signal.as_deref() == Some(s.source.as_str()))
        .ok_or("the synchronizer was not found again")?;
    let target_log10 = r.target_years.log10() + SECONDS_PER_YEAR.log10();
    match &s.estimate {
        SyncEstimate::Figure { fleet_log10_s, .. } if *fleet_log10_s < target_log10 => {}
        SyncEstimate::Figure { .. } => {
            return Err("this chain meets the target on its own; the design total misses it: lengthen the weakest chains or lower their rates by hand (`seam mtbf --solve` lists them)".into())
        }
        SyncEstimate::NoSettlingSlack { .. } => {
            return Err("no settling slack: a stage step leaves no time to resolve, so another stage on this clock adds none (a slower destination clock would)".into())
        }
        _ => return Err("the synchronizer has no MTBF figure".into()),
    }
    if s.bits != 1 {
        return Err(format!(
            "a {}-bit crossing: its chains are not lengthened automatically",
            s.bits
        ));
    }
    if s.stages >= DEFAULT_MAX_STAGES {
        return Err(format!(
            "the chain has {} stages already: more stages are not added automatically",
            s.stages
        ));
    }
    let mut regs: Vec<SigId> = Vec::new();
    for name in &s.stage_registers {
        let g = ctx
            .n
            .by_name
            .get(name)
            .copied()
            .ok_or("a stage register was not found again")?;
        regs.push(g);
    }
    // a trusted synchronizer or a cell is edited by choosing another one, not by Seam
    for &g in &regs {
        let Some(i) = crate::cdc::trusted_instance(ctx, g) else {
            continue;
        };
        let inst = &ctx.n.insts[i];
        let path = inst
            .path
            .split_once('.')
            .map_or(inst.path.as_str(), |p| p.1);
        return Err(match &inst.cell {
            Some(crate::config::Cell::Synchronizer { stages, .. }) => format!(
                "the chain is the synchronizer cell `{path}` (`{}`, {stages} stages): Seam does not edit cells; choose a longer cell from your library (or raise its stage parameter) and give its `stages` in [cells]",
                inst.module
            ),
            _ => format!(
                "the chain is inside the trusted synchronizer `{path}` (module `{}`): Seam does not edit trusted synchronizers; raise its stage parameter or choose a longer synchronizer",
                inst.module
            ),
        });
    }
    if let Some(&v) = regs
        .iter()
        .find(|g| ctx.n.sigs[**g].width != Some(1) || ctx.n.sigs[**g].memory)
    {
        return Err(format!(
            "the stages are bits of the vector `{}`: not lengthened automatically",
            ctx.n.sigs[v].local
        ));
    }
    let (Some(&last), true) = (regs.last(), regs.len() as u32 == s.stages) else {
        return Err("the chain was not found again".into());
    };
    let inst = ctx.n.sigs[last].inst;
    if regs.iter().any(|g| ctx.n.sigs[*g].inst != inst) {
        return Err("the stages are in different modules: not lengthened automatically".into());
    }
    let (fi, mi) = ctx.n.insts[inst]
        .def
        .ok_or("the chain's module has no definition")?;
    let m = &ctx.files[fi].modules[mi];
    for &g in &regs {
        let p = &ctx.n.procs[*ctx.g.reg_proc.get(&g).ok_or("a stage has no process")?];
        if p.file != fi {
            return Err("a stage's process comes from another file (an include?)".into());
        }
        let top = m.items.iter().any(|it| {
            matches!(&it.kind, crate::model::ItemKind::Process(q) if q.span.start == p.span.start)
        });
        if !top {
            return Err(format!(
                "stage `{}` sits inside a generate block: not lengthened automatically",
                ctx.n.sigs[g].local
            ));
        }
    }
    let local = ctx.n.sigs[last].local.clone();
    if !local.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
        return Err(format!("`{local}` is not a plain name of the module"));
    }
    // an output port keeps its name and place: the new stage goes in front of it instead
    let mut before = None;
    if ctx.n.sigs[last].port.is_some() || m.ports.iter().any(|p| p.name == local) {
        let output = ctx.n.sigs[last].port == Some(crate::model::Direction::Output);
        let prev = regs.len().checked_sub(2).map(|i| regs[i]);
        match prev {
            Some(p) if output && ctx.n.sigs[p].port.is_none() => {
                before = Some(ctx.n.sigs[p].local.clone())
            }
            _ => {
                return Err(format!(
                    "the last stage `{local}` is a port of `{}` that is not an output after another stage: not lengthened automatically",
                    m.name
                ))
            }
        }
    }
    let mut loads = 0;
    for a in assigns_of(ctx, last) {
        if !a.guards.is_empty() {
            return Err(format!(
                "the last stage `{local}` has a synchronous reset or an enable: not lengthened automatically"
            ));
        }
        loads += 1;
    }
    if loads == 0 {
        return Err(format!("the last stage `{local}` is not loaded"));
    }
    let pi = ctx.g.reg_proc[&last];
    let reset_value = if ctx.n.procs[pi].async_controls.is_empty() {
        None
    } else {
        Some(
            reset_value(ctx, (last, 0))
                .ok_or(format!("the reset value of `{local}` is not a constant"))?,
        )
    };
    let params = MtbfParams::from(&ctx.config.mtbf);
    let next = s.stages + 1;
    let after = stage_fleet_log10(&params, s, next)
        .ok_or("the model gives no figure for one more stage")?;
    let needed = (next..=DEFAULT_MAX_STAGES)
        .find(|n| stage_fleet_log10(&params, s, *n).is_some_and(|l| l >= target_log10));
    Ok(StageHint {
        file: ctx.files[fi].path.clone(),
        module: m.name.clone(),
        last: local,
        last_proc: ctx.n.procs[pi].span.start,
        reset_value,
        stages: s.stages,
        source: s.source.clone(),
        after: format_years(after),
        target_years: r.target_years,
        needed,
        before,
    })
}
