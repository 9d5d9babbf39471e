//! sv-parser wrapper: preprocess, guard, parse, and turn every failure into a located problem.
//!
//! Parsing is split in two phases so a caller can pipeline a compile order: `preprocess`
//! yields the macros the file leaves defined (carried into later files) even when the file
//! then fails to parse; `parse_preprocessed` builds the model. Stopping a runaway parse is the
//! caller's job (the `seam` binary runs this in a killable worker process).

mod extract;
pub mod position;

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sv_parser::{Define, DefineText, Defines, PreprocessedText};

use crate::model::{FileModel, Language, Problem, WaiverComment};
use position::LineIndex;

/// Limits applied before sv-parser sees the text.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ParseOptions {
    pub include_dirs: Vec<PathBuf>,
    pub max_file_bytes: usize,
    /// Deepest bracket / begin-end nesting handed to sv-parser (its recursion uses the stack).
    pub max_nesting: usize,
}

impl Default for ParseOptions {
    fn default() -> Self {
        ParseOptions {
            include_dirs: Vec::new(),
            max_file_bytes: 8_000_000,
            max_nesting: 256,
        }
    }
}

/// A macro definition in a form that can cross a process boundary.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct MacroDef {
    pub args: Vec<(String, Option<String>)>,
    pub body: Option<String>,
    /// Where it was defined: file and byte range.
    pub origin: Option<(PathBuf, usize, usize)>,
}

/// The macros in force at a point of the compile order.
#[derive(Clone, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct MacroTable {
    pub defs: BTreeMap<String, Option<MacroDef>>,
}

impl MacroTable {
    /// Plain `NAME` or `NAME=VALUE` defines (config, filelists, the default `SYNTHESIS`).
    pub fn with_defines<'a>(pairs: impl IntoIterator<Item = (&'a str, Option<&'a str>)>) -> Self {
        let mut t = MacroTable::default();
        for (k, v) in pairs {
            t.defs.insert(
                k.to_string(),
                Some(MacroDef {
                    args: vec![],
                    body: v.map(|s| s.to_string()),
                    origin: None,
                }),
            );
        }
        t
    }

    fn to_sv(&self) -> Defines {
        let mut d: Defines = HashMap::new();
        for (k, v) in &self.defs {
            let def = v.as_ref().map(|m| Define {
                identifier: k.clone(),
                arguments: m.args.clone(),
                text: m.body.as_ref().map(|b| DefineText {
                    text: b.clone(),
                    origin: m
                        .origin
                        .as_ref()
                        .map(|(p, s, e)| (p.clone(), sv_parser_pp::range::Range::new(*s, *e))),
                }),
            });
            d.insert(k.clone(), def);
        }
        d
    }

    fn from_sv(d: &Defines) -> Self {
        let mut t = MacroTable::default();
        for (k, v) in d {
            if k.starts_with("SV_COV_") {
                continue; // predefined by sv-parser in every file
            }
            t.defs.insert(
                k.clone(),
                v.as_ref().map(|d| MacroDef {
                    args: d.arguments.clone(),
                    body: d.text.as_ref().map(|t| t.text.clone()),
                    origin: d
                        .text
                        .as_ref()
                        .and_then(|t| t.origin.as_ref())
                        .map(|(p, r)| (p.clone(), r.begin, r.end)),
                }),
            );
        }
        t
    }
}

/// The result of the first phase.
pub struct Preprocessed {
    text: PreprocessedText,
    defines: Defines,
    pub macros_out: MacroTable,
}

/// Outcome of reading one file.
pub struct ParseOutput {
    pub model: FileModel,
    /// Macros in force after this file (input macros plus this file's).
    pub macros_out: MacroTable,
}

pub fn language_of(path: &str) -> Language {
    if path.ends_with(".sv") || path.ends_with(".svh") || path.ends_with(".svi") {
        Language::SystemVerilog
    } else {
        Language::Verilog
    }
}

fn empty_model(display: &str, text: &str) -> FileModel {
    FileModel {
        path: display.to_string(),
        language: language_of(display),
        modules: vec![],
        packages: vec![],
        problems: vec![],
        waivers: waiver_comments(display, text),
        includes: vec![],
    }
}

/// Decode bytes as UTF-8; a non-UTF-8 file is a problem located at its first bad byte.
pub fn decode<'b>(path: &str, bytes: &'b [u8]) -> Result<&'b str, Problem> {
    std::str::from_utf8(bytes).map_err(|e| {
        let good = e.valid_up_to();
        let text = std::str::from_utf8(&bytes[..good]).unwrap_or("");
        let ix = LineIndex::new(text);
        Problem {
            hint: false,
            span: ix.span(path, good, good),
            message: format!(
                "file is not UTF-8 text (invalid byte at offset {good}); not analysed"
            ),
        }
    })
}

/// Whole pipeline for one file: preprocess, guard, parse, extract.
///
/// `path` is what sv-parser reads includes relative to; `display` names the file in spans
/// (usually the path relative to the workspace root).
pub fn parse_file(
    path: &str,
    display: &str,
    bytes: &[u8],
    macros: &MacroTable,
    opts: &ParseOptions,
) -> ParseOutput {
    let text = match decode(display, bytes) {
        Ok(t) => t,
        Err(p) => {
            let mut m = empty_model(display, "");
            m.problems.push(p);
            return ParseOutput {
                model: m,
                macros_out: macros.clone(),
            };
        }
    };
    match preprocess(path, display, text, macros, opts) {
        Ok(pp) => {
            let macros_out = pp.macros_out.clone();
            let model = parse_preprocessed(path, display, text, pp, opts);
            ParseOutput { model, macros_out }
        }
        Err(problem) => {
            let mut m = empty_model(display, text);
            m.problems.push(*problem);
            ParseOutput {
                model: m,
                macros_out: macros.clone(),
            }
        }
    }
}

/// Phase 1: size limit and preprocessing.
pub fn preprocess(
    path: &str,
    display: &str,
    text: &str,
    macros: &MacroTable,
    opts: &ParseOptions,
) -> Result<Preprocessed, Box<Problem>> {
    let ix = LineIndex::new(text);
    if text.len() > opts.max_file_bytes {
        return Err(Box::new(Problem {
            hint: false,
            span: ix.span(display, 0, 0),
            message: format!(
                "file is {} bytes, over the limit of {} (`[design] max_file_bytes`); not analysed",
                text.len(),
                opts.max_file_bytes
            ),
        }));
    }
    let pre = macros.to_sv();
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        sv_parser::preprocess_str(text, path, &pre, &opts.include_dirs, false, false, 0, 0)
    }));
    match result {
        Ok(Ok((pp, defines))) => {
            let macros_out = MacroTable::from_sv(&defines);
            Ok(Preprocessed {
                text: pp,
                defines,
                macros_out,
            })
        }
        Ok(Err(e)) => Err(Box::new(locate_error(path, display, text, &e))),
        Err(_) => Err(Box::new(Problem {
            hint: false,
            span: ix.span(display, 0, 0),
            message: "the preprocessor failed on this file (internal panic); not analysed".into(),
        })),
    }
}

/// Phase 2: nesting guard, parse, and model extraction.
pub fn parse_preprocessed(
    path: &str,
    display: &str,
    text: &str,
    pp: Preprocessed,
    opts: &ParseOptions,
) -> FileModel {
    let mut model = empty_model(display, text);
    let ix = LineIndex::new(text);
    if text.trim().is_empty() {
        model.problems.push(Problem {
            hint: true,
            span: ix.span(display, 0, 0),
            message: "file is empty: no design units".into(),
        });
        return model;
    }
    if let Some((depth, pos)) = nesting_over(pp.text.text(), opts.max_nesting) {
        let orig = pp
            .text
            .origin(pos)
            .filter(|(p, _)| p.as_path() == Path::new(path))
            .map(|(_, o)| o);
        let at = orig.unwrap_or(0);
        model.problems.push(Problem { hint: false,
            span: ix.span(display, at, at),
            message: format!(
                "nesting deeper than {} levels (reaches {depth} after macro expansion); file not analysed",
                opts.max_nesting
            ),
        });
        return model;
    }
    model.includes = include_names(text)
        .into_iter()
        .map(|n| {
            let here = Path::new(path).parent().map(|d| d.join(&n));
            here.into_iter()
                .chain(opts.include_dirs.iter().map(|d| d.join(&n)))
                .find(|p| p.is_file())
                .map(|p| p.to_string_lossy().to_string())
                .unwrap_or(n)
        })
        .collect();
    let Preprocessed {
        text: pptext,
        defines,
        ..
    } = pp;
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        sv_parser::parse_sv_pp(pptext, defines, false)
    }));
    match result {
        Ok(Ok((tree, _))) => {
            let ex = extract::Extractor::new(path, display, text, &tree);
            let (modules, packages) = ex.run();
            model.modules = modules;
            model.packages = packages;
        }
        Ok(Err(e)) => model.problems.push(locate_error(path, display, text, &e)),
        Err(_) => model.problems.push(Problem {
            hint: false,
            span: ix.span(display, 0, 0),
            message: "the parser failed on this file (internal panic); not analysed".into(),
        }),
    }
    model
}

/// First point where bracket or begin/end nesting exceeds `limit`, skipping comments and strings.
fn nesting_over(text: &str, limit: usize) -> Option<(usize, usize)> {
    let b = text.as_bytes();
    let mut depth = 0usize;
    let mut max = 0usize;
    let mut first_over = None;
    let mut i = 0;
    while i < b.len() {
        let c = b[i];
        match c {
            b'/' if b.get(i + 1) == Some(&b'/') => {
                while i < b.len() && b[i] != b'\n' {
                    i += 1;
                }
                continue;
            }
            b'/' if b.get(i + 1) == Some(&b'*') => {
                i += 2;
                while i + 1 < b.len() && !(b[i] == b'*' && b[i + 1] == b'/') {
                    i += 1;
                }
                i += 2;
                continue;
            }
            b'"' => {
                i += 1;
                while i < b.len() && b[i] != b'"' && b[i] != b'\n' {
                    if b[i] == b'\\' {
                        i += 1;
                    }
                    i += 1;
                }
            }
            b'(' | b'[' | b'{' => depth += 1,
            b')' | b']' | b'}' => depth = depth.saturating_sub(1),
            c if c.is_ascii_alphabetic() || c == b'_' => {
                let s = i;
                while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_' || b[i] == b'$')
                {
                    i += 1;
                }
                match &text[s..i] {
                    "begin" | "fork" => depth += 1,
                    "end" | "join" | "join_any" | "join_none" => depth = depth.saturating_sub(1),
                    _ => {}
                }
                if depth > limit && first_over.is_none() {
                    first_over = Some(s);
                }
                max = max.max(depth);
                continue;
            }
            _ => {}
        }
        if depth > limit && first_over.is_none() {
            first_over = Some(i);
        }
        max = max.max(depth);
        i += 1;
    }
    first_over.map(|p| (max, p))
}

/// Give an sv-parser error a real location in this file.
fn locate_error(path: &str, display: &str, text: &str, e: &sv_parser::Error) -> Problem {
    use sv_parser::Error as E;
    let ix = LineIndex::new(text);
    let here = |p: &PathBuf| p.as_path() == Path::new(path);
    let (at, message) = match e {
        E::Parse(Some((p, pos))) if here(p) => (*pos, "syntax error".to_string()),
        E::Parse(Some((p, pos))) => (
            include_line(text, p).unwrap_or(0),
            format!(
                "syntax error in included file {} at byte {pos}",
                p.display()
            ),
        ),
        E::Parse(None) => (text.len(), "syntax error (unexpected end of file)".into()),
        E::Preprocess(Some((p, pos))) if here(p) => (*pos, "preprocessor error".into()),
        E::Preprocess(Some((p, pos))) => (
            include_line(text, p).unwrap_or(0),
            format!(
                "preprocessor error in included file {} at byte {pos}",
                p.display()
            ),
        ),
        E::Preprocess(None) => (0, "preprocessor error".into()),
        E::DefineNotFound(name) => (
            macro_use(text, name).unwrap_or(0),
            format!("macro `{name} is not defined (define it, or add it to `[design] defines`)"),
        ),
        E::DefineArgNotFound(name) => (
            macro_use(text, name).unwrap_or(0),
            format!("macro argument `{name}` is missing"),
        ),
        E::DefineNoArgs(name) => (
            macro_use(text, name).unwrap_or(0),
            format!("macro `{name} needs arguments"),
        ),
        E::Include { source } => return include_problem(display, text, source),
        E::File { path: p, .. } => (
            include_line(text, p).unwrap_or(0),
            format!("cannot read included file {}", p.display()),
        ),
        E::ReadUtf8(p) => (
            include_line(text, p).unwrap_or(0),
            format!("{} is not UTF-8 text", p.display()),
        ),
        E::ExceedRecursiveLimit => (
            first_include(text).unwrap_or(0),
            "include nesting too deep (an include cycle?)".into(),
        ),
        E::IncludeLine => (
            first_include(text).unwrap_or(0),
            "an `include line can't have other items".into(),
        ),
        E::Io(err) => (0, format!("I/O error: {err}")),
    };
    let at = at.min(text.len());
    let end = token_end(text, at);
    Problem {
        hint: false,
        span: ix.span(display, at, end),
        message,
    }
}

fn include_problem(path: &str, text: &str, source: &sv_parser::Error) -> Problem {
    use sv_parser::Error as E;
    let ix = LineIndex::new(text);
    let (at, message) = match source {
        E::File { path: p, .. } => (
            include_line(text, p)
                .or_else(|| first_include(text))
                .unwrap_or(0),
            format!(
                "included file {} not found (check `[design] include_dirs`)",
                p.display()
            ),
        ),
        E::ExceedRecursiveLimit => (
            first_include(text).unwrap_or(0),
            "include nesting too deep (an include cycle?)".into(),
        ),
        other => (
            first_include(text).unwrap_or(0),
            format!("in an included file: {other}"),
        ),
    };
    let end = token_end(text, at);
    Problem {
        hint: false,
        span: ix.span(path, at, end),
        message,
    }
}

fn token_end(text: &str, at: usize) -> usize {
    let b = text.as_bytes();
    let mut e = at;
    while e < b.len() && !b[e].is_ascii_whitespace() && e - at < 80 {
        e += 1;
    }
    while e > at && !text.is_char_boundary(e) {
        e -= 1;
    }
    e
}

/// Offset of the first `` `NAME `` use (not its `define).
fn macro_use(text: &str, name: &str) -> Option<usize> {
    let pat = format!("`{name}");
    let mut from = 0;
    while let Some(i) = text[from..].find(&pat) {
        let at = from + i;
        let after = text[at + pat.len()..].chars().next();
        if !after.is_some_and(|c| c.is_alphanumeric() || c == '_') {
            return Some(at);
        }
        from = at + pat.len();
    }
    None
}

fn first_include(text: &str) -> Option<usize> {
    text.find("`include")
}

/// The `include line naming this file (by file name).
fn include_line(text: &str, p: &Path) -> Option<usize> {
    let name = p.file_name()?.to_string_lossy().to_string();
    let mut from = 0;
    while let Some(i) = text[from..].find("`include") {
        let at = from + i;
        let line_end = text[at..].find('\n').map(|e| at + e).unwrap_or(text.len());
        if text[at..line_end].contains(&name) {
            return Some(at);
        }
        from = line_end;
    }
    None
}

/// File names of the `include directives in a text (comments are not skipped: a commented
/// include only adds a harmless cache-key entry).
fn include_names(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut from = 0;
    while let Some(i) = text[from..].find("`include") {
        let at = from + i + 8;
        let rest = text[at..].trim_start();
        let close = match rest.chars().next() {
            Some('"') => '"',
            Some('<') => '>',
            _ => {
                from = at;
                continue;
            }
        };
        if let Some(end) = rest[1..].find(close) {
            let name = rest[1..1 + end].to_string();
            if !out.contains(&name) {
                out.push(name);
            }
        }
        from = at;
    }
    out
}

/// `// seam: allow(rule-a, rule-b) reason` comments.
pub fn waiver_comments(path: &str, text: &str) -> Vec<WaiverComment> {
    let ix = LineIndex::new(text);
    let mut out = Vec::new();
    let mut from = 0;
    while let Some(i) = text[from..].find("seam:") {
        let at = from + i;
        from = at + 5;
        // must be inside a // comment on this line
        let line_start = text[..at].rfind(['\n', '\r']).map(|p| p + 1).unwrap_or(0);
        let Some(c) = text[line_start..at].find("//") else {
            continue;
        };
        let _ = c;
        let rest_end = text[at..]
            .find(['\n', '\r'])
            .map(|e| at + e)
            .unwrap_or(text.len());
        let rest = text[at + 5..rest_end].trim_start();
        let Some(args) = rest.strip_prefix("allow(") else {
            continue;
        };
        let Some(close) = args.find(')') else {
            continue;
        };
        let rules: Vec<String> = args[..close]
            .split(',')
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect();
        let reason = args[close + 1..].trim().to_string();
        let (line, _) = ix.line_col(at);
        out.push(WaiverComment {
            line,
            rules,
            reason,
            span: ix.span(path, line_start + c, rest_end),
        });
    }
    out
}

/// Quick textual check used for compile order: does this file define a package?
pub fn defines_package(text: &str) -> bool {
    text.lines().any(|l| {
        let t = l.trim_start();
        t.starts_with("package ") && !t.starts_with("package;")
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nesting_guard_finds_deep_parens() {
        let t = format!(
            "module m; assign a = {}b{}; endmodule",
            "(".repeat(300),
            ")".repeat(300)
        );
        assert!(nesting_over(&t, 256).is_some());
        assert!(nesting_over("module m; assign a = ((b)); endmodule", 256).is_none());
    }

    #[test]
    fn waivers_parse() {
        let w = waiver_comments("a.v", "x\n  // seam: allow(pulse-loss, derived-clock) held by sw\ny // seam: allow(gated-clock)\n");
        assert_eq!(w.len(), 2);
        assert_eq!(w[0].line, 2);
        assert_eq!(w[0].rules, vec!["pulse-loss", "derived-clock"]);
        assert_eq!(w[0].reason, "held by sw");
        assert_eq!(w[1].reason, "");
    }
}
