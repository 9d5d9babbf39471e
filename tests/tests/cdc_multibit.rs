//! Multi-bit crossings (issue 5, DESIGN.md section 3): the safe schemes come out clean, and
//! each mutant, broken one way at a time, is flagged with its exact rule and line.
//!
//! Outside references: every fixture and every mutant compiles with `iverilog -g2012`
//! (valid RTL, so a finding is about CDC structure). The gray encoders are also simulated
//! with iverilog to confirm, independently of Seam, that consecutive values of the clean
//! encoders differ in one bit and that the binary mutant's do not (Icarus Verilog, simulate).

use std::path::Path;

use seam_tests::*;

const TOML: &str = "[clocks]\nclk_acq = {}\nclk_sys = {}\nclk_link = {}\n\n[inputs]\nslot_done = \"clk_acq\"\nslot_base = \"clk_acq\"\nslot_read = \"clk_sys\"\nput = \"clk_acq\"\nsample = \"clk_acq\"\ntake = \"clk_sys\"\nsend = \"clk_sys\"\ngain_in = \"clk_sys\"\nlevel_new = \"clk_acq\"\nlevel_in = \"clk_acq\"\nhold = \"clk_sys\"\ncfg_we = \"clk_sys\"\ncfg_id = \"clk_sys\"\ncmd_we = \"clk_sys\"\ncmd_in = \"clk_sys\"\nquake = \"clk_acq\"\nsys_ok = \"clk_sys\"\nlink_up = \"clk_link\"\nrst_acq_n = \"clk_acq\"\nrst_sys_n = \"clk_sys\"\n";

fn static_toml() -> String {
    format!("{TOML}\n[static]\nsignals = [\"station_id\"]\n")
}

/// (rule, file, line) of every error and warning.
fn findings(dir: &Path) -> Vec<(String, String, u64, String)> {
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
                f["file"].as_str().unwrap_or("").to_string(),
                f["line"].as_u64().unwrap_or(0),
                f["message"].as_str().unwrap_or("").to_string(),
            )
        })
        .collect()
}

fn setup(file: &str, text: &str, toml: &str) -> tempfile::TempDir {
    let d = tempfile::tempdir().expect("tempdir");
    std::fs::write(d.path().join(file), text).expect("write");
    std::fs::write(d.path().join("seam.toml"), toml).expect("write toml");
    // outside reference: Icarus Verilog accepts the design
    iverilog_compiles(&[d.path().join(file)], &[])
        .unwrap_or_else(|e| panic!("iverilog rejects {file}: {e}"));
    d
}

fn fixture(file: &str) -> String {
    std::fs::read_to_string(fixtures().join("multibit").join(file)).expect("fixture")
}

fn clean(file: &str, toml: &str) {
    let d = setup(file, &fixture(file), toml);
    let f = findings(d.path());
    assert!(f.is_empty(), "{file} must be clean: {f:#?}");
}

/// Apply `(old, new)` edits, then expect `rule` on the line holding `anchor` and no other
/// rule anywhere.
fn mutant(file: &str, name: &str, edits: &[(&str, &str)], toml: &str, rule: &str, anchor: &str) {
    let mut text = fixture(file);
    for (old, new) in edits {
        assert!(text.contains(old), "{name}: pattern {old:?} not in {file}");
        text = text.replacen(old, new, 1);
    }
    let d = setup(file, &text, toml);
    let line = text
        .lines()
        .position(|l| l.contains(anchor))
        .unwrap_or_else(|| panic!("{name}: anchor {anchor:?}")) as u64
        + 1;
    let got = findings(d.path());
    assert!(
        got.iter()
            .any(|(r, f, l, _)| r == rule && f == file && *l == line),
        "mutant {name}: expected {rule} at {file}:{line}, got {got:#?}"
    );
    assert!(
        got.iter().all(|(r, ..)| r == rule),
        "mutant {name}: only {rule} expected, got {got:#?}"
    );
}

#[test]
fn gray_pointer_pair() {
    let f = "sx_gray_ptr.v";
    // both directions, the shift form and the bit-by-bit form, decoded to binary: clean
    clean(f, TOML);
    mutant(
        f,
        "binary instead of gray",
        &[("wr_gray <= wr_bin ^ (wr_bin >> 1);", "wr_gray <= wr_bin;")],
        TOML,
        "multibit-crossing",
        "wg_s1 <= wr_gray;",
    );
    mutant(
        f,
        "gray of a register loaded from an input",
        &[(
            "if (slot_done) wr_bin <= wr_bin + 4'd1;",
            "if (slot_done) wr_bin <= slot_base;",
        )],
        TOML,
        "multibit-crossing",
        "wg_s1 <= wr_gray;",
    );
    mutant(
        f,
        "counter that steps by two",
        &[(
            "if (slot_read) rd_bin <= rd_bin + 4'd1;",
            "if (slot_read) rd_bin <= rd_bin + 4'd2;",
        )],
        TOML,
        "multibit-crossing",
        "rg_s1 <= rd_gray;",
    );
    mutant(
        f,
        "one bit of the bitwise encoder wrong",
        &[(
            "rd_gray[1] <= rd_bin[2] ^ rd_bin[1];",
            "rd_gray[1] <= rd_bin[3] ^ rd_bin[1];",
        )],
        TOML,
        "multibit-crossing",
        "rg_s1 <= rd_gray;",
    );
}

#[test]
fn asynchronous_fifo() {
    let f = "sx_async_fifo.v";
    clean(f, TOML);
    // empty from the raw write pointer: the read side samples it with no chain, and the
    // memory read is no longer covered by the FIFO scheme
    mutant(
        f,
        "empty from the unsynchronized write pointer",
        &[(
            "assign empty = (rgray == wg_s2);",
            "assign empty = (rgray == wgray);",
        )],
        TOML,
        "unsynchronized-crossing",
        "if (take && !empty) sample_sys <= mem[rbin[2:0]];",
    );
    mutant(
        f,
        "full from the unsynchronized read pointer",
        &[(
            "assign full = (wgray == {~rg_s2[3:2], rg_s2[1:0]});",
            "assign full = (wgray == {~rgray[3:2], rgray[1:0]});",
        )],
        TOML,
        "unsynchronized-crossing",
        "wbin  <= wbin_next;",
    );
}

#[test]
fn request_acknowledge_with_held_bus() {
    let f = "sx_handshake.v";
    clean(f, TOML);
    mutant(
        f,
        "enable ORed with a free-running term",
        &[("if (req_rise)", "if (req_rise | tick)")],
        TOML,
        "unsynchronized-crossing",
        "gain_acq <= gain_q;",
    );
    mutant(
        f,
        "capture on the unsynchronized request",
        &[("if (req_rise)", "if (req)")],
        TOML,
        "unsynchronized-crossing",
        "gain_acq <= gain_q;",
    );
}

#[test]
fn pulse_qualified_load() {
    let f = "sx_pulse_load.v";
    clean(f, TOML);
    mutant(
        f,
        "a destination read outside the enable",
        &[(
            "      level_dbg <= level_q;\n    end",
            "    end else\n      level_dbg <= level_q;",
        )],
        TOML,
        "unsynchronized-crossing",
        "      level_dbg <= level_q;",
    );
}

#[test]
fn quasi_static_configuration() {
    let f = "sx_static_cfg.v";
    clean(f, &static_toml());
    mutant(
        f,
        "bus not listed as static",
        &[],
        TOML,
        "unsynchronized-crossing",
        "frame <= {station_id, sample};",
    );
}

#[test]
fn reconvergence_of_flags_from_one_command_register() {
    let f = "sx_reconv.v";
    clean(f, TOML);
    // two flags, each from the command register, synchronized separately and ANDed
    let separate: &[(&str, &str)] = &[
        (
            "  reg       arm_hi;\n",
            "  reg       arm_q, hi_q;\n",
        ),
        (
            "    arm_hi <= cmd[0] & cmd[1];\n",
            "    arm_q <= cmd[0];\n    hi_q <= cmd[1];\n",
        ),
        ("  reg a1, a2;\n", "  reg a1, a2, h1, h2;\n"),
        (
            "    a1 <= arm_hi;\n    a2 <= a1;\n    fire <= quake & a2;\n",
            "    a1 <= arm_q;\n    a2 <= a1;\n    h1 <= hi_q;\n    h2 <= h1;\n    fire <= quake & a2 & h2;\n",
        ),
    ];
    mutant(
        f,
        "flags synchronized separately and ANDed",
        separate,
        TOML,
        "reconvergence",
        "fire <= quake & a2 & h2;",
    );
    // the same flags as bits of one vector: multibit-crossing only (it takes precedence)
    let vector: &[(&str, &str)] = &[
        ("  reg       arm_hi;\n", "  reg [1:0] flags_q;\n"),
        ("    arm_hi <= cmd[0] & cmd[1];\n", "    flags_q <= cmd;\n"),
        ("  reg a1, a2;\n", "  reg [1:0] a1, a2;\n"),
        (
            "    a1 <= arm_hi;\n    a2 <= a1;\n    fire <= quake & a2;\n",
            "    a1 <= flags_q;\n    a2 <= a1;\n    fire <= quake & a2[0] & a2[1];\n",
        ),
    ];
    mutant(
        f,
        "the same flags as bits of one vector",
        vector,
        TOML,
        "multibit-crossing",
        "a1 <= flags_q;",
    );
}

#[test]
fn flags_from_different_domains_do_not_reconverge() {
    clean("sx_two_domains.v", TOML);
}

/// Icarus Verilog simulates an encoder over every counter value and prints how many bits
/// change between consecutive values; the result must agree with Seam's verdict.
fn max_bits_changed(encoder: &str) -> u32 {
    let d = tempfile::tempdir().expect("tempdir");
    let tb = format!(
        "module tb;\n  reg [3:0] b; wire [3:0] g = {encoder};\n  reg [3:0] prev; integer i, k, n, worst;\n  initial begin\n    worst = 0; b = 4'd15; #1 prev = g;\n    for (i = 0; i < 16; i = i + 1) begin\n      b = i; #1;\n      n = 0; for (k = 0; k < 4; k = k + 1) if (g[k] != prev[k]) n = n + 1;\n      if (n > worst) worst = n;\n      prev = g;\n    end\n    $display(\"worst=%0d\", worst);\n  end\nendmodule\n"
    );
    let p = d.path().join("tb.v");
    std::fs::write(&p, tb).expect("tb");
    let exe = d.path().join("tb.vvp");
    let st = std::process::Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&exe)
        .arg(&p)
        .status()
        .expect("iverilog");
    assert!(st.success());
    let out = std::process::Command::new("vvp")
        .arg(&exe)
        .output()
        .expect("vvp");
    let s = String::from_utf8_lossy(&out.stdout);
    s.trim()
        .strip_prefix("worst=")
        .and_then(|n| n.trim().parse().ok())
        .unwrap_or_else(|| panic!("vvp output {s}"))
}

#[test]
fn encoders_agree_with_simulation() {
    // (encoder over b, as in the fixture and its mutants)
    assert_eq!(max_bits_changed("b ^ (b >> 1)"), 1);
    assert_eq!(
        max_bits_changed("{b[3], b[3] ^ b[2], b[2] ^ b[1], b[1] ^ b[0]}"),
        1
    );
    // the wrong bitwise encoder of the mutant above, and plain binary, change several bits
    assert!(max_bits_changed("{b[3], b[3] ^ b[2], b[3] ^ b[1], b[1] ^ b[0]}") > 1);
    assert!(max_bits_changed("b") > 1);
}

/// Seam's evaluator (used for the gray-code check) against Icarus Verilog simulation: each
/// expression of `x` is evaluated by both for every 4-bit `x`, with the bit-length rules of
/// IEEE 1800-2017 section 11.6 (unsized literals are 32 bits, so `(x + 1) >> 1` keeps the carry;
/// a sized `4'd1` does not). Outside reference: iverilog simulation.
#[test]
fn evaluator_agrees_with_simulation() {
    use seam_analysis::cdc::bitval::Eval;
    use seam_analysis::design::{netlist, Ctx};
    let exprs: &[(&str, u32)] = &[
        ("x ^ (x >> 1)", 4),
        ("(x >> 1) ^ x", 4),
        ("{1'b0, x[3:1]} ^ x", 4),
        ("(x + 1) >> 1", 4),
        ("(x + 4'd1) >> 1", 4),
        ("x + 1", 5),
        ("x - 4'd3", 4),
        ("~x", 4),
        ("{x[0], x[3:1]}", 4),
        ("{2{x[1:0]}}", 4),
        ("x[2] ? x : ~x", 4),
        ("(x == 4'd7) ? 4'd1 : x + 4'd2", 4),
        ("{^x, &x, |x, x > 4'd9}", 4),
        ("x << 2", 6),
        ("x & 4'b1010 | {3'b000, !x}", 4),
        ("x[3] ? (4'd11 - {1'b0, x[2:0]}) : x", 4),
    ];
    let d = tempfile::tempdir().expect("tempdir");
    let mut m = String::from("module ev(input [3:0] x);\n");
    for (i, (e, w)) in exprs.iter().enumerate() {
        m.push_str(&format!("  wire [{}:0] y{i} = {e};\n", w - 1));
    }
    m.push_str("endmodule\n");
    let mut tb = String::from("module tb;\n  reg [3:0] x; integer i;\n  ev u(.x(x));\n  initial for (i = 0; i < 16; i = i + 1) begin\n    x = i; #1;\n");
    for i in 0..exprs.len() {
        tb.push_str(&format!("    $display(\"%0d %0d %0d\", i, {i}, u.y{i});\n"));
    }
    tb.push_str("  end\nendmodule\n");
    let (mp, tp, exe) = (
        d.path().join("ev.v"),
        d.path().join("tb.v"),
        d.path().join("tb.vvp"),
    );
    std::fs::write(&mp, &m).expect("ev");
    std::fs::write(&tp, &tb).expect("tb");
    let st = std::process::Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&exe)
        .arg(&mp)
        .arg(&tp)
        .status()
        .expect("iverilog");
    assert!(st.success());
    let out = std::process::Command::new("vvp")
        .arg(&exe)
        .output()
        .expect("vvp");
    let sim = String::from_utf8_lossy(&out.stdout).to_string();

    let models = parse_in_order(&[mp], &[]);
    let config = seam_analysis::config::Config::default();
    let index = netlist::ModuleIndex::new(&models);
    let n = netlist::elaborate(&index, &config, &["ev"]);
    let ctx = Ctx::new(&n, &config, &models);
    let x = ctx.g.sig_named("ev.x").expect("x");
    let mut checked = 0;
    for line in sim.lines() {
        let v: Vec<u64> = line
            .split_whitespace()
            .filter_map(|t| t.parse().ok())
            .collect();
        let &[xv, i, want] = v.as_slice() else {
            continue;
        };
        let name = format!("ev.y{i}");
        let e = seam_analysis::model::Expr::Ident {
            name: name.clone(),
            loc: Default::default(),
        };
        let ev = Eval::new(&ctx, x, xv);
        let got = ev.eval(&e, exprs[i as usize].1, 0);
        assert_eq!(got, Some(want), "{} at x = {xv}", exprs[i as usize].0);
        checked += 1;
    }
    assert_eq!(checked, 16 * exprs.len(), "simulation output: {sim}");
}
