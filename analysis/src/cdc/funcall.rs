//! Running a function for [`Eval`]: arguments are evaluated in the caller, then the body's
//! statements are executed in order over a frame of the function's variables, with the
//! assignment width rules of IEEE 1800-2017 (10.7: the right-hand side is evaluated in the
//! wider of its own and the target's width, then truncated to the target). Anything the IR
//! marks unsupported, a write to a design signal, or a runaway loop gives up with `None`.

use std::cell::{Cell, RefCell};
use std::collections::HashMap;

use super::bitval::{mask, Eval};
use crate::design::netlist::{FFunc, FVar};
use crate::model::{Expr, Stmt};

/// Loop iterations and statements one call may execute.
const BUDGET: u32 = 200_000;
/// Nested calls (recursion gives up here).
const MAX_CALL_DEPTH: u32 = 16;

/// The variables of one running function: key → (value, width, lowest index, signed).
pub struct Frame {
    slots: RefCell<HashMap<String, (u64, u32, i64, bool)>>,
    budget: Cell<u32>,
    depth: u32,
    /// Key of the return value (the function's name).
    ret: String,
}

impl Frame {
    pub fn get(&self, key: &str) -> Option<(u64, u32, i64, bool)> {
        self.slots.borrow().get(key).copied()
    }

    fn set_bits(&self, key: &str, lo: i64, width: u32, v: u64) -> Option<()> {
        let mut slots = self.slots.borrow_mut();
        let slot = slots.get_mut(key)?;
        let sh = lo - slot.2;
        // a write outside the variable changes nothing (IEEE 1800-2017 7.4.6)
        if sh < 0 || sh >= i64::from(slot.1) {
            return Some(());
        }
        let sh = sh as u32;
        let m = (mask(width) << sh) & mask(slot.1);
        slot.0 = (slot.0 & !m) | ((v << sh) & m);
        Some(())
    }

    fn spend(&self) -> Option<()> {
        let b = self.budget.get().checked_sub(1)?;
        self.budget.set(b);
        Some(())
    }
}

enum Flow {
    Next,
    Return,
}

impl<'c, 'a> Eval<'c, 'a> {
    /// The value `f(args)` returns.
    pub(super) fn call(&self, f: &FFunc, args: &[Expr], d: u32) -> Option<u64> {
        let depth = self.frame.map_or(0, |fr| fr.depth) + 1;
        if args.len() != f.args.len() || depth > MAX_CALL_DEPTH {
            return None;
        }
        let mut slots = HashMap::new();
        let mut put = |v: &FVar, val: u64| {
            slots.insert(
                v.key.clone(),
                (val & mask(v.width), v.width, v.lsb, v.signed),
            );
        };
        for (a, v) in args.iter().zip(&f.args) {
            let w = self.selfw(a)?.max(v.width);
            put(v, self.eval(a, w, d)?);
        }
        // automatic variables start at zero (two-state view of their initial X)
        for v in f.locals.iter().chain(std::iter::once(&f.ret)) {
            put(v, 0);
        }
        let frame = Frame {
            slots: RefCell::new(slots),
            budget: Cell::new(self.frame.map_or(BUDGET, |fr| fr.budget.get())),
            depth,
            ret: f.ret.key.clone(),
        };
        let callee = Eval {
            ctx: self.ctx,
            var: self.var,
            x: self.x,
            inline: self.inline,
            frame: Some(&frame),
            memo: RefCell::default(),
            spent: Default::default(),
        };
        let start = frame.budget.get();
        let ran = callee.exec(&f.body, &frame, d);
        let used = start - frame.budget.get();
        self.spent.set(self.spent.get().saturating_add(used));
        if let Some(outer) = self.frame {
            outer.budget.set(frame.budget.get());
        }
        ran?;
        Some(frame.get(&f.ret.key)?.0)
    }

    fn exec(&self, body: &[Stmt], fr: &Frame, d: u32) -> Option<Flow> {
        for s in body {
            fr.spend()?;
            match s {
                Stmt::Assign { target, rhs } => {
                    let w = self.selfw(target)?.max(self.selfw(rhs)?);
                    let v = self.eval(rhs, w, d)?;
                    self.store(target, v, fr, d)?;
                }
                Stmt::If { cond, then, other } => {
                    let w = self.selfw(cond)?;
                    let branch = if self.eval(cond, w, d)? != 0 {
                        then
                    } else {
                        other
                    };
                    if let Flow::Return = self.exec(branch, fr, d)? {
                        return Some(Flow::Return);
                    }
                }
                Stmt::Case {
                    sel,
                    items,
                    default,
                } => {
                    let mut chosen = None;
                    'items: for (labels, b) in items {
                        for l in labels {
                            let w = self.selfw(sel)?.max(self.selfw(l)?);
                            if self.eval(sel, w, d)? == self.eval(l, w, d)? {
                                chosen = Some(b);
                                break 'items;
                            }
                        }
                    }
                    if let Flow::Return = self.exec(chosen.unwrap_or(default), fr, d)? {
                        return Some(Flow::Return);
                    }
                }
                Stmt::For {
                    init,
                    cond,
                    step,
                    body,
                } => {
                    self.exec(init, fr, d)?;
                    loop {
                        fr.spend()?;
                        let w = self.selfw(cond)?;
                        if self.eval(cond, w, d)? == 0 {
                            break;
                        }
                        if let Flow::Return = self.exec(body, fr, d)? {
                            return Some(Flow::Return);
                        }
                        self.exec(step, fr, d)?;
                    }
                }
                Stmt::Return { value } => {
                    if let Some(v) = value {
                        let e = Expr::Ident {
                            name: fr.ret.clone(),
                            loc: Default::default(),
                        };
                        let w = self.selfw(&e)?.max(self.selfw(v)?);
                        let val = self.eval(v, w, d)?;
                        self.store(&e, val, fr, d)?;
                    }
                    return Some(Flow::Return);
                }
                Stmt::Unsupported { .. } => return None,
            }
        }
        Some(Flow::Next)
    }

    /// Write the low bits of `v` to an assignment target of the frame.
    fn store(&self, target: &Expr, v: u64, fr: &Frame, d: u32) -> Option<()> {
        match target {
            Expr::Ident { name, .. } if name.starts_with('%') => {
                let (_, w, lsb, _) = fr.get(name)?;
                fr.set_bits(name, lsb, w, v)
            }
            Expr::Select { base, sel } => match &**base {
                Expr::Ident { name, .. } if name.starts_with('%') => {
                    let (lo, w) = self.select_range(sel, d)?;
                    fr.set_bits(name, lo, w, v)
                }
                _ => None,
            },
            Expr::Concat { parts } => {
                // the last part takes the lowest bits
                let mut at = 0u32;
                for p in parts.iter().rev() {
                    let w = self.selfw(p)?;
                    let part = if at >= 64 { 0 } else { v >> at };
                    self.store(p, part & mask(w), fr, d)?;
                    at = at.checked_add(w)?;
                }
                Some(())
            }
            // a design signal, a memory word: not something a function may change here
            _ => None,
        }
    }
}
