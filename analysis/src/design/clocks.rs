//! Clock tracing: from a process's clock expression back to a root through copies, ports,
//! inverters, declared cells, plain-logic gates, muxes and flop-derived clocks.

use std::collections::BTreeSet;

use super::graph::{BitSrc, Driver};
use super::netlist::SigId;
use super::Ctx;
use crate::model::{Expr, Span};

#[derive(Clone, Debug, Default)]
pub struct ClockTrace {
    /// Root clock names (more than one behind an unpinned mux).
    pub roots: BTreeSet<String>,
    /// Registers passed on the way (a flop-derived clock): the first is the divider.
    pub derived: Vec<SigId>,
    /// Plain-logic gates on the path: (span of the assign, enable expressions).
    pub gates: Vec<(Span, Vec<Expr>)>,
    /// Enables of declared clock-gate cells (data sampled by the gate).
    pub cell_enables: Vec<(Span, Expr)>,
    /// Odd number of inverters: the effective edge flips.
    pub inverted: bool,
    /// Signals on the clock path (for clock-as-data).
    pub nets: Vec<SigId>,
}

impl<'a> Ctx<'a> {
    /// Root name for a top input port or a `[clocks]` hierarchical key, if `s` is one.
    fn root_name(&self, s: SigId) -> Option<String> {
        let sig = &self.n.sigs[s];
        if self.n.top_inputs.contains(&s) {
            // a port that `[inputs]` declares as data is never a clock root
            if self.config.inputs.contains_key(sig.local.as_str()) {
                return None;
            }
            return Some(sig.local.clone());
        }
        // hierarchical key relative to the top: "u_pll.clk_out"
        let rel = sig
            .name
            .split_once('.')
            .map(|(_, r)| r)
            .unwrap_or(&sig.name);
        if self.config.clocks.contains_key(rel) {
            return Some(rel.to_string());
        }
        None
    }

    pub fn trace_clock(&self, e: &Expr) -> ClockTrace {
        let mut t = ClockTrace::default();
        match self.g.bit_of(e, 0) {
            BitSrc::Copy(s, b) => self.trace_bit(s, b, &mut t, 0),
            _ => {
                for r in e.idents() {
                    if let Some(s) = self.g.sig(r) {
                        self.trace_bit(s, 0, &mut t, 0);
                    }
                }
            }
        }
        t
    }

    fn trace_bit(&self, s: SigId, b: u32, t: &mut ClockTrace, depth: u32) {
        if depth > 64 {
            return;
        }
        let (s, b, hops) = self.g.through_copies(s, b);
        t.nets.extend(hops);
        t.nets.push(s);
        if let Some(r) = self.root_name(s) {
            t.roots.insert(r);
            return;
        }
        if let Some(&pi) = self.g.reg_proc.get(&s) {
            // a flop-derived clock: its registers belong to the divider's own clock domain
            t.derived.push(s);
            if let Some((c, _)) = &self.n.procs[pi].clock {
                let c = c.clone();
                let mut inner = ClockTrace::default();
                match self.g.bit_of(&c, 0) {
                    BitSrc::Copy(cs, cb) => self.trace_bit(cs, cb, &mut inner, depth + 1),
                    _ => {}
                }
                t.roots.extend(inner.roots);
                t.derived.extend(inner.derived);
                t.gates.extend(inner.gates);
                t.nets.extend(inner.nets);
            }
            return;
        }
        let Some(ds) = self.g.drivers.get(&s) else {
            // undriven: a black-box output is a root of its own
            if let Some((inst, pin, _)) = self.n.blackbox_pins.iter().find(|(_, _, x)| *x == s) {
                t.roots
                    .insert(format!("{}.{pin}", self.n.insts[*inst].path));
            }
            return;
        };
        for d in ds {
            let (target, rhs, span) = match d {
                Driver::Comb(ci) => {
                    let c = &self.n.combs[*ci];
                    (&c.target, &c.rhs, &c.span)
                }
                Driver::CombProc(pi, ai) => {
                    let a = &self.n.procs[*pi].assigns[*ai];
                    (&a.target, &a.rhs, &a.span)
                }
            };
            if self.g.target_bit_offset(target, s, b).is_none() {
                continue;
            }
            self.trace_expr(rhs, span, t, depth + 1);
            return;
        }
    }

    fn trace_expr(&self, rhs: &Expr, span: &Span, t: &mut ClockTrace, depth: u32) {
        if depth > 256 {
            return;
        }
        match rhs {
            Expr::Unary { op, arg } if op == "~" || op == "!" => {
                t.inverted = !t.inverted;
                self.trace_expr(arg, span, t, depth + 1);
            }
            Expr::Call { name, args } if name == "$seam_clock_gate" && args.len() == 2 => {
                t.cell_enables.push((span.clone(), args[1].clone()));
                self.trace_expr(&args[0], span, t, depth + 1);
            }
            Expr::Call { name, args } if name == "$seam_clock_mux" && !args.is_empty() => {
                let pinned = self.pinned(&args[0]);
                match pinned {
                    Some(v) if (v as usize) + 1 < args.len() => {
                        self.trace_expr(&args[v as usize + 1], span, t, depth + 1)
                    }
                    _ => args[1..]
                        .iter()
                        .for_each(|a| self.trace_expr(a, span, t, depth + 1)),
                }
            }
            Expr::Call { name, args } if name == "$seam_clock_source" => {
                if let Some(Expr::Const { text, .. }) = args.first() {
                    let top_rel = text
                        .split_once('.')
                        .map(|(_, r)| r.to_string())
                        .unwrap_or(text.clone());
                    t.roots.insert(top_rel);
                }
            }
            Expr::Ternary { cond, then, other } => match self.pinned(cond) {
                Some(0) => self.trace_expr(other, span, t, depth + 1),
                Some(_) => self.trace_expr(then, span, t, depth + 1),
                None => {
                    self.trace_expr(then, span, t, depth + 1);
                    self.trace_expr(other, span, t, depth + 1);
                }
            },
            Expr::Ident { .. } | Expr::Select { .. } => {
                if let BitSrc::Copy(s, b) = self.g.bit_of(rhs, 0) {
                    self.trace_bit(s, b, t, depth);
                }
            }
            Expr::Binary { .. } => {
                // a plain-logic gate: inputs that reach a clock root are the clock, the rest enables
                let mut traced: Vec<(&Expr, ClockTrace)> = Vec::new();
                for op in operands(rhs) {
                    let mut sub = ClockTrace::default();
                    self.trace_expr(op, span, &mut sub, depth + 1);
                    traced.push((op, sub));
                }
                // several candidates: the ones named in `[clocks]` are the clock
                let named =
                    |c: &ClockTrace| c.roots.iter().any(|r| self.config.clocks.contains_key(r));
                let prefer_named = traced.iter().filter(|(_, c)| !c.roots.is_empty()).count() > 1
                    && traced.iter().any(|(_, c)| named(c));
                let mut clocks = Vec::new();
                let mut enables = Vec::new();
                for (op, c) in traced {
                    if c.roots.is_empty() || (prefer_named && !named(&c)) {
                        enables.push(op.clone());
                    } else {
                        clocks.push(c);
                    }
                }
                if clocks.is_empty() {
                    return;
                }
                t.gates.push((span.clone(), enables));
                for c in clocks {
                    t.roots.extend(c.roots);
                    t.derived.extend(c.derived);
                    t.gates.extend(c.gates);
                    t.nets.extend(c.nets);
                    t.inverted ^= c.inverted;
                }
            }
            _ => {}
        }
    }

    /// Value of a select under the `[constants]` pins, if it has one: a pinned net, a
    /// constant, or logic over them (`mode[2] == pkg::On`), followed through plain
    /// assignments. A select of a net pinned to 0 is 0 whatever its element width.
    pub fn pinned(&self, e: &Expr) -> Option<u64> {
        u64::try_from(self.pinned_at(e, 0)?).ok()
    }

    fn pinned_at(&self, e: &Expr, depth: u32) -> Option<i64> {
        if depth > 32 {
            return None;
        }
        let leaf = |x: &Expr| -> Option<Expr> {
            let v = self.pinned_at(x, depth + 1)?;
            Some(Expr::Const {
                text: v.to_string(),
                value: u64::try_from(v).ok(),
                width: None,
            })
        };
        let folded = match e {
            Expr::Const { value, .. } => return value.and_then(|v| i64::try_from(v).ok()),
            Expr::Ident { .. } => return self.pinned_net(e, depth),
            Expr::Select { base, sel } => {
                let b = self.pinned_at(base, depth + 1)?;
                if b == 0 {
                    return Some(0);
                }
                Expr::Select {
                    base: Box::new(leaf(base)?),
                    sel: sel.clone(),
                }
            }
            Expr::Unary { op, arg } => Expr::Unary {
                op: op.clone(),
                arg: Box::new(leaf(arg)?),
            },
            Expr::Binary { op, lhs, rhs } => Expr::Binary {
                op: op.clone(),
                lhs: Box::new(leaf(lhs)?),
                rhs: Box::new(leaf(rhs)?),
            },
            Expr::Ternary { cond, then, other } => {
                return match self.pinned_at(cond, depth + 1)? {
                    0 => self.pinned_at(other, depth + 1),
                    _ => self.pinned_at(then, depth + 1),
                }
            }
            _ => return None,
        };
        super::eval::eval(&folded, &Default::default())
    }

    /// A whole net: its `[constants]` pin, else the value of its one plain assignment.
    fn pinned_net(&self, e: &Expr, depth: u32) -> Option<i64> {
        let s = self.g.sig(e)?;
        let sig = &self.n.sigs[s];
        let rel = sig
            .name
            .split_once('.')
            .map(|(_, r)| r)
            .unwrap_or(&sig.name);
        if let Some(v) = self
            .config
            .constants
            .get(rel)
            .or_else(|| self.config.constants.get(&sig.local))
        {
            return crate::model::expr::literal_value(v)
                .0
                .and_then(|v| i64::try_from(v).ok());
        }
        match self.g.drivers.get(&s).map(|d| d.as_slice()) {
            Some([Driver::Comb(ci)]) if self.g.sig(&self.n.combs[*ci].target) == Some(s) => {
                let c = &self.n.combs[*ci];
                matches!(c.target, Expr::Ident { .. })
                    .then(|| self.pinned_at(&c.rhs, depth + 1))
                    .flatten()
            }
            _ => None,
        }
    }
}

/// Operands of a tree of binary logic operators. Any other binary operator (arithmetic, a
/// comparison) still splits into its two sides, so that tracing always makes progress.
fn operands(e: &Expr) -> Vec<&Expr> {
    fn logic(e: &Expr) -> Vec<&Expr> {
        match e {
            Expr::Binary { op, lhs, rhs }
                if matches!(op.as_str(), "&" | "|" | "^" | "&&" | "||") =>
            {
                let mut v = logic(lhs);
                v.extend(logic(rhs));
                v
            }
            _ => vec![e],
        }
    }
    match e {
        Expr::Binary { op, lhs, rhs } if !matches!(op.as_str(), "&" | "|" | "^" | "&&" | "||") => {
            vec![lhs.as_ref(), rhs.as_ref()]
        }
        _ => logic(e),
    }
}
