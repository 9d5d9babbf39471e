//! Resets (issue 6): reset trees, reset synchronizers and `async-reset-release`, on the
//! fixtures in tests/fixtures/resets (a greenhouse irrigation controller, invented for the
//! tests: a control clock and a valve PWM clock, an asynchronous board reset pin).
//!
//! Outside references:
//! - every fixture and every mutant compiles with `iverilog -g2012` (Icarus Verilog: valid
//!   RTL, so a finding is about reset structure, not syntax);
//! - the reset trees that `seam domains` reports are checked by simulation in Icarus Verilog:
//!   where Seam says a flop's reset is released in step with its clock, every release of the
//!   reset net in simulation falls on an edge of that clock, after as many edges as the
//!   synchronizer has stages, and assertion is immediate; where Seam says it is not, the
//!   simulation shows a release off that clock's edges.
//! - "assert asynchronously, release synchronously through two flops" is the reset
//!   synchronizer as common practice describes it (no single published source is claimed).

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::Command;

use seam_tests::*;

const RULE: &str = "async-reset-release";

fn dir() -> PathBuf {
    fixtures().join("resets")
}

/// A temp dir holding one fixture (possibly edited) and the fixtures' seam.toml.
fn setup(file: &str, text: Option<&str>) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    let src = std::fs::read_to_string(dir().join(file)).unwrap();
    std::fs::write(d.path().join(file), text.unwrap_or(&src)).unwrap();
    std::fs::copy(dir().join("seam.toml"), d.path().join("seam.toml")).unwrap();
    d
}

/// The fixture plus the simulation model of the library cell that `[cells]` declares.
/// Like `setup`, with another seam.toml.
fn setup_toml(file: &str, text: Option<&str>, toml: &str) -> tempfile::TempDir {
    let d = setup(file, text);
    std::fs::write(d.path().join("seam.toml"), toml).unwrap();
    d
}

fn compiles(d: &Path, file: &str) {
    iverilog_compiles(&[d.join(file), dir().join("irr_rstsync_model.v")], &[])
        .unwrap_or_else(|e| panic!("iverilog rejects {file}: {e}"));
}

fn json(out: &std::process::Output, what: &str) -> serde_json::Value {
    serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "{what}: {e}\n{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    })
}

/// (rule, line, message) of every error and warning.
fn findings(d: &Path) -> Vec<(String, u64, String)> {
    let v = json(&seam(&["check", "--format", "json"], d), "seam check");
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "error" || f["severity"] == "warning")
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["line"].as_u64().unwrap(),
                f["message"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

/// 1-based line of the `nth` (0-based) line containing `anchor`.
fn line_of(text: &str, anchor: &str, nth: usize) -> u64 {
    text.lines()
        .enumerate()
        .filter(|(_, l)| l.contains(anchor))
        .nth(nth)
        .unwrap_or_else(|| panic!("anchor {anchor:?} #{nth} not found"))
        .0 as u64
        + 1
}

/// Each fixture: its exact set of findings, as (anchor, occurrence) of the line.
#[test]
fn fixtures_give_exactly_the_expected_findings() {
    let cases: &[(&str, &[(&str, usize)])] = &[
        // raw reset into two domains: once per process (the third has two flops)
        (
            "r1_raw.v",
            &[
                ("always @(posedge clk_ctl or negedge rst_n)", 0),
                ("always @(posedge clk_valve or negedge rst_n)", 0),
                ("always @(posedge clk_valve or negedge rst_n)", 1),
            ],
        ),
        // a correct reset synchronizer per domain, separate statements, active low
        ("r2_sync.v", &[]),
        // concatenation shifts, active high, a 3-stage vector
        ("r3_concat.sv", &[]),
        // a control-domain synchronizer resetting valve flops
        (
            "r4_wrong_domain.v",
            &[("always @(posedge clk_valve or negedge rst_ctl_n)", 0)],
        ),
        // a register of another domain, alone and in logic with the right synchronizer
        (
            "r5_reg_reset.v",
            &[
                ("always @(posedge clk_valve or posedge sw_rst_q)", 0),
                ("always @(posedge clk_valve or negedge drip_rst_n)", 0),
            ],
        ),
        // a synchronous reset is not an asynchronous control
        ("r6_sync_reset.v", &[]),
        // synchronizer modules per domain; one of three PWM instances has the wrong reset
        (
            "r7_modules.v",
            &[("always @(posedge clk or negedge rst_n)", 1)],
        ),
        // a trusted `[cells]` reset synchronizer: right for its own domain only
        (
            "r8_cells.v",
            &[("always @(posedge clk_ctl or negedge rst_valve_n)", 0)],
        ),
    ];
    for (file, want) in cases {
        let d = setup(file, None);
        compiles(d.path(), file);
        let text = std::fs::read_to_string(d.path().join(file)).unwrap();
        let got = findings(d.path());
        let mut want_lines: Vec<u64> = want.iter().map(|(a, n)| line_of(&text, a, *n)).collect();
        want_lines.sort();
        let mut got_lines: Vec<u64> = got.iter().map(|f| f.1).collect();
        got_lines.sort();
        assert!(
            got.iter().all(|f| f.0 == RULE),
            "{file}: only {RULE} expected: {got:#?}"
        );
        assert_eq!(got_lines, want_lines, "{file}: {got:#?}");
    }
}

/// Messages name the reset source and the flop's domain (DESIGN.md section 4).
#[test]
fn messages_name_the_reset_source_and_the_domain() {
    let cases = [
        (
            "r1_raw.v",
            "ctl_cnt",
            &["`rst_n`", "top-level input", "clk_ctl"][..],
        ),
        (
            "r4_wrong_domain.v",
            "pwm_cnt",
            &["`ctl_rq[1]`", "clk_ctl", "clk_valve"][..],
        ),
        (
            "r5_reg_reset.v",
            "drip_cnt",
            &["`sw_rst_q`", "clk_ctl", "clk_valve", "logic"][..],
        ),
        (
            "r7_modules.v",
            "u_c.cnt",
            &["`u_rs_ctl.s2`", "clk_ctl", "clk_valve"][..],
        ),
    ];
    for (file, reg, words) in cases {
        let d = setup(file, None);
        let got = findings(d.path());
        let f = got
            .iter()
            .find(|f| f.2.contains(&format!("`{reg}`")))
            .unwrap_or_else(|| panic!("{file}: no finding names {reg}: {got:#?}"));
        for w in words {
            assert!(f.2.contains(w), "{file}: {w:?} missing in {:?}", f.2);
        }
    }
}

struct Mutant {
    name: &'static str,
    old: &'static str,
    new: &'static str,
    /// Text on the line where a finding must be, and which occurrence of it.
    anchor: (&'static str, usize),
}

fn run_mutants(file: &str, mutants: &[Mutant]) {
    let d = setup(file, None);
    assert!(findings(d.path()).is_empty(), "{file} must be clean");
    for m in mutants {
        let text = std::fs::read_to_string(dir().join(file)).unwrap();
        assert!(
            text.contains(m.old),
            "{}: {:?} not in {file}",
            m.name,
            m.old
        );
        let mutated = text.replacen(m.old, m.new, 1);
        let d = setup(file, Some(&mutated));
        compiles(d.path(), file);
        let line = line_of(&mutated, m.anchor.0, m.anchor.1);
        let got = findings(d.path());
        assert!(
            got.iter().any(|f| f.0 == RULE && f.1 == line),
            "mutant {}: expected {RULE} at line {line}, got {got:#?}",
            m.name
        );
        assert!(
            got.iter().all(|f| f.0 == RULE),
            "mutant {}: only {RULE} expected, got {got:#?}",
            m.name
        );
    }
}

#[test]
fn mutants_of_the_separate_statement_synchronizers() {
    run_mutants(
        "r2_sync.v",
        &[
            Mutant {
                name: "drop a stage (use stage 1 as the reset)",
                old: "  wire rst_valve_n = valve_r2;",
                new: "  wire rst_valve_n = valve_r1;",
                anchor: ("always @(posedge clk_valve or negedge rst_valve_n)", 0),
            },
            Mutant {
                name: "shift in the active level",
                old: "      valve_r1 <= 1'b1;",
                new: "      valve_r1 <= 1'b0;",
                // the second `valve_r1 <= 1'b0;` is the shifting one (the first resets)
                anchor: ("valve_r1 <= 1'b0;", 1),
            },
            Mutant {
                name: "clock the valve synchronizer from the control domain",
                old: "  always @(posedge clk_valve or negedge rst_n)",
                new: "  always @(posedge clk_ctl or negedge rst_n)",
                anchor: ("always @(posedge clk_valve or negedge rst_valve_n)", 0),
            },
            Mutant {
                name: "use the synchronized reset inverted",
                old: "  wire rst_ctl_n = ctl_r2;",
                new: "  wire rst_ctl_n = ~ctl_r2;",
                anchor: ("always @(posedge clk_ctl or negedge rst_ctl_n)", 0),
            },
        ],
    );
}

#[test]
fn mutants_of_the_concatenation_synchronizers() {
    run_mutants(
        "r3_concat.sv",
        &[
            Mutant {
                name: "drop two of three stages",
                old: "assign rst_valve = valve_s[2];",
                new: "assign rst_valve = valve_s[0];",
                anchor: ("always_ff @(posedge clk_valve or posedge rst_valve)", 0),
            },
            Mutant {
                name: "shift in the active level",
                old: "{ctl_s2, ctl_s1} <= {ctl_s1, 1'b0};",
                new: "{ctl_s2, ctl_s1} <= {ctl_s1, 1'b1};",
                anchor: ("{ctl_s1, 1'b1}", 0),
            },
            Mutant {
                name: "clock the valve synchronizer from the control domain",
                old: "always_ff @(posedge clk_valve or posedge rst)",
                new: "always_ff @(posedge clk_ctl or posedge rst)",
                anchor: ("always_ff @(posedge clk_valve or posedge rst_valve)", 0),
            },
        ],
    );
}

fn domains(d: &Path) -> Vec<serde_json::Value> {
    let v = json(&seam(&["domains", "--format", "json"], d), "seam domains");
    v["registers"].as_array().unwrap().clone()
}

fn reg<'a>(regs: &'a [serde_json::Value], path: &str) -> &'a serde_json::Value {
    regs.iter()
        .find(|r| {
            let inst = r["instance"].as_str().unwrap();
            let rel = inst.split_once('.').map(|(_, r)| r).unwrap_or("");
            let name = if rel.is_empty() {
                r["signal"].as_str().unwrap().to_string()
            } else {
                format!("{rel}.{}", r["signal"].as_str().unwrap())
            };
            name == path
        })
        .unwrap_or_else(|| panic!("no register {path}"))
}

/// `seam domains` shows each flop's reset source, per instance, structured.
#[test]
fn domains_show_the_reset_tree_per_instance() {
    let d = setup("r7_modules.v", None);
    let regs = domains(d.path());
    let b = &reg(&regs, "u_b.cnt")["reset_source"];
    assert_eq!(b["leaves"][0]["kind"], "reset_synchronizer");
    assert_eq!(b["leaves"][0]["name"], "u_rs_valve.s2");
    assert_eq!(b["leaves"][0]["domain"], "clk_valve");
    assert_eq!(b["synchronized"], true);
    let c = &reg(&regs, "u_c.cnt")["reset_source"];
    assert_eq!(c["leaves"][0]["name"], "u_rs_ctl.s2");
    assert_eq!(c["synchronized"], false);
    let s1 = &reg(&regs, "u_rs_ctl.s1")["reset_source"];
    assert_eq!(s1["leaves"][0]["kind"], "top_input");
    assert_eq!(s1["own_stage"], serde_json::json!([1, 2]));
    assert!(reg(&regs, "u_a.cnt")["reset"]
        .as_str()
        .unwrap()
        .contains("reset synchronizer u_rs_ctl.s2 of clk_ctl"));

    // logic of several leaves is named as such
    let d = setup("r5_reg_reset.v", None);
    let regs = domains(d.path());
    let drip = &reg(&regs, "drip_cnt")["reset_source"];
    assert_eq!(drip["through_logic"], true);
    let kinds: BTreeSet<&str> = drip["leaves"]
        .as_array()
        .unwrap()
        .iter()
        .map(|l| l["kind"].as_str().unwrap())
        .collect();
    assert_eq!(kinds, ["register", "reset_synchronizer"].into());

    // a synchronous reset is no asynchronous control at all
    let d = setup("r6_sync_reset.v", None);
    let regs = domains(d.path());
    assert!(reg(&regs, "pwm_cnt")["reset"].is_null());
    assert!(reg(&regs, "pwm_cnt")["reset_source"].is_null());
}

/// Clock periods in ps for the simulation: 50 MHz and 8 MHz as in seam.toml; the control
/// clock starts 3.3 ns late so that no edges of the two clocks coincide.
const HALF_CTL: u64 = 10_000;
const OFFSET_CTL: u64 = 3_300;
const HALF_VALVE: u64 = 62_500;
/// Raw reset: asserted from 0, released, asserted again, released again (arbitrary times).
const RELEASES: [u64; 2] = [1_234_567, 13_579_135];
const ASSERTS: [u64; 1] = [9_876_543];
const END: u64 = 20_000_000;

struct Sim {
    /// posedge times per clock port
    edges: BTreeMap<String, BTreeSet<u64>>,
    /// (time, value) changes per monitored net
    changes: BTreeMap<String, Vec<(u64, String)>>,
}

fn simulate(
    d: &Path,
    file: &str,
    top: &str,
    reset: &str,
    active_high: bool,
    nets: &[String],
) -> Sim {
    let (on, off) = if active_high { (1, 0) } else { (0, 1) };
    let mut tb = String::from("`timescale 1ps/1ps\nmodule tb;\n");
    tb.push_str(&format!(
        "  reg clk_ctl = 0, clk_valve = 0, {reset} = {on};\n  {top} dut (.clk_ctl(clk_ctl), .clk_valve(clk_valve), .{reset}({reset}));\n"
    ));
    tb.push_str(&format!(
        "  initial begin #{OFFSET_CTL}; forever #{HALF_CTL} clk_ctl = ~clk_ctl; end\n"
    ));
    tb.push_str(&format!("  always #{HALF_VALVE} clk_valve = ~clk_valve;\n"));
    for c in ["clk_ctl", "clk_valve"] {
        tb.push_str(&format!(
            "  always @(posedge {c}) $display(\"E {c} %0d\", $time);\n"
        ));
    }
    for n in nets {
        tb.push_str(&format!(
            "  always @(dut.{n}) $display(\"C {n} %b %0d\", dut.{n}, $time);\n"
        ));
    }
    tb.push_str("  initial begin\n");
    let mut t = 0;
    let mut events: Vec<(u64, u32)> = RELEASES
        .iter()
        .map(|x| (*x, off))
        .chain(ASSERTS.iter().map(|x| (*x, on)))
        .collect();
    events.sort();
    for (at, v) in events {
        tb.push_str(&format!("    #{} {reset} = {v};\n", at - t));
        t = at;
    }
    tb.push_str(&format!("    #{} $finish;\n  end\nendmodule\n", END - t));
    let tbf = d.join("tb.v");
    std::fs::write(&tbf, tb).unwrap();
    let sim = d.join("sim.out");
    let c = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&sim)
        .arg(&tbf)
        .arg(d.join(file))
        .arg(dir().join("irr_rstsync_model.v"))
        .output()
        .expect("iverilog");
    assert!(c.status.success(), "{}", String::from_utf8_lossy(&c.stderr));
    let r = Command::new("vvp").arg(&sim).output().expect("vvp");
    let mut s = Sim {
        edges: BTreeMap::new(),
        changes: BTreeMap::new(),
    };
    for l in String::from_utf8_lossy(&r.stdout).lines() {
        let p: Vec<&str> = l.split_whitespace().collect();
        match p.as_slice() {
            ["E", c, t] => {
                s.edges
                    .entry(c.to_string())
                    .or_default()
                    .insert(t.parse().unwrap());
            }
            ["C", n, v, t] => s
                .changes
                .entry(n.to_string())
                .or_default()
                .push((t.parse().unwrap(), v.to_string())),
            _ => {}
        }
    }
    s
}

/// For every register whose reset tree ends in a reset synchronizer (or a register),
/// compare Seam's verdict with the simulation: "released in step with its clock" holds iff
/// every change of the reset net while the raw reset is inactive falls on an edge of the
/// register's clock. For a synchronizer of that clock, the first release comes on the k-th
/// edge after the raw release (k = the stage Seam names), and assertion is immediate.
fn check_against_simulation(
    file: &str,
    top: &str,
    reset: &str,
    active_high: bool,
) -> (usize, usize) {
    let d = setup(file, None);
    let regs = domains(d.path());
    let mut cases: Vec<(String, String, bool, Option<u64>)> = Vec::new(); // (net, clock, synced, k)
    for r in &regs {
        let src = &r["reset_source"];
        if src.is_null() || src["own_stage"].is_array() {
            continue; // no async reset, or a synchronizer's own stage (raw by design)
        }
        let leaves = src["leaves"].as_array().unwrap();
        let [leaf] = leaves.as_slice() else { continue };
        if !matches!(
            leaf["kind"].as_str(),
            Some("reset_synchronizer") | Some("register")
        ) {
            continue;
        }
        cases.push((
            leaf["name"].as_str().unwrap().to_string(),
            r["clock"].as_str().unwrap().to_string(),
            src["synchronized"].as_bool().unwrap(),
            leaf["stages"].as_u64(),
        ));
    }
    assert!(
        !cases.is_empty(),
        "{file}: no register reset by a synchronizer"
    );
    let nets: Vec<String> = cases
        .iter()
        .map(|c| c.0.clone())
        .collect::<BTreeSet<_>>()
        .into_iter()
        .collect();
    let sim = simulate(d.path(), file, top, reset, active_high, &nets);
    let raw_active = |t: u64| {
        // asserted from 0 to the first release and from each assert to the next release
        t < RELEASES[0] || (t >= ASSERTS[0] && t < RELEASES[1])
    };
    let (mut synced, mut unsynced) = (0, 0);
    for (net, clock, seam_synced, k) in &cases {
        let ch = sim
            .changes
            .get(net)
            .unwrap_or_else(|| panic!("{file}: {net} never changed"));
        let edges = &sim.edges[clock];
        let releases: Vec<u64> = ch.iter().map(|c| c.0).filter(|t| !raw_active(*t)).collect();
        assert!(!releases.is_empty(), "{file}: {net} is never released");
        let on_edges = releases.iter().all(|t| edges.contains(t));
        assert_eq!(
            on_edges, *seam_synced,
            "{file}: {net} resetting a {clock} register: Seam says synchronized = {seam_synced}, simulation releases at {releases:?}"
        );
        // assertion is immediate: the net changes at the very time the raw reset asserts
        assert!(
            ch.iter().any(|c| c.0 == ASSERTS[0]),
            "{file}: {net} did not assert at once ({ch:?})"
        );
        if *seam_synced {
            synced += 1;
            if let Some(k) = k {
                for r in RELEASES {
                    let first = releases.iter().find(|t| **t > r).copied().unwrap();
                    let n = edges.range(r + 1..=first).count() as u64;
                    assert_eq!(n, *k, "{file}: {net} released on edge {n} after the raw release, Seam says stage {k}");
                }
            }
        } else {
            unsynced += 1;
        }
    }
    (synced, unsynced)
}

#[test]
fn reset_release_verdicts_match_simulation() {
    if !have("iverilog") {
        panic!("iverilog is needed (tests/run installs it)");
    }
    let (s2, u2) = check_against_simulation("r2_sync.v", "r2_sync", "rst_n", false);
    assert!(s2 >= 3 && u2 == 0, "r2: {s2} synchronized, {u2} not");
    let (s3, u3) = check_against_simulation("r3_concat.sv", "r3_concat", "rst", true);
    assert!(s3 >= 2 && u3 == 0, "r3: {s3} synchronized, {u3} not");
    // the negative case: a control-domain synchronizer releases valve flops off valve edges
    let (s4, u4) = check_against_simulation("r4_wrong_domain.v", "r4_wrong_domain", "rst_n", false);
    assert!(s4 >= 1 && u4 >= 1, "r4: {s4} synchronized, {u4} not");
    let (s7, u7) = check_against_simulation("r7_modules.v", "r7_modules", "rst_n", false);
    assert!(s7 >= 2 && u7 >= 1, "r7: {s7} synchronized, {u7} not");
}

/// A reset input that `[inputs]` does not list: in step with the one domain it resets raw
/// (a block whose reset comes from outside), unless it resets raw flops of two domains or
/// also feeds a reset synchronizer (then it is known to be asynchronous).
#[test]
fn unlisted_reset_inputs() {
    let toml = "[clocks]\nclk_ctl = { frequency = \"50 MHz\" }\nclk_valve = { frequency = \"8 MHz\" }\n\n[inputs]\nmoist_in = \"clk_ctl\"\n";
    let count = |d: &Path| findings(d).iter().filter(|f| f.0 == RULE).count();
    // one domain: clean; the same block with the pin listed as asynchronous: both processes
    let d = setup_toml("r9_block.v", None, toml);
    compiles(d.path(), "r9_block.v");
    assert_eq!(count(d.path()), 0, "{:#?}", findings(d.path()));
    let d = setup_toml("r9_block.v", None, &format!("{toml}rst_n = \"async\"\n"));
    assert_eq!(count(d.path()), 2, "{:#?}", findings(d.path()));
    // two domains: every raw process, listed or not
    let d = setup_toml("r1_raw.v", None, toml);
    assert_eq!(count(d.path()), 3, "{:#?}", findings(d.path()));
    // one domain raw, but the pin also feeds the valve synchronizer: the raw use is reported
    let text = std::fs::read_to_string(dir().join("r2_sync.v")).unwrap();
    let old = "  always @(posedge clk_ctl or negedge rst_ctl_n)\n    if (!rst_ctl_n) ctl_cnt";
    assert!(text.contains(old));
    let mixed = text.replacen(
        old,
        "  always @(posedge clk_ctl or negedge rst_n)\n    if (!rst_n) ctl_cnt",
        1,
    );
    let d = setup_toml("r2_sync.v", Some(&mixed), toml);
    compiles(d.path(), "r2_sync.v");
    let got = findings(d.path());
    let line = line_of(&mixed, "always @(posedge clk_ctl or negedge rst_n)", 1);
    assert!(
        got.len() == 1 && got[0].0 == RULE && got[0].1 == line,
        "expected one {RULE} at line {line}: {got:#?}"
    );
}
