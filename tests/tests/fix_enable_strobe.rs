//! Quick fix "derived clock → clock-enable strobe" (`derived-clock`), through
//! `seam check --fix`. Outside references: sv-parser (no `syntax-error` after the fix),
//! Icarus Verilog (`iverilog -g2012` compiles; the equivalence simulation), Verilator
//! (`verilator --lint-only`). DESIGN.md section 7 says which registers must match: logic
//! that reads only derived-domain registers is cycle-equivalent; a read of a parent-domain
//! signal sees the value before the parent edge (one parent cycle earlier than before).
//! Fixtures: `tests/fixtures/fix/strobe/*` (toggle flop, counter bit k > 0 read by its own
//! logic, divider with enable and synchronous reset plus a user with an asynchronous reset,
//! negedge user, parent-domain read) and `tests/fixtures/fix/nostrobe/*` (clock leaves the
//! module, next state not extractable: no fix).

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::Command;

use seam_tests::*;

fn copy_case(src: &Path) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    for e in std::fs::read_dir(src).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, d.path().join(p.file_name().unwrap())).unwrap();
    }
    d
}

fn rtl(dir: &Path) -> PathBuf {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("v" | "sv")))
        .unwrap()
}

fn check(dir: &Path, extra: &[&str]) -> (Vec<serde_json::Value>, String) {
    let mut args = vec!["check", "--format", "json"];
    args.extend_from_slice(extra);
    let out = seam(&args, dir);
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    let v: serde_json::Value =
        serde_json::from_slice(&out.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {stderr}"));
    (v["findings"].as_array().unwrap().clone(), stderr)
}

fn keys(fs: &[serde_json::Value]) -> BTreeSet<(String, String)> {
    fs.iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().into(),
                f["message"].as_str().unwrap().into(),
            )
        })
        .collect()
}

const RULE: &str = "derived-clock";

/// One fixture in the equivalence testbench.
struct Eq {
    case: &'static str,
    module: &'static str,
    /// Inputs (name, width, random stimulus drawn each parent cycle) and outputs.
    inputs: &'static [(&'static str, u32, &'static str)],
    outputs: &'static [(&'static str, u32)],
    /// Registers set to 0 at time 0 (the divider) and again at 1 ns (the derived logic).
    init0: &'static [&'static str],
    init1: &'static [&'static str],
    /// Registers that must match at every parent edge.
    compare: &'static [&'static str],
    /// Inputs held at a constant (an asynchronous reset released at the start).
    reset_n: Option<&'static str>,
}

const CASES: &[Eq] = &[
    Eq {
        case: "e1_toggle",
        module: "gh_sched",
        inputs: &[],
        outputs: &[("step", 4), ("phase", 5)],
        init0: &["half"],
        init1: &["step", "phase"],
        compare: &["step", "phase"],
        reset_n: None,
    },
    Eq {
        case: "e2_counter",
        module: "gh_duty",
        inputs: &[],
        outputs: &[("snap", 4), ("duty", 3)],
        init0: &["cnt"],
        init1: &["snap", "duty"],
        compare: &["snap", "duty"],
        reset_n: None,
    },
    Eq {
        case: "e3_enable_srst",
        module: "gh_vent",
        // a synchronous reset in one cycle of 16, an enable in three of four
        inputs: &[
            ("srst", 1, "($random(seed) & 15) == 0"),
            ("en", 1, "($random(seed) & 3) != 0"),
        ],
        outputs: &[("timer", 4)],
        init0: &["div"],
        init1: &[],
        compare: &["timer", "div"],
        reset_n: Some("rst_n"),
    },
    Eq {
        case: "e4_negedge",
        module: "gh_shutter",
        inputs: &[],
        outputs: &[("ph", 2)],
        init0: &["tgl"],
        init1: &["ph"],
        compare: &["ph"],
        reset_n: None,
    },
];

fn decl(name: &str, w: u32) -> String {
    if w == 1 {
        name.to_string()
    } else {
        format!("[{}:0] {name}", w - 1)
    }
}

/// Simulate the original and the fixed module side by side; returns the simulator output.
fn simulate(dir: &Path, orig: &str, fixed: &str, tb: &str) -> String {
    let a = dir.join("orig.sv");
    let b = dir.join("fixed.sv");
    let t = dir.join("tb.sv");
    std::fs::write(&a, orig).unwrap();
    std::fs::write(&b, fixed).unwrap();
    std::fs::write(&t, tb).unwrap();
    let sim = dir.join("sim.out");
    let o = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&sim)
        .args([&t, &a, &b])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = Command::new("vvp").arg(&sim).output().unwrap();
    String::from_utf8_lossy(&o.stdout).to_string()
}

fn renamed(text: &str, module: &str) -> String {
    text.replacen(
        &format!("module {module}"),
        &format!("module {module}_fx"),
        1,
    )
}

const CYCLES: u32 = 1200;

#[test]
fn the_rewrite_is_cycle_equivalent_by_simulation() {
    for c in CASES {
        let d = copy_case(&fixtures().join("fix/strobe").join(c.case));
        let file = rtl(d.path());
        let orig = std::fs::read_to_string(&file).unwrap();
        let (before, _) = check(d.path(), &[]);
        assert!(
            before.iter().any(|f| f["rule"] == RULE),
            "{}: {before:?}",
            c.case
        );
        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(stderr.contains("+++ b/"), "{}: {stderr}", c.case);
        assert!(
            !after
                .iter()
                .any(|f| f["rule"] == RULE || f["rule"] == "syntax-error"),
            "{}: {after:?}",
            c.case
        );
        let new: Vec<_> = keys(&after).difference(&keys(&before)).cloned().collect();
        assert!(new.is_empty(), "{}: new findings {new:?}", c.case);
        iverilog_compiles(&[file.clone()], &[]).unwrap_or_else(|e| panic!("{}: {e}", c.case));
        verilator_lints(&[file.clone()], &[], None).unwrap_or_else(|e| panic!("{}: {e}", c.case));
        let fixed = std::fs::read_to_string(&file).unwrap();

        // the testbench: random inputs between parent edges, compare at every parent edge
        let mut tb = String::from("`timescale 1ns/10ps\nmodule tb;\n  reg clk_sys = 0;\n  integer i, bad = 0, changes = 0, seed = 11;\n  reg [31:0] prev = 0;\n");
        for (n, w, _) in c.inputs {
            tb.push_str(&format!("  reg {} = 0;\n", decl(n, *w)));
        }
        if let Some(r) = c.reset_n {
            tb.push_str(&format!("  reg {r} = 1;\n"));
        }
        let mut conns = vec![".clk_sys(clk_sys)".to_string()];
        conns.extend(c.inputs.iter().map(|(n, _, _)| format!(".{n}({n})")));
        conns.extend(c.reset_n.iter().map(|r| format!(".{r}({r})")));
        for s in ["o", "f"] {
            for (n, w) in c.outputs {
                tb.push_str(&format!("  wire {}_{s};\n", decl(n, *w)));
            }
            let mut cs = conns.clone();
            cs.extend(c.outputs.iter().map(|(n, _)| format!(".{n}({n}_{s})")));
            let m = if s == "o" {
                c.module.to_string()
            } else {
                format!("{}_fx", c.module)
            };
            tb.push_str(&format!("  {m} {s} ({});\n", cs.join(", ")));
        }
        tb.push_str("  always #5 clk_sys = ~clk_sys;\n  initial begin\n");
        for r in c.init0 {
            tb.push_str(&format!("    o.{r} = 0; f.{r} = 0;\n"));
        }
        if let Some(r) = c.reset_n {
            tb.push_str(&format!("    #0.5 {r} = 0; #0.2 {r} = 1;\n"));
        }
        tb.push_str("    #1;\n");
        for r in c.init1 {
            tb.push_str(&format!("    o.{r} = 0; f.{r} = 0;\n"));
        }
        tb.push_str(&format!(
            "    for (i = 0; i < {CYCLES}; i = i + 1) begin\n      @(negedge clk_sys);\n"
        ));
        for r in c.compare {
            tb.push_str(&format!(
                "      if (o.{r} !== f.{r}) begin bad = bad + 1; $display(\"MISMATCH %0d {r} %b %b\", i, o.{r}, f.{r}); end\n"
            ));
        }
        let first = c.compare[0];
        tb.push_str(&format!(
            "      if (o.{first} !== prev) changes = changes + 1;\n      prev = o.{first};\n"
        ));
        for (n, _, stim) in c.inputs {
            tb.push_str(&format!("      {n} = {stim};\n"));
        }
        tb.push_str("    end\n    $display(\"DONE %0d %0d\", i, bad);\n    $display(\"CHANGES %0d\", changes);\n    $finish;\n  end\nendmodule\n");
        let out = simulate(d.path(), &orig, &renamed(&fixed, c.module), &tb);
        assert!(
            out.contains(&format!("DONE {CYCLES} 0")),
            "{}: the rewrite is not cycle-equivalent:\n{}\n{fixed}",
            c.case,
            out.lines().take(20).collect::<Vec<_>>().join("\n")
        );
        // the comparison sees real activity: the derived logic changes during the run
        let changes: u32 = out
            .lines()
            .find_map(|l| l.strip_prefix("CHANGES "))
            .and_then(|x| x.trim().parse().ok())
            .unwrap_or(0);
        assert!(changes > CYCLES / 20, "{}: only {changes} changes", c.case);
    }
}

/// A read of a parent-domain register: after the rewrite the derived register equals the
/// original fed with the input one parent cycle later (DESIGN.md section 7: the read sees the
/// value before the parent edge); and it does differ from the original on the same input.
#[test]
fn a_parent_domain_read_moves_one_parent_cycle_earlier() {
    let d = copy_case(&fixtures().join("fix/strobe/e5_parent_data"));
    let file = rtl(d.path());
    let orig = std::fs::read_to_string(&file).unwrap();
    let (after, _) = check(d.path(), &["--fix", RULE]);
    assert!(!after.iter().any(|f| f["rule"] == RULE));
    let fixed = std::fs::read_to_string(&file).unwrap();
    assert_ne!(fixed, orig);
    let tb = format!(
        "`timescale 1ns/10ps\nmodule tb;\n  reg clk_sys = 0;\n  reg [3:0] hum = 0, hum_d = 0;\n  wire [3:0] so, sd, sf;\n  integer i, same_delayed = 0, differ = 0, seed = 5;\n  gh_hum o (.clk_sys(clk_sys), .hum_i(hum), .hum_slow(so));\n  gh_hum od (.clk_sys(clk_sys), .hum_i(hum_d), .hum_slow(sd));\n  gh_hum_fx f (.clk_sys(clk_sys), .hum_i(hum), .hum_slow(sf));\n  always #5 clk_sys = ~clk_sys;\n  always @(posedge clk_sys) hum_d <= hum;\n  initial begin\n    o.half = 0; od.half = 0; f.half = 0;\n    #1 o.hum_slow = 0; od.hum_slow = 0; f.hum_slow = 0;\n    for (i = 0; i < {CYCLES}; i = i + 1) begin\n      @(negedge clk_sys);\n      if (i > 4) begin\n        if (sd === sf) same_delayed = same_delayed + 1;\n        if (so !== sf) differ = differ + 1;\n      end\n      hum = $random(seed);\n    end\n    $display(\"DONE %0d %0d %0d\", i, same_delayed, differ);\n    $finish;\n  end\nendmodule\n"
    );
    let out = simulate(d.path(), &orig, &renamed(&fixed, "gh_hum"), &tb);
    let line = out
        .lines()
        .find(|l| l.starts_with("DONE"))
        .unwrap_or_else(|| panic!("{out}"));
    let v: Vec<u32> = line
        .split_whitespace()
        .skip(1)
        .map(|x| x.parse().unwrap())
        .collect();
    assert_eq!(v[0], CYCLES);
    assert_eq!(
        v[1],
        CYCLES - 5,
        "fixed == original with the input one parent cycle later: {line}"
    );
    assert!(
        v[2] > CYCLES / 4,
        "the difference is real on random data: {line}"
    );
}

#[test]
fn no_rewrite_where_it_would_be_wrong() {
    for case in ["x1_leaves", "x2_partial"] {
        let d = copy_case(&fixtures().join("fix/nostrobe").join(case));
        let file = rtl(d.path());
        let orig = std::fs::read_to_string(&file).unwrap();
        iverilog_compiles(&[file.clone()], &[]).unwrap();
        let (before, _) = check(d.path(), &[]);
        assert!(before.iter().any(|f| f["rule"] == RULE), "{case}");
        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(!stderr.contains("+++ b/"), "{case}: {stderr}");
        assert!(
            stderr.contains("no fix for derived-clock"),
            "{case}: the reason is said: {stderr}"
        );
        assert_eq!(std::fs::read_to_string(&file).unwrap(), orig, "{case}");
        assert_eq!(keys(&after), keys(&before), "{case}");
    }
}
