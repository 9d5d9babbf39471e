//! Clock inference checked by simulation (outside reference: Icarus Verilog). A generated
//! testbench toggles one clock at a time with random data and records which registers
//! change; that set must equal the registers `seam domains` assigns to that clock. The
//! fixture routes clocks through ports, an alias, a buffer cell, a gate cell, a mux pinned by
//! `[constants]`, a flop divider (its registers change only when the parent toggles), and
//! one block instantiated under two different clocks (two domain sets).

use std::collections::{BTreeMap, BTreeSet};
use std::process::Command;

use seam_tests::*;

#[test]
fn registers_change_only_with_their_clock() {
    let dir = fixtures().join("clocks");
    let out = seam(&["domains", "--format", "json"], &dir);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let mut by_clock: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let mut regs = Vec::new();
    for r in v["registers"].as_array().unwrap() {
        let inst = r["instance"].as_str().unwrap();
        let path = format!(
            "{}.{}",
            inst.strip_prefix("ck_top")
                .unwrap_or(inst)
                .trim_start_matches('.'),
            r["signal"].as_str().unwrap()
        );
        let path = path.trim_start_matches('.').to_string();
        by_clock
            .entry(r["clock"].as_str().unwrap().to_string())
            .or_default()
            .insert(path.clone());
        regs.push(path);
    }
    // per-instance domains: the same block under two clocks
    assert!(by_clock["clk_a"].contains("u_cnt_a.cnt") && by_clock["clk_c"].contains("u_cnt_c.cnt"));
    assert!(
        by_clock["clk_b"].contains("slow"),
        "the divided clock's register is in the parent's domain"
    );

    // the testbench: two rounds; in each, toggle one clock 6 times, snapshot before and after
    let clocks = ["clk_a", "clk_b", "clk_c"];
    let mut tb = String::from("`timescale 1ns/1ps\nmodule tb;\n  reg clk_a = 0, clk_b = 0, clk_c = 0, test_mode = 0, gate_en = 1, d = 0;\n");
    tb.push_str("  wire [3:0] cnt_a, cnt_c;\n  ck_top dut (.*);\n  integer i, seed = 7;\n");
    tb.push_str("  task snap(input [8*8:1] tag);\n    begin\n");
    for r in &regs {
        tb.push_str(&format!("      $display(\"%0s {r} %b\", tag, dut.{r});\n"));
    }
    tb.push_str("    end\n  endtask\n  initial begin\n");
    // registers start at 0 (no reset in the fixture); X would hide changes
    for r in &regs {
        tb.push_str(&format!("    dut.{r} = 0;\n"));
    }
    tb.push_str("    #1;\n");
    for round in 0..2 {
        for c in clocks {
            tb.push_str(&format!("    #1;\n    snap(\"B{round}{c}\");\n"));
            for i in 0..6 {
                tb.push_str(&format!("    d = $random(seed);\n    #1 {c} = 1;\n    #1 {c} = 0;\n    #1;\n    snap(\"S{round}{c}{i}\");\n"));
            }
        }
    }
    tb.push_str("    $finish;\n  end\nendmodule\n");
    let work = tempfile::tempdir().unwrap();
    let tbf = work.path().join("tb.v");
    std::fs::write(&tbf, tb).unwrap();
    let sim = work.path().join("sim.out");
    let c = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&sim)
        .arg(&tbf)
        .args(
            ["ck_top.v", "ck_cnt.v", "ck_cells.v"]
                .iter()
                .map(|f| dir.join(f)),
        )
        .output()
        .expect("iverilog");
    assert!(c.status.success(), "{}", String::from_utf8_lossy(&c.stderr));
    let r = Command::new("vvp").arg(&sim).output().expect("vvp");
    let text = String::from_utf8_lossy(&r.stdout);
    let mut snaps: BTreeMap<String, BTreeMap<String, String>> = BTreeMap::new();
    for l in text.lines() {
        let p: Vec<&str> = l.split_whitespace().collect();
        if p.len() == 3 {
            snaps
                .entry(p[0].to_string())
                .or_default()
                .insert(p[1].to_string(), p[2].to_string());
        }
    }
    for c in clocks {
        // a register changed if any snapshot after an edge differs from the one before it
        let mut seq = vec![&snaps[&format!("B1{c}")]];
        for i in 0..6 {
            seq.push(&snaps[&format!("S1{c}{i}")]);
        }
        let changed: BTreeSet<String> = regs
            .iter()
            .filter(|r| seq.windows(2).any(|w| w[0][*r] != w[1][*r]))
            .cloned()
            .collect();
        assert_eq!(
            changed, by_clock[c],
            "toggling {c} changed {changed:?}; seam assigns {:?}",
            by_clock[c]
        );
    }
}
