//! Functions in the design (issue 5): Seam runs a function's body where it needs a value,
//! so a gray encoder written as a function is recognised like one written inline.
//!
//! Outside references: Icarus Verilog simulates every function of `ev_functions.sv` for
//! every input and must agree with Seam's interpreter value for value (loops with an `int`
//! counting down, `return`, case, concatenation targets, operator assignments, nested calls,
//! the assignment width rules of IEEE 1800-2017 10.7 and 11.6). The FIFO fixture and its
//! mutant compile with `iverilog -g2012` and pass `verilator --lint-only -Wall`.

use std::path::Path;
use std::process::Command;

use seam_tests::*;

fn fixture(name: &str) -> std::path::PathBuf {
    fixtures().join("functions").join(name)
}

/// (rule, line) of every error and warning of `seam check` in `dir`.
fn findings(dir: &Path) -> Vec<(String, u64)> {
    let out = seam(&["check", "--format", "json"], dir);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|_| {
        panic!(
            "json: {}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    });
    v["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .filter(|f| f["severity"] == "error" || f["severity"] == "warning")
        .map(|f| {
            (
                f["rule"].as_str().unwrap_or("").to_string(),
                f["line"].as_u64().unwrap_or(0),
            )
        })
        .collect()
}

const TOML: &str = "[clocks]\nclk_snd = {}\nclk_up = {}\n\n[inputs]\nput = \"clk_snd\"\nlevel = \"clk_snd\"\nrst_snd_n = \"clk_snd\"\ntake = \"clk_up\"\nrst_up_n = \"clk_up\"\n";

fn run_fifo(text: &str) -> Vec<(String, u64)> {
    run_fifo_linted(text, true)
}

/// `lint`: also require `verilator --lint-only -Wall` (off for encoders Verilator cannot
/// unroll, such as an endless loop).
fn run_fifo_linted(text: &str, lint: bool) -> Vec<(String, u64)> {
    let d = tempfile::tempdir().expect("tempdir");
    let p = d.path().join("tg_fn_fifo.sv");
    std::fs::write(&p, text).expect("write");
    std::fs::write(d.path().join("seam.toml"), TOML).expect("toml");
    // outside references: both tools accept the design
    iverilog_compiles(std::slice::from_ref(&p), &[]).expect("iverilog");
    if !lint {
        return findings(d.path());
    }
    let o = Command::new("verilator")
        .args(["--lint-only", "-Wall"])
        .arg(&p)
        .output()
        .expect("verilator");
    assert!(
        o.status.success(),
        "verilator: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    findings(d.path())
}

#[test]
fn fifo_with_function_encoders_is_clean() {
    let text = std::fs::read_to_string(fixture("tg_fn_fifo.sv")).expect("fixture");
    assert_eq!(run_fifo(&text), vec![], "gray pointers through functions");
}

#[test]
fn binary_encoder_function_is_a_multibit_crossing() {
    let text = std::fs::read_to_string(fixture("tg_fn_fifo.sv")).expect("fixture");
    // the encoder returns its argument: the pointers cross in binary
    let broken = text.replace(
        "for (int i = 0; i < PW - 1; i++) to_gray[i] = b[i] ^ b[i+1];\n    to_gray[PW-1] = b[PW-1];",
        "to_gray = b;",
    );
    assert_ne!(broken, text);
    let f = run_fifo(&broken);
    let mb: Vec<_> = f.iter().filter(|(r, _)| r == "multibit-crossing").collect();
    // both pointers, at their source registers: wgray (line 48) and rgray (line 69)
    let lines: Vec<u64> = mb.iter().map(|(_, l)| *l).collect();
    assert_eq!(lines, vec![48, 69], "{f:?}");
}

#[test]
fn encoder_with_the_wrong_neighbour_is_a_multibit_crossing() {
    let text = std::fs::read_to_string(fixture("tg_fn_fifo.sv")).expect("fixture");
    // each bit XORs the top bit instead of its neighbour: 1 -> 2 changes two bits
    let broken = text.replace("b[i] ^ b[i+1]", "b[i] ^ b[PW-1]");
    assert_ne!(broken, text);
    let f = run_fifo(&broken);
    assert!(
        f.iter().any(|(r, _)| r == "multibit-crossing"),
        "a non-gray encoder must not pass: {f:?}"
    );
}

/// Every function of `ev_functions.sv`, for every 4-bit input: Icarus Verilog's value and
/// Seam's must be equal.
#[test]
fn function_interpreter_agrees_with_simulation() {
    use seam_analysis::cdc::bitval::Eval;
    use seam_analysis::design::{netlist, Ctx};
    const N: usize = 10;
    let src = fixture("ev_functions.sv");
    let d = tempfile::tempdir().expect("tempdir");
    let mut tb = String::from(
        "module tb;\n  logic [3:0] x; integer i;\n  ev_functions u(.x(x));\n  initial for (i = 0; i < 16; i = i + 1) begin\n    x = i; #1;\n",
    );
    for i in 0..N {
        tb.push_str(&format!("    $display(\"%0d %0d %0d\", i, {i}, u.y{i});\n"));
    }
    tb.push_str("  end\nendmodule\n");
    let (tp, exe) = (d.path().join("tb.sv"), d.path().join("tb.vvp"));
    std::fs::write(&tp, &tb).expect("tb");
    let st = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&exe)
        .arg(&src)
        .arg(&tp)
        .status()
        .expect("iverilog");
    assert!(st.success());
    let out = Command::new("vvp").arg(&exe).output().expect("vvp");
    let sim = String::from_utf8_lossy(&out.stdout).to_string();

    let models = parse_in_order(&[src], &[]);
    let config = seam_analysis::config::Config::default();
    let index = netlist::ModuleIndex::new(&models);
    let n = netlist::elaborate(&index, &config, &["ev_functions"]);
    let ctx = Ctx::new(&n, &config, &models);
    let x = ctx.g.sig_named("ev_functions.x").expect("x");
    let mut checked = 0;
    for line in sim.lines() {
        let v: Vec<u64> = line
            .split_whitespace()
            .filter_map(|t| t.parse().ok())
            .collect();
        let &[xv, i, want] = v.as_slice() else {
            continue;
        };
        let e = seam_analysis::model::Expr::Ident {
            name: format!("ev_functions.y{i}"),
            loc: Default::default(),
        };
        let ev = Eval::new(&ctx, x, xv);
        let w = if i == 8 { 5 } else { 4 };
        assert_eq!(ev.eval(&e, w, 0), Some(want), "y{i} at x = {xv}");
        checked += 1;
    }
    assert_eq!(checked, 16 * N, "simulation output: {sim}");
}

/// Encoders Seam cannot run (a loop that never ends, a call of itself, a `casez`) leave the
/// bus unproven: a `multibit-crossing`, never a hang or a crash, and never "clean".
#[test]
fn functions_that_cannot_be_run_leave_the_bus_unproven() {
    let text = std::fs::read_to_string(fixture("tg_fn_fifo.sv")).expect("fixture");
    let body = "for (int i = 0; i < PW - 1; i++) to_gray[i] = b[i] ^ b[i+1];\n    to_gray[PW-1] = b[PW-1];";
    assert!(text.contains(body));
    let variants = [
        // the loop condition never fails (the statement budget stops it)
        "for (int i = 0; i >= 0; i++) to_gray[0] = b[0];\n    to_gray = b ^ (b >> 1);",
        // calls itself
        "to_gray = (b == 0) ? '0 : to_gray(b - 1'b1) ^ b;",
        // casez is outside the statement IR
        "casez (b)\n      default: to_gray = b ^ (b >> 1);\n    endcase",
    ];
    for v in variants {
        let f = run_fifo_linted(&text.replace(body, v), false);
        assert!(
            f.iter().any(|(r, _)| r == "multibit-crossing"),
            "{v}: {f:?}"
        );
    }
}

/// A correct encoder that runs a long loop per value, over 12-bit pointers (4,096 values):
/// the check stops at its statement cap and reports the bus as not proven, instead of
/// stalling the editor for a minute.
#[test]
fn a_slow_encoder_hits_the_cap_and_stays_unproven() {
    let text = std::fs::read_to_string(fixture("tg_fn_fifo.sv")).expect("fixture");
    let slow = text
        .replace("parameter int AW = 3", "parameter int AW = 11")
        .replace(
            "for (int i = 0; i < PW - 1; i++) to_gray[i]",
            "for (int i = 0; i < 30000; i++) to_gray[0] = b[0];\n    for (int i = 0; i < PW - 1; i++) to_gray[i]",
        );
    assert_ne!(slow, text);
    let f = run_fifo_linted(&slow, false);
    assert!(f.iter().any(|(r, _)| r == "multibit-crossing"), "{f:?}");
}
