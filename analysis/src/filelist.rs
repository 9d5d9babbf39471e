//! `-f` style filelists, the default file set, and compile order.
//!
//! A filelist names one source file per line, relative to the filelist's own folder, plus
//! options:
//!
//! | line | meaning |
//! |---|---|
//! | `rtl/pump_ctrl.sv` | a source file (relative to this filelist's folder, or absolute) |
//! | `+incdir+DIR` / `+incdir+A+B` / `-I DIR` / `-IDIR` | include directories |
//! | `+define+NAME=VALUE` / `+define+NAME` / `+define+A=1+B` / `-D NAME[=VALUE]` | defines |
//! | `-f other.f` / `-F other.f` | a nested filelist, relative to the including filelist |
//! | `-v lib.v` | a library file, read like any source file |
//! | `// ...`, `# ...` | comments (at the start of a line or after white space) |
//!
//! `$VAR`, `${VAR}` and `$(VAR)` are replaced through a lookup the caller provides; an
//! undefined variable is an error. Several items may share a line; a path with spaces can be
//! written in double quotes. Other options (`-y DIR`, `+libext+.v`, `-sv`, ...) do not affect
//! the analysis: they are skipped and listed in [`FileList::ignored`] so the caller can say so.
//!
//! Nothing here touches the file system: the caller passes a closure that reads a file. Paths
//! are joined and normalized lexically (`a/./b/../c` → `a/c`), and a filelist that includes
//! itself, directly or through others, is an error.

use std::fmt;
use std::path::{Component, Path, PathBuf};

/// What a filelist (and the filelists it includes) contributes, in file order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct FileList {
    /// Source files, first occurrence kept.
    pub files: Vec<PathBuf>,
    /// Include directories, first occurrence kept.
    pub include_dirs: Vec<PathBuf>,
    /// Defines in order (a later one for the same name wins); `None` = defined without value.
    pub defines: Vec<(String, Option<String>)>,
    /// Options that were skipped because they do not affect the analysis.
    pub ignored: Vec<IgnoredOption>,
}

/// A filelist option that was skipped.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct IgnoredOption {
    pub file: PathBuf,
    pub line: usize,
    /// The option as written, with its argument when it takes one (`-y lib`).
    pub option: String,
}

/// A problem in a filelist. `line` is 1-based; 0 means the file as a whole (it could not be
/// read).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileListError {
    pub file: PathBuf,
    pub line: usize,
    pub message: String,
}

impl fmt::Display for FileListError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.line == 0 {
            write!(f, "{}: {}", self.file.display(), self.message)
        } else {
            write!(f, "{}:{}: {}", self.file.display(), self.line, self.message)
        }
    }
}

impl std::error::Error for FileListError {}

/// Deepest nesting of `-f` accepted.
const MAX_DEPTH: usize = 64;
/// Most filelists read in one parse (guards against a diamond of includes blowing up).
const MAX_FILELISTS: usize = 10_000;

/// Options that do not matter to the analysis but take an argument, which must be skipped too.
const IGNORED_WITH_ARGUMENT: &[&str] = &["-y", "-l", "-o", "-s", "-top", "-L", "-work"];

/// Parses the filelist at `path` and everything it includes. `read` returns a file's text;
/// `env` looks up environment variables.
pub fn parse_filelist(
    path: &Path,
    read: &mut dyn FnMut(&Path) -> std::io::Result<String>,
    env: &dyn Fn(&str) -> Option<String>,
) -> Result<FileList, FileListError> {
    let path = normalize(path);
    let text = read(&path).map_err(|e| FileListError {
        file: path.clone(),
        line: 0,
        message: format!("cannot read the filelist: {e}"),
    })?;
    let mut parser = Parser {
        read,
        env,
        out: FileList::default(),
        stack: Vec::new(),
        count: 1,
    };
    parser.parse(&path, &text)?;
    Ok(parser.out)
}

struct Parser<'r, 'e> {
    read: &'r mut dyn FnMut(&Path) -> std::io::Result<String>,
    env: &'e dyn Fn(&str) -> Option<String>,
    out: FileList,
    /// Filelists being read, outermost first (for cycle detection).
    stack: Vec<PathBuf>,
    count: usize,
}

impl Parser<'_, '_> {
    fn parse(&mut self, path: &Path, text: &str) -> Result<(), FileListError> {
        self.stack.push(path.to_path_buf());
        let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
        for (index, raw_line) in text.split('\n').enumerate() {
            let line = index + 1;
            let err = |message: String| FileListError {
                file: path.to_path_buf(),
                line,
                message,
            };
            let content = strip_comment(raw_line.strip_suffix('\r').unwrap_or(raw_line));
            let tokens = tokenize(content).map_err(err)?;
            let mut tokens = tokens.into_iter();
            while let Some(token) = tokens.next() {
                let token = expand(&token, self.env).map_err(err)?;
                let mut argument = |option: &str| -> Result<String, FileListError> {
                    let arg = tokens
                        .next()
                        .ok_or_else(|| err(format!("`{option}` needs an argument")))?;
                    expand(&arg, self.env).map_err(err)
                };
                match token.as_str() {
                    "-f" | "-F" => {
                        let name = argument(&token)?;
                        let nested = normalize(&dir.join(&name));
                        self.include(&nested, &name, path, line)?;
                    }
                    "-v" => {
                        let name = argument("-v")?;
                        push_unique(&mut self.out.files, normalize(&dir.join(name)));
                    }
                    "-I" => {
                        let name = argument("-I")?;
                        push_unique(&mut self.out.include_dirs, normalize(&dir.join(name)));
                    }
                    "-D" => {
                        let define = argument("-D")?;
                        let parsed = parse_define(&define).map_err(err)?;
                        self.out.defines.push(parsed);
                    }
                    t if IGNORED_WITH_ARGUMENT.contains(&t) => {
                        let arg = argument(t)?;
                        self.ignore(path, line, format!("{t} {arg}"));
                    }
                    t if t.starts_with("+incdir+") => {
                        let dirs: Vec<&str> = t["+incdir+".len()..]
                            .split('+')
                            .filter(|d| !d.is_empty())
                            .collect();
                        if dirs.is_empty() {
                            return Err(err("`+incdir+` names no directory".to_string()));
                        }
                        for d in dirs {
                            push_unique(&mut self.out.include_dirs, normalize(&dir.join(d)));
                        }
                    }
                    t if t.starts_with("+define+") => {
                        let items: Vec<&str> = t["+define+".len()..]
                            .split('+')
                            .filter(|d| !d.is_empty())
                            .collect();
                        if items.is_empty() {
                            return Err(err("`+define+` names no macro".to_string()));
                        }
                        for item in items {
                            let parsed = parse_define(item).map_err(err)?;
                            self.out.defines.push(parsed);
                        }
                    }
                    t if t.starts_with("-I") => {
                        push_unique(&mut self.out.include_dirs, normalize(&dir.join(&t[2..])));
                    }
                    t if t.starts_with("-D") => {
                        let parsed = parse_define(&t[2..]).map_err(err)?;
                        self.out.defines.push(parsed);
                    }
                    t if t.starts_with('-') || t.starts_with('+') => {
                        self.ignore(path, line, t.to_string());
                    }
                    t => push_unique(&mut self.out.files, normalize(&dir.join(t))),
                }
            }
        }
        self.stack.pop();
        Ok(())
    }

    fn include(
        &mut self,
        nested: &Path,
        written: &str,
        from: &Path,
        line: usize,
    ) -> Result<(), FileListError> {
        let err = |message: String| FileListError {
            file: from.to_path_buf(),
            line,
            message,
        };
        if let Some(start) = self.stack.iter().position(|p| p == nested) {
            let chain: Vec<String> = self.stack[start..]
                .iter()
                .chain(std::iter::once(&nested.to_path_buf()))
                .map(|p| p.display().to_string())
                .collect();
            return Err(err(format!("filelist cycle: {}", chain.join(" -> "))));
        }
        if self.stack.len() >= MAX_DEPTH {
            return Err(err(format!("filelists nested more than {MAX_DEPTH} deep")));
        }
        self.count += 1;
        if self.count > MAX_FILELISTS {
            return Err(err(format!("more than {MAX_FILELISTS} filelists included")));
        }
        let text = (self.read)(nested).map_err(|e| {
            err(format!(
                "cannot read filelist `{written}` ({}): {e}",
                nested.display()
            ))
        })?;
        self.parse(nested, &text)
    }

    fn ignore(&mut self, file: &Path, line: usize, option: String) {
        self.out.ignored.push(IgnoredOption {
            file: file.to_path_buf(),
            line,
            option,
        });
    }
}

fn push_unique(list: &mut Vec<PathBuf>, path: PathBuf) {
    if !list.contains(&path) {
        list.push(path);
    }
}

/// Cuts a `//` or `#` comment that starts the line or follows white space (outside quotes), so
/// that `+define+URL=http://x` keeps its value.
fn strip_comment(line: &str) -> &str {
    let mut in_quotes = false;
    let mut previous_is_space = true;
    for (i, c) in line.char_indices() {
        if c == '"' {
            in_quotes = !in_quotes;
        } else if !in_quotes
            && previous_is_space
            && (c == '#' || (c == '/' && line[i + 1..].starts_with('/')))
        {
            return &line[..i];
        }
        previous_is_space = c.is_whitespace();
    }
    line
}

/// Splits on white space; double quotes group (and are removed).
fn tokenize(line: &str) -> Result<Vec<String>, String> {
    let mut tokens = Vec::new();
    let mut current = String::new();
    let mut in_token = false;
    let mut in_quotes = false;
    for c in line.chars() {
        match c {
            '"' => {
                in_quotes = !in_quotes;
                in_token = true;
            }
            c if c.is_whitespace() && !in_quotes => {
                if in_token {
                    tokens.push(std::mem::take(&mut current));
                    in_token = false;
                }
            }
            c => {
                current.push(c);
                in_token = true;
            }
        }
    }
    if in_quotes {
        return Err("unterminated double quote".to_string());
    }
    if in_token {
        tokens.push(current);
    }
    Ok(tokens)
}

/// Replaces `$VAR`, `${VAR}` and `$(VAR)`. A `$` not followed by a name is kept.
fn expand(text: &str, env: &dyn Fn(&str) -> Option<String>) -> Result<String, String> {
    let mut out = String::new();
    let mut rest = text;
    while let Some(dollar) = rest.find('$') {
        out.push_str(&rest[..dollar]);
        let after = &rest[dollar + 1..];
        let (name, consumed) = match after.chars().next() {
            Some(open @ ('{' | '(')) => {
                let close = if open == '{' { '}' } else { ')' };
                let end = after
                    .find(close)
                    .ok_or_else(|| format!("unterminated `${open}` in `{text}`"))?;
                (&after[1..end], end + 1)
            }
            _ => {
                let end = after
                    .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
                    .unwrap_or(after.len());
                (&after[..end], end)
            }
        };
        if consumed == 0 {
            out.push('$');
            rest = after;
            continue;
        }
        if name.is_empty() || !name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_') {
            return Err(format!("bad variable name `{name}` in `{text}`"));
        }
        let value = env(name).ok_or_else(|| format!("undefined environment variable `{name}`"))?;
        out.push_str(&value);
        rest = &after[consumed..];
    }
    out.push_str(rest);
    Ok(out)
}

fn parse_define(item: &str) -> Result<(String, Option<String>), String> {
    let (name, value) = match item.split_once('=') {
        Some((n, v)) => (n, Some(v.to_string())),
        None => (item, None),
    };
    let mut chars = name.chars();
    let valid = matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '$');
    if !valid {
        return Err(format!("`{name}` is not a valid macro name"));
    }
    Ok((name.to_string(), value))
}

/// Lexical normalization: drops `.`, folds `name/..`; keeps leading `..` of relative paths.
fn normalize(path: &Path) -> PathBuf {
    let mut parts: Vec<Component<'_>> = Vec::new();
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir => match parts.last() {
                Some(Component::Normal(_)) => {
                    parts.pop();
                }
                Some(Component::RootDir) | Some(Component::Prefix(_)) => {}
                _ => parts.push(component),
            },
            other => parts.push(other),
        }
    }
    let normalized: PathBuf = parts.iter().collect();
    if normalized.as_os_str().is_empty() {
        PathBuf::from(".")
    } else {
        normalized
    }
}

/// Folder names whose contents are verification code, left out of the default file set.
const NON_RTL_FOLDERS: &[&str] = &["tb", "sim", "dv", "test"];

/// The files analysed when seam.toml names neither files nor a filelist: `.v` and `.sv` files
/// (headers `.vh`/`.svh` are only included, never compiled alone), minus anything under a
/// folder named `tb`, `sim`, `dv` or `test` at any depth below `root`; sorted, no duplicates.
pub fn default_file_set(all_paths: &[PathBuf], root: &Path) -> Vec<PathBuf> {
    let mut kept: Vec<PathBuf> = all_paths
        .iter()
        .filter(|path| {
            let source = path
                .extension()
                .and_then(|e| e.to_str())
                .is_some_and(|e| e.eq_ignore_ascii_case("v") || e.eq_ignore_ascii_case("sv"));
            if !source {
                return false;
            }
            let relative = path.strip_prefix(root).unwrap_or(path);
            let folders = relative
                .parent()
                .map(|p| p.components())
                .into_iter()
                .flatten();
            !folders.into_iter().any(|c| match c {
                Component::Normal(name) => name
                    .to_str()
                    .is_some_and(|n| NON_RTL_FOLDERS.iter().any(|f| f.eq_ignore_ascii_case(n))),
                _ => false,
            })
        })
        .cloned()
        .collect();
    kept.sort();
    kept.dedup();
    kept
}

/// Compile order without a filelist: files that define a package first, then the rest, each
/// group by path (ties keep their given order).
pub fn compile_order(mut files: Vec<(PathBuf, bool)>) -> Vec<PathBuf> {
    files.sort_by(|(a, a_pkg), (b, b_pkg)| b_pkg.cmp(a_pkg).then_with(|| a.cmp(b)));
    files.into_iter().map(|(path, _)| path).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::HashMap;

    /// An in-memory file system for the reader closure.
    struct Files(HashMap<PathBuf, String>);

    impl Files {
        fn new(files: &[(&str, &str)]) -> Files {
            Files(
                files
                    .iter()
                    .map(|(p, t)| (PathBuf::from(p), t.to_string()))
                    .collect(),
            )
        }
        fn parse(&self, top: &str, env: &[(&str, &str)]) -> Result<FileList, FileListError> {
            let env: HashMap<String, String> = env
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            let mut read = |p: &Path| {
                self.0.get(p).cloned().ok_or_else(|| {
                    std::io::Error::new(std::io::ErrorKind::NotFound, "no such file")
                })
            };
            parse_filelist(Path::new(top), &mut read, &|k| env.get(k).cloned())
        }
    }

    fn paths(list: &[&str]) -> Vec<PathBuf> {
        list.iter().map(PathBuf::from).collect()
    }

    #[test]
    fn files_relative_to_the_filelist_folder_with_comments_and_blanks() {
        let fs = Files::new(&[(
            "/w/rtl/files.f",
            "// pump controller sources\n\
             \n\
             pump_pkg.sv\n\
             # the core\n\
             core/pump_ctrl.sv   // trailing comment\n\
             ./core/../core/pump_fifo.sv\n\
             /abs/vendor/pump_phy.v\n\
             \t  core/pump_ctrl.sv\n",
        )]);
        let list = fs.parse("/w/rtl/files.f", &[]).unwrap();
        assert_eq!(
            list.files,
            paths(&[
                "/w/rtl/pump_pkg.sv",
                "/w/rtl/core/pump_ctrl.sv",
                "/w/rtl/core/pump_fifo.sv",
                "/abs/vendor/pump_phy.v",
            ])
        );
        assert!(list.include_dirs.is_empty() && list.defines.is_empty() && list.ignored.is_empty());
    }

    #[test]
    fn relative_filelist_path_and_parent_folders() {
        let fs = Files::new(&[("rtl/files.f", "../common/pump_pkg.sv\na.sv\n")]);
        let list = fs.parse("rtl/files.f", &[]).unwrap();
        assert_eq!(list.files, paths(&["common/pump_pkg.sv", "rtl/a.sv"]));
    }

    #[test]
    fn incdir_single_and_multiple() {
        let fs = Files::new(&[(
            "/w/f.f",
            "+incdir+include\n+incdir+inc/a+inc/b+\n-I inc/c\n-Iinc/d\n+incdir+include\n",
        )]);
        let list = fs.parse("/w/f.f", &[]).unwrap();
        assert_eq!(
            list.include_dirs,
            paths(&["/w/include", "/w/inc/a", "/w/inc/b", "/w/inc/c", "/w/inc/d"])
        );
    }

    #[test]
    fn defines_with_and_without_values() {
        let fs = Files::new(&[(
            "/w/f.f",
            "+define+SYNTHESIS\n+define+PUMP_W=8\n+define+A=1+B\n+define+EMPTY=\n\
             +define+URL=http://pump.example\n-D FAST=1\n-DSLOW\n",
        )]);
        let list = fs.parse("/w/f.f", &[]).unwrap();
        let d = |n: &str, v: Option<&str>| (n.to_string(), v.map(str::to_string));
        assert_eq!(
            list.defines,
            vec![
                d("SYNTHESIS", None),
                d("PUMP_W", Some("8")),
                d("A", Some("1")),
                d("B", None),
                d("EMPTY", Some("")),
                d("URL", Some("http://pump.example")),
                d("FAST", Some("1")),
                d("SLOW", None),
            ]
        );
    }

    #[test]
    fn nested_filelists_relative_to_the_including_one() {
        let fs = Files::new(&[
            ("/w/top.f", "-f rtl/rtl.f\ntop.sv\n-F ip/ip.f\n"),
            ("/w/rtl/rtl.f", "pump_ctrl.sv\n+incdir+inc\n-f ../ip/ip.f\n"),
            ("/w/ip/ip.f", "pump_phy.v\n"),
        ]);
        let list = fs.parse("/w/top.f", &[]).unwrap();
        // ip.f is included twice (a diamond, not a cycle); its file is kept once.
        assert_eq!(
            list.files,
            paths(&["/w/rtl/pump_ctrl.sv", "/w/ip/pump_phy.v", "/w/top.sv"])
        );
        assert_eq!(list.include_dirs, paths(&["/w/rtl/inc"]));
    }

    #[test]
    fn cycles_are_errors() {
        let fs = Files::new(&[
            ("/w/a.f", "a.sv\n-f sub/b.f\n"),
            ("/w/sub/b.f", "b.sv\n\n-f ../a.f\n"),
        ]);
        let e = fs.parse("/w/a.f", &[]).unwrap_err();
        assert_eq!(e.file, PathBuf::from("/w/sub/b.f"));
        assert_eq!(e.line, 3);
        assert_eq!(e.message, "filelist cycle: /w/a.f -> /w/sub/b.f -> /w/a.f");

        let fs = Files::new(&[("/w/self.f", "x.sv\n-f ./self.f\n")]);
        let e = fs.parse("/w/self.f", &[]).unwrap_err();
        assert_eq!(
            (e.line, e.message.as_str()),
            (2, "filelist cycle: /w/self.f -> /w/self.f")
        );
        assert_eq!(
            e.to_string(),
            "/w/self.f:2: filelist cycle: /w/self.f -> /w/self.f"
        );
    }

    #[test]
    fn environment_variables() {
        let fs = Files::new(&[
            ("/w/f.f", "$PUMP_IP/phy.v\n${PUMP_IP}/ctl.v\n$(PUMP_IP)/x.v\n+incdir+${INC}\n-f $SUB\ncost$.v\n"),
            ("/w/sub.f", "s.sv\n"),
        ]);
        let env = [("PUMP_IP", "/ip/pump"), ("INC", "inc"), ("SUB", "sub.f")];
        let list = fs.parse("/w/f.f", &env).unwrap();
        assert_eq!(
            list.files,
            paths(&[
                "/ip/pump/phy.v",
                "/ip/pump/ctl.v",
                "/ip/pump/x.v",
                "/w/s.sv",
                "/w/cost$.v"
            ])
        );
        assert_eq!(list.include_dirs, paths(&["/w/inc"]));

        let fs = Files::new(&[("/w/f.f", "a.v\n${NOPE}/b.v\n")]);
        let e = fs.parse("/w/f.f", &[]).unwrap_err();
        assert_eq!(
            (e.line, e.message.as_str()),
            (2, "undefined environment variable `NOPE`")
        );

        let fs = Files::new(&[("/w/f.f", "${PUMP_IP/b.v\n")]);
        let e = fs.parse("/w/f.f", &env).unwrap_err();
        assert_eq!(e.line, 1);
        assert!(e.message.starts_with("unterminated"), "{}", e.message);
    }

    #[test]
    fn bad_lines_are_errors_with_file_and_line() {
        let cases: &[(&str, usize, &str)] = &[
            ("a.v\n-f\n", 2, "`-f` needs an argument"),
            (
                "a.v\nb.v\n+define+9PUMP=1\n",
                3,
                "`9PUMP` is not a valid macro name",
            ),
            ("+incdir+\n", 1, "`+incdir+` names no directory"),
            ("+define+\n", 1, "`+define+` names no macro"),
            ("\"rtl/pump ctrl.sv\n", 1, "unterminated double quote"),
            (
                "a.v\n-f missing.f\n",
                2,
                "cannot read filelist `missing.f` (/w/missing.f): no such file",
            ),
        ];
        for (text, line, message) in cases {
            let fs = Files::new(&[("/w/f.f", text)]);
            let e = fs.parse("/w/f.f", &[]).unwrap_err();
            assert_eq!(e.file, PathBuf::from("/w/f.f"), "{text:?}");
            assert_eq!((e.line, e.message.as_str()), (*line, *message), "{text:?}");
        }
    }

    #[test]
    fn unreadable_top_filelist() {
        let fs = Files::new(&[]);
        let e = fs.parse("/w/none.f", &[]).unwrap_err();
        assert_eq!(e.line, 0);
        assert_eq!(
            e.to_string(),
            "/w/none.f: cannot read the filelist: no such file"
        );
    }

    #[test]
    fn other_options_are_skipped_and_listed() {
        let fs = Files::new(&[("/w/f.f", "-sv\n-y lib +libext+.v\na.v -timescale=1ns/1ps\n")]);
        let list = fs.parse("/w/f.f", &[]).unwrap();
        assert_eq!(list.files, paths(&["/w/a.v"]));
        let ignored: Vec<(usize, &str)> = list
            .ignored
            .iter()
            .map(|i| (i.line, i.option.as_str()))
            .collect();
        assert_eq!(
            ignored,
            vec![
                (1, "-sv"),
                (2, "-y lib"),
                (2, "+libext+.v"),
                (3, "-timescale=1ns/1ps")
            ]
        );
    }

    #[test]
    fn quotes_crlf_and_library_files() {
        let fs = Files::new(&[(
            "/w/f.f",
            "\"rtl/pump ctrl.sv\"\r\n-v lib/cells.v\r\n# c\r\n",
        )]);
        let list = fs.parse("/w/f.f", &[]).unwrap();
        assert_eq!(
            list.files,
            paths(&["/w/rtl/pump ctrl.sv", "/w/lib/cells.v"])
        );
    }

    #[test]
    fn comment_markers_inside_paths_are_kept() {
        assert_eq!(strip_comment("a.v // c"), "a.v ");
        assert_eq!(strip_comment("# all"), "");
        assert_eq!(strip_comment("+define+U=http://x"), "+define+U=http://x");
        assert_eq!(strip_comment("rtl/a#b.v"), "rtl/a#b.v");
        assert_eq!(strip_comment("\"a //b.v\""), "\"a //b.v\"");
    }

    #[test]
    fn deep_nesting_is_an_error_not_a_stack_overflow() {
        let mut files = Vec::new();
        for i in 0..100 {
            files.push((format!("/w/f{i}.f"), format!("-f f{}.f\n", i + 1)));
        }
        files.push(("/w/f100.f".to_string(), "a.v\n".to_string()));
        let refs: Vec<(&str, &str)> = files
            .iter()
            .map(|(a, b)| (a.as_str(), b.as_str()))
            .collect();
        let e = Files::new(&refs).parse("/w/f0.f", &[]).unwrap_err();
        assert!(e.message.contains("nested more than"), "{e}");
    }

    #[test]
    fn default_file_set_keeps_rtl_sources_only() {
        let root = Path::new("/w");
        let all = paths(&[
            "/w/rtl/pump_ctrl.sv",
            "/w/rtl/pump_defs.svh",
            "/w/rtl/pump_regs.vh",
            "/w/rtl/legacy/pump_phy.v",
            "/w/tb/pump_tb.sv",
            "/w/rtl/sim/model.v",
            "/w/ip/dv/deep/check.sv",
            "/w/Test/x.sv",
            "/w/rtl/testing/ok.sv",
            "/w/rtl/tb.sv",
            "/w/README.md",
            "/w/a.sv",
            "/w/rtl/pump_ctrl.sv",
        ]);
        assert_eq!(
            default_file_set(&all, root),
            paths(&[
                "/w/a.sv",
                "/w/rtl/legacy/pump_phy.v",
                "/w/rtl/pump_ctrl.sv",
                "/w/rtl/tb.sv",
                "/w/rtl/testing/ok.sv"
            ])
        );
        // The root itself may sit under a folder named like one of the excluded ones.
        let all = paths(&["/home/test/proj/rtl/a.sv", "/home/test/proj/sim/b.sv"]);
        assert_eq!(
            default_file_set(&all, Path::new("/home/test/proj")),
            paths(&["/home/test/proj/rtl/a.sv"])
        );
    }

    #[test]
    fn compile_order_puts_packages_first() {
        let order = compile_order(vec![
            (PathBuf::from("rtl/z_top.sv"), false),
            (PathBuf::from("rtl/pump_pkg.sv"), true),
            (PathBuf::from("rtl/a_ctrl.sv"), false),
            (PathBuf::from("common/bus_pkg.sv"), true),
        ]);
        assert_eq!(
            order,
            paths(&[
                "common/bus_pkg.sv",
                "rtl/pump_pkg.sv",
                "rtl/a_ctrl.sv",
                "rtl/z_top.sv"
            ])
        );
        assert!(compile_order(Vec::new()).is_empty());
    }

    #[test]
    fn normalization() {
        assert_eq!(normalize(Path::new("a/./b/../c")), PathBuf::from("a/c"));
        assert_eq!(
            normalize(Path::new("../x/../../y")),
            PathBuf::from("../../y")
        );
        assert_eq!(normalize(Path::new("/../a")), PathBuf::from("/a"));
        assert_eq!(normalize(Path::new("a/..")), PathBuf::from("."));
    }
}
