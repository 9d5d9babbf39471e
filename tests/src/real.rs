//! Real open-source RTL for the tests: OpenTitan and Ibex from the PyPI packages
//! `pythondata-misc-opentitan` and `pythondata-cpu-ibex` (fetched by tests/fetch-real-rtl into
//! tests/.cache/real, never committed), their `rtl` folders, and filelists a user would write.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::Command;

use crate::repo_root;

pub fn real_root() -> PathBuf {
    let root = repo_root().join("tests/.cache/real");
    if !root.join("pythondata_misc_opentitan").is_dir()
        || !root.join("pythondata_cpu_ibex").is_dir()
    {
        let st = Command::new(repo_root().join("tests/fetch-real-rtl"))
            .status()
            .expect("fetch-real-rtl");
        assert!(
            st.success(),
            "could not fetch the real RTL packages from PyPI"
        );
    }
    root
}

pub fn opentitan() -> PathBuf {
    real_root().join("pythondata_misc_opentitan")
}

fn skip_dir(p: &Path) -> bool {
    p.components().any(|c| {
        let s = c.as_os_str().to_string_lossy();
        matches!(
            s.as_ref(),
            "dv" | "pre_dv" | "tb" | "test" | "fpv" | "sim" | "lint" | "formal" | "examples"
        )
    })
}

/// Source files under folders named `rtl`, and the include dirs a user would set: those
/// folders plus every folder that holds a header (.svh/.vh).
pub fn rtl_files(base: &Path) -> (Vec<PathBuf>, Vec<PathBuf>) {
    let mut files = Vec::new();
    let mut dirs = Vec::new();
    for e in walkdir::WalkDir::new(base)
        .into_iter()
        .filter_map(|e| e.ok())
    {
        let p = e.path();
        if e.file_type().is_file()
            && matches!(
                p.extension().and_then(|x| x.to_str()),
                Some("svh") | Some("vh")
            )
        {
            if let Some(d) = p.parent() {
                dirs.push(d.to_path_buf());
            }
        }
        if skip_dir(p.strip_prefix(base).unwrap_or(p)) {
            continue;
        }
        if e.file_type().is_dir() && p.file_name().is_some_and(|n| n == "rtl") {
            dirs.push(p.to_path_buf());
        }
        if e.file_type().is_file()
            && p.components().any(|c| c.as_os_str() == "rtl")
            && matches!(
                p.extension().and_then(|x| x.to_str()),
                Some("sv") | Some("v")
            )
        {
            files.push(p.to_path_buf());
        }
    }
    files.sort();
    dirs.sort();
    dirs.dedup();
    (files, dirs)
}

pub fn defines_package(p: &Path) -> bool {
    std::fs::read_to_string(p)
        .map(|t| t.lines().any(|l| l.trim_start().starts_with("package ")))
        .unwrap_or(false)
}

fn words(text: &str) -> BTreeSet<&str> {
    text.split(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
        .filter(|w| !w.is_empty())
        .collect()
}

fn strip_line_comments(t: &str) -> String {
    t.lines()
        .map(|l| l.split("//").next().unwrap_or(""))
        .collect::<Vec<_>>()
        .join("\n")
}

/// A `-f` filelist for one top module, as a user would assemble it: the files that define
/// the top and, transitively, every module, interface or package whose name they mention;
/// packages first (a package after the packages it uses), then the rest by path; with
/// `+incdir+` for every rtl and header folder.
pub fn filelist_for(base: &Path, top: &str) -> Option<String> {
    let (files, dirs) = rtl_files(base);
    let mut text: BTreeMap<PathBuf, String> = BTreeMap::new();
    let mut defs: BTreeMap<String, PathBuf> = BTreeMap::new();
    let mut packages: BTreeSet<PathBuf> = BTreeSet::new();
    for p in &files {
        let t = strip_line_comments(&std::fs::read_to_string(p).unwrap_or_default());
        for l in t.lines() {
            let mut it = l.split_whitespace();
            let (Some(kw), Some(name)) = (it.next(), it.next()) else {
                continue;
            };
            if matches!(kw, "module" | "package" | "interface") {
                let name: String = name
                    .chars()
                    .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                    .collect();
                defs.entry(name).or_insert_with(|| p.clone());
                if kw == "package" {
                    packages.insert(p.clone());
                }
            }
        }
        text.insert(p.clone(), t);
    }
    let mut seen: BTreeSet<PathBuf> = BTreeSet::new();
    let mut todo = vec![defs.get(top)?.clone()];
    while let Some(p) = todo.pop() {
        if !seen.insert(p.clone()) {
            continue;
        }
        for w in words(&text[&p]) {
            if let Some(q) = defs.get(w) {
                if !seen.contains(q) {
                    todo.push(q.clone());
                }
            }
        }
    }
    // packages in dependency order
    fn place(
        p: &PathBuf,
        text: &BTreeMap<PathBuf, String>,
        defs: &BTreeMap<String, PathBuf>,
        packages: &BTreeSet<PathBuf>,
        order: &mut Vec<PathBuf>,
        stack: &mut Vec<PathBuf>,
    ) {
        if order.contains(p) || stack.contains(p) {
            return;
        }
        stack.push(p.clone());
        for w in words(&text[p]) {
            if let Some(q) = defs.get(w).filter(|q| packages.contains(*q) && *q != p) {
                place(q, text, defs, packages, order, stack);
            }
        }
        stack.pop();
        order.push(p.clone());
    }
    let mut order = Vec::new();
    for p in seen.iter().filter(|p| packages.contains(*p)) {
        place(p, &text, &defs, &packages, &mut order, &mut Vec::new());
    }
    order.extend(seen.iter().filter(|p| !packages.contains(*p)).cloned());
    let mut fl = String::new();
    for d in &dirs {
        fl.push_str(&format!("+incdir+{}\n", d.display()));
    }
    for f in &order {
        fl.push_str(&format!("{}\n", f.display()));
    }
    Some(fl)
}
