//! Drivers and readers of every flat signal, and bit-level views of expressions: what the
//! clock tracer and the CDC rules walk.

use std::collections::HashMap;

use super::netlist::{Netlist, SigId};
use crate::model::{Expr, Select};

/// What drives one bit of an expression.
#[derive(Clone, Debug, PartialEq)]
pub enum BitSrc {
    /// Exactly bit `.1` of signal `.0`, no logic.
    Copy(SigId, u32),
    Const(bool),
    /// Anything else.
    Logic,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Driver {
    /// `netlist.combs[i]`.
    Comb(usize),
    /// Assignment `.1` of combinational process `.0`.
    CombProc(usize, usize),
}

pub struct Graph<'n> {
    pub n: &'n Netlist,
    /// Clocked process that assigns each register.
    pub reg_proc: HashMap<SigId, usize>,
    pub drivers: HashMap<SigId, Vec<Driver>>,
}

impl<'n> Graph<'n> {
    pub fn new(n: &'n Netlist) -> Self {
        let mut g = Graph {
            n,
            reg_proc: HashMap::new(),
            drivers: HashMap::new(),
        };
        for (pi, p) in n.procs.iter().enumerate() {
            for (ai, a) in p.assigns.iter().enumerate() {
                for t in targets(&a.target) {
                    let Some(s) = g.sig(t) else { continue };
                    if p.clock.is_some() {
                        g.reg_proc.entry(s).or_insert(pi);
                    } else {
                        g.drivers
                            .entry(s)
                            .or_default()
                            .push(Driver::CombProc(pi, ai));
                    }
                }
            }
        }
        for (ci, c) in n.combs.iter().enumerate() {
            for t in targets(&c.target) {
                if let Some(s) = g.sig(t) {
                    g.drivers.entry(s).or_default().push(Driver::Comb(ci));
                }
            }
        }
        g
    }

    pub fn sig(&self, e: &Expr) -> Option<SigId> {
        e.base_name().and_then(|b| self.n.by_name.get(b).copied())
    }

    pub fn sig_named(&self, name: &str) -> Option<SigId> {
        self.n.by_name.get(name).copied()
    }

    pub fn is_reg(&self, s: SigId) -> bool {
        self.reg_proc.contains_key(&s)
    }

    pub fn width_of(&self, e: &Expr) -> Option<u32> {
        match e {
            Expr::Ident { .. } => self.sig(e).and_then(|s| self.n.sigs[s].width),
            Expr::Select { sel, .. } => match sel.as_ref() {
                Select::Bit { .. } => Some(1),
                Select::Part { msb, lsb } => {
                    let (m, l) = (const_of(msb)?, const_of(lsb)?);
                    Some((m - l).unsigned_abs() as u32 + 1)
                }
                Select::Up { width, .. } | Select::Down { width, .. } => {
                    const_of(width).map(|w| w as u32)
                }
            },
            Expr::Const { width, .. } => *width,
            Expr::Concat { parts } => parts.iter().map(|p| self.width_of(p)).sum(),
            Expr::Repl { count, parts } => {
                let c = const_of(count)? as u32;
                let w: Option<u32> = parts.iter().map(|p| self.width_of(p)).sum();
                Some(c * w?)
            }
            Expr::Unary { op, arg } if op == "~" || op == "-" || op == "+" => self.width_of(arg),
            Expr::Unary { .. } => Some(1),
            Expr::Binary { op, lhs, rhs } => match op.as_str() {
                "==" | "!=" | "===" | "!==" | "<" | "<=" | ">" | ">=" | "&&" | "||" => Some(1),
                "<<" | ">>" | "<<<" | ">>>" => self.width_of(lhs),
                _ => Some(self.width_of(lhs)?.max(self.width_of(rhs)?)),
            },
            Expr::Ternary { then, other, .. } => {
                Some(self.width_of(then)?.max(self.width_of(other)?))
            }
            _ => None,
        }
    }

    /// Bit `b` (0 = LSB) of an expression.
    pub fn bit_of(&self, e: &Expr, b: u32) -> BitSrc {
        match e {
            Expr::Ident { .. } => match self.sig(e) {
                Some(s) => match self.n.sigs[s].width {
                    Some(w) if b >= w => BitSrc::Const(false),
                    _ => BitSrc::Copy(s, b),
                },
                None => BitSrc::Logic,
            },
            Expr::Select { base, sel } => {
                let Some(s) = self.sig(base) else {
                    return BitSrc::Logic;
                };
                if !matches!(**base, Expr::Ident { .. }) || self.n.sigs[s].memory {
                    return BitSrc::Logic;
                }
                let lsb = self.n.sigs[s].lsb;
                match sel.as_ref() {
                    Select::Bit { index } => match const_of(index) {
                        Some(k) if b == 0 => BitSrc::Copy(s, (k - lsb).max(0) as u32),
                        Some(_) => BitSrc::Const(false),
                        None => BitSrc::Logic,
                    },
                    Select::Part { msb, lsb: l } => match (const_of(msb), const_of(l)) {
                        (Some(m), Some(l)) => {
                            let lo = m.min(l);
                            if (b as i64) <= (m - l).abs() {
                                BitSrc::Copy(s, (lo - lsb + b as i64).max(0) as u32)
                            } else {
                                BitSrc::Const(false)
                            }
                        }
                        _ => BitSrc::Logic,
                    },
                    Select::Up { base: st, width } => match (const_of(st), const_of(width)) {
                        (Some(st), Some(w)) if (b as i64) < w => {
                            BitSrc::Copy(s, (st - lsb + b as i64).max(0) as u32)
                        }
                        (Some(_), Some(_)) => BitSrc::Const(false),
                        _ => BitSrc::Logic,
                    },
                    Select::Down { base: st, width } => match (const_of(st), const_of(width)) {
                        (Some(st), Some(w)) if (b as i64) < w => {
                            BitSrc::Copy(s, (st - w + 1 - lsb + b as i64).max(0) as u32)
                        }
                        (Some(_), Some(_)) => BitSrc::Const(false),
                        _ => BitSrc::Logic,
                    },
                }
            }
            Expr::Const { value: Some(v), .. } => BitSrc::Const(b < 64 && (v >> b) & 1 == 1),
            Expr::Concat { parts } => {
                let mut off = 0u32;
                for p in parts.iter().rev() {
                    let Some(w) = self.width_of(p) else {
                        return BitSrc::Logic;
                    };
                    if b < off + w {
                        return self.bit_of(p, b - off);
                    }
                    off += w;
                }
                BitSrc::Const(false)
            }
            Expr::Repl { count, parts } => {
                let Some(c) = const_of(count) else {
                    return BitSrc::Logic;
                };
                let inner = Expr::Concat {
                    parts: parts.clone(),
                };
                let Some(w) = self.width_of(&inner) else {
                    return BitSrc::Logic;
                };
                if w == 0 || b >= w * c as u32 {
                    return BitSrc::Const(false);
                }
                self.bit_of(&inner, b % w)
            }
            _ => BitSrc::Logic,
        }
    }

    /// The driver of signal bit (s, b) through plain copies (aliases, port connections,
    /// buffers): the first signal bit that is a register, an input or driven by logic.
    pub fn through_copies(&self, s: SigId, b: u32) -> (SigId, u32, Vec<SigId>) {
        let mut hops = Vec::new();
        let (mut s, mut b) = (s, b);
        for _ in 0..256 {
            if self.is_reg(s) {
                break;
            }
            let Some(ds) = self.drivers.get(&s) else {
                break;
            };
            let mut next = None;
            for d in ds {
                let (target, rhs) = match d {
                    Driver::Comb(ci) => (&self.n.combs[*ci].target, &self.n.combs[*ci].rhs),
                    Driver::CombProc(pi, ai) => {
                        let a = &self.n.procs[*pi].assigns[*ai];
                        if !a.guards.is_empty() {
                            continue;
                        }
                        (&a.target, &a.rhs)
                    }
                };
                if let Some(tb) = self.target_bit_offset(target, s, b) {
                    if let BitSrc::Copy(ns, nb) = self.bit_of(rhs, tb) {
                        next = Some((ns, nb));
                    }
                    break;
                }
            }
            match next {
                Some((ns, nb)) if ns != s => {
                    hops.push(s);
                    s = ns;
                    b = nb;
                }
                _ => break,
            }
        }
        (s, b, hops)
    }

    /// Position of signal bit (s, b) within an assignment target, if the target covers it.
    pub fn target_bit_offset(&self, target: &Expr, s: SigId, b: u32) -> Option<u32> {
        match target {
            Expr::Ident { .. } => (self.sig(target)? == s).then_some(b),
            Expr::Select { base, .. } => {
                if self.sig(base)? != s {
                    return None;
                }
                // compare against the bits the select covers
                for i in 0..self.width_of(target).unwrap_or(1) {
                    if let BitSrc::Copy(ts, tb) = self.bit_of(target, i) {
                        if ts == s && tb == b {
                            return Some(i);
                        }
                    }
                }
                None
            }
            Expr::Concat { parts } => {
                let mut off = 0;
                for p in parts.iter().rev() {
                    let w = self.width_of(p)?;
                    if let Some(i) = self.target_bit_offset(p, s, b) {
                        return Some(off + i);
                    }
                    off += w;
                }
                None
            }
            _ => None,
        }
    }
}

pub fn const_of(e: &Expr) -> Option<i64> {
    match e {
        Expr::Const { value, .. } => value.map(|v| v as i64),
        Expr::Unary { op, arg } if op == "-" => const_of(arg).map(|v| -v),
        _ => None,
    }
}

/// Base targets of an assignment's left-hand side (`{a, b[1]}` → a, b[1]).
pub fn targets(e: &Expr) -> Vec<&Expr> {
    match e {
        Expr::Concat { parts } => parts.iter().flat_map(targets).collect(),
        _ => vec![e],
    }
}
