//! Evaluation of an expression as a function of one signal, with the bit-length rules of
//! IEEE 1800-2017 section 11.6 (context-determined operands, self-determined shift counts,
//! concatenations and comparisons; unsized literals are 32 bits). Gray-code recognition uses
//! it to check an encoder over every value of a counter instead of matching its spelling.
//!
//! Values are unsigned and at most 64 bits wide; anything else (wider values, signals other
//! than the variable, calls) makes the evaluation give up with `None`.

use crate::design::graph::{const_of, Driver};
use crate::design::netlist::SigId;
use crate::design::Ctx;
use std::cell::RefCell;
use std::collections::HashMap;

use crate::model::{Expr, Select};

pub use super::funcall::Frame;

pub(super) fn mask(w: u32) -> u64 {
    if w >= 64 {
        u64::MAX
    } else {
        (1u64 << w) - 1
    }
}

/// Width of a cast `N'(x)` whose type is a number.
fn cast_width(name: &str) -> Option<u32> {
    let t = name.strip_suffix('\'')?;
    t.trim().parse::<u32>().ok()
}

pub struct Eval<'c, 'a> {
    pub ctx: &'c Ctx<'a>,
    /// The variable and its value.
    pub var: SigId,
    pub x: u64,
    /// Combinational nets to inline (by their unguarded drivers); the variable stops it.
    pub inline: bool,
    /// The variables of the function being run (`%name` keys), if any.
    pub frame: Option<&'c Frame>,
    /// Values of inlined nets already computed for this `x` (a net read by several bits or
    /// several expressions is evaluated once).
    pub(super) memo: RefCell<HashMap<SigId, u64>>,
    /// Function statements executed so far (callers that evaluate many values cap the sum).
    pub spent: std::cell::Cell<u32>,
}

impl<'c, 'a> Eval<'c, 'a> {
    /// Evaluation with `var` = `x`, inlining combinational nets.
    pub fn new(ctx: &'c Ctx<'a>, var: SigId, x: u64) -> Self {
        Eval {
            ctx,
            var,
            x,
            inline: true,
            frame: None,
            memo: RefCell::default(),
            spent: Default::default(),
        }
    }

    fn sig_width(&self, s: SigId) -> Option<u32> {
        let w = self.ctx.n.sigs[s].width.unwrap_or(1);
        (w <= 64).then_some(w)
    }

    /// Self-determined width (IEEE 1800-2017 Table 11-21).
    pub fn selfw(&self, e: &Expr) -> Option<u32> {
        Some(match e {
            Expr::Ident { name, .. } if name.starts_with('%') => self.frame?.get(name)?.1,
            Expr::Ident { .. } => self.sig_width(self.ctx.g.sig(e)?)?,
            Expr::Select { sel, .. } => match self.ctx.g.width_of(e) {
                Some(w) => w,
                // bounds that depend on a loop variable of a function
                None => self.select_range(sel, 40)?.1,
            },
            Expr::Const { width, text, .. } => {
                if text.starts_with('\'')
                    && !text.contains(['b', 'h', 'd', 'o', 'B', 'H', 'D', 'O'])
                {
                    1 // '0 / '1 fill: extended to the context
                } else {
                    width.unwrap_or(32)
                }
            }
            Expr::Unary { op, arg } => match op.as_str() {
                "~" | "-" | "+" => self.selfw(arg)?,
                _ => 1,
            },
            Expr::Binary { op, lhs, rhs } => match op.as_str() {
                "==" | "!=" | "===" | "!==" | "<" | "<=" | ">" | ">=" | "&&" | "||" => 1,
                "<<" | ">>" | "<<<" | ">>>" | "**" => self.selfw(lhs)?,
                _ => self.selfw(lhs)?.max(self.selfw(rhs)?),
            },
            Expr::Ternary { then, other, .. } => self.selfw(then)?.max(self.selfw(other)?),
            Expr::Concat { parts } => {
                let mut w = 0u32;
                for p in parts {
                    w = w.checked_add(self.selfw(p)?)?;
                }
                w
            }
            Expr::Repl { count, parts } => {
                let c = u32::try_from(const_of(count)?).ok()?;
                let mut w = 0u32;
                for p in parts {
                    w = w.checked_add(self.selfw(p)?)?;
                }
                c.checked_mul(w)?
            }
            Expr::Call { name, .. } if self.ctx.n.funcs.contains_key(name) => {
                self.ctx.n.funcs[name].ret.width
            }
            Expr::Call { name, args } if args.len() == 1 => match cast_width(name) {
                Some(w) => w,
                None if name == "unsigned'" || name == "signed'" => self.selfw(&args[0])?,
                None => return None,
            },
            _ => return None,
        })
        .filter(|w| *w <= 64)
    }

    /// Value of `e` in a context of `w` bits (`w` at least its self-determined width).
    pub fn eval(&self, e: &Expr, w: u32, depth: u32) -> Option<u64> {
        if depth > 48 || w > 64 {
            return None;
        }
        let m = mask(w);
        let d = depth + 1;
        let v = match e {
            Expr::Ident { name, .. } if name.starts_with('%') => self.frame?.get(name)?.0,
            Expr::Ident { .. } => {
                let s = self.ctx.g.sig(e)?;
                self.signal(s, d)?
            }
            Expr::Select { base, sel } => {
                let (v, lsb) = match &**base {
                    Expr::Ident { name, .. } if name.starts_with('%') => {
                        let (v, _, lsb, _) = self.frame?.get(name)?;
                        (v, lsb)
                    }
                    Expr::Ident { .. } => {
                        let s = self.ctx.g.sig(base)?;
                        if self.ctx.n.sigs[s].memory {
                            return None;
                        }
                        (self.signal(s, d)?, self.ctx.n.sigs[s].lsb)
                    }
                    _ => return None,
                };
                let (lo, width) = self.select_range(sel, d)?;
                let sh = u32::try_from(lo - lsb).ok()?;
                if sh >= 64 {
                    0
                } else {
                    (v >> sh) & mask(width)
                }
            }
            Expr::Const { value, text, .. } => {
                if text == "'1" {
                    m
                } else {
                    (*value)?
                }
            }
            Expr::Unary { op, arg } => match op.as_str() {
                "~" => !self.eval(arg, w, d)?,
                "-" => self.eval(arg, w, d)?.wrapping_neg(),
                "+" => self.eval(arg, w, d)?,
                "!" => u64::from(self.self_eval(arg, d)? == 0),
                "&" | "~&" | "|" | "~|" | "^" | "~^" | "^~" => {
                    let aw = self.selfw(arg)?;
                    let a = self.eval(arg, aw, d)?;
                    let r = match op.trim_start_matches('~').trim_end_matches('~') {
                        "&" => a == mask(aw),
                        "|" => a != 0,
                        _ => a.count_ones() % 2 == 1,
                    };
                    u64::from(r ^ (op.starts_with('~') || op.ends_with('~')))
                }
                _ => return None,
            },
            Expr::Binary { op, lhs, rhs } => match op.as_str() {
                "+" => self.eval(lhs, w, d)?.wrapping_add(self.eval(rhs, w, d)?),
                "-" => self.eval(lhs, w, d)?.wrapping_sub(self.eval(rhs, w, d)?),
                "*" => self.eval(lhs, w, d)?.wrapping_mul(self.eval(rhs, w, d)?),
                "&" => self.eval(lhs, w, d)? & self.eval(rhs, w, d)?,
                "|" => self.eval(lhs, w, d)? | self.eval(rhs, w, d)?,
                "^" => self.eval(lhs, w, d)? ^ self.eval(rhs, w, d)?,
                "~^" | "^~" => !(self.eval(lhs, w, d)? ^ self.eval(rhs, w, d)?),
                "<<" | "<<<" | ">>" | ">>>" => {
                    let a = self.eval(lhs, w, d)?;
                    let n = self.self_eval(rhs, d)?;
                    match (op.as_str(), n >= 64) {
                        (_, true) => 0,
                        ("<<", _) | ("<<<", _) => a << n,
                        _ => a >> n,
                    }
                }
                "==" | "!=" | "===" | "!==" | "<" | "<=" | ">" | ">=" => {
                    let cw = self.selfw(lhs)?.max(self.selfw(rhs)?);
                    let (mut a, mut b) = (self.eval(lhs, cw, d)?, self.eval(rhs, cw, d)?);
                    if self.signed(lhs) && self.signed(rhs) {
                        // IEEE 1800-2017 11.8.1: signed only when both operands are;
                        // offsetting by the sign bit orders two's complement values
                        let flip = 1u64 << (cw.min(64) - 1);
                        a ^= flip;
                        b ^= flip;
                    }
                    u64::from(match op.as_str() {
                        "==" | "===" => a == b,
                        "!=" | "!==" => a != b,
                        "<" => a < b,
                        "<=" => a <= b,
                        ">" => a > b,
                        _ => a >= b,
                    })
                }
                "&&" => u64::from(self.self_eval(lhs, d)? != 0 && self.self_eval(rhs, d)? != 0),
                "||" => u64::from(self.self_eval(lhs, d)? != 0 || self.self_eval(rhs, d)? != 0),
                _ => return None,
            },
            Expr::Ternary { cond, then, other } => {
                if self.self_eval(cond, d)? != 0 {
                    self.eval(then, w, d)?
                } else {
                    self.eval(other, w, d)?
                }
            }
            Expr::Concat { parts } => self.concat(parts, d)?,
            Expr::Repl { count, parts } => {
                let c = const_of(count)?;
                let pw = self.selfw(&Expr::Concat {
                    parts: parts.clone(),
                })?;
                let one = self.concat(parts, d)?;
                let mut acc = 0u64;
                for _ in 0..c.clamp(0, 64) {
                    acc = if pw >= 64 { one } else { (acc << pw) | one };
                }
                acc
            }
            Expr::Call { name, args } if self.ctx.n.funcs.contains_key(name) => {
                self.call(&self.ctx.n.funcs[name], args, d)?
            }
            Expr::Call { name, args } if args.len() == 1 => {
                let cw = self.selfw(e)?;
                let aw = self.selfw(&args[0])?.max(cw);
                self.eval(&args[0], aw, d)? & mask(cw)
            }
            _ => return None,
        };
        Some(v & m)
    }

    /// `(lowest index, width)` of a select; bounds are constants, or (in a function body)
    /// expressions of its variables.
    pub(super) fn select_range(&self, sel: &Select, d: u32) -> Option<(i64, u32)> {
        Some(match sel {
            Select::Bit { index } => (self.index(index, d)?, 1),
            Select::Part { msb, lsb } => {
                let (a, b) = (self.index(msb, d)?, self.index(lsb, d)?);
                (a.min(b), u32::try_from((a - b).unsigned_abs() + 1).ok()?)
            }
            Select::Up { base, width } => (
                self.index(base, d)?,
                u32::try_from(self.index(width, d)?).ok()?,
            ),
            Select::Down { base, width } => {
                let wd = self.index(width, d)?;
                (self.index(base, d)? - wd + 1, u32::try_from(wd).ok()?)
            }
        })
    }

    /// An index value: a constant, or any expression that evaluates (a loop variable).
    fn index(&self, e: &Expr, d: u32) -> Option<i64> {
        if let Some(c) = const_of(e) {
            return Some(c);
        }
        let w = self.selfw(e)?;
        let v = self.eval(e, w, d)?;
        Some(if self.signed(e) && w < 64 && v >> (w - 1) & 1 == 1 {
            (v | !mask(w)) as i64
        } else {
            v as i64
        })
    }

    /// Signedness of an expression (IEEE 1800-2017 11.8.1): unsized decimal literals and
    /// integer-atom variables are signed; an operation is signed when all its operands are.
    pub(super) fn signed(&self, e: &Expr) -> bool {
        match e {
            Expr::Ident { name, .. } if name.starts_with('%') => {
                self.frame.and_then(|f| f.get(name)).is_some_and(|s| s.3)
            }
            Expr::Const { text, .. } => {
                text.bytes().all(|c| c.is_ascii_digit() || c == b'_') || text.contains("'s")
            }
            Expr::Unary { op, arg } if matches!(op.as_str(), "-" | "+" | "~") => self.signed(arg),
            Expr::Binary { op, lhs, rhs }
                if matches!(op.as_str(), "+" | "-" | "*" | "&" | "|" | "^") =>
            {
                self.signed(lhs) && self.signed(rhs)
            }
            Expr::Ternary { then, other, .. } => self.signed(then) && self.signed(other),
            _ => false,
        }
    }

    fn self_eval(&self, e: &Expr, d: u32) -> Option<u64> {
        let w = self.selfw(e)?;
        self.eval(e, w, d)
    }

    fn concat(&self, parts: &[Expr], d: u32) -> Option<u64> {
        let mut acc = 0u64;
        for p in parts {
            let pw = self.selfw(p)?;
            let v = self.eval(p, pw, d)?;
            acc = if pw >= 64 { v } else { (acc << pw) | v };
        }
        Some(acc)
    }

    /// Value of a whole signal: the variable, or a combinational net built bit by bit from
    /// its unguarded drivers.
    fn signal(&self, s: SigId, d: u32) -> Option<u64> {
        if s == self.var {
            return Some(self.x & mask(self.sig_width(s)?));
        }
        if !self.inline || self.ctx.g.is_reg(s) || d > 40 {
            return None;
        }
        if let Some(v) = self.memo.borrow().get(&s) {
            return Some(*v);
        }
        let w = self.sig_width(s)?;
        let ds = self.ctx.g.drivers.get(&s)?;
        let mut v = 0u64;
        for b in 0..w {
            let mut bit = None;
            for dr in ds {
                let (target, rhs) = match dr {
                    Driver::Comb(ci) => (&self.ctx.n.combs[*ci].target, &self.ctx.n.combs[*ci].rhs),
                    Driver::CombProc(pi, ai) => {
                        let a = &self.ctx.n.procs[*pi].assigns[*ai];
                        if !a.guards.is_empty() {
                            return None;
                        }
                        (&a.target, &a.rhs)
                    }
                };
                if let Some(off) = self.ctx.g.target_bit_offset(target, s, b) {
                    let cw = self.selfw(target)?.max(self.selfw(rhs)?);
                    let r = self.eval(rhs, cw, d)?;
                    bit = Some((r >> off) & 1);
                    break;
                }
            }
            v |= bit? << b;
        }
        self.memo.borrow_mut().insert(s, v);
        Some(v)
    }
}
