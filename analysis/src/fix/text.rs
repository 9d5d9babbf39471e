//! Text helpers shared by the fixes: lines, indentation, fresh names.

use std::collections::BTreeSet;

use crate::model::{Expr, ItemKind, Module};

/// `off` clamped into the text and moved back to a character boundary (a stale offset from
/// an older parse must not split a character).
fn clamp(text: &str, off: usize) -> usize {
    let mut off = off.min(text.len());
    while !text.is_char_boundary(off) {
        off -= 1;
    }
    off
}

/// Byte offset of the start of the line holding `off`.
pub fn line_start(text: &str, off: usize) -> usize {
    let off = clamp(text, off);
    text[..off].rfind(['\n', '\r']).map(|p| p + 1).unwrap_or(0)
}

/// Byte offset just past the end of the line holding `off` (its line break included).
pub fn line_end_incl(text: &str, off: usize) -> usize {
    let off = clamp(text, off);
    match text[off..].find(['\n', '\r']) {
        Some(p) => {
            let e = off + p;
            if text[e..].starts_with("\r\n") {
                e + 2
            } else {
                e + 1
            }
        }
        None => text.len(),
    }
}

/// The leading blanks of the line holding `off`.
pub fn indent_at(text: &str, off: usize) -> String {
    let s = line_start(text, off);
    text[s..]
        .chars()
        .take_while(|c| *c == ' ' || *c == '\t')
        .collect()
}

/// The file's line break (`\r\n` when the file uses it, else `\n`).
pub fn newline(text: &str) -> &'static str {
    if text.contains("\r\n") {
        "\r\n"
    } else {
        "\n"
    }
}

/// One level of indentation as the file writes it: a tab when indented lines start with tabs,
/// else the most common step between consecutive indentation depths (2 or 4 spaces usually).
pub fn indent_unit(text: &str) -> String {
    let mut tabs = 0;
    let mut spaces = 0;
    let mut steps = [0usize; 9];
    let mut prev = 0usize;
    for line in text.lines() {
        if line.trim().is_empty() {
            continue;
        }
        if line.starts_with('\t') {
            tabs += 1;
            continue;
        }
        let n = line.chars().take_while(|c| *c == ' ').count();
        if n > 0 {
            spaces += 1;
        }
        if n > prev && n - prev <= 8 {
            steps[n - prev] += 1;
        }
        prev = n;
    }
    if tabs > spaces {
        return "\t".into();
    }
    let best = (1..=8)
        .max_by_key(|i| (steps[*i], usize::MAX - *i))
        .unwrap_or(4);
    if steps[best] == 0 {
        return "    ".into();
    }
    " ".repeat(best)
}

/// Every name the module declares or uses (ports, declarations, parameters, instances,
/// process locals, every identifier read or written): a new name must avoid all of them.
pub fn names_in(m: &Module) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    let add_expr = |e: &Expr, out: &mut BTreeSet<String>| {
        for n in e.reads() {
            out.insert(n.to_string());
        }
    };
    for p in &m.ports {
        out.insert(p.name.clone());
    }
    for p in &m.params {
        out.insert(p.name.clone());
    }
    for it in m.all_items() {
        match &it.kind {
            ItemKind::Decl(d) => {
                out.insert(d.name.clone());
            }
            ItemKind::PortDecl(p) => {
                out.insert(p.name.clone());
            }
            ItemKind::Param(p) => {
                out.insert(p.name.clone());
            }
            ItemKind::Process(p) => {
                out.extend(p.locals.iter().cloned());
                for a in &p.assigns {
                    add_expr(&a.target, &mut out);
                    add_expr(&a.rhs, &mut out);
                    for g in &a.guards {
                        add_expr(&g.cond, &mut out);
                    }
                }
                for e in &p.events {
                    add_expr(&e.signal, &mut out);
                }
            }
            ItemKind::Assign(a) => {
                add_expr(&a.target, &mut out);
                add_expr(&a.rhs, &mut out);
            }
            ItemKind::Instance(i) => {
                out.insert(i.name.clone());
                for c in &i.connections {
                    if let Some(e) = &c.expr {
                        add_expr(e, &mut out);
                    }
                }
            }
            ItemKind::GenerateFor(g) => {
                out.insert(g.genvar.clone());
                if let Some(l) = &g.label {
                    out.insert(l.clone());
                }
            }
            ItemKind::GenerateIf(g) => out.extend(g.labels.iter().flatten().cloned()),
            ItemKind::Function(f) => {
                out.insert(f.name.clone());
            }
            ItemKind::Ignored { .. } => {}
        }
    }
    out
}

/// Whether `name` appears as a whole word anywhere in `text` (comments and macros included:
/// a name a macro body uses must not be taken either).
pub fn word_in(text: &str, name: &str) -> bool {
    let b = text.as_bytes();
    let is_w = |c: u8| c.is_ascii_alphanumeric() || c == b'_' || c == b'$';
    let mut from = 0;
    while let Some(i) = text[from..].find(name) {
        let at = from + i;
        let end = at + name.len();
        let before = at == 0 || !is_w(b[at - 1]);
        let after = end >= b.len() || !is_w(b[end]);
        if before && after {
            return true;
        }
        from = at + 1;
    }
    false
}

/// `count` fresh names `<stem>1 .. <stem>N` (with `<stem>` = `<base>_<suffix>`), numbered
/// again (`<base>_2_<suffix>1`...) until none is taken in the module or its file.
pub fn fresh_names(
    base: &str,
    suffix: &str,
    count: u32,
    taken: &BTreeSet<String>,
    text: &str,
) -> Vec<String> {
    for n in 1..1000u32 {
        let stem = if n == 1 {
            format!("{base}_{suffix}")
        } else {
            format!("{base}_{n}_{suffix}")
        };
        let names: Vec<String> = (1..=count).map(|k| format!("{stem}{k}")).collect();
        if names
            .iter()
            .all(|x| !taken.contains(x) && !word_in(text, x))
        {
            return names;
        }
    }
    (1..=count)
        .map(|k| format!("{base}_seam_{suffix}{k}"))
        .collect()
}

/// A name made of the characters of an expression text that may appear in an identifier
/// (`bus[3]` → `bus_3`, `u.x` → `u_x`).
pub fn ident_of(text: &str) -> String {
    let mut s: String = text
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    while s.contains("__") {
        s = s.replace("__", "_");
    }
    let s = s.trim_matches('_').to_string();
    if s.is_empty() || s.starts_with(|c: char| c.is_ascii_digit()) {
        format!("s_{s}")
    } else {
        s
    }
}

/// The byte range of a bit select written right after an identifier (`name [ 3 ]`): the end
/// of the closing bracket, when the text there is `[<index>]` with a plain number index.
pub fn bit_select_end(text: &str, ident_end: usize, index: i64) -> Option<usize> {
    let rest = text.get(ident_end..)?;
    let t = rest.trim_start();
    let skipped = rest.len() - t.len();
    let t = t.strip_prefix('[')?;
    let close = t.find(']')?;
    let inner = t[..close].trim();
    let v: i64 = if let Some((_, digits)) = inner.split_once("'d") {
        digits.trim().parse().ok()?
    } else {
        inner.replace('_', "").parse().ok()?
    };
    (v == index).then_some(ident_end + skipped + 1 + close + 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn indentation_follows_the_file() {
        assert_eq!(
            indent_unit("module m;\n  reg a;\n  always @* begin\n    a = 1;\n  end\nendmodule\n"),
            "  "
        );
        assert_eq!(indent_unit("module m;\n\treg a;\nendmodule\n"), "\t");
        assert_eq!(indent_unit("module m;\nendmodule\n"), "    ");
    }

    #[test]
    fn fresh_names_skip_taken_ones() {
        let mut taken = BTreeSet::new();
        taken.insert("x_sync2".to_string());
        assert_eq!(
            fresh_names("x", "sync", 2, &taken, ""),
            ["x_2_sync1", "x_2_sync2"]
        );
        // a name only a comment mentions is still avoided
        assert_eq!(
            fresh_names("y", "sync", 1, &BTreeSet::new(), "// y_sync1 is ours"),
            ["y_2_sync1"]
        );
    }

    #[test]
    fn bit_selects() {
        let t = "q <= bus [3] ;";
        assert_eq!(bit_select_end(t, 8, 3), Some(12));
        assert_eq!(bit_select_end(t, 8, 2), None);
        assert_eq!(ident_of("bus[3]"), "bus_3");
        assert_eq!(line_end_incl("a\r\nb", 0), 3);
        // a stale offset inside a character is moved back, never split
        assert_eq!(line_start("x\naé", 4), 2);
        assert_eq!(line_end_incl("aé\nb", 2), 4);
    }
}
