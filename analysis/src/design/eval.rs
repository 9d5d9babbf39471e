//! Constant evaluation of IR expressions (parameters, widths, generate bounds).

use std::collections::HashMap;

use crate::model::{Expr, Select};

pub type Env = HashMap<String, i64>;

/// Value of a constant expression under `env`, or `None` when it is not constant.
pub fn eval(e: &Expr, env: &Env) -> Option<i64> {
    eval_d(e, env, 0)
}

fn eval_d(e: &Expr, env: &Env, depth: u32) -> Option<i64> {
    if depth > 64 {
        return None;
    }
    let ev = |x: &Expr| eval_d(x, env, depth + 1);
    Some(match e {
        Expr::Const { value, .. } => (*value)? as i64,
        Expr::Ident { name, .. } => {
            let short = name.rsplit("::").next().unwrap_or(name);
            *env.get(name).or_else(|| env.get(short))?
        }
        Expr::Unary { op, arg } => {
            let a = ev(arg)?;
            match op.as_str() {
                "-" => a.checked_neg()?,
                "+" => a,
                "!" => (a == 0) as i64,
                "~" => !a,
                _ => return None,
            }
        }
        Expr::Binary { op, lhs, rhs } => {
            let a = ev(lhs)?;
            let b = ev(rhs)?;
            match op.as_str() {
                "+" => a.checked_add(b)?,
                "-" => a.checked_sub(b)?,
                "*" => a.checked_mul(b)?,
                "/" => a.checked_div(b)?,
                "%" => a.checked_rem(b)?,
                "**" => a.checked_pow(u32::try_from(b).ok()?)?,
                "<<" | "<<<" => a.checked_shl(u32::try_from(b).ok()?)?,
                ">>" | ">>>" => a.checked_shr(u32::try_from(b).ok()?)?,
                "==" | "===" => (a == b) as i64,
                "!=" | "!==" => (a != b) as i64,
                "<" => (a < b) as i64,
                "<=" => (a <= b) as i64,
                ">" => (a > b) as i64,
                ">=" => (a >= b) as i64,
                "&&" => (a != 0 && b != 0) as i64,
                "||" => (a != 0 || b != 0) as i64,
                "&" => a & b,
                "|" => a | b,
                "^" => a ^ b,
                _ => return None,
            }
        }
        Expr::Ternary { cond, then, other } => {
            if ev(cond)? != 0 {
                ev(then)?
            } else {
                ev(other)?
            }
        }
        Expr::Call { name, args } if name == "$clog2" && args.len() == 1 => {
            let v = ev(&args[0])?;
            if v <= 1 {
                0
            } else {
                64 - ((v - 1) as u64).leading_zeros() as i64
            }
        }
        Expr::Call { name, args }
            if (name == "$bits" || name.ends_with('\'')) && args.len() == 1 =>
        {
            // casts keep the value; $bits of a constant is not modelled
            if name == "$bits" {
                return None;
            }
            ev(&args[0])?
        }
        Expr::Select { base, sel } => {
            let v = ev(base)?;
            match sel.as_ref() {
                Select::Bit { index } => (v >> ev(index)?) & 1,
                Select::Part { msb, lsb } => {
                    let (m, l) = (ev(msb)?, ev(lsb)?);
                    let w = (m - l + 1).clamp(0, 63);
                    (v >> l) & ((1i64 << w) - 1)
                }
                _ => return None,
            }
        }
        _ => return None,
    })
}

/// Width of a packed range list `[m:l][...]`: product of the dimension sizes.
pub fn width(ranges: &[crate::model::Range], env: &Env) -> Option<u32> {
    let mut w: u64 = 1;
    for r in ranges {
        let m = eval(&r.msb, env)?;
        let l = eval(&r.lsb, env)?;
        w = w.checked_mul((m - l).unsigned_abs() + 1)?;
    }
    u32::try_from(w).ok()
}

/// Least significant index of the first (outermost) packed range, for bit numbering.
pub fn lsb(ranges: &[crate::model::Range], env: &Env) -> i64 {
    match ranges.first() {
        Some(r) if ranges.len() == 1 => {
            let m = eval(&r.msb, env).unwrap_or(0);
            let l = eval(&r.lsb, env).unwrap_or(0);
            m.min(l)
        }
        _ => 0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_expr;

    #[test]
    fn evaluates_parameters_and_clog2() {
        let mut env = Env::new();
        env.insert("DEPTH".into(), 16);
        assert_eq!(eval(&parse_expr("$clog2(DEPTH) - 1"), &env), Some(3));
        assert_eq!(eval(&parse_expr("DEPTH > 8 ? 2 : 1"), &env), Some(2));
        assert_eq!(eval(&parse_expr("x + 1"), &env), None);
        assert_eq!(eval(&parse_expr("4'b1010"), &env), Some(10));
    }
}
