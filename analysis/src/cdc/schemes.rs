//! Safe multi-bit schemes (DESIGN.md section 3): counters, gray code from a counter,
//! asynchronous FIFOs, and the bookkeeping the multi-bit rules share (which source bit each
//! synchronizer stage carries).
//!
//! Gray code is recognised by what it does, not how it is spelt: the register's next state
//! is an encoding `F` of one counter value `v`, `v` moves by at most one step per source
//! cycle, and `F(x)` and `F(x + 1)` differ in at most one bit for every `x` (checked by
//! evaluating `F` over all values of `v` up to 16 bits, a fixed sample above). That accepts
//! `b ^ (b >> 1)`, its bit-by-bit form and reflected codes for other depths, and rejects a
//! "gray" register of anything that is not a counter.

use std::collections::{BTreeMap, BTreeSet, HashMap};

use crate::cdc::bitval::Eval;
use crate::cdc::crossings::{Bit, Crossings, DIn};
use crate::design::graph::{targets, BitSrc, Driver};
use crate::design::netlist::{FAssign, SigId};
use crate::design::Ctx;
use crate::model::{render, Expr};

/// Steps a value can take per cycle.
#[derive(Clone, Debug, Default, PartialEq)]
struct Step {
    base: Option<SigId>,
    hold: bool,
    inc: bool,
    dec: bool,
    consts: Vec<u64>,
}

impl Step {
    fn merge(mut self, o: Step) -> Option<Step> {
        match (self.base, o.base) {
            (Some(a), Some(b)) if a != b => return None,
            (None, b) => self.base = b,
            _ => {}
        }
        self.hold |= o.hold;
        self.inc |= o.inc;
        self.dec |= o.dec;
        self.consts.extend(o.consts);
        Some(self)
    }
}

#[derive(Clone, Debug)]
pub struct Gray {
    /// The counter whose value is encoded (the register itself for a gray counter).
    pub counter: SigId,
    /// Values checked for the one-bit property.
    pub checked: u64,
}

#[derive(Clone, Debug)]
pub struct Fifo {
    pub write_ptr: SigId,
    pub read_ptr: SigId,
    pub write_gray: SigId,
    pub read_gray: SigId,
    pub write_domain: String,
    pub read_domain: String,
}

#[derive(Default)]
pub struct Schemes {
    pub gray: HashMap<SigId, Gray>,
    /// Memories recognised as the storage of an asynchronous FIFO.
    pub fifo: HashMap<SigId, Fifo>,
    /// Synchronizer stage bit → (the source bit it carries, stage k).
    pub carries: HashMap<Bit, (Bit, u32)>,
}

fn width(ctx: &Ctx, s: SigId) -> u32 {
    ctx.n.sigs[s].width.unwrap_or(1).clamp(1, 256)
}

fn reg_assigns<'c>(ctx: &'c Ctx, r: SigId) -> Vec<&'c FAssign> {
    let Some(pi) = ctx.g.reg_proc.get(&r) else {
        return vec![];
    };
    ctx.n.procs[*pi]
        .assigns
        .iter()
        .filter(|a| targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(r)))
        .collect()
}

fn guard_key(a: &FAssign) -> String {
    a.guards
        .iter()
        .map(|g| format!("{}{}", if g.polarity { "" } else { "!" }, render(&g.cond)))
        .collect::<Vec<_>>()
        .join(" && ")
}

/// A value that is 0 or 1 (an enable added to a counter).
fn zero_one(ctx: &Ctx, e: &Expr) -> bool {
    match e {
        Expr::Const { value: Some(v), .. } => *v <= 1,
        Expr::Concat { parts } => match parts.split_last() {
            Some((last, rest)) => {
                rest.iter()
                    .all(|p| matches!(p, Expr::Const { value: Some(0), .. }) || is_zero_repl(p))
                    && zero_one(ctx, last)
            }
            None => false,
        },
        Expr::Ternary { then, other, .. } => zero_one(ctx, then) && zero_one(ctx, other),
        Expr::Call { name, args } if name.ends_with('\'') && args.len() == 1 => {
            zero_one(ctx, &args[0])
        }
        Expr::Unary { op, .. } if op != "~" && op != "-" && op != "+" => true,
        Expr::Binary { op, .. }
            if matches!(
                op.as_str(),
                "==" | "!=" | "===" | "!==" | "<" | "<=" | ">" | ">=" | "&&" | "||"
            ) =>
        {
            true
        }
        _ => ctx.g.width_of(e) == Some(1),
    }
}

fn is_zero_repl(e: &Expr) -> bool {
    matches!(e, Expr::Repl { parts, .. } if parts.iter().all(|p| matches!(p, Expr::Const { value: Some(0), .. })))
}

impl Schemes {
    pub fn compute(ctx: &Ctx, cx: &Crossings) -> Schemes {
        let mut s = Schemes {
            gray: HashMap::new(),
            fifo: HashMap::new(),
            carries: HashMap::new(),
        };
        let min = ctx.config.synchronizers.min_stages.max(1);
        // what each stage carries
        for d in &cx.dests {
            for (b, din, len) in &d.bits {
                if let (DIn::Single { leaf, .. }, true) = (din, *len >= 2) {
                    s.walk_chain(ctx, cx, (d.reg, *b), *leaf, 1, 0);
                }
            }
        }
        // gray candidates: source registers whose bits cross through chains
        let mut cands: BTreeSet<SigId> = BTreeSet::new();
        for d in &cx.dests {
            for (_, din, len) in &d.bits {
                if let DIn::Single { leaf, .. } = din {
                    if *len >= min && ctx.g.is_reg(leaf.0) && width(ctx, leaf.0) >= 2 {
                        cands.insert(leaf.0);
                    }
                }
            }
        }
        for g in cands {
            if let Some(info) = gray_of(ctx, g) {
                s.gray.insert(g, info);
            }
        }
        // asynchronous FIFO memories, read by destination registers
        let mems: BTreeSet<SigId> = cx
            .dests
            .iter()
            .flat_map(|d| d.sources.values().flatten().copied())
            .filter(|m| ctx.n.sigs[*m].memory && ctx.g.is_reg(*m))
            .collect();
        for m in mems {
            if let Some(f) = s.fifo_of(ctx, cx, m, min) {
                s.fifo.insert(m, f);
            }
        }
        s
    }

    fn walk_chain(&mut self, ctx: &Ctx, cx: &Crossings, bit: Bit, leaf: Bit, k: u32, depth: u32) {
        if depth > 16 {
            return;
        }
        let e = self.carries.entry(bit).or_insert((leaf, k));
        if e.1 < k {
            *e = (leaf, k);
        }
        let next: Vec<Bit> = cx
            .same_clock_followers(ctx, bit)
            .iter()
            .map(|f| f.bit)
            .collect();
        for n in next {
            self.walk_chain(ctx, cx, n, leaf, k + 1, depth + 1);
        }
    }

    /// Registers holding stage ≥ `min` of the bits of `src` (its synchronized copies).
    pub fn synced_copies(&self, src: SigId, min: u32) -> BTreeSet<SigId> {
        self.carries
            .iter()
            .filter(|(_, (leaf, k))| leaf.0 == src && *k >= min)
            .map(|(b, _)| b.0)
            .collect()
    }

    /// Every bit of `src` passes a chain of at least `min` stages into domain `dom`.
    fn crosses_all_bits(&self, ctx: &Ctx, src: SigId, dom: &str, min: u32) -> bool {
        let mut bits: BTreeSet<u32> = BTreeSet::new();
        for (b, (leaf, k)) in &self.carries {
            if leaf.0 == src && *k >= min && ctx.domain_of_reg(b.0) == Some(dom) {
                bits.insert(leaf.1);
            }
        }
        bits.len() as u32 == width(ctx, src)
    }

    fn fifo_of(&self, ctx: &Ctx, cx: &Crossings, m: SigId, min: u32) -> Option<Fifo> {
        let wdom = ctx.domain_of_reg(m)?.to_string();
        // write address: one counter with a gray companion
        let mut wptr = None;
        for a in reg_assigns(ctx, m).iter().filter(|a| !a.in_reset) {
            let Expr::Select { sel, .. } = &a.target else {
                return None;
            };
            let idx = match sel.as_ref() {
                crate::model::Select::Bit { index } => index,
                _ => return None,
            };
            let p = single_leaf(ctx, idx)?;
            if *wptr.get_or_insert(p) != p {
                return None;
            }
        }
        let wptr = wptr?;
        let wgray = self.companion(wptr)?;
        // readers in other domains: every index they read the memory with is one counter
        let mut rptr = None;
        let mut rdom = None;
        for d in cx
            .dests
            .iter()
            .filter(|d| d.sources.values().flatten().any(|s| *s == m))
        {
            let pi = ctx.g.reg_proc[&d.reg];
            for a in ctx.n.procs[pi].assigns.iter().filter(|a| !a.in_reset) {
                let mut idx = Vec::new();
                mem_indices(ctx, &a.rhs, m, &mut idx, 0);
                for i in idx {
                    let p = single_leaf(ctx, &i)?;
                    if *rptr.get_or_insert(p) != p {
                        return None;
                    }
                }
            }
            if *rdom.get_or_insert(d.domain.clone()) != d.domain {
                return None;
            }
        }
        let (rptr, rdom) = (rptr?, rdom?);
        if ctx.domain_of_reg(rptr) != Some(rdom.as_str()) || rdom == wdom {
            return None;
        }
        let rgray = self.companion(rptr)?;
        if ctx.domain_of_reg(wgray) != Some(wdom.as_str())
            || ctx.domain_of_reg(rgray) != Some(rdom.as_str())
        {
            return None;
        }
        // both pointers cross as gray code through chains
        if !self.crosses_all_bits(ctx, wgray, &rdom, min)
            || !self.crosses_all_bits(ctx, rgray, &wdom, min)
        {
            return None;
        }
        // empty: read-domain logic compares the synchronized write pointer with the read
        // pointer; full: the mirror image in the write domain
        let empty = compares(ctx, &self.synced_copies(wgray, min), &[rptr, rgray], &rdom);
        let full = compares(ctx, &self.synced_copies(rgray, min), &[wptr, wgray], &wdom);
        (empty && full).then_some(Fifo {
            write_ptr: wptr,
            read_ptr: rptr,
            write_gray: wgray,
            read_gray: rgray,
            write_domain: wdom,
            read_domain: rdom,
        })
    }

    /// The gray register that encodes counter `c` (or `c` itself when it is a gray counter).
    fn companion(&self, c: SigId) -> Option<SigId> {
        if self.gray.get(&c).is_some_and(|g| g.counter == c) {
            return Some(c);
        }
        let mut v: Vec<SigId> = self
            .gray
            .iter()
            .filter(|(_, g)| g.counter == c)
            .map(|(s, _)| *s)
            .collect();
        v.sort();
        v.first().copied()
    }
}

/// Some register of domain `dom` reads (within its next state or guards) one of `synced`
/// together with one of `local`.
fn compares(ctx: &Ctx, synced: &BTreeSet<SigId>, local: &[SigId], dom: &str) -> bool {
    if synced.is_empty() {
        return false;
    }
    for (r, pi) in &ctx.g.reg_proc {
        if ctx.domain_of_reg(*r) != Some(dom) {
            continue;
        }
        for a in ctx.n.procs[*pi].assigns.iter().filter(|a| !a.in_reset) {
            if !targets(&a.target).iter().any(|t| ctx.g.sig(t) == Some(*r)) {
                continue;
            }
            let mut leaves: BTreeSet<SigId> = BTreeSet::new();
            let mut ids = a.rhs.idents();
            for g in &a.guards {
                ids.extend(g.cond.idents());
            }
            for id in ids {
                if let Some(s) = ctx.g.sig(id) {
                    leaves.extend(ctx.leaves(s).iter().copied());
                }
            }
            if leaves.iter().any(|l| synced.contains(l)) && local.iter().any(|l| leaves.contains(l))
            {
                return true;
            }
        }
    }
    false
}

/// The one register an index expression reads (through combinational logic).
fn single_leaf(ctx: &Ctx, e: &Expr) -> Option<SigId> {
    let mut out: BTreeSet<SigId> = BTreeSet::new();
    for id in e.idents() {
        let s = ctx.g.sig(id)?;
        out.extend(ctx.leaves(s).iter().copied());
    }
    if out.len() == 1 {
        out.into_iter().next().filter(|s| ctx.g.is_reg(*s))
    } else {
        None
    }
}

/// Index expressions with which `e` (through combinational nets) reads memory `m`.
fn mem_indices(ctx: &Ctx, e: &Expr, m: SigId, out: &mut Vec<Expr>, depth: u32) {
    if depth > 12 {
        return;
    }
    e.visit(&mut |x| {
        if let Expr::Select { base, sel } = x {
            if ctx.g.sig(base) == Some(m) {
                if let crate::model::Select::Bit { index } = sel.as_ref() {
                    out.push(index.clone());
                }
            }
        }
    });
    for id in e.idents() {
        let Some(s) = ctx.g.sig(id) else { continue };
        if s == m || ctx.g.is_reg(s) {
            continue;
        }
        for d in ctx.g.drivers.get(&s).cloned().unwrap_or_default() {
            let rhs = match d {
                Driver::Comb(ci) => &ctx.n.combs[ci].rhs,
                Driver::CombProc(pi, ai) => &ctx.n.procs[pi].assigns[ai].rhs,
            };
            mem_indices(ctx, rhs, m, out, depth + 1);
        }
    }
}

/// How `e` moves relative to a register: a hold, ± a 0/1 value, a constant, through
/// combinational nets with unguarded whole-signal drivers.
fn step_of(ctx: &Ctx, e: &Expr, depth: u32) -> Option<Step> {
    if depth > 8 {
        return None;
    }
    match e {
        Expr::Ident { .. } => {
            let s = ctx.g.sig(e)?;
            if ctx.g.is_reg(s) {
                return Some(Step {
                    base: Some(s),
                    hold: true,
                    ..Default::default()
                });
            }
            let ds = ctx.g.drivers.get(&s)?;
            let mut acc: Option<Step> = None;
            for d in ds {
                let (t, rhs) = match d {
                    Driver::Comb(ci) => (&ctx.n.combs[*ci].target, &ctx.n.combs[*ci].rhs),
                    Driver::CombProc(pi, ai) => {
                        let a = &ctx.n.procs[*pi].assigns[*ai];
                        if !a.guards.is_empty() {
                            return None;
                        }
                        (&a.target, &a.rhs)
                    }
                };
                if !matches!(t, Expr::Ident { .. }) {
                    return None;
                }
                let st = step_of(ctx, rhs, depth + 1)?;
                acc = Some(match acc {
                    None => st,
                    Some(a) => a.merge(st)?,
                });
            }
            acc
        }
        Expr::Const { value: Some(v), .. } => Some(Step {
            consts: vec![*v],
            ..Default::default()
        }),
        Expr::Binary { op, lhs, rhs } if op == "+" || op == "-" => {
            let l = step_of(ctx, lhs, depth + 1);
            if let Some(l) = l.filter(|l| l.hold && !l.inc && !l.dec && l.consts.is_empty()) {
                if zero_one(ctx, rhs) && !rhs.idents().iter().any(|i| ctx.g.sig(i) == l.base) {
                    return Some(Step {
                        base: l.base,
                        inc: op == "+",
                        dec: op == "-",
                        ..Default::default()
                    });
                }
            }
            if op == "+" {
                let r = step_of(ctx, rhs, depth + 1)?;
                if r.hold && !r.inc && !r.dec && r.consts.is_empty() && zero_one(ctx, lhs) {
                    return Some(Step {
                        base: r.base,
                        inc: true,
                        ..Default::default()
                    });
                }
            }
            None
        }
        Expr::Ternary { then, other, .. } => {
            step_of(ctx, then, depth + 1)?.merge(step_of(ctx, other, depth + 1)?)
        }
        _ => None,
    }
}

/// Reset values of a register (constants assigned in its reset branch).
fn reset_values(ctx: &Ctx, r: SigId) -> Vec<u64> {
    reg_assigns(ctx, r)
        .iter()
        .filter(|a| a.in_reset)
        .filter_map(|a| match &a.rhs {
            Expr::Const { value, .. } => *value,
            _ => None,
        })
        .collect()
}

/// `r` is a counter: every next state is itself, itself ± a 0/1 value, or its reset value.
/// Returns its moves.
fn counter(ctx: &Ctx, r: SigId) -> Option<Step> {
    let rs = reset_values(ctx, r);
    let mut acc = Step {
        base: Some(r),
        hold: true,
        ..Default::default()
    };
    let mut any = false;
    let mut clears: BTreeSet<u64> = BTreeSet::new();
    for a in reg_assigns(ctx, r).iter().filter(|a| !a.in_reset) {
        if !matches!(a.target, Expr::Ident { .. }) {
            return None; // written bit by bit: not a counter we can follow
        }
        let st = step_of(ctx, &a.rhs, 0)?;
        // a clear to the reset value (a synchronous reset with no async one: one constant)
        if st.consts.iter().any(|c| !rs.contains(c)) {
            if !rs.is_empty() {
                return None;
            }
            clears.extend(st.consts.iter().copied());
            if clears.len() > 1 {
                return None;
            }
        }
        if st.base.is_some_and(|b| b != r) {
            // `r <= next` where next is a step of r, through a register? no: a copy of
            // another register is not a count
            return None;
        }
        any |= st.inc || st.dec;
        acc = acc.merge(st)?;
    }
    any.then_some(acc)
}

/// For the gray-code quick fix: `None` when `r` is not a counter, else whether it steps up,
/// steps down, and the constants it is loaded with outside its reset branch.
pub(crate) fn counter_moves(ctx: &Ctx, r: SigId) -> Option<(bool, bool, Vec<u64>)> {
    counter(ctx, r).map(|s| (s.inc, s.dec, s.consts))
}

/// Guards under which `r` moves (its non-hold, non-reset assignments).
fn move_keys(ctx: &Ctx, r: SigId) -> BTreeSet<String> {
    reg_assigns(ctx, r)
        .iter()
        .filter(|a| !a.in_reset && !matches!(a.rhs, Expr::Const { .. }))
        .filter(|a| !(matches!(a.rhs, Expr::Ident { .. }) && ctx.g.sig(&a.rhs) == Some(r)))
        .map(|a| guard_key(a))
        .collect()
}

/// The encoder variable of a register's next state: one register, or one combinational
/// net that is a step of a counter. Nets in between are inlined.
fn encoder_var(ctx: &Ctx, e: &Expr, out: &mut BTreeSet<SigId>, depth: u32) -> Option<()> {
    if depth > 16 {
        return None;
    }
    for id in e.idents() {
        let s = ctx.g.sig(id)?;
        if ctx.g.is_reg(s) {
            out.insert(s);
            continue;
        }
        if ctx.n.sigs[s].memory || ctx.n.top_inputs.contains(&s) {
            return None;
        }
        if step_of(ctx, id, 0).is_some_and(|st| st.inc || st.dec) {
            out.insert(s);
            continue;
        }
        for d in ctx.g.drivers.get(&s)? {
            let rhs = match d {
                Driver::Comb(ci) => &ctx.n.combs[*ci].rhs,
                Driver::CombProc(pi, ai) => &ctx.n.procs[*pi].assigns[*ai].rhs,
            };
            encoder_var(ctx, rhs, out, depth + 1)?;
        }
    }
    Some(())
}

/// Function statements one gray check may execute over all counter values.
const MAX_FUNCTION_STEPS: u32 = 4_000_000;

/// `g` carries gray code of a counter (see the module comment).
pub fn gray_of(ctx: &Ctx, g: SigId) -> Option<Gray> {
    let w = width(ctx, g);
    if !(2..=64).contains(&w) {
        return None;
    }
    // constant loads (a synchronous clear) are left out, as for the counter
    let assigns: Vec<&FAssign> = reg_assigns(ctx, g)
        .into_iter()
        .filter(|a| !a.in_reset && !matches!(a.rhs, Expr::Const { .. }))
        .collect();
    // per bit: the one assignment that drives it and the bit's offset in its target
    let mut per_bit: Vec<(&FAssign, u32)> = Vec::new();
    for b in 0..w {
        let mut found = None;
        for a in &assigns {
            if let Some(o) = ctx.g.target_bit_offset(&a.target, g, b) {
                if found.is_some() {
                    return None;
                }
                found = Some((*a, o));
            }
        }
        per_bit.push(found?);
    }
    let keys: BTreeSet<String> = assigns.iter().map(|a| guard_key(a)).collect();
    if keys.len() != 1 {
        return None;
    }
    let gkey = keys.into_iter().next().unwrap_or_default();
    let mut vars = BTreeSet::new();
    for a in &assigns {
        encoder_var(ctx, &a.rhs, &mut vars, 0)?;
    }
    if vars.len() != 1 {
        return None;
    }
    let v = vars.into_iter().next()?;
    let vw = width(ctx, v);
    // how v moves, and which counter it follows
    let (cnt, moves) = if v == g {
        (g, None) // a gray counter: its own next state is checked below
    } else if ctx.g.is_reg(v) {
        (v, Some(counter(ctx, v)?))
    } else {
        let st = step_of(
            ctx,
            &Expr::Ident {
                name: ctx.n.sigs[v].name.clone(),
                loc: Default::default(),
            },
            0,
        )?;
        let b = st.base?;
        if st.inc && st.dec {
            return None;
        }
        counter(ctx, b)?;
        (b, Some(st))
    };
    let _ = moves;
    if v != g {
        if vw != w {
            return None;
        }
        // the encoding follows every move of the counter
        if !gkey.is_empty() && move_keys(ctx, cnt).iter().any(|k| *k != gkey) {
            return None;
        }
    }
    let spent = std::cell::Cell::new(0u32);
    let f = |x: u64| -> Option<u64> {
        let ev = Eval::new(ctx, v, x);
        // one evaluation per assignment (a vector assignment drives many bits)
        let mut vals: Vec<(*const FAssign, u64)> = Vec::new();
        let mut out = 0u64;
        for (b, (a, off)) in per_bit.iter().enumerate() {
            let key: *const FAssign = *a;
            let val = match vals.iter().find(|(k, _)| *k == key) {
                Some((_, v)) => *v,
                None => {
                    let cw = ev.selfw(&a.target)?.max(ev.selfw(&a.rhs)?);
                    let v = ev.eval(&a.rhs, cw, 0)?;
                    vals.push((key, v));
                    v
                }
            };
            out |= ((val >> off) & 1) << b;
        }
        // functions run per value: a slow one gives up (not proven) instead of stalling
        spent.set(spent.get().saturating_add(ev.spent.get()));
        if spent.get() > MAX_FUNCTION_STEPS {
            return None;
        }
        Some(out)
    };
    let full = if w >= 64 { u64::MAX } else { (1u64 << w) - 1 };
    // every value up to 16 bits; a design with functions runs a body per value, so there
    // every value up to 12 bits (editor latency), a fixed sample above
    let exhaustive = if ctx.n.funcs.is_empty() { 16 } else { 12 };
    let samples: Vec<u64> = if w <= exhaustive {
        (0..=full).collect()
    } else {
        let mut v: Vec<u64> = (0..4096).collect();
        v.extend((0..4096).map(|i| full - i));
        for k in 1..w {
            let p = 1u64 << k;
            v.extend([p - 2, p - 1, p, p + 1]);
        }
        v
    };
    let mut changed = false;
    // f(x + 1) of one sample is f(x) of the next when the samples are consecutive
    let mut next: Option<(u64, u64)> = None;
    for &x in &samples {
        let fx = match next {
            Some((nx, fv)) if nx == x => fv,
            _ => f(x)?,
        };
        if v == g {
            // gray counter: each next state differs from the present one in at most one bit
            if (fx ^ x).count_ones() > 1 {
                return None;
            }
            changed |= fx != x;
        } else {
            let y = x.wrapping_add(1) & full;
            let fy = f(y)?;
            next = Some((y, fy));
            if (fx ^ fy).count_ones() > 1 {
                return None;
            }
            changed |= fx != fy;
        }
    }
    if !changed {
        return None;
    }
    Some(Gray {
        counter: cnt,
        checked: samples.len() as u64,
    })
}

/// Bits of one source vector that cross into one domain through separate chains.
pub struct VectorCrossing {
    pub source: SigId,
    pub dest_domain: String,
    /// (stage-1 register, its bit, the source bit) per crossing bit.
    pub bits: Vec<(SigId, u32, u32)>,
    /// Index into `Crossings::dests` of every stage-1 register.
    pub dests: Vec<usize>,
}

/// Every vector of two or more source bits whose bits each pass a chain of at least `min`.
pub fn vector_crossings(ctx: &Ctx, cx: &Crossings) -> Vec<VectorCrossing> {
    let min = ctx.config.synchronizers.min_stages.max(1);
    let mut groups: BTreeMap<(SigId, String), VectorCrossing> = BTreeMap::new();
    for (i, d) in cx.dests.iter().enumerate() {
        for (b, din, len) in &d.bits {
            let DIn::Single { leaf, .. } = din else {
                continue;
            };
            if *len < min || ctx.is_static(leaf.0) {
                continue;
            }
            let e = groups
                .entry((leaf.0, d.domain.clone()))
                .or_insert_with(|| VectorCrossing {
                    source: leaf.0,
                    dest_domain: d.domain.clone(),
                    bits: vec![],
                    dests: vec![],
                });
            if !e.bits.iter().any(|x| x.2 == leaf.1) {
                e.bits.push((d.reg, *b, leaf.1));
            }
            if !e.dests.contains(&i) {
                e.dests.push(i);
            }
        }
    }
    groups.into_values().filter(|g| g.bits.len() >= 2).collect()
}

/// Whether the D of a register bit is exactly one signal bit (no logic).
pub fn is_copy(ctx: &Ctx, a: &FAssign, off: u32) -> bool {
    matches!(ctx.g.bit_of(&a.rhs, off), BitSrc::Copy(..))
}

/// Hover notes for the registers a safe multi-bit scheme covers: what was recognised and,
/// for a qualified crossing, the hold requirement that structure cannot prove.
pub fn notes(ctx: &Ctx, cx: &Crossings) -> HashMap<SigId, Vec<String>> {
    let short = |s: SigId| crate::cdc::short(ctx, s);
    let mut out: HashMap<SigId, Vec<String>> = HashMap::new();
    for d in &cx.dests {
        if !d.qualified || d.scheme.is_some() {
            continue;
        }
        for (dom, srcs) in &d.sources {
            let names: Vec<String> = srcs.iter().map(|s| format!("`{}`", short(*s))).collect();
            out.entry(d.reg).or_default().push(format!(
                "Qualified crossing: reads {} (domain `{dom}`) only under an enable synchronized from `{dom}`. \
                 Structure cannot prove the rest: the source must hold {} stable from the request until the \
                 capture is acknowledged (the designer's promise; Seam does not check it)",
                names.join(", "),
                if names.len() == 1 { "it" } else { "them" }
            ));
        }
    }
    for (g, info) in &cx.schemes.gray {
        let dom = ctx.domain_of_reg(*g).unwrap_or("?");
        let what = if info.counter == *g {
            "a gray counter".to_string()
        } else {
            format!("gray code of counter `{}`", short(info.counter))
        };
        out.entry(*g).or_default().push(format!(
            "Multi-bit scheme: {what} in domain `{dom}`; consecutive values differ in one bit (checked over {} values), so per-bit chains are safe",
            info.checked
        ));
    }
    for (m, f) in &cx.schemes.fifo {
        out.entry(*m).or_default().push(format!(
            "Asynchronous FIFO storage: written in `{}`, read in `{}`; pointers cross as gray code (`{}`, `{}`) through chains, and empty and full use the synchronized pointers",
            f.write_domain,
            f.read_domain,
            short(f.write_gray),
            short(f.read_gray)
        ));
    }
    out
}
