//! Derived clock → clock-enable strobe (`derived-clock`), DESIGN.md section 7.
//!
//! For a divider register `q` whose bit k clocks processes of the same module:
//! `wire [W-1:0] q_nxt = <next state, with its enable and synchronous reset>;` and
//! `wire q_rise = ~q[k] & q_nxt[k];` (`q_fall = q[k] & ~q_nxt[k]` for negedge users); each
//! process on the derived clock moves onto the parent clock and edge, guarded by the strobe
//! after its reset branch; reads of `q` in a moved body become `q_nxt` (the value the old
//! process saw, just after the parent edge). Registers that read only derived-domain
//! registers (and quasi-static inputs) behave cycle for cycle as before; reads of
//! parent-domain signals now see the value before the parent edge, one parent cycle
//! earlier than the old (racy) post-edge read. The title says so.

use std::collections::BTreeSet;

use serde::{Deserialize, Serialize};

use super::text::{indent_at, line_end_incl, line_start, names_in, newline, word_in};
use super::{Fix, ModelOf, TextEdit, TextOf};
use crate::finding::Finding;
use crate::model::{render, Edge, Expr, ItemKind, Module, Process};

/// What the design layer found for a flop-derived clock (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StrobeHint {
    pub file: String,
    pub module: String,
    /// The divider register as the module names it.
    pub divider: String,
    /// The bit used as the clock, as written in a select (`None` for a one-bit divider).
    pub bit: Option<i64>,
    /// `span.start` of the divider's process (on the parent clock).
    pub divider_proc: usize,
    /// `span.start` of every process clocked by the derived clock.
    pub procs: Vec<usize>,
}

fn top_process(m: &Module, start: usize) -> Option<&Process> {
    m.items.iter().find_map(|it| match &it.kind {
        ItemKind::Process(p) if p.span.start == start => Some(p),
        _ => None,
    })
}

fn edge_kw(e: Edge) -> Option<&'static str> {
    match e {
        Edge::Posedge => Some("posedge"),
        Edge::Negedge => Some("negedge"),
        Edge::Any => None,
    }
}

/// A name `<base>_<suffix>` (or `<base>_<suffix>_<n>`) used nowhere in the module or file.
fn fresh(base: &str, suffix: &str, taken: &BTreeSet<String>, text: &str) -> String {
    for n in 1..1000 {
        let c = if n == 1 {
            format!("{base}_{suffix}")
        } else {
            format!("{base}_{suffix}_{n}")
        };
        if !taken.contains(&c) && !word_in(text, &c) {
            return c;
        }
    }
    format!("{base}_seam_{suffix}")
}

pub fn fix<'m>(
    f: &Finding,
    h: &StrobeHint,
    files: &ModelOf<'m>,
    text_of: &TextOf,
) -> Result<Fix, String> {
    let model = files(&h.file).ok_or("the file is not in the design")?;
    let text = text_of(&h.file).ok_or("the file cannot be read")?;
    let m = model
        .modules
        .iter()
        .find(|m| m.name == h.module)
        .ok_or("the module is gone")?;
    let div = top_process(m, h.divider_proc)
        .ok_or("the divider's process sits inside a generate block")?;
    let pclock = div.clock.as_ref().ok_or("the divider has no clock")?;
    let pedge = edge_kw(pclock.edge).ok_or("the divider's clock has no edge")?;
    let pclk = render(&pclock.signal);
    let q = h.divider.as_str();

    // the next state: later assignments win; none taken means the register holds
    let mut nxt = q.to_string();
    for a in div.assigns.iter().filter(|a| !a.in_reset) {
        let targets_q = a.target.base_name() == Some(q);
        if !targets_q {
            continue;
        }
        if !matches!(a.target, Expr::Ident { .. }) {
            return Err(format!(
                "the next state of `{q}` cannot be extracted: a part of it is assigned (`{}`)",
                render(&a.target)
            ));
        }
        if a.blocking || a.in_loop {
            return Err(format!(
                "the next state of `{q}` cannot be extracted: blocking or loop assignment"
            ));
        }
        let rhs = render(&a.rhs);
        if a.guards.is_empty() {
            nxt = rhs;
        } else {
            let g: Vec<String> = a
                .guards
                .iter()
                .map(|g| {
                    let c = render(&g.cond);
                    if g.polarity {
                        format!("({c})")
                    } else {
                        format!("!({c})")
                    }
                })
                .collect();
            nxt = format!("({}) ? ({rhs}) : ({nxt})", g.join(" && "));
        }
    }
    if nxt == q {
        return Err(format!(
            "the next state of `{q}` cannot be extracted: no assignment found"
        ));
    }
    // explicit width, from the declaration
    let packed = m
        .all_items()
        .into_iter()
        .find_map(|it| match &it.kind {
            ItemKind::Decl(d) if d.name == q => Some(d.packed.clone()),
            ItemKind::PortDecl(p) if p.name == q => Some(p.packed.clone()),
            _ => None,
        })
        .or_else(|| {
            m.ports
                .iter()
                .find(|p| p.name == q)
                .map(|p| p.packed.clone())
        })
        .ok_or_else(|| format!("`{q}` has no declaration in the module"))?;
    let width = match packed.as_slice() {
        [] => String::new(),
        [r] => format!("[{}:{}] ", render(&r.msb), render(&r.lsb)),
        _ => return Err(format!("`{q}` has several packed dimensions")),
    };
    let taken = names_in(m);
    let nxt_name = fresh(q, "nxt", &taken, &text);
    let sel = |name: &str| match h.bit {
        Some(b) => format!("{name}[{b}]"),
        None => name.to_string(),
    };

    let mut edits = Vec::new();
    let mut strobes: Vec<(Edge, String)> = Vec::new();
    let mut procs: Vec<&Process> = Vec::new();
    for s in &h.procs {
        let p = top_process(m, *s)
            .ok_or("a process on the derived clock sits inside a generate block")?;
        let e = p.clock.as_ref().ok_or("a process has no clock")?.edge;
        if edge_kw(e).is_none() {
            return Err("a process on the derived clock has no edge".into());
        }
        if !strobes.iter().any(|(x, _)| *x == e) {
            let suffix = if e == Edge::Posedge { "rise" } else { "fall" };
            strobes.push((e, fresh(q, suffix, &taken, &text)));
        }
        procs.push(p);
    }
    if procs.is_empty() {
        return Err("no process on the derived clock".into());
    }
    for p in &procs {
        let e = p.clock.as_ref().map(|c| c.edge).unwrap_or(Edge::Posedge);
        let strobe = &strobes.iter().find(|(x, _)| *x == e).ok_or("strobe")?.1;
        edits.extend(move_process(
            &text, &h.file, p, pedge, &pclk, strobe, q, &nxt_name,
        )?);
    }

    // the wires: after the divider's process, or before the first moved process
    let first = procs.iter().map(|p| p.span.start).min().unwrap_or(0);
    let (at, ind) = if first > div.span.end {
        let at = line_start(&text, first);
        if !text[at..first].trim().is_empty() {
            return Err("a moved process does not start its line".into());
        }
        (at, indent_at(&text, first))
    } else {
        (
            line_end_incl(&text, div.span.end.saturating_sub(1)),
            indent_at(&text, div.span.start),
        )
    };
    let nl = newline(&text);
    let mut w = format!(
        "{ind}// clock enable instead of the clock derived from `{}` (quick fix){nl}",
        sel(q)
    );
    w.push_str(&format!("{ind}wire {width}{nxt_name} = {nxt};{nl}"));
    for (e, name) in &strobes {
        let (a, b) = if *e == Edge::Posedge {
            (format!("~{}", sel(q)), sel(&nxt_name))
        } else {
            (sel(q), format!("~{}", sel(&nxt_name)))
        };
        w.push_str(&format!("{ind}wire {name} = {a} & {b};{nl}"));
    }
    if first <= div.span.end {
        w.insert_str(0, nl);
    } else {
        w.push_str(nl);
    }
    edits.push(TextEdit {
        file: h.file.clone(),
        start: at,
        end: at,
        text: w,
    });
    Ok(Fix {
        title: format!(
            "Clock the `{}` logic from `{pclk}` with a clock enable (same cycles; parent-domain inputs are read one `{pclk}` cycle earlier)",
            sel(q)
        ),
        rule: f.rule.clone(),
        preferred: true,
        kind: "enable-strobe".into(),
        scope: format!("{}::{}", h.file, h.module),
        edits,
    })
}

/// Edits that move one process onto the parent clock under the strobe.
#[allow(clippy::too_many_arguments)]
fn move_process(
    text: &str,
    file: &str,
    p: &Process,
    pedge: &str,
    pclk: &str,
    strobe: &str,
    q: &str,
    nxt: &str,
) -> Result<Vec<TextEdit>, String> {
    let ed = |start: usize, end: usize, t: String| TextEdit {
        file: file.to_string(),
        start,
        end,
        text: t,
    };
    let body = text.get(p.span.start..p.span.end).ok_or("process span")?;
    let at = body.find('@').ok_or("no event control")? + p.span.start;
    let open = skip_ws(text, at + 1);
    if text.as_bytes().get(open) != Some(&b'(') {
        return Err("the event control is not `@(...)`".into());
    }
    let close = match_paren(text, open).ok_or("unbalanced event control")?;
    let mut events = format!("{pedge} {pclk}");
    for c in &p.async_controls {
        let sig = render(&c.signal);
        let ev = p
            .events
            .iter()
            .find(|e| render(&e.signal) == sig)
            .ok_or("an asynchronous control is not in the event list")?;
        events.push_str(&format!(
            " or {} {sig}",
            edge_kw(ev.edge).ok_or("reset edge")?
        ));
    }
    let mut out = vec![ed(open + 1, close, events)];
    // the statement that runs on a clock edge: after the reset branches
    let mut s = skip_ws(text, close + 1);
    for _ in 0..p.async_controls.len() {
        let (w, after) = word(text, s);
        if w != "if" {
            return Err("the reset branch is not an `if`".into());
        }
        let o = skip_ws(text, after);
        let c = match_paren(text, o).ok_or("unbalanced condition")?;
        let then_end = stmt_end(text, c + 1).ok_or("cannot read the reset branch")?;
        let e = skip_ws(text, then_end);
        let (w, after) = word(text, e);
        if w != "else" {
            return Err("the process has no branch after its reset".into());
        }
        s = skip_ws(text, after);
    }
    let end = stmt_end(text, s).ok_or("cannot read the process body")?;
    if end > p.span.end {
        return Err("cannot read the process body".into());
    }
    let (w, _) = word(text, s);
    if w == "begin" {
        out.push(ed(s, s, format!("if ({strobe}) ")));
    } else {
        out.push(ed(s, s, format!("if ({strobe}) begin ")));
        out.push(ed(end, end, " end".into()));
    }
    // reads of the divider inside the moved body see its post-edge value
    let mut seen = BTreeSet::new();
    for a in p.assigns.iter().filter(|a| !a.in_reset) {
        for e in std::iter::once(&a.rhs).chain(a.guards.iter().map(|g| &g.cond)) {
            for id in e.idents() {
                if let Expr::Ident { name, loc } = id {
                    let (st, en) = (loc.start as usize, loc.end as usize);
                    if name == q && st >= s && en <= end && seen.insert(st) {
                        if text.get(st..en) != Some(q) {
                            return Err(format!("`{q}` is read inside a macro"));
                        }
                        out.push(ed(st, en, nxt.to_string()));
                    }
                }
            }
        }
    }
    Ok(out)
}

// ------------------------------------------------------------ a small statement reader

fn skip_ws(t: &str, mut i: usize) -> usize {
    let b = t.as_bytes();
    loop {
        while i < b.len() && b[i].is_ascii_whitespace() {
            i += 1;
        }
        if t[i.min(t.len())..].starts_with("//") {
            while i < b.len() && b[i] != b'\n' {
                i += 1;
            }
        } else if t[i.min(t.len())..].starts_with("/*") {
            i = t[i + 2..]
                .find("*/")
                .map(|e| i + 2 + e + 2)
                .unwrap_or(b.len());
        } else if t[i.min(t.len())..].starts_with("(*") && !t[i..].starts_with("(*)") {
            i = t[i + 2..]
                .find("*)")
                .map(|e| i + 2 + e + 2)
                .unwrap_or(b.len());
        } else {
            return i;
        }
    }
}

fn is_w(c: u8) -> bool {
    c.is_ascii_alphanumeric() || c == b'_' || c == b'$'
}

/// The word at `i` and the offset after it.
fn word(t: &str, i: usize) -> (&str, usize) {
    let b = t.as_bytes();
    let mut e = i;
    while e < b.len() && is_w(b[e]) {
        e += 1;
    }
    (&t[i.min(e)..e], e)
}

/// The offset of the `)` matching the `(` at `open` (strings and comments skipped).
fn match_paren(t: &str, open: usize) -> Option<usize> {
    let b = t.as_bytes();
    let mut depth = 0i32;
    let mut i = open;
    while i < b.len() {
        match b[i] {
            b'"' => {
                i += 1;
                while i < b.len() && b[i] != b'"' {
                    i += if b[i] == b'\\' { 2 } else { 1 };
                }
            }
            b'/' if b.get(i + 1) == Some(&b'/') || b.get(i + 1) == Some(&b'*') => {
                i = skip_ws(t, i);
                continue;
            }
            b'(' | b'[' | b'{' => depth += 1,
            b')' | b']' | b'}' => {
                depth -= 1;
                if depth == 0 {
                    return (b[i] == b')').then_some(i);
                }
            }
            _ => {}
        }
        i += 1;
    }
    None
}

/// The end of the statement starting at or after `i` (just past its last character).
fn stmt_end(t: &str, i: usize) -> Option<usize> {
    stmt_end_at(t, i, 0)
}

fn stmt_end_at(t: &str, i: usize, depth: u32) -> Option<usize> {
    if depth > 200 {
        return None;
    }
    let i = skip_ws(t, i);
    let (w, after) = word(t, i);
    match w {
        "begin" | "fork" => {
            let close = if w == "begin" { "end" } else { "join" };
            let mut j = skip_label(t, after);
            loop {
                j = skip_ws(t, j);
                if j >= t.len() {
                    return None;
                }
                let (w2, a2) = word(t, j);
                if w2 == close || (close == "join" && (w2 == "join_any" || w2 == "join_none")) {
                    return Some(skip_label(t, a2));
                }
                j = stmt_end_at(t, j, depth + 1)?;
            }
        }
        "unique" | "unique0" | "priority" => stmt_end_at(t, after, depth + 1),
        "if" => {
            let o = skip_ws(t, after);
            let c = match_paren(t, o)?;
            let then_end = stmt_end_at(t, c + 1, depth + 1)?;
            let e = skip_ws(t, then_end);
            let (w2, a2) = word(t, e);
            if w2 == "else" {
                stmt_end_at(t, a2, depth + 1)
            } else {
                Some(then_end)
            }
        }
        "case" | "casez" | "casex" | "randcase" => {
            let mut j = after;
            let mut nest = 1;
            while j < t.len() {
                j = skip_ws(t, j);
                let (w2, a2) = word(t, j);
                if w2.is_empty() {
                    j += 1;
                    continue;
                }
                match w2 {
                    "case" | "casez" | "casex" | "randcase" => nest += 1,
                    "endcase" => {
                        nest -= 1;
                        if nest == 0 {
                            return Some(a2);
                        }
                    }
                    _ => {}
                }
                j = a2;
            }
            None
        }
        "for" | "while" | "repeat" => {
            let o = skip_ws(t, after);
            let c = match_paren(t, o)?;
            stmt_end_at(t, c + 1, depth + 1)
        }
        "forever" => stmt_end_at(t, after, depth + 1),
        _ => {
            // a simple statement: up to `;` outside brackets
            let b = t.as_bytes();
            let mut j = i;
            let mut d = 0i32;
            while j < b.len() {
                match b[j] {
                    b'"' => {
                        j += 1;
                        while j < b.len() && b[j] != b'"' {
                            j += if b[j] == b'\\' { 2 } else { 1 };
                        }
                    }
                    b'/' if b.get(j + 1) == Some(&b'/') || b.get(j + 1) == Some(&b'*') => {
                        j = skip_ws(t, j);
                        continue;
                    }
                    b'(' | b'[' | b'{' => d += 1,
                    b')' | b']' | b'}' => d -= 1,
                    b';' if d <= 0 => return Some(j + 1),
                    _ => {}
                }
                j += 1;
            }
            None
        }
    }
}

fn skip_label(t: &str, i: usize) -> usize {
    let j = skip_ws(t, i);
    if t[j.min(t.len())..].starts_with(':') && !t[j..].starts_with("::") {
        let k = skip_ws(t, j + 1);
        word(t, k).1
    } else {
        i
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn statements_end_where_they_should() {
        let t = "if (a) begin x <= 1; if (b) y <= 2; end else z <= {c, d}; tail";
        assert_eq!(&t[stmt_end(t, 0).unwrap()..], " tail");
        let t = "case (s) 2'd0: begin a <= 1; end default: a <= 0; endcase more";
        assert_eq!(&t[stmt_end(t, 0).unwrap()..], " more");
        let t = "begin : blk /* ; */ q <= d; // ;\n end : blk x";
        assert_eq!(&t[stmt_end(t, 0).unwrap()..], " x");
        assert_eq!(stmt_end("begin q <= d;", 0), None);
    }
}
