//! Package constants and enumeration members (IEEE 1800-2017 6.19, 26.3), and `[constants]`
//! pins followed through logic over them, on tests/fixtures/packages (an irrigation
//! controller's valve driver, invented for the tests).
//!
//! Outside references:
//! - the value of every package constant is checked against Icarus Verilog (`iverilog
//!   -g2012`), which prints them from a testbench;
//! - the fixtures pass `verilator --lint-only -Wall` (unused package parameters and the
//!   deliberate mixed-width sums of enum members and integers allowed) and compile with
//!   iverilog;
//! - a scan-mode reset mux whose select is pinned to function mode is a wire to the
//!   functional reset: common practice for scan insertion (no single published source).

use std::path::PathBuf;
use std::process::Command;

use seam_analysis::design::netlist::ModuleIndex;
use seam_tests::*;

fn dir() -> PathBuf {
    fixtures().join("packages")
}

fn sources() -> Vec<PathBuf> {
    ["pp_modes_pkg.sv", "pp_derived_pkg.sv", "pp_scan_reset.sv"]
        .iter()
        .map(|f| dir().join(f))
        .collect()
}

const CONSTS: &[&str] = &[
    "pp_modes_pkg::LaneW",
    "pp_modes_pkg::ModeOn",
    "pp_modes_pkg::ModeOff",
    "pp_modes_pkg::LaneFeed",
    "pp_modes_pkg::LaneDrain",
    "pp_modes_pkg::LaneMist",
    "pp_modes_pkg::LaneCount",
    "pp_modes_pkg::StIdle",
    "pp_modes_pkg::StPurge",
    "pp_derived_pkg::Wide",
    "pp_derived_pkg::Spare",
    "pp_derived_pkg::PurgeCode",
];

#[test]
fn package_constants_match_icarus() {
    let d = tempfile::tempdir().unwrap();
    let mut tb = String::from("module tb;\n  initial begin\n");
    for c in CONSTS {
        tb.push_str(&format!("    $display(\"{c} %0d\", {c});\n"));
    }
    tb.push_str("  end\nendmodule\n");
    let (tp, exe) = (d.path().join("tb.sv"), d.path().join("tb.vvp"));
    std::fs::write(&tp, &tb).unwrap();
    let st = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&exe)
        .args(sources())
        .arg(&tp)
        .status()
        .expect("iverilog");
    assert!(st.success());
    let out = Command::new("vvp").arg(&exe).output().expect("vvp");
    let sim = String::from_utf8_lossy(&out.stdout).to_string();

    let models = parse_in_order(&sources(), &[]);
    let index = ModuleIndex::new(&models);
    let mut checked = 0;
    for line in sim.lines() {
        let Some((name, v)) = line.split_once(' ') else {
            continue;
        };
        let want: i64 = v.trim().parse().expect("a number");
        assert_eq!(index.packages.get(name), Some(want), "{name}");
        checked += 1;
    }
    assert_eq!(checked, CONSTS.len(), "simulation output: {sim}");
}

#[test]
fn fixtures_lint_clean() {
    let st = Command::new("verilator")
        .args(["--lint-only", "-Wall", "-Wno-UNUSEDPARAM", "-Wno-WIDTH"])
        .args(sources())
        .status()
        .expect("verilator");
    assert!(st.success());
}

/// `async-reset-release` findings naming the scan reset, with the given `[constants]` pin
/// (none: the line is removed).
fn scan_reset_findings(pin: Option<&str>) -> Vec<String> {
    let d = tempfile::tempdir().unwrap();
    for f in sources() {
        std::fs::copy(&f, d.path().join(f.file_name().unwrap())).unwrap();
    }
    let toml = std::fs::read_to_string(dir().join("seam.toml")).unwrap();
    let line = "scanmode_i = \"4'b0000\"";
    assert!(toml.contains(line));
    let toml = match pin {
        Some(p) => toml.replace(line, &format!("scanmode_i = \"{p}\"")),
        None => toml.replace(line, ""),
    };
    std::fs::write(d.path().join("seam.toml"), toml).unwrap();
    let out = seam(&["check", "--format", "json"], d.path());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!("{e}: {}", String::from_utf8_lossy(&out.stdout));
    });
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "async-reset-release")
        .map(|f| f["message"].as_str().unwrap().to_string())
        .collect()
}

/// Pinned to function mode, the mux is a wire to the synchronized reset: clean. Pinned to
/// scan mode (the package's `ModeOn` code), or not pinned, the asynchronous scan reset
/// reaches the flop: reported.
#[test]
fn a_pinned_scan_mux_selects_through_a_package_constant() {
    assert_eq!(scan_reset_findings(Some("4'b0000")), Vec::<String>::new());
    assert_eq!(scan_reset_findings(Some("4'b1001")), Vec::<String>::new());
    for pin in [Some("4'b0110"), None] {
        let f = scan_reset_findings(pin);
        assert!(
            f.iter().any(|m| m.contains("scan_rst_n")),
            "pin {pin:?}: {f:?}"
        );
    }
}
