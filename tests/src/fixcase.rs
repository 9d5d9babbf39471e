//! Helpers shared by the quick-fix tests (`tests/tests/fix_*.rs`): a fixture case is a folder
//! under `tests/fixtures/fix/<kind>/` with RTL files (testbenches named `tb_*`) and a seam.toml;
//! each test copies it to a temporary folder, runs `seam check` there and compares findings.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use crate::{fixtures, seam};

/// A copy of a case folder in a new temporary folder.
pub fn copy_case(src: &Path) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    for e in std::fs::read_dir(src).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, d.path().join(p.file_name().unwrap())).unwrap();
    }
    d
}

/// The design's RTL files in a case folder (not its testbenches), sorted.
pub fn rtl_files(dir: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("v" | "sv")))
        .filter(|p| !p.file_name().unwrap().to_string_lossy().starts_with("tb_"))
        .collect();
    v.sort();
    v
}

/// Every RTL file of a folder with its text.
pub fn texts(dir: &Path) -> Vec<(PathBuf, String)> {
    rtl_files(dir)
        .into_iter()
        .map(|p| {
            let t = std::fs::read_to_string(&p).unwrap();
            (p, t)
        })
        .collect()
}

/// `seam check --format json [extra]` → (findings, stderr).
pub fn check(dir: &Path, extra: &[&str]) -> (Vec<serde_json::Value>, String) {
    let mut args = vec!["check", "--format", "json"];
    args.extend_from_slice(extra);
    let out = seam(&args, dir);
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(
        out.status.code() == Some(0) || out.status.code() == Some(1),
        "seam check failed: {stderr}"
    );
    let v: serde_json::Value =
        serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {stderr}"));
    (v["findings"].as_array().unwrap().clone(), stderr)
}

pub fn of_rule<'a>(fs: &'a [serde_json::Value], rule: &str) -> Vec<&'a serde_json::Value> {
    fs.iter().filter(|f| f["rule"] == rule).collect()
}

/// (rule, message) of every finding: compared before and after a fix.
pub fn keys(fs: &[serde_json::Value]) -> BTreeSet<(String, String)> {
    fs.iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["message"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

/// The case folders of one kind (`tests/fixtures/fix/<kind>/*`), sorted.
pub fn cases(kind: &str) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(fixtures().join("fix").join(kind))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    v.sort();
    v
}
