//! Reset trees and reset synchronizers (DESIGN.md section 3).
//!
//! For every edge process, per instance, each asynchronous control is traced back through
//! aliases, port connections, inverters and logic to its leaves: top-level inputs,
//! registers, constants, or undriven nets (black-box outputs). A register bit is a stage of
//! a reset synchronizer when its process has one asynchronous control, its reset value is a
//! constant, and its D input is either a constant (stage 1; the level it shifts in) or
//! exactly the previous stage on the same clock and edge, reset by the same source to the
//! same value. A leaf is released in step with a flop's clock when it is a reset
//! synchronizer of the flop's domain with at least `min_stages` stages and the right
//! polarity, a register of the flop's own domain, a top input that `[inputs]` puts in that
//! domain, or a constant.

use std::collections::{BTreeMap, BTreeSet, HashMap};

use crate::cdc::crossings::{Bit, Crossings};
use crate::design::graph::{BitSrc, Driver};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::model::{Expr, Span};
use crate::report::{ResetLeafInfo, ResetLeafKind, ResetSource};

/// Where one path of a reset tree ends.
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum End {
    /// A register bit or a top-level input bit.
    Signal(Bit),
    Const(bool),
    /// A net with no driver (a black-box output, an unconnected port).
    Undriven(SigId),
}

#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct TLeaf {
    pub end: End,
    /// An odd number of inverters on the way.
    pub inverted: bool,
    /// Other logic than inverters on the way (a gate of several resets, a mux).
    pub logic: bool,
}

/// One stage of a reset synchronizer.
#[derive(Clone, Debug)]
pub struct RstStage {
    /// Stage k (1 = the flop that shifts in the constant).
    pub k: u32,
    /// Length of the longest chain through stage 1.
    pub n: u32,
    /// The value the stages take in reset (the asserted level of the output).
    pub reset_value: bool,
    /// Stage 1 shifts in its own reset value: the output never leaves reset.
    pub stuck: bool,
    /// Stage 1 of the chain.
    pub first: Bit,
}

/// Why a leaf's release is not in step with the flop's clock.
#[derive(Clone, Debug)]
pub enum Problem {
    /// A top-level input with no domain, or another domain than the flop's.
    TopInput { port: SigId, domain: Option<String> },
    /// A register (not a reset synchronizer) of another domain.
    OtherDomain { reg: Bit, domain: String },
    /// A reset synchronizer clocked in another domain.
    WrongDomain { reg: Bit, domain: String },
    /// A stage of a reset synchronizer before `min_stages`.
    TooFewStages { reg: Bit, k: u32 },
    /// The synchronizer's output used with the opposite polarity.
    Polarity { reg: Bit },
}

/// One asynchronous control of one process, analysed.
#[derive(Clone, Debug)]
pub struct Control {
    pub signal: Expr,
    pub active_high: bool,
    pub leaves: Vec<TLeaf>,
    /// The leaves whose release is asynchronous to the process's clock.
    pub problems: Vec<(TLeaf, Problem)>,
}

#[derive(Clone, Debug)]
pub struct ProcResets {
    pub proc: usize,
    pub domain: String,
    /// Registers the process assigns (sorted).
    pub regs: Vec<SigId>,
    pub controls: Vec<Control>,
    /// Every register bit of the process is a stage of a reset synchronizer (of at least
    /// `min_stages` stages, or one that is stuck): its raw reset is meant to be raw.
    pub exempt: bool,
}

pub struct Resets {
    pub stages: HashMap<Bit, RstStage>,
    pub procs: Vec<ProcResets>,
    /// Per register: the description of its reset tree (for `seam domains` and hover).
    pub sources: HashMap<SigId, ResetSource>,
    /// Stage-1 bits of stuck synchronizers that some flop uses as its reset, with the
    /// assignment that shifts the constant in.
    pub stuck_used: BTreeMap<Bit, Span>,
}

fn width(ctx: &Ctx, s: SigId) -> u32 {
    ctx.n.sigs[s].width.unwrap_or(1).clamp(1, 256)
}

/// Bit `b` of a constant expression, `'1` fills included.
fn const_bit(ctx: &Ctx, e: &Expr, b: u32) -> Option<bool> {
    if let Expr::Const { text, value, .. } = e {
        let t = text.trim();
        if t == "'1" {
            return Some(true);
        }
        if t == "'0" {
            return Some(false);
        }
        if let Some(v) = value {
            return Some(b < 64 && (v >> b) & 1 == 1);
        }
        return None;
    }
    match ctx.g.bit_of(e, b) {
        BitSrc::Const(v) => Some(v),
        _ => None,
    }
}

/// A net bit whose only driver is a constant (a port tied to `1'b1`, `assign one = 1'b1`).
fn const_driven(ctx: &Ctx, s: SigId, b: u32) -> Option<bool> {
    let ds = ctx.g.drivers.get(&s)?;
    for d in ds {
        let (target, rhs) = match d {
            Driver::Comb(ci) => (&ctx.n.combs[*ci].target, &ctx.n.combs[*ci].rhs),
            Driver::CombProc(pi, ai) => {
                let a = &ctx.n.procs[*pi].assigns[*ai];
                if !a.guards.is_empty() {
                    return None;
                }
                (&a.target, &a.rhs)
            }
        };
        if let Some(off) = ctx.g.target_bit_offset(target, s, b) {
            return const_bit(ctx, rhs, off);
        }
    }
    None
}

/// Value of bit `off` of an expression when it is a constant, directly or through copies.
fn const_value(ctx: &Ctx, e: &Expr, off: u32) -> Option<bool> {
    if let Some(v) = const_bit(ctx, e, off) {
        return Some(v);
    }
    match ctx.g.bit_of(e, off) {
        BitSrc::Copy(s, k) => {
            let (ls, lb, _) = ctx.g.through_copies(s, k);
            if ctx.g.is_reg(ls) || ctx.n.top_inputs.contains(&ls) {
                return None;
            }
            const_driven(ctx, ls, lb)
        }
        _ => None,
    }
}

/// (reset value, constant shifted in) of a register bit, when both are constants.
fn const_pair(ctx: &Ctx, pi: usize, r: SigId, b: u32) -> (Option<bool>, Option<bool>) {
    let mut rv: Option<Option<bool>> = None;
    let mut dv: Option<Option<bool>> = None;
    for a in &ctx.n.procs[pi].assigns {
        let Some(off) = ctx.g.target_bit_offset(&a.target, r, b) else {
            continue;
        };
        let v = const_value(ctx, &a.rhs, off);
        let slot = if a.in_reset { &mut rv } else { &mut dv };
        *slot = match slot {
            None => Some(v),
            Some(prev) if *prev == v => Some(v),
            Some(_) => Some(None),
        };
    }
    (rv.flatten(), dv.flatten())
}

impl Resets {
    pub fn compute(ctx: &Ctx, cx: &Crossings) -> Resets {
        let min = ctx.config.synchronizers.min_stages.max(1);
        let mut memo: HashMap<String, Vec<TLeaf>> = HashMap::new();
        // registers of each clocked process
        let mut by_proc: BTreeMap<usize, Vec<SigId>> = BTreeMap::new();
        for (s, pi) in &ctx.g.reg_proc {
            by_proc.entry(*pi).or_default().push(*s);
        }
        for v in by_proc.values_mut() {
            v.sort();
        }
        // leaves of every process's asynchronous controls
        let mut traced: BTreeMap<usize, Vec<(Expr, bool, Vec<TLeaf>)>> = BTreeMap::new();
        for &pi in by_proc.keys() {
            let p = &ctx.n.procs[pi];
            let mut v = Vec::new();
            for (e, high) in &p.async_controls {
                let key = crate::model::render(e);
                let leaves = memo.entry(key).or_insert_with(|| trace(ctx, e)).clone();
                v.push((e.clone(), *high, leaves));
            }
            traced.insert(pi, v);
        }

        // stage 1 of every reset-synchronizer-shaped chain, then the stages after it
        let mut stages: HashMap<Bit, RstStage> = HashMap::new();
        let mut firsts: Vec<(Bit, bool, bool)> = Vec::new();
        for (&pi, regs) in &by_proc {
            let Some(ctl) = traced.get(&pi) else { continue };
            if ctl.len() != 1 {
                continue;
            }
            for &r in regs {
                for b in 0..width(ctx, r) {
                    if let (Some(rv), Some(dv)) = const_pair(ctx, pi, r, b) {
                        firsts.push(((r, b), rv, dv == rv));
                    }
                }
            }
        }
        for (first, rv, stuck) in firsts {
            let Some(first_leaves) = control_leaves(&traced, ctx, first.0) else {
                continue;
            };
            // walk the chain: each follower copies the previous stage exactly, on the same
            // clock and edge, and is reset by the same source to the same value
            let mut chain: Vec<(Bit, u32)> = vec![(first, 1)];
            let mut frontier = vec![(first, 1u32)];
            let mut seen: BTreeSet<Bit> = [first].into();
            while let Some((bit, k)) = frontier.pop() {
                if k >= 16 {
                    continue;
                }
                for f in cx.same_clock_followers(ctx, bit) {
                    let fb = f.bit;
                    if seen.contains(&fb) {
                        continue;
                    }
                    let Some(pi) = ctx.g.reg_proc.get(&fb.0) else {
                        continue;
                    };
                    if control_leaves(&traced, ctx, fb.0) != Some(first_leaves) {
                        continue;
                    }
                    if const_pair(ctx, *pi, fb.0, fb.1).0 != Some(rv) {
                        continue;
                    }
                    seen.insert(fb);
                    chain.push((fb, k + 1));
                    frontier.push((fb, k + 1));
                }
            }
            let n = chain.iter().map(|c| c.1).max().unwrap_or(1);
            for (bit, k) in chain {
                let st = RstStage {
                    k,
                    n,
                    reset_value: rv,
                    stuck,
                    first,
                };
                // a bit reached from two stage-1 flops keeps the longer view
                match stages.get(&bit) {
                    Some(old) if old.k >= k && !(old.k == k && old.n < n) => {}
                    _ => {
                        stages.insert(bit, st);
                    }
                }
            }
        }

        // chains some flop uses as its reset (a lone flop shaped like stage 1 is not one)
        let used_firsts: BTreeSet<Bit> = traced
            .values()
            .flatten()
            .flat_map(|(_, _, leaves)| leaves.iter())
            .filter_map(|l| match &l.end {
                End::Signal(bit) => stages.get(bit).map(|st| st.first),
                _ => None,
            })
            .collect();
        // a process of synchronizer stages only: its raw reset is intended. A stuck chain
        // (a flop that shifts in its own reset value) never changes on release either.
        let real_sync_of = |regs: &[SigId]| {
            regs.iter().all(|&r| {
                (0..width(ctx, r)).all(|b| {
                    stages
                        .get(&(r, b))
                        .is_some_and(|st| !st.stuck && st.n >= min)
                })
            })
        };
        let exempt_of = |regs: &[SigId]| {
            regs.iter().all(|&r| {
                (0..width(ctx, r)).all(|b| {
                    stages
                        .get(&(r, b))
                        .is_some_and(|st| st.stuck || st.n >= min)
                })
            })
        };
        // A top-level reset input that `[inputs]` does not list (with `unconstrained_inputs =
        // "ignore"`) is taken to be in step with the one domain whose flops it resets raw,
        // as a block's reset from a reset controller outside it is. It cannot be in step
        // with two domains, and one that also feeds a reset synchronizer is known to be
        // asynchronous: then every raw use is judged.
        let mut raw_doms: HashMap<SigId, BTreeSet<String>> = HashMap::new();
        let mut feeds_sync: BTreeSet<SigId> = BTreeSet::new();
        for (&pi, regs) in &by_proc {
            let Some(ctl) = traced.get(&pi) else { continue };
            let exempt = exempt_of(regs);
            let real_sync = real_sync_of(regs);
            let dom = regs.iter().find_map(|r| ctx.domain_of_reg(*r));
            for l in ctl.iter().flat_map(|c| c.2.iter()) {
                let End::Signal((s, _)) = l.end else { continue };
                if !ctx.n.top_inputs.contains(&s) {
                    continue;
                }
                if real_sync {
                    feeds_sync.insert(s);
                } else if exempt {
                    // constant flops: not a use that is released
                } else if let Some(d) = dom {
                    raw_doms.entry(s).or_default().insert(d.to_string());
                }
            }
        }
        let ignore =
            ctx.config.design.unconstrained_inputs == crate::config::UnconstrainedInputs::Ignore;
        let assumed: HashMap<SigId, String> = raw_doms
            .into_iter()
            .filter(|(s, doms)| {
                ignore
                    && doms.len() == 1
                    && !feeds_sync.contains(s)
                    && !ctx
                        .config
                        .inputs
                        .contains_key(ctx.n.sigs[*s].local.as_str())
            })
            .filter_map(|(s, doms)| doms.into_iter().next().map(|d| (s, d)))
            .collect();

        // every process with asynchronous controls: classify each leaf
        let mut procs = Vec::new();
        let mut sources = HashMap::new();
        let mut stuck_used: BTreeMap<Bit, Span> = BTreeMap::new();
        for (&pi, regs) in &by_proc {
            let Some(ctl) = traced.get(&pi) else { continue };
            if ctl.is_empty() {
                continue;
            }
            // an untraced clock: the tree is still described, not judged
            let domain = regs.iter().find_map(|r| ctx.domain_of_reg(*r));
            let domain = domain.map(|d| d.to_string());
            let exempt = exempt_of(regs);
            let mut controls = Vec::new();
            for (e, high, leaves) in ctl {
                let mut problems = Vec::new();
                for l in leaves {
                    if let End::Signal(bit) = &l.end {
                        if let Some(st) = stages.get(bit).filter(|st| st.stuck) {
                            if let Some(a) = stage_assign(ctx, st.first) {
                                stuck_used.entry(st.first).or_insert(a);
                            }
                        }
                    }
                    let Some(domain) = domain.as_deref() else {
                        continue;
                    };
                    if let Some(p) = classify(ctx, &stages, &assumed, l, *high, domain, min) {
                        problems.push((l.clone(), p));
                    }
                }
                controls.push(Control {
                    signal: e.clone(),
                    active_high: *high,
                    leaves: leaves.clone(),
                    problems,
                });
            }
            let mut src = describe(ctx, &stages, &controls, exempt);
            src.synchronized &= domain.is_some();
            for &r in regs {
                let mut own = src.clone();
                own.own_stage = (0..width(ctx, r))
                    .filter_map(|b| stages.get(&(r, b)))
                    .filter(|st| st.n >= 2 || used_firsts.contains(&st.first))
                    .map(|st| (st.k, st.n))
                    .min();
                sources.insert(r, own);
            }
            if let Some(domain) = domain {
                procs.push(ProcResets {
                    proc: pi,
                    domain,
                    regs: regs.clone(),
                    controls,
                    exempt,
                });
            }
        }
        Resets {
            stages,
            procs,
            sources,
            stuck_used,
        }
    }
}

/// The leaves of a register's process's only asynchronous control.
fn control_leaves<'t>(
    traced: &'t BTreeMap<usize, Vec<(Expr, bool, Vec<TLeaf>)>>,
    ctx: &Ctx,
    r: SigId,
) -> Option<&'t Vec<TLeaf>> {
    let pi = ctx.g.reg_proc.get(&r)?;
    match traced.get(pi)?.as_slice() {
        [(_, _, leaves)] => Some(leaves),
        _ => None,
    }
}

/// The non-reset assignment of a stage-1 bit (where the constant is shifted in).
pub fn stage_assign(ctx: &Ctx, bit: Bit) -> Option<Span> {
    let pi = ctx.g.reg_proc.get(&bit.0)?;
    ctx.n.procs[*pi]
        .assigns
        .iter()
        .filter(|a| !a.in_reset)
        .find(|a| ctx.g.target_bit_offset(&a.target, bit.0, bit.1).is_some())
        .map(|a| a.span.clone())
}

fn classify(
    ctx: &Ctx,
    stages: &HashMap<Bit, RstStage>,
    assumed: &HashMap<SigId, String>,
    l: &TLeaf,
    active_high: bool,
    domain: &str,
    min: u32,
) -> Option<Problem> {
    let End::Signal((s, b)) = l.end else {
        return None; // constants cannot release; undriven nets are not judged
    };
    if ctx.n.top_inputs.contains(&s) {
        // `[inputs]` may put a reset pin in a clock's domain (released by an outside
        // controller in step with that clock)
        let d = ctx.leaf_domain(s).or_else(|| assumed.get(&s).cloned());
        return match d.as_deref() {
            Some(x) if x == domain => None,
            _ => Some(Problem::TopInput { port: s, domain: d }),
        };
    }
    let reg_dom = ctx.domain_of_reg(s)?.to_string();
    if let Some(st) = stages.get(&(s, b)) {
        if st.stuck {
            return None; // reported once at the synchronizer itself
        }
        if reg_dom != domain {
            return Some(Problem::WrongDomain {
                reg: (s, b),
                domain: reg_dom,
            });
        }
        if st.k < min {
            return Some(Problem::TooFewStages {
                reg: (s, b),
                k: st.k,
            });
        }
        // in reset when the leaf (after inverters) equals the active level
        if (st.reset_value ^ l.inverted) != active_high {
            return Some(Problem::Polarity { reg: (s, b) });
        }
        return None;
    }
    if reg_dom != domain {
        return Some(Problem::OtherDomain {
            reg: (s, b),
            domain: reg_dom,
        });
    }
    None
}

/// Trace an asynchronous control back to its leaves.
pub fn trace(ctx: &Ctx, e: &Expr) -> Vec<TLeaf> {
    let mut out = BTreeSet::new();
    let mut budget = 4_096u32;
    trace_expr(ctx, e, false, false, &mut out, 0, &mut budget);
    out.into_iter().collect()
}

fn trace_expr(
    ctx: &Ctx,
    e: &Expr,
    inv: bool,
    logic: bool,
    out: &mut BTreeSet<TLeaf>,
    depth: u32,
    budget: &mut u32,
) {
    if depth > 200 || *budget == 0 || out.len() > 64 {
        return;
    }
    *budget -= 1;
    match e {
        Expr::Unary { op, arg } if op == "~" || op == "!" => {
            trace_expr(ctx, arg, !inv, logic, out, depth + 1, budget)
        }
        Expr::Binary { lhs, rhs, .. } => {
            trace_expr(ctx, lhs, inv, true, out, depth + 1, budget);
            trace_expr(ctx, rhs, inv, true, out, depth + 1, budget);
        }
        // a mux whose select `[constants]` pins is a wire to the chosen input (scan muxes)
        Expr::Ternary { cond, then, other } => match ctx.pinned(cond) {
            Some(0) => trace_expr(ctx, other, inv, logic, out, depth + 1, budget),
            Some(_) => trace_expr(ctx, then, inv, logic, out, depth + 1, budget),
            None => {
                for x in [cond, then, other] {
                    trace_expr(ctx, x, inv, true, out, depth + 1, budget);
                }
            }
        },
        Expr::Call { name, args } if name == "$seam_clock_mux" && args.len() > 1 => {
            match ctx
                .pinned(&args[0])
                .and_then(|v| args.get(usize::try_from(v).ok()? + 1))
            {
                Some(chosen) => trace_expr(ctx, chosen, inv, logic, out, depth + 1, budget),
                None => reads(ctx, e, inv, out, depth, budget),
            }
        }
        Expr::Const { .. } => {
            if let Some(v) = const_bit(ctx, e, 0) {
                out.insert(TLeaf {
                    end: End::Const(v ^ inv),
                    inverted: false,
                    logic,
                });
            }
        }
        Expr::Ident { .. } | Expr::Select { .. } | Expr::Concat { .. } | Expr::Repl { .. } => {
            match ctx.g.bit_of(e, 0) {
                BitSrc::Copy(s, b) => trace_bit(ctx, s, b, inv, logic, out, depth + 1, budget),
                BitSrc::Const(v) => {
                    out.insert(TLeaf {
                        end: End::Const(v ^ inv),
                        inverted: false,
                        logic,
                    });
                }
                BitSrc::Logic => reads(ctx, e, inv, out, depth, budget),
            }
        }
        _ => reads(ctx, e, inv, out, depth, budget),
    }
}

/// Every signal an expression reads, as logic.
fn reads(ctx: &Ctx, e: &Expr, inv: bool, out: &mut BTreeSet<TLeaf>, depth: u32, budget: &mut u32) {
    for id in e.idents() {
        if let Some(s) = ctx.g.sig(id) {
            trace_bit(ctx, s, 0, inv, true, out, depth + 1, budget);
        }
    }
}

#[allow(clippy::too_many_arguments)]
fn trace_bit(
    ctx: &Ctx,
    s: SigId,
    b: u32,
    inv: bool,
    logic: bool,
    out: &mut BTreeSet<TLeaf>,
    depth: u32,
    budget: &mut u32,
) {
    if depth > 200 || *budget == 0 || out.len() > 64 {
        return;
    }
    *budget -= 1;
    let (s, b, _) = ctx.g.through_copies(s, b);
    if ctx.g.is_reg(s) || ctx.n.top_inputs.contains(&s) {
        out.insert(TLeaf {
            end: End::Signal((s, b)),
            inverted: inv,
            logic,
        });
        return;
    }
    let mut found = false;
    if let Some(ds) = ctx.g.drivers.get(&s) {
        for d in ds {
            let (target, rhs, guards): (&Expr, &Expr, Vec<&Expr>) = match d {
                Driver::Comb(ci) => (&ctx.n.combs[*ci].target, &ctx.n.combs[*ci].rhs, vec![]),
                Driver::CombProc(pi, ai) => {
                    let a = &ctx.n.procs[*pi].assigns[*ai];
                    (
                        &a.target,
                        &a.rhs,
                        a.guards.iter().map(|g| &g.cond).collect(),
                    )
                }
            };
            let Some(off) = ctx.g.target_bit_offset(target, s, b) else {
                continue;
            };
            found = true;
            let logic = logic || !guards.is_empty();
            for g in guards {
                trace_expr(ctx, g, inv, true, out, depth + 1, budget);
            }
            match ctx.g.bit_of(rhs, off) {
                BitSrc::Copy(ns, nb) if ns != s => {
                    trace_bit(ctx, ns, nb, inv, logic, out, depth + 1, budget)
                }
                BitSrc::Const(v) => {
                    out.insert(TLeaf {
                        end: End::Const(v ^ inv),
                        inverted: false,
                        logic,
                    });
                }
                _ if off == 0 => trace_expr(ctx, rhs, inv, logic, out, depth + 1, budget),
                // a bit of a wider logic expression: its reads, as logic
                _ => reads(ctx, rhs, inv, out, depth, budget),
            }
        }
    }
    if !found {
        out.insert(TLeaf {
            end: End::Undriven(s),
            inverted: inv,
            logic,
        });
    }
}

/// `u_rst.q[1]` for a bit of a vector, `u_rst.q` for a one-bit signal.
pub fn bit_name(ctx: &Ctx, (s, b): Bit) -> String {
    let n = crate::cdc::short(ctx, s);
    if width(ctx, s) > 1 {
        format!("{n}[{}]", b as i64 + ctx.n.sigs[s].lsb)
    } else {
        n
    }
}

fn leaf_info(ctx: &Ctx, stages: &HashMap<Bit, RstStage>, l: &TLeaf) -> Option<ResetLeafInfo> {
    let name = |s: SigId| crate::cdc::short(ctx, s);
    Some(match &l.end {
        End::Const(_) => return None,
        End::Undriven(s) => ResetLeafInfo {
            name: name(*s),
            kind: ResetLeafKind::Undriven,
            domain: None,
            stages: None,
        },
        End::Signal((s, _)) if ctx.n.top_inputs.contains(s) => ResetLeafInfo {
            name: name(*s),
            kind: ResetLeafKind::TopInput,
            domain: ctx.leaf_domain(*s),
            stages: None,
        },
        End::Signal((s, b)) => {
            let st = stages.get(&(*s, *b));
            ResetLeafInfo {
                name: bit_name(ctx, (*s, *b)),
                kind: if st.is_some() {
                    ResetLeafKind::ResetSynchronizer
                } else {
                    ResetLeafKind::Register
                },
                domain: ctx.domain_of_reg(*s).map(|d| d.to_string()),
                stages: st.map(|st| st.k),
            }
        }
    })
}

fn describe(
    ctx: &Ctx,
    stages: &HashMap<Bit, RstStage>,
    controls: &[Control],
    exempt: bool,
) -> ResetSource {
    let Some(first) = controls.first() else {
        return ResetSource::default();
    };
    let leaves: Vec<ResetLeafInfo> = first
        .leaves
        .iter()
        .filter_map(|l| leaf_info(ctx, stages, l))
        .collect();
    let logic = first.leaves.iter().any(|l| l.logic);
    let signal = crate::model::render(&first.signal);
    let signal = signal.rsplit('.').next().unwrap_or(&signal).to_string();
    let synchronized = controls.iter().all(|c| c.problems.is_empty());
    ResetSource {
        signal,
        active_high: first.active_high,
        through_logic: logic,
        leaves,
        synchronized,
        synchronizer_stage: exempt,
        own_stage: None,
    }
}
