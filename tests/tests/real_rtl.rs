//! Real open-source RTL (outside reference: designs that their own projects build with
//! commercial and open tools): the OpenTitan and Ibex sources shipped in the PyPI packages
//! `pythondata-misc-opentitan` and `pythondata-cpu-ibex` (fetched by tests/fetch-real-rtl,
//! never committed). Model extraction over their rtl folders, in compile order (packages
//! first), with their rtl folders as include dirs, must read at least 97% of files.

use std::path::{Path, PathBuf};

use seam_tests::real::*;
use seam_tests::*;

/// Runs `seam check --format json` over a generated filelist; returns (files, files with errors).
fn parse_rate(name: &str, base: &Path) -> (usize, usize, Vec<String>) {
    let (files, dirs) = rtl_files(base);
    assert!(
        files.len() > 100,
        "{name}: only {} files found",
        files.len()
    );
    let (mut pkgs, rest): (Vec<PathBuf>, Vec<PathBuf>) =
        files.into_iter().partition(|p| defines_package(p));
    pkgs.extend(rest);
    let work = tempfile::tempdir().unwrap();
    let mut fl = String::new();
    for d in &dirs {
        fl.push_str(&format!("+incdir+{}\n", d.display()));
    }
    for f in &pkgs {
        fl.push_str(&format!("{}\n", f.display()));
    }
    std::fs::write(work.path().join("real.f"), fl).unwrap();
    std::fs::write(
        work.path().join("seam.toml"),
        "[design]\nfilelist = \"real.f\"\n",
    )
    .unwrap();
    let out = seam(
        &[
            "check",
            "--parse-only",
            "--format",
            "json",
            "--parse-timeout",
            "120",
        ],
        work.path(),
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let total = v["files"].as_u64().unwrap() as usize;
    let mut bad: Vec<String> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "syntax-error" && f["severity"] == "error")
        .map(|f| {
            format!(
                "{}:{}: {}",
                f["file"].as_str().unwrap_or(""),
                f["line"],
                f["message"].as_str().unwrap_or("")
            )
        })
        .collect();
    bad.sort();
    bad.dedup_by(|a, b| a.split(':').next() == b.split(':').next());
    (total, bad.len(), bad)
}

#[test]
fn opentitan_and_ibex_parse_rate_at_least_97_percent() {
    let root = real_root();
    let mut all = 0;
    let mut failed = 0;
    for (name, base) in [
        ("opentitan", root.join("pythondata_misc_opentitan")),
        ("ibex", root.join("pythondata_cpu_ibex")),
    ] {
        let (total, bad, list) = parse_rate(name, &base);
        let rate = 100.0 * (total - bad) as f64 / total as f64;
        eprintln!("{name}: {} of {total} files read ({rate:.1}%)", total - bad);
        for l in list.iter().take(40) {
            eprintln!("  {l}");
        }
        all += total;
        failed += bad;
    }
    let rate = 100.0 * (all - failed) as f64 / all as f64;
    eprintln!("overall: {rate:.2}% of {all} files");
    assert!(rate >= 97.0, "parse rate {rate:.2}% below 97%");
}
