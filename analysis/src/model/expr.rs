//! The expression IR: a small, serializable form of SystemVerilog expressions.
//!
//! Expressions are parsed from the (preprocessed) source text of an expression node by a
//! small precedence-climbing parser of our own. That keeps the IR independent of sv-parser's
//! hundreds of node types, and anything we do not model becomes `Opaque` with the signals it
//! reads, so no dependency is ever lost.

use serde::{Deserialize, Serialize};

/// Byte range inside the text the expression was parsed from (made absolute by the caller).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, Default)]
pub struct Loc {
    pub start: u32,
    pub end: u32,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Expr {
    /// A (possibly hierarchical, dotted) name.
    Ident {
        name: String,
        loc: Loc,
    },
    /// `base[sel]`, `base[msb:lsb]`, `base[i +: w]`, `base[i -: w]`.
    Select {
        base: Box<Expr>,
        sel: Box<Select>,
    },
    /// A literal: `4'b1010`, `12`, `'0`, `"text"`, `1.5`.
    Const {
        text: String,
        value: Option<u64>,
        width: Option<u32>,
    },
    Unary {
        op: String,
        arg: Box<Expr>,
    },
    Binary {
        op: String,
        lhs: Box<Expr>,
        rhs: Box<Expr>,
    },
    Ternary {
        cond: Box<Expr>,
        then: Box<Expr>,
        other: Box<Expr>,
    },
    Concat {
        parts: Vec<Expr>,
    },
    Repl {
        count: Box<Expr>,
        parts: Vec<Expr>,
    },
    /// Function or system-function call, kept opaque: its value depends on all its args.
    Call {
        name: String,
        args: Vec<Expr>,
    },
    /// Something outside the IR (casts, streaming, patterns...): keeps the names it reads.
    Opaque {
        text: String,
        reads: Vec<Expr>,
    },
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Select {
    Bit { index: Expr },
    Part { msb: Expr, lsb: Expr },
    Up { base: Expr, width: Expr },
    Down { base: Expr, width: Expr },
}

impl Expr {
    /// Every identifier read by this expression, in source order (select indices included).
    pub fn idents(&self) -> Vec<&Expr> {
        let mut out = Vec::new();
        self.visit(&mut |e| {
            if let Expr::Ident { .. } = e {
                out.push(e);
            }
        });
        out
    }

    /// Names read by this expression.
    pub fn reads(&self) -> Vec<&str> {
        self.idents()
            .into_iter()
            .filter_map(|e| match e {
                Expr::Ident { name, .. } => Some(name.as_str()),
                _ => None,
            })
            .collect()
    }

    pub fn visit<'a>(&'a self, f: &mut dyn FnMut(&'a Expr)) {
        f(self);
        match self {
            Expr::Ident { .. } | Expr::Const { .. } => {}
            Expr::Select { base, sel } => {
                base.visit(f);
                match sel.as_ref() {
                    Select::Bit { index } => index.visit(f),
                    Select::Part { msb, lsb } => {
                        msb.visit(f);
                        lsb.visit(f)
                    }
                    Select::Up { base, width } | Select::Down { base, width } => {
                        base.visit(f);
                        width.visit(f)
                    }
                }
            }
            Expr::Unary { arg, .. } => arg.visit(f),
            Expr::Binary { lhs, rhs, .. } => {
                lhs.visit(f);
                rhs.visit(f)
            }
            Expr::Ternary { cond, then, other } => {
                cond.visit(f);
                then.visit(f);
                other.visit(f)
            }
            Expr::Concat { parts } => parts.iter().for_each(|p| p.visit(f)),
            Expr::Repl { count, parts } => {
                count.visit(f);
                parts.iter().for_each(|p| p.visit(f))
            }
            Expr::Call { args, .. } => args.iter().for_each(|p| p.visit(f)),
            Expr::Opaque { reads, .. } => reads.iter().for_each(|p| p.visit(f)),
        }
    }

    /// The identifier at the root of a (possibly selected) name, e.g. `q` for `q[3:0]`.
    pub fn base_name(&self) -> Option<&str> {
        match self {
            Expr::Ident { name, .. } => Some(name),
            Expr::Select { base, .. } => base.base_name(),
            _ => None,
        }
    }

    /// Shift every location by `delta` bytes (to make them absolute).
    pub fn shift(&mut self, delta: u32) {
        self.visit_mut(&mut |e| {
            if let Expr::Ident { loc, .. } = e {
                loc.start += delta;
                loc.end += delta;
            }
        });
    }

    fn visit_mut(&mut self, f: &mut dyn FnMut(&mut Expr)) {
        f(self);
        match self {
            Expr::Ident { .. } | Expr::Const { .. } => {}
            Expr::Select { base, sel } => {
                base.visit_mut(f);
                match sel.as_mut() {
                    Select::Bit { index } => index.visit_mut(f),
                    Select::Part { msb, lsb } => {
                        msb.visit_mut(f);
                        lsb.visit_mut(f)
                    }
                    Select::Up { base, width } | Select::Down { base, width } => {
                        base.visit_mut(f);
                        width.visit_mut(f)
                    }
                }
            }
            Expr::Unary { arg, .. } => arg.visit_mut(f),
            Expr::Binary { lhs, rhs, .. } => {
                lhs.visit_mut(f);
                rhs.visit_mut(f)
            }
            Expr::Ternary { cond, then, other } => {
                cond.visit_mut(f);
                then.visit_mut(f);
                other.visit_mut(f)
            }
            Expr::Concat { parts } => parts.iter_mut().for_each(|p| p.visit_mut(f)),
            Expr::Repl { count, parts } => {
                count.visit_mut(f);
                parts.iter_mut().for_each(|p| p.visit_mut(f))
            }
            Expr::Call { args, .. } => args.iter_mut().for_each(|p| p.visit_mut(f)),
            Expr::Opaque { reads, .. } => reads.iter_mut().for_each(|p| p.visit_mut(f)),
        }
    }
}

// ---------------------------------------------------------------- lexer

#[derive(Clone, Debug, PartialEq)]
enum Tok {
    Ident(String),
    Number(String),
    Str(String),
    Op(&'static str),
}

const OPS: &[&str] = &[
    "<<<=", ">>>=", "===", "!==", "==?", "!=?", "<<<", ">>>", "<->", "->", "<<=", ">>=", "**",
    "==", "!=", "<=", ">=", "&&", "||", "<<", ">>", "~&", "~|", "~^", "^~", "+:", "-:", "::", "'{",
    "(", ")", "[", "]", "{", "}", ",", "?", ":", "+", "-", "*", "/", "%", "&", "|", "^", "~", "!",
    "<", ">", ".", "'", "=", "#", "@", "$", ";",
];

fn lex(src: &str) -> Vec<(Tok, Loc)> {
    let b = src.as_bytes();
    let mut i = 0;
    let mut out = Vec::new();
    while i < b.len() {
        let c = b[i];
        if c.is_ascii_whitespace() {
            i += 1;
            continue;
        }
        if c == b'/' && b.get(i + 1) == Some(&b'/') {
            while i < b.len() && b[i] != b'\n' {
                i += 1;
            }
            continue;
        }
        if c == b'/' && b.get(i + 1) == Some(&b'*') {
            i += 2;
            while i + 1 < b.len() && !(b[i] == b'*' && b[i + 1] == b'/') {
                i += 1;
            }
            i = (i + 2).min(b.len());
            continue;
        }
        if c == b'(' && b.get(i + 1) == Some(&b'*') && b.get(i + 2) != Some(&b')') {
            // attribute instance (* ... *): skip
            i += 2;
            while i + 1 < b.len() && !(b[i] == b'*' && b[i + 1] == b')') {
                i += 1;
            }
            i = (i + 2).min(b.len());
            continue;
        }
        let start = i;
        if c == b'"' {
            i += 1;
            while i < b.len() && b[i] != b'"' {
                if b[i] == b'\\' {
                    i += 1;
                }
                i += 1;
            }
            i = (i + 1).min(b.len());
            out.push((Tok::Str(src[start..i].to_string()), loc(start, i)));
            continue;
        }
        if c.is_ascii_alphabetic() || c == b'_' || c == b'$' || c == b'\\' {
            if c == b'\\' {
                // escaped identifier: up to whitespace
                while i < b.len() && !b[i].is_ascii_whitespace() {
                    i += 1;
                }
            } else {
                while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_' || b[i] == b'$')
                {
                    i += 1;
                }
            }
            out.push((Tok::Ident(src[start..i].to_string()), loc(start, i)));
            continue;
        }
        if c.is_ascii_digit() || (c == b'\'' && is_based(b, i)) {
            i = lex_number(b, i);
            out.push((Tok::Number(src[start..i].to_string()), loc(start, i)));
            continue;
        }
        if c >= 0x80 {
            // stray non-ASCII text: skip the whole character
            let ch_len = src[i..].chars().next().map(|c| c.len_utf8()).unwrap_or(1);
            i += ch_len;
            continue;
        }
        let mut matched = false;
        for op in OPS {
            if src[i..].starts_with(op) {
                out.push((Tok::Op(op), loc(i, i + op.len())));
                i += op.len();
                matched = true;
                break;
            }
        }
        if !matched {
            i += 1;
        }
    }
    out
}

fn loc(s: usize, e: usize) -> Loc {
    Loc {
        start: s as u32,
        end: e as u32,
    }
}

fn is_based(b: &[u8], i: usize) -> bool {
    // 'b1010, 'h3F, '0, '1, 'x, 'z, 'sb...
    match b.get(i + 1) {
        Some(c) => {
            let c = c.to_ascii_lowercase();
            matches!(
                c,
                b'b' | b'o' | b'd' | b'h' | b's' | b'0' | b'1' | b'x' | b'z'
            )
        }
        None => false,
    }
}

fn lex_number(b: &[u8], mut i: usize) -> usize {
    // size part
    while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'_') {
        i += 1;
    }
    // real number
    if i < b.len() && b[i] == b'.' && b.get(i + 1).is_some_and(|c| c.is_ascii_digit()) {
        i += 1;
        while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_') {
            i += 1;
        }
        return i;
    }
    // allow whitespace between size and base: 4 'b1010
    let mut j = i;
    while j < b.len() && b[j] == b' ' {
        j += 1;
    }
    if j < b.len() && b[j] == b'\'' && is_based(b, j) {
        i = j + 1;
        if i < b.len() && (b[i] == b's' || b[i] == b'S') {
            i += 1;
        }
        if i < b.len() && matches!(b[i].to_ascii_lowercase(), b'b' | b'o' | b'd' | b'h') {
            i += 1;
            while i < b.len() && b[i] == b' ' {
                i += 1;
            }
        }
        while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_' || b[i] == b'?') {
            i += 1;
        }
    } else if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        i += 1;
        while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'-' || b[i] == b'+') {
            i += 1;
        }
    } else {
        // time literal suffix (ns, ps) or plain number
        while i < b.len() && b[i].is_ascii_alphabetic() {
            i += 1;
        }
    }
    i
}

/// Value and width of a literal, when it has no x/z bits and fits in 128 bits.
pub fn literal_value(text: &str) -> (Option<u64>, Option<u32>) {
    let t: String = text.chars().filter(|c| *c != '_' && *c != ' ').collect();
    let lower = t.to_ascii_lowercase();
    if let Some(pos) = lower.find('\'') {
        let width = lower[..pos].parse::<u32>().ok();
        let mut rest = &lower[pos + 1..];
        if rest.starts_with('s') {
            rest = &rest[1..];
        }
        let (radix, digits) = match rest.chars().next() {
            Some('b') => (2, &rest[1..]),
            Some('o') => (8, &rest[1..]),
            Some('d') => (10, &rest[1..]),
            Some('h') => (16, &rest[1..]),
            Some('0') if rest.len() == 1 => return (Some(0), width),
            Some('1') if rest.len() == 1 => {
                return (if width.is_none() { None } else { Some(1) }, width)
            }
            _ => return (None, width),
        };
        (u64::from_str_radix(digits, radix).ok(), width)
    } else {
        (lower.parse::<u64>().ok(), None)
    }
}

// ---------------------------------------------------------------- parser

struct Parser<'s> {
    toks: Vec<(Tok, Loc)>,
    pos: usize,
    src: &'s str,
    depth: u32,
}

/// Deepest nesting the expression parser follows; deeper input becomes `Opaque`.
const MAX_DEPTH: u32 = 200;

/// Parse an expression from source text. Never fails: unparsable text becomes `Opaque`
/// with every identifier it mentions.
pub fn parse_expr(src: &str) -> Expr {
    let toks = lex(src);
    let mut p = Parser {
        toks,
        pos: 0,
        src,
        depth: 0,
    };
    match p.expr() {
        Some(e) if p.pos == p.toks.len() => e,
        _ => opaque(src),
    }
}

/// An `Opaque` node for text we do not model: keeps every identifier-like token.
pub fn opaque(src: &str) -> Expr {
    let toks = lex(src);
    let mut reads = Vec::new();
    for (i, (t, l)) in toks.iter().enumerate() {
        if let Tok::Ident(name) = t {
            if is_keyword(name) || name.starts_with('$') {
                continue;
            }
            // skip member names after '.' and named-port style names
            if i > 0 && matches!(toks[i - 1].0, Tok::Op(".")) {
                continue;
            }
            reads.push(Expr::Ident {
                name: name.clone(),
                loc: *l,
            });
        }
    }
    Expr::Opaque {
        text: src.trim().to_string(),
        reads,
    }
}

fn is_keyword(s: &str) -> bool {
    matches!(
        s,
        "posedge"
            | "negedge"
            | "edge"
            | "or"
            | "and"
            | "iff"
            | "inside"
            | "dist"
            | "with"
            | "signed"
            | "unsigned"
            | "logic"
            | "bit"
            | "reg"
            | "int"
            | "integer"
            | "type"
            | "const"
            | "null"
            | "this"
            | "super"
            | "default"
            | "byte"
            | "shortint"
            | "longint"
    )
}

fn binary_prec(op: &str) -> Option<u8> {
    Some(match op {
        "||" | "->" | "<->" => 1,
        "&&" => 2,
        "|" => 3,
        "^" | "~^" | "^~" => 4,
        "&" => 5,
        "==" | "!=" | "===" | "!==" | "==?" | "!=?" => 6,
        "<" | "<=" | ">" | ">=" => 7,
        "<<" | ">>" | "<<<" | ">>>" => 8,
        "+" | "-" => 9,
        "*" | "/" | "%" => 10,
        "**" => 11,
        _ => return None,
    })
}

impl<'s> Parser<'s> {
    fn peek(&self) -> Option<&Tok> {
        self.toks.get(self.pos).map(|t| &t.0)
    }
    fn peek_op(&self) -> Option<&'static str> {
        match self.peek() {
            Some(Tok::Op(o)) => Some(o),
            _ => None,
        }
    }
    fn eat(&mut self, op: &str) -> bool {
        if self.peek_op() == Some(op) {
            self.pos += 1;
            true
        } else {
            false
        }
    }

    fn expr(&mut self) -> Option<Expr> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return None;
        }
        let r = self.ternary();
        self.depth -= 1;
        r
    }

    fn ternary(&mut self) -> Option<Expr> {
        let cond = self.binary(1)?;
        if self.eat("?") {
            let then = self.expr()?;
            if !self.eat(":") {
                return None;
            }
            let other = self.expr()?;
            return Some(Expr::Ternary {
                cond: Box::new(cond),
                then: Box::new(then),
                other: Box::new(other),
            });
        }
        Some(cond)
    }

    fn binary(&mut self, min: u8) -> Option<Expr> {
        let mut lhs = self.unary()?;
        loop {
            // `inside` and friends are outside the IR
            if let Some(Tok::Ident(k)) = self.peek() {
                if k == "inside" || k == "dist" {
                    return None;
                }
            }
            let Some(op) = self.peek_op() else { break };
            let Some(prec) = binary_prec(op) else { break };
            if prec < min {
                break;
            }
            self.pos += 1;
            // `**` is right-associative; the rest are left-associative
            let next = if op == "**" { prec } else { prec + 1 };
            let rhs = self.binary(next)?;
            lhs = Expr::Binary {
                op: op.to_string(),
                lhs: Box::new(lhs),
                rhs: Box::new(rhs),
            };
        }
        Some(lhs)
    }

    fn unary(&mut self) -> Option<Expr> {
        if let Some(op) = self.peek_op() {
            if matches!(
                op,
                "!" | "~" | "-" | "+" | "&" | "|" | "^" | "~&" | "~|" | "~^" | "^~"
            ) {
                self.pos += 1;
                self.depth += 1;
                if self.depth > MAX_DEPTH {
                    return None;
                }
                let arg = self.unary()?;
                self.depth -= 1;
                return Some(Expr::Unary {
                    op: op.to_string(),
                    arg: Box::new(arg),
                });
            }
        }
        self.postfix()
    }

    fn postfix(&mut self) -> Option<Expr> {
        let mut e = self.primary()?;
        while self.peek_op() == Some("[") {
            self.pos += 1;
            let a = self.expr()?;
            let sel = if self.eat(":") {
                let b = self.expr()?;
                Select::Part { msb: a, lsb: b }
            } else if self.eat("+:") {
                Select::Up {
                    base: a,
                    width: self.expr()?,
                }
            } else if self.eat("-:") {
                Select::Down {
                    base: a,
                    width: self.expr()?,
                }
            } else {
                Select::Bit { index: a }
            };
            if !self.eat("]") {
                return None;
            }
            e = Expr::Select {
                base: Box::new(e),
                sel: Box::new(sel),
            };
            // member access after a select (`a[0].b`) is outside the IR
            if self.peek_op() == Some(".") {
                return None;
            }
        }
        Some(e)
    }

    fn primary(&mut self) -> Option<Expr> {
        let (tok, l) = self.toks.get(self.pos)?.clone();
        match tok {
            Tok::Number(text) => {
                self.pos += 1;
                let (value, width) = literal_value(&text);
                Some(Expr::Const { text, value, width })
            }
            Tok::Str(text) => {
                self.pos += 1;
                Some(Expr::Const {
                    text,
                    value: None,
                    width: None,
                })
            }
            Tok::Ident(name) => {
                if is_keyword(&name) {
                    return None;
                }
                self.pos += 1;
                let mut full = name;
                let mut end = l.end;
                // hierarchical or package-scoped names: a.b.c, pkg::NAME
                loop {
                    match self.peek_op() {
                        Some(".") | Some("::") => {
                            let sep = self.peek_op().unwrap_or(".");
                            if let Some((Tok::Ident(n), nl)) = self.toks.get(self.pos + 1).cloned()
                            {
                                self.pos += 2;
                                full.push_str(sep);
                                full.push_str(&n);
                                end = nl.end;
                            } else {
                                return None;
                            }
                        }
                        _ => break,
                    }
                }
                if self.peek_op() == Some("(") {
                    // function call: opaque, depends on all args
                    self.pos += 1;
                    let mut args = Vec::new();
                    if !self.eat(")") {
                        loop {
                            args.push(self.expr()?);
                            if self.eat(")") {
                                break;
                            }
                            if !self.eat(",") {
                                return None;
                            }
                        }
                    }
                    return Some(Expr::Call { name: full, args });
                }
                if self.peek_op() == Some("'") {
                    // cast: type'(expr)
                    self.pos += 1;
                    let inner = self.paren()?;
                    return Some(Expr::Call {
                        name: format!("{full}'"),
                        args: vec![inner],
                    });
                }
                Some(Expr::Ident {
                    name: full,
                    loc: Loc {
                        start: l.start,
                        end,
                    },
                })
            }
            Tok::Op("(") => {
                let e = self.paren()?;
                if self.peek_op() == Some("'")
                    && matches!(self.toks.get(self.pos + 1), Some((Tok::Op("("), _)))
                {
                    // cast to a width given by an expression: (W-1)'(x)
                    self.pos += 1;
                    let inner = self.paren()?;
                    return Some(Expr::Call {
                        name: format!("({})'", render(&e)),
                        args: vec![inner],
                    });
                }
                Some(e)
            }
            Tok::Op("{") => {
                self.pos += 1;
                if self.eat("}") {
                    return Some(Expr::Concat { parts: vec![] });
                }
                let first = self.expr()?;
                if self.peek_op() == Some("{") {
                    // replication {n{...}}
                    self.pos += 1;
                    let mut parts = vec![self.expr()?];
                    while self.eat(",") {
                        parts.push(self.expr()?);
                    }
                    if !self.eat("}") || !self.eat("}") {
                        return None;
                    }
                    return Some(Expr::Repl {
                        count: Box::new(first),
                        parts,
                    });
                }
                let mut parts = vec![first];
                while self.eat(",") {
                    parts.push(self.expr()?);
                }
                if !self.eat("}") {
                    return None;
                }
                Some(Expr::Concat { parts })
            }
            Tok::Op("'") | Tok::Op("'{") => {
                // assignment pattern '{...}: opaque but keep its reads
                let start = l.start as usize;
                let mut depth = 0i32;
                let mut end = start;
                while let Some((t, tl)) = self.toks.get(self.pos) {
                    self.pos += 1;
                    end = tl.end as usize;
                    match t {
                        Tok::Op("{") | Tok::Op("'{") => depth += 1,
                        Tok::Op("}") => {
                            depth -= 1;
                            if depth <= 0 {
                                break;
                            }
                        }
                        _ => {}
                    }
                }
                let text = &self.src[start..end];
                let mut o = opaque(text);
                o.shift(start as u32);
                Some(o)
            }
            _ => None,
        }
    }

    fn paren(&mut self) -> Option<Expr> {
        if !self.eat("(") {
            return None;
        }
        let e = self.expr()?;
        // min:typ:max delays are outside the IR
        if !self.eat(")") {
            return None;
        }
        Some(e)
    }
}

/// Render an expression back to SystemVerilog text (used by quick fixes and messages).
pub fn render(e: &Expr) -> String {
    match e {
        Expr::Ident { name, .. } => name.clone(),
        Expr::Select { base, sel } => {
            let b = render(base);
            match sel.as_ref() {
                Select::Bit { index } => format!("{b}[{}]", render(index)),
                Select::Part { msb, lsb } => format!("{b}[{}:{}]", render(msb), render(lsb)),
                Select::Up { base: s, width } => format!("{b}[{} +: {}]", render(s), render(width)),
                Select::Down { base: s, width } => {
                    format!("{b}[{} -: {}]", render(s), render(width))
                }
            }
        }
        Expr::Const { text, .. } => text.clone(),
        Expr::Unary { op, arg } => format!("{op}{}", wrap(arg)),
        Expr::Binary { op, lhs, rhs } => format!("{} {op} {}", wrap(lhs), wrap(rhs)),
        Expr::Ternary { cond, then, other } => {
            format!("{} ? {} : {}", wrap(cond), wrap(then), wrap(other))
        }
        Expr::Concat { parts } => {
            format!(
                "{{{}}}",
                parts.iter().map(render).collect::<Vec<_>>().join(", ")
            )
        }
        Expr::Repl { count, parts } => format!(
            "{{{}{{{}}}}}",
            render(count),
            parts.iter().map(render).collect::<Vec<_>>().join(", ")
        ),
        Expr::Call { name, args } => {
            format!(
                "{name}({})",
                args.iter().map(render).collect::<Vec<_>>().join(", ")
            )
        }
        Expr::Opaque { text, .. } => text.clone(),
    }
}

fn wrap(e: &Expr) -> String {
    match e {
        Expr::Binary { .. } | Expr::Ternary { .. } => format!("({})", render(e)),
        _ => render(e),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn id(e: &Expr) -> &str {
        e.base_name().unwrap_or("?")
    }

    #[test]
    fn cast_to_an_expression_width() {
        let e = parse_expr("(W-1)'(x + 1)");
        let Expr::Call { name, args } = &e else {
            panic!("{e:?}")
        };
        assert_eq!(name, "(W - 1)'");
        assert_eq!(args.len(), 1);
        // a parenthesised expression without a cast stays what it is
        assert!(matches!(parse_expr("(a) + b"), Expr::Binary { .. }));
    }

    #[test]
    fn concat_shift_is_structured() {
        let e = parse_expr("{s[0], d}");
        let Expr::Concat { parts } = &e else {
            panic!("{e:?}")
        };
        assert_eq!(parts.len(), 2);
        assert!(matches!(&parts[0], Expr::Select { sel, .. } if matches!(**sel, Select::Bit{..})));
        assert_eq!(id(&parts[0]), "s");
        assert_eq!(id(&parts[1]), "d");
    }

    #[test]
    fn gray_code_expression() {
        let e = parse_expr("b ^ (b >> 1)");
        let Expr::Binary { op, lhs, rhs } = &e else {
            panic!()
        };
        assert_eq!(op, "^");
        assert_eq!(id(lhs), "b");
        assert!(matches!(&**rhs, Expr::Binary { op, .. } if op == ">>"));
    }

    #[test]
    fn precedence_and_ternary() {
        let e = parse_expr("a & b | c ? x + 1 : y");
        let Expr::Ternary { cond, then, .. } = &e else {
            panic!("{e:?}")
        };
        assert!(matches!(&**cond, Expr::Binary { op, .. } if op == "|"));
        assert!(matches!(&**then, Expr::Binary { op, .. } if op == "+"));
    }

    #[test]
    fn literals() {
        assert_eq!(literal_value("4'b1010"), (Some(10), Some(4)));
        assert_eq!(literal_value("8'hFF"), (Some(255), Some(8)));
        assert_eq!(literal_value("12"), (Some(12), None));
        assert_eq!(literal_value("1'bx").0, None);
        assert_eq!(literal_value("'0"), (Some(0), None));
        let e = parse_expr("{2{1'b1}}");
        assert!(matches!(e, Expr::Repl { .. }));
    }

    #[test]
    fn hierarchical_calls_and_opaque() {
        assert_eq!(parse_expr("u_a.q").reads(), vec!["u_a.q"]);
        assert_eq!(parse_expr("pkg::W").reads(), vec!["pkg::W"]);
        let e = parse_expr("$clog2(DEPTH) + f(a, b[2])");
        assert_eq!(e.reads(), vec!["DEPTH", "a", "b"]);
        let o = parse_expr("x inside {[1:3]}");
        assert!(matches!(o, Expr::Opaque { .. }));
        assert_eq!(o.reads(), vec!["x"]);
    }

    #[test]
    fn deep_nesting_is_bounded() {
        let src = format!("{}a{}", "(".repeat(5000), ")".repeat(5000));
        let e = parse_expr(&src);
        assert_eq!(e.reads(), vec!["a"]);
    }

    #[test]
    fn locations_point_at_names() {
        let src = "a + bb[3]";
        let e = parse_expr(src);
        let ids = e.idents();
        let Expr::Ident { loc, .. } = ids[1] else {
            panic!()
        };
        assert_eq!(&src[loc.start as usize..loc.end as usize], "bb");
    }

    #[test]
    fn render_round_trips() {
        for src in [
            "{s[0], d}",
            "b ^ (b >> 1)",
            "c + 1",
            "q[3:0]",
            "~q[2] & nxt[2]",
        ] {
            let e = parse_expr(src);
            assert_eq!(parse_expr(&render(&e)), e, "{src}");
        }
    }
}

impl Expr {
    /// Rewrite every identifier location (used to map preprocessed offsets to the file).
    pub fn map_locs(&mut self, f: &mut dyn FnMut(Loc) -> Loc) {
        self.visit_mut(&mut |e| {
            if let Expr::Ident { loc, .. } = e {
                *loc = f(*loc);
            }
        });
    }
}
