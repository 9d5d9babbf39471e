//! Synchronizer recognition and crossing classification, shared by the rules.
//!
//! For every register bit we find what drives its D input: exactly one bit of another
//! signal (through aliases, buffers and port connections), a constant, or logic. A register
//! bit in domain B whose D is one bit from domain A starts a chain; the chain grows by each
//! register bit on the same clock and edge whose D is exactly the previous stage.

use std::collections::{BTreeMap, BTreeSet, HashMap};

use crate::design::graph::BitSrc;
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::model::{Expr, Select, Span};

pub type Bit = (SigId, u32);

/// What feeds one register bit.
#[derive(Clone, Debug)]
pub enum DIn {
    /// One bit of a leaf (register or input), with the signals passed on the way.
    Single { leaf: Bit, hops: Vec<SigId> },
    /// Logic; `foreign_bits` counts source bits from other domains.
    Logic {
        foreign: Vec<SigId>,
        foreign_bits: u32,
    },
    /// Only this domain's signals or constants.
    Local,
}

#[derive(Clone, Debug)]
pub struct Dest {
    pub reg: SigId,
    pub domain: String,
    /// Foreign source leaves per source domain.
    pub sources: BTreeMap<String, Vec<SigId>>,
    /// Per crossing bit: its D description and chain length.
    pub bits: Vec<(u32, DIn, u32)>,
    /// The assignment that samples the foreign signal.
    pub read_span: Span,
    pub qualified: bool,
    /// A safe multi-bit scheme that covers this read (the storage of an asynchronous FIFO).
    pub scheme: Option<String>,
}

#[derive(Clone, Debug)]
pub struct Follower {
    pub bit: Bit,
    pub hops: Vec<SigId>,
}

pub struct Crossings {
    pub dests: Vec<Dest>,
    /// copy source bit → register bits that copy it exactly (same-clock check done later).
    pub followers: HashMap<Bit, Vec<Follower>>,
    /// Synchronizer stage of a register bit: (k, N, source domain).
    pub stage_bits: HashMap<Bit, (u32, u32, String)>,
    /// Gray code, asynchronous FIFOs and what each stage carries (`cdc::schemes`).
    pub schemes: crate::cdc::schemes::Schemes,
}

fn width(ctx: &Ctx, s: SigId) -> u32 {
    ctx.n.sigs[s].width.unwrap_or(1).clamp(1, 256)
}

/// Non-reset assignments of a register, with the bit offset of `b` in each target.
fn assigns_for<'c>(
    ctx: &'c Ctx,
    r: SigId,
    b: u32,
) -> Vec<(&'c crate::design::netlist::FAssign, u32)> {
    let pi = ctx.g.reg_proc[&r];
    ctx.n.procs[pi]
        .assigns
        .iter()
        .filter(|a| !a.in_reset)
        .filter_map(|a| ctx.g.target_bit_offset(&a.target, r, b).map(|o| (a, o)))
        .collect()
}

/// Exact copy source of a register bit (no logic, no guards reading other signals' logic).
fn copy_source(ctx: &Ctx, r: SigId, b: u32) -> Option<(Bit, Vec<SigId>)> {
    let mut src: Option<(Bit, Vec<SigId>)> = None;
    for (a, off) in assigns_for(ctx, r, b) {
        let (s, k) = match ctx.g.bit_of(&a.rhs, off) {
            BitSrc::Copy(s, k) => (s, k),
            // a synchronous reset or clear of a stage loads a constant: still a stage
            BitSrc::Const(_) => continue,
            BitSrc::Logic => return None,
        };
        let (ls, lb, hops) = ctx.g.through_copies(s, k);
        if (ls, lb) == (r, b) {
            continue; // a hold (`q <= q`) is not a source
        }
        match &src {
            None => src = Some(((ls, lb), hops)),
            Some((prev, _)) if *prev == (ls, lb) => {}
            Some(_) => return None,
        }
    }
    src
}

impl Crossings {
    pub fn compute(ctx: &Ctx) -> Crossings {
        let mut regs: Vec<SigId> = ctx.g.reg_proc.keys().copied().collect();
        regs.sort();
        // followers: exact copies, indexed by their source bit
        let mut followers: HashMap<Bit, Vec<Follower>> = HashMap::new();
        for &r in &regs {
            for b in 0..width(ctx, r) {
                if let Some((src, hops)) = copy_source(ctx, r, b) {
                    followers
                        .entry(src)
                        .or_default()
                        .push(Follower { bit: (r, b), hops });
                }
            }
        }
        let mut cx = Crossings {
            dests: vec![],
            followers,
            stage_bits: HashMap::new(),
            schemes: crate::cdc::schemes::Schemes::default(),
        };
        // destinations
        for &r in &regs {
            let Some(dom) = ctx.domain_of_reg(r).map(|d| d.to_string()) else {
                continue;
            };
            if ctx.n.sigs[r].name.is_empty() {
                continue;
            }
            let pi = ctx.g.reg_proc[&r];
            let mut sources: BTreeMap<String, Vec<SigId>> = BTreeMap::new();
            let mut read_span = None;
            for a in ctx.n.procs[pi].assigns.iter().filter(|a| !a.in_reset) {
                if !crate::design::graph::targets(&a.target)
                    .iter()
                    .any(|t| ctx.g.sig(t) == Some(r))
                {
                    continue;
                }
                let mut reads: Vec<&Expr> = a.rhs.idents();
                for g in &a.guards {
                    reads.extend(g.cond.idents());
                }
                for id in reads {
                    let Some(s) = ctx.g.sig(id) else { continue };
                    for &l in ctx.leaves(s).iter() {
                        if l == r || ctx.is_static(l) {
                            continue;
                        }
                        if let Some(d) = ctx.leaf_domain(l) {
                            if d != dom {
                                let v = sources.entry(d).or_default();
                                if !v.contains(&l) {
                                    v.push(l);
                                }
                                read_span.get_or_insert_with(|| a.span.clone());
                            }
                        }
                    }
                }
            }
            if sources.is_empty() {
                continue;
            }
            let mut bits = Vec::new();
            for b in 0..width(ctx, r) {
                let d = cx.din(ctx, r, b, &dom);
                if !matches!(d, DIn::Local) {
                    bits.push((b, d, 0));
                }
            }
            // `{r2, r1} <= {r1, d}` reads d for r1 only: r2 has no crossing bit of its own
            if bits.is_empty() {
                continue;
            }
            cx.dests.push(Dest {
                reg: r,
                domain: dom,
                sources,
                bits,
                read_span: read_span.unwrap_or_default(),
                qualified: false,
                scheme: None,
            });
        }
        // chain lengths and stages
        for i in 0..cx.dests.len() {
            let r = cx.dests[i].reg;
            for j in 0..cx.dests[i].bits.len() {
                let b = cx.dests[i].bits[j].0;
                let len = cx.chain_len(ctx, (r, b), 0);
                cx.dests[i].bits[j].2 = len;
                if let (DIn::Single { leaf, .. }, true) = (&cx.dests[i].bits[j].1, len >= 2) {
                    let src_dom = ctx.leaf_domain(leaf.0).unwrap_or_default();
                    cx.mark(ctx, (r, b), 1, len, &src_dom, 0);
                }
            }
        }
        // qualified crossings: every foreign read under a synchronized enable
        for i in 0..cx.dests.len() {
            let (q, outside) = cx.qualified_reads(ctx, &cx.dests[i]);
            cx.dests[i].qualified = q;
            // some reads under the enable, one outside it: report the one outside
            if let Some(sp) = outside {
                cx.dests[i].read_span = sp;
            }
        }
        // safe multi-bit schemes; a read of an asynchronous FIFO's storage is covered by it
        cx.schemes = crate::cdc::schemes::Schemes::compute(ctx, &cx);
        for d in cx.dests.iter_mut() {
            let srcs: Vec<SigId> = d.sources.values().flatten().copied().collect();
            let fifo = !srcs.is_empty()
                && srcs.iter().all(|m| {
                    cx.schemes
                        .fifo
                        .get(m)
                        .is_some_and(|f| f.read_domain == d.domain)
                });
            if fifo {
                d.scheme = Some("asynchronous FIFO".into());
            }
        }
        cx
    }

    fn din(&self, ctx: &Ctx, r: SigId, b: u32, dom: &str) -> DIn {
        let assigns = assigns_for(ctx, r, b);
        let mut single: Option<(Bit, Vec<SigId>)> = None;
        let mut foreign: BTreeSet<SigId> = BTreeSet::new();
        let mut foreign_bits = 0u32;
        let mut logic = false;
        for (a, off) in &assigns {
            match ctx.g.bit_of(&a.rhs, *off) {
                BitSrc::Copy(s, k) => {
                    let (ls, lb, hops) = ctx.g.through_copies(s, k);
                    if (ls, lb) == (r, b) {
                        continue;
                    }
                    match ctx.leaf_domain(ls) {
                        Some(d) if d != dom && !ctx.is_static(ls) => {
                            if foreign.insert(ls) {
                                foreign_bits += 1;
                            }
                            single = Some(((ls, lb), hops));
                        }
                        _ if ctx.g.is_reg(ls) || ctx.n.top_inputs.contains(&ls) => {}
                        _ => {
                            // logic behind the alias
                            logic = true;
                            count_foreign(
                                ctx,
                                &Expr::Ident {
                                    name: ctx.n.sigs[ls].name.clone(),
                                    loc: Default::default(),
                                },
                                dom,
                                &mut foreign,
                                &mut foreign_bits,
                            );
                        }
                    }
                }
                BitSrc::Const(_) => {}
                BitSrc::Logic => {
                    logic = true;
                    count_foreign(ctx, &a.rhs, dom, &mut foreign, &mut foreign_bits);
                }
            }
            for g in &a.guards {
                count_foreign(ctx, &g.cond, dom, &mut foreign, &mut foreign_bits);
            }
        }
        if foreign.is_empty() {
            return DIn::Local;
        }
        if foreign_bits == 1 {
            // one source bit gated only by destination-domain terms is glitch-free
            if let Some((leaf, hops)) = single {
                return DIn::Single { leaf, hops };
            }
            let l = *foreign.iter().next().unwrap_or(&0);
            return DIn::Single {
                leaf: (l, 0),
                hops: vec![],
            };
        }
        let _ = logic;
        DIn::Logic {
            foreign: foreign.into_iter().collect(),
            foreign_bits,
        }
    }

    /// Number of stages from this register bit on (itself included).
    pub fn chain_len(&self, ctx: &Ctx, bit: Bit, depth: u32) -> u32 {
        if depth > 16 {
            return 1;
        }
        let mut best = 1;
        for f in self.same_clock_followers(ctx, bit) {
            best = best.max(1 + self.chain_len(ctx, f.bit, depth + 1));
        }
        best
    }

    pub fn same_clock_followers<'s>(&'s self, ctx: &Ctx, bit: Bit) -> Vec<&'s Follower> {
        let Some(fs) = self.followers.get(&bit) else {
            return vec![];
        };
        let me = &ctx.reg_clock[&bit.0];
        fs.iter()
            .filter(|f| {
                let other = &ctx.reg_clock[&f.bit.0];
                f.bit != bit
                    && other.root.is_some()
                    && other.root == me.root
                    && other.edge == me.edge
            })
            .collect()
    }

    fn mark(&mut self, ctx: &Ctx, bit: Bit, k: u32, n: u32, src: &str, depth: u32) {
        if depth > 16 {
            return;
        }
        let e = self
            .stage_bits
            .entry(bit)
            .or_insert((k, n, src.to_string()));
        if e.0 < k {
            *e = (k, n, src.to_string());
        }
        let next: Vec<Bit> = self
            .same_clock_followers(ctx, bit)
            .iter()
            .map(|f| f.bit)
            .collect();
        for f in next {
            self.mark(ctx, f, k + 1, n, src, depth + 1);
        }
    }

    /// Every assignment of `d.reg` that reads a foreign signal sits under an AND-ed enable
    /// built from synchronizer stages of that source domain (and local terms).
    /// Whether every foreign read is qualified; when some are and one is not, the span of
    /// the first read outside the enable.
    fn qualified_reads(&self, ctx: &Ctx, d: &Dest) -> (bool, Option<Span>) {
        let min = ctx.config.synchronizers.min_stages.max(1);
        let pi = ctx.g.reg_proc[&d.reg];
        let mut any = false;
        let mut good = false;
        let mut outside: Option<Span> = None;
        for a in ctx.n.procs[pi].assigns.iter().filter(|a| !a.in_reset) {
            if !crate::design::graph::targets(&a.target)
                .iter()
                .any(|t| ctx.g.sig(t) == Some(d.reg))
            {
                continue;
            }
            let reads_foreign = a.rhs.idents().iter().any(|id| {
                ctx.g.sig(id).is_some_and(|s| {
                    ctx.leaves(s)
                        .iter()
                        .any(|l| d.sources.values().any(|v| v.contains(l)))
                })
            });
            if !reads_foreign {
                continue;
            }
            any = true;
            let ok = a.guards.iter().filter(|g| g.polarity).any(|g| {
                conjuncts(&g.cond)
                    .iter()
                    .any(|t| self.is_sync_enable(ctx, t, &d.domain, min))
            });
            if ok {
                good = true;
            } else {
                outside.get_or_insert_with(|| a.span.clone());
            }
        }
        match outside {
            None => (any, None),
            Some(sp) => (false, good.then_some(sp)),
        }
    }

    /// A term whose leaves are synchronizer stages (≥ min) or local registers, with at least
    /// one stage: a synchronized bit or an edge detect of one.
    fn is_sync_enable(&self, ctx: &Ctx, t: &Expr, dom: &str, min: u32) -> bool {
        if contains_or(t) {
            return false;
        }
        let mut stage = false;
        for id in t.idents() {
            let Some(s) = ctx.g.sig(id) else { continue };
            for &l in ctx.leaves(s).iter() {
                let st = (0..width(ctx, l))
                    .filter_map(|b| self.stage_bits.get(&(l, b)))
                    .max_by_key(|x| x.0);
                match st {
                    Some(st) if st.0 >= min => stage = true,
                    _ => {
                        if ctx.leaf_domain(l).as_deref() != Some(dom) {
                            return false;
                        }
                    }
                }
            }
        }
        stage
    }
}

fn contains_or(e: &Expr) -> bool {
    let mut found = false;
    e.visit(&mut |x| {
        if let Expr::Binary { op, .. } = x {
            if op == "|" || op == "||" {
                found = true;
            }
        }
    });
    found
}

/// Top-level AND terms of a condition.
pub fn conjuncts(e: &Expr) -> Vec<&Expr> {
    match e {
        Expr::Binary { op, lhs, rhs } if op == "&&" || op == "&" => {
            let mut v = conjuncts(lhs);
            v.extend(conjuncts(rhs));
            v
        }
        _ => vec![e],
    }
}

/// Count source bits from other domains read by an expression.
fn count_foreign(ctx: &Ctx, e: &Expr, dom: &str, foreign: &mut BTreeSet<SigId>, bits: &mut u32) {
    fn rec(
        ctx: &Ctx,
        e: &Expr,
        dom: &str,
        foreign: &mut BTreeSet<SigId>,
        bits: &mut u32,
        selected: bool,
    ) {
        match e {
            Expr::Select { base, sel } => {
                let one = matches!(sel.as_ref(), Select::Bit { .. });
                rec(ctx, base, dom, foreign, bits, one);
                match sel.as_ref() {
                    Select::Bit { index } => rec(ctx, index, dom, foreign, bits, false),
                    Select::Part { msb, lsb } => {
                        rec(ctx, msb, dom, foreign, bits, false);
                        rec(ctx, lsb, dom, foreign, bits, false);
                    }
                    Select::Up { base, width } | Select::Down { base, width } => {
                        rec(ctx, base, dom, foreign, bits, false);
                        rec(ctx, width, dom, foreign, bits, false);
                    }
                }
            }
            Expr::Ident { .. } => {
                let Some(s) = ctx.g.sig(e) else { return };
                // a pure alias (port connection, assign) of a register reads it directly
                let (ls, _, _) = ctx.g.through_copies(s, 0);
                let direct = ctx.g.is_reg(ls) || ctx.n.top_inputs.contains(&ls);
                for &l in ctx.leaves(s).iter() {
                    if ctx.is_static(l) {
                        continue;
                    }
                    if let Some(d) = ctx.leaf_domain(l) {
                        if d != dom && foreign.insert(l) {
                            let w = ctx.n.sigs[l].width.unwrap_or(1);
                            *bits += if selected && direct {
                                1
                            } else if direct {
                                w
                            } else {
                                w.max(1) + u32::from(!direct)
                            };
                        }
                    }
                }
            }
            other => {
                let mut kids: Vec<&Expr> = Vec::new();
                match other {
                    Expr::Unary { arg, .. } => kids.push(arg),
                    Expr::Binary { lhs, rhs, .. } => {
                        kids.push(lhs);
                        kids.push(rhs)
                    }
                    Expr::Ternary { cond, then, other } => {
                        kids.push(cond);
                        kids.push(then);
                        kids.push(other)
                    }
                    Expr::Concat { parts } => kids.extend(parts.iter()),
                    Expr::Repl { count, parts } => {
                        kids.push(count);
                        kids.extend(parts.iter())
                    }
                    Expr::Call { args, .. } => kids.extend(args.iter()),
                    Expr::Opaque { reads, .. } => kids.extend(reads.iter()),
                    _ => {}
                }
                for k in kids {
                    rec(ctx, k, dom, foreign, bits, false);
                }
            }
        }
    }
    rec(ctx, e, dom, foreign, bits, false)
}
