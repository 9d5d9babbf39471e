//! Quick fix "carry a counter as gray code" (`multibit-crossing`, and `unsynchronized-crossing`
//! of a whole counter), end to end through `seam check --fix`. Outside references:
//! sv-parser (Seam's parser: no `syntax-error` after the fix), Icarus Verilog
//! (`iverilog -g2012` compiles the fixed design; the simulation below), Verilator
//! (`verilator --lint-only`). The gray code itself is common practice: g = b ^ (b >> 1),
//! b = g ^ (g >> 1) ^ ... ^ (g >> W-1), consecutive codes differ in one bit.
//!
//! Fixtures: `tests/fixtures/fix/gray/*` (Verilog and SystemVerilog; with an asynchronous
//! reset, a synchronous reset, none; up, down and up/down counters; enables; raw reads and
//! per-bit chains, as vectors and bit by bit; a count read by three destination processes; a
//! falling-edge reader; tabs and a taken name) and
//! `tests/fixtures/fix/nogray/*` (no fix may be offered: loaded from an input, steps by
//! two, not a counter, wraps at 9, read in another module).

use std::path::{Path, PathBuf};
use std::process::Command;

use seam_tests::fixcase::*;
use seam_tests::*;

const RULES: &str = "multibit-crossing,unsynchronized-crossing";

fn texts(dir: &Path) -> Vec<String> {
    rtl_files(dir)
        .iter()
        .map(|p| std::fs::read_to_string(p).unwrap())
        .collect()
}

/// Crossing findings (`multibit-crossing`, `unsynchronized-crossing`) on one signal.
fn on_bus<'a>(fs: &'a [serde_json::Value], sig: &str) -> Vec<&'a serde_json::Value> {
    fs.iter()
        .filter(|f| {
            (f["rule"] == "multibit-crossing" || f["rule"] == "unsynchronized-crossing")
                && f["signal"] == sig
        })
        .collect()
}

/// How one positive fixture is driven in simulation.
struct Case {
    case: &'static str,
    module: &'static str,
    counter: &'static str,
    /// The decoded value's name (`<counter>_bin` unless the file uses that name).
    bin: &'static str,
    width: u32,
    /// Source and destination clocks with their periods (ns): unrelated, never a ratio of
    /// small integers.
    src: (&'static str, f64),
    dst: (&'static str, f64),
    dst_negedge: bool,
    /// Inputs drawn at random on every falling source edge.
    inputs: &'static [(&'static str, &'static str)],
    /// Resets (asynchronous or synchronous) and their active level, held at the start.
    resets: &'static [(&'static str, u8)],
    /// A counter without a reset gets a value at time 0 (as a power-up value would).
    init: Option<u64>,
    /// Crossing findings on the counter before the fix.
    before: usize,
}

const CASES: &[Case] = &[
    Case {
        case: "g1_v_raw_reset",
        module: "gh_drip",
        counter: "drip_cnt",
        bin: "drip_cnt_bin",
        width: 5,
        src: ("clk_flow", 10.0),
        dst: ("clk_log", 13.7),
        dst_negedge: false,
        inputs: &[("drip_i", "($random(seed) & 3) == 0")],
        resets: &[("rst_flow_n", 0), ("rst_log_n", 0)],
        init: None,
        before: 1,
    },
    Case {
        case: "g2_sv_chain_down",
        module: "gh_tank_left",
        counter: "left_q",
        bin: "left_q_bin",
        width: 4,
        src: ("clk_pump", 17.3),
        dst: ("clk_disp", 6.1),
        dst_negedge: false,
        inputs: &[("draw_i", "$random(seed) & 1")],
        resets: &[],
        init: Some(9),
        before: 1,
    },
    Case {
        case: "g3_sv_readers",
        module: "gh_tray",
        counter: "trays",
        bin: "trays_bin",
        width: 6,
        src: ("clk_belt", 24.7),
        dst: ("clk_plan", 10.9),
        dst_negedge: false,
        inputs: &[("tray_i", "($random(seed) & 7) > 2")],
        resets: &[("rst_belt", 1), ("rst_plan", 1)],
        init: None,
        before: 3,
    },
    Case {
        case: "g4_v_sync_reset",
        module: "gh_lux",
        counter: "lit_cnt",
        bin: "lit_cnt_bin",
        width: 7,
        src: ("clk_lux", 40.3),
        dst: ("clk_sched", 30.1),
        dst_negedge: false,
        inputs: &[("lit_i", "$random(seed) & 1")],
        resets: &[("srst_lux", 1), ("rst_sched_n", 0)],
        init: None,
        before: 1,
    },
    Case {
        case: "g5_v_updown",
        module: "gh_hive",
        counter: "bees",
        bin: "bees_bin",
        width: 4,
        src: ("clk_gate", 83.3),
        dst: ("clk_clim", 133.7),
        dst_negedge: true,
        inputs: &[
            ("bee_in", "($random(seed) & 3) == 1"),
            ("bee_out", "($random(seed) & 3) == 2"),
        ],
        resets: &[("rst_gate_n", 0), ("rst_clim_n", 0)],
        init: None,
        before: 2,
    },
    Case {
        case: "g6_v_bits_tabs",
        module: "gh_shade_pos",
        counter: "hop",
        bin: "hop_bin_2",
        width: 3,
        src: ("clk_mot", 7.1),
        dst: ("clk_pan", 9.3),
        dst_negedge: false,
        inputs: &[("hstep_i", "($random(seed) & 1) == 0")],
        resets: &[("rst_mot_n", 0)],
        init: None,
        before: 1,
    },
];

fn gray_cases() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(fixtures().join("fix/gray"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    v.sort();
    v
}

/// Fix one fixture (in a temp copy) and run the structural checks; returns the copy.
fn fix_and_check(c: &Case, extra_toml: &str, stages: u32) -> tempfile::TempDir {
    let name = c.case;
    let d = copy_case(&fixtures().join("fix/gray").join(name));
    if !extra_toml.is_empty() {
        let p = d.path().join("seam.toml");
        let t = std::fs::read_to_string(&p).unwrap();
        std::fs::write(&p, format!("{t}{extra_toml}")).unwrap();
    }
    let files = rtl_files(d.path());
    // the original is valid RTL (Icarus Verilog, Verilator) and has the crossing findings
    iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} original: {e}"));
    verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} original: {e}"));
    let (before, _) = check(d.path(), &[]);
    assert_eq!(
        on_bus(&before, c.counter).len(),
        c.before,
        "{name}: crossing findings before the fix: {before:#?}"
    );
    let orig = texts(d.path());

    let (after, stderr) = check(d.path(), &["--fix", RULES]);
    assert!(
        stderr.contains("--- a/") && stderr.contains("+++ b/"),
        "{name}: no diff printed: {stderr}"
    );
    // the title says what changes (DESIGN.md section 7)
    let (src, dst) = (c.src.0, c.dst.0);
    let title = format!(
        "# Carry `{}` to `{dst}` as gray code (adds 1 `{src}` cycle and {stages} `{dst}` cycles of latency)",
        c.counter
    );
    assert!(stderr.contains(&title), "{name}: title {title}: {stderr}");
    // sv-parser parses the fixed text: no syntax-error
    assert!(
        !after.iter().any(|f| f["rule"] == "syntax-error"),
        "{name}: {after:#?}"
    );
    assert!(
        on_bus(&after, c.counter).is_empty(),
        "{name}: crossing still reported: {after:#?}"
    );
    let new: Vec<_> = keys(&after).difference(&keys(&before)).cloned().collect();
    assert!(new.is_empty(), "{name}: new findings {new:?}");
    // Icarus Verilog and Verilator accept the fixed design
    iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
    verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
    let fixed = texts(d.path());
    assert_ne!(fixed, orig, "{name}");
    let t = fixed.join("\n");
    let q = c.counter;
    assert!(
        t.contains(&format!("{q}_gray <= {q} ^ ({q} >> 1);")),
        "{name}: gray register: {t}"
    );
    let stage_names: Vec<String> = (1..=stages).map(|k| format!("{q}_gray_sync{k}")).collect();
    assert!(
        t.contains(&format!("{};", stage_names.join(", "))),
        "{name}: {stages} stages: {t}"
    );
    // no raw read of the counter is left outside its own and the gray register's process
    let reads = t.matches(c.bin).count();
    assert!(reads >= 2, "{name}: decoded value declared and read: {t}");
    // after the fix the action is no longer offered: a second run changes nothing
    let (_, stderr2) = check(d.path(), &["--fix", RULES]);
    assert!(
        !stderr2.contains("+++ b/"),
        "{name}: fixed twice: {stderr2}"
    );
    assert_eq!(texts(d.path()), fixed, "{name}: changed on the second run");
    d
}

#[test]
fn every_counter_fixture_is_carried_as_gray_code() {
    let dirs = gray_cases();
    assert!(dirs.len() >= 5, "at least 5 positive fixtures");
    for dir in dirs {
        let name = dir.file_name().unwrap().to_string_lossy().to_string();
        let c = CASES
            .iter()
            .find(|c| c.case == name)
            .unwrap_or_else(|| panic!("{name}: no simulation spec"));
        let d = fix_and_check(c, "", 2);
        if name == "g6_v_bits_tabs" {
            // tabs follow the file; the name a comment uses is avoided; bit reads kept
            let t = texts(d.path()).join("\n");
            assert!(t.contains("\treg [2:0] hop_gray;\n"), "{t}");
            assert!(t.contains("\t\tb1_s1 <= hop_bin_2[1];\n"), "{t}");
            assert!(!t.contains("wire [2:0] hop_bin ="), "{t}");
        }
    }
}

/// Per-bit routing delay (ns) of bit `k` (the MSB first): spread over 0.8 of a source period, so bits of one
/// binary step arrive at different times, while successive gray steps (at least a source
/// period apart) still arrive in order (common practice: bus skew below one source period).
fn skew(c: &Case, k: u32) -> f64 {
    0.8 * c.src.1 * f64::from(c.width - 1 - k) / f64::from(c.width - 1)
}

/// The fixed module with the gray bus delayed bit by bit on its way into stage 1.
fn with_skew(c: &Case, fixed: &str) -> String {
    let q = c.counter;
    let g = format!("{q}_gray");
    let msb = c.width - 1;
    let mut decl = format!("    wire [{msb}:0] {g}_skew;\n");
    for k in 0..c.width {
        decl.push_str(&format!(
            "    assign #({:.3}) {g}_skew[{k}] = {g}[{k}];\n",
            skew(c, k)
        ));
    }
    let stage1 = format!("{g}_sync1 <= {g};");
    assert!(fixed.contains(&stage1), "{}: {fixed}", c.case);
    let t = fixed.replace(&stage1, &format!("{g}_sync1 <= {g}_skew;"));
    // the delayed copy is declared just before the stage registers
    let at = t
        .find(&format!("{g}_sync1, "))
        .and_then(|i| t[..i].rfind('\n'))
        .expect("stage declaration")
        + 1;
    format!("`timescale 1ns/1ps\n{}{decl}{}", &t[..at], &t[at..])
}

fn testbench(c: &Case, stages: u32) -> String {
    let (src, ts) = c.src;
    let (dst, td) = c.dst;
    let w = c.width;
    let msb = w - 1;
    let q = c.counter;
    let bin = c.bin;
    let slow = ts.max(td);
    let release = 6.0 * slow;
    let warm = release + 30.0 * slow;
    let run = warm + 1200.0 * slow;
    let max_skew = (0..w).map(|k| skew(c, k)).fold(0.0, f64::max);
    let edge = if c.dst_negedge { "negedge" } else { "posedge" };
    let mut tb = format!(
        "`timescale 1ns/1ps\nmodule tb;\n  reg {src} = 0, {dst} = 0;\n  integer seed = 17, nh = 0, checks = 0, bad = 0, held = 0, raw_bad = 0, moves = 0;\n  real hist_t [0:16383];\n  reg [{msb}:0] hist_v [0:16383];\n  reg [{msb}:0] v, last_v, rq;\n  real t, lo, hi;\n"
    );
    let mut conns = vec![format!(".{src}({src})"), format!(".{dst}({dst})")];
    for (n, _) in c.inputs {
        tb.push_str(&format!("  reg {n} = 0;\n"));
        conns.push(format!(".{n}({n})"));
    }
    for (n, active) in c.resets {
        tb.push_str(&format!("  reg {n} = {};\n", 1 - active));
        conns.push(format!(".{n}({n})"));
    }
    tb.push_str(&format!("  {} dut ({});\n", c.module, conns.join(", ")));
    tb.push_str(&format!(
        "  always #({:.3}) {src} = ~{src};\n  initial begin #3.3; forever #({:.3}) {dst} = ~{dst}; end\n",
        ts / 2.0,
        td / 2.0
    ));
    // every value the counter takes, with the time it took it
    tb.push_str(&format!(
        "  always @(dut.{q}) begin hist_t[nh] = $realtime; hist_v[nh] = dut.{q}; if (nh < 16383) nh = nh + 1; end\n"
    ));
    // the value `val` was held at some time in [lo, hi]
    tb.push_str(&format!(
        "  function held_in(input [{msb}:0] val, input real lo, input real hi);\n    integer i; real e;\n    begin\n      held_in = 0;\n      for (i = nh - 1; i >= 0; i = i - 1) begin\n        e = (i == nh - 1) ? 1.0e12 : hist_t[i + 1];\n        if (e >= lo && hist_t[i] <= hi && hist_v[i] === val) held_in = 1;\n        if (e < lo) i = -1;\n      end\n    end\n  endfunction\n"
    ));
    tb.push_str(
        "  function integer values_in(input real lo, input real hi);\n    integer i; real e;\n    begin\n      values_in = 0;\n      for (i = nh - 1; i >= 0; i = i - 1) begin\n        e = (i == nh - 1) ? 1.0e12 : hist_t[i + 1];\n        if (e >= lo && hist_t[i] <= hi) values_in = values_in + 1;\n        if (e < lo) i = -1;\n      end\n    end\n  endfunction\n",
    );
    // control: the raw counter through the same per-bit delays into one destination flop
    tb.push_str(&format!("  wire [{msb}:0] raw_skew;\n"));
    for k in 0..w {
        tb.push_str(&format!(
            "  assign #({:.3}) raw_skew[{k}] = dut.{q}[{k}];\n",
            skew(c, k)
        ));
    }
    tb.push_str(&format!("  always @({edge} {dst}) rq <= raw_skew;\n"));
    // the decoded value: a value the counter held 1 source cycle plus N-1 destination cycles
    // (plus the bus skew) before this edge, never newer, never a mixture
    let n1 = f64::from(stages - 1);
    tb.push_str(&format!(
        "  always @({edge} {dst}) begin\n    t = $realtime;\n    #0.001;\n    if (t > {warm:.3}) begin\n      v = dut.{bin};\n      hi = t - {n1} * {td:.3} + 0.01;\n      lo = t - {n1} * {td:.3} - {max_skew:.3} - 2.0 * {ts:.3} - 0.01;\n      checks = checks + 1;\n      if (!held_in(v, lo, hi)) begin\n        bad = bad + 1;\n        if (bad < 5) $display(\"TORN-OR-LATE t=%0t decoded=%0d\", t, v);\n      end\n      if (values_in(lo, $realtime) == 1) held = held + 1;\n      if (v !== last_v) moves = moves + 1;\n      last_v = v;\n      if (!held_in(rq, t - {max_skew:.3} - 0.01, t + 0.01)) raw_bad = raw_bad + 1;\n    end\n  end\n"
    ));
    tb.push_str("  initial begin\n");
    if let Some(v) = c.init {
        tb.push_str(&format!("    dut.{q} = {v};\n"));
    }
    tb.push_str("    #1;\n");
    for (n, active) in c.resets {
        tb.push_str(&format!("    {n} = {active};\n"));
    }
    tb.push_str(&format!("    #({release:.3});\n"));
    for (n, active) in c.resets {
        tb.push_str(&format!("    {n} = {};\n", 1 - active));
    }
    tb.push_str(&format!(
        "    #({:.3});\n    $display(\"DONE checks=%0d bad=%0d held=%0d raw_bad=%0d moves=%0d\", checks, bad, held, raw_bad, moves);\n    $finish;\n  end\n",
        run - release - 1.0
    ));
    if !c.inputs.is_empty() {
        tb.push_str(&format!("  always @(negedge {src}) begin\n"));
        for (n, stim) in c.inputs {
            tb.push_str(&format!("    {n} = {stim};\n"));
        }
        tb.push_str("  end\n");
    }
    tb.push_str("endmodule\n");
    tb
}

/// Simulate the fixed design (with the per-bit skew) in Icarus Verilog; returns the counts.
fn simulate(c: &Case, dir: &Path, stages: u32) -> [u64; 5] {
    let file = rtl_files(dir).pop().unwrap();
    let fixed = std::fs::read_to_string(&file).unwrap();
    simulate_text(c, &file, &fixed, stages)
}

fn simulate_text(c: &Case, file: &Path, fixed: &str, stages: u32) -> [u64; 5] {
    let sim_dir = tempfile::tempdir().unwrap();
    let dut = sim_dir.path().join(format!(
        "dut.{}",
        if file.extension().unwrap() == "sv" {
            "sv"
        } else {
            "v"
        }
    ));
    std::fs::write(&dut, with_skew(c, fixed)).unwrap();
    let tb = sim_dir.path().join("tb.sv");
    std::fs::write(&tb, testbench(c, stages)).unwrap();
    let out = sim_dir.path().join("sim.vvp");
    let o = Command::new("iverilog")
        .args(["-g2012", "-o"])
        .arg(&out)
        .arg(&tb)
        .arg(&dut)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "{}: {}",
        c.case,
        String::from_utf8_lossy(&o.stderr)
    );
    let o = Command::new("vvp").arg(&out).output().unwrap();
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    let line = text
        .lines()
        .find(|l| l.starts_with("DONE"))
        .unwrap_or_else(|| panic!("{}: {text}", c.case));
    let mut v = [0u64; 5];
    for (i, part) in line.split_whitespace().skip(1).enumerate().take(5) {
        v[i] = part.split('=').nth(1).unwrap().parse().unwrap();
    }
    eprintln!("{}: {line}", c.case);
    v
}

/// Icarus Verilog simulation of every fixed fixture with random enables over two unrelated
/// clocks (at least 1,200 cycles of the slower one): the decoded destination value is always
/// a value the source counter held within the stated latency (1 source cycle and N
/// destination cycles, plus the bus skew) and never newer: no torn mixture, the latency as
/// the title says. The same per-bit skew on the raw binary count does tear (the control: the
/// check can fail).
#[test]
fn the_decoded_count_is_never_torn_and_follows_with_the_stated_latency() {
    if !have("iverilog") {
        panic!("iverilog is needed (tests/run installs it)");
    }
    for c in CASES {
        let d = fix_and_check(c, "", 2);
        let [checks, bad, held, raw_bad, moves] = simulate(c, d.path(), 2);
        assert_eq!(bad, 0, "{}: decoded value torn or late", c.case);
        let slow_cycles = 1200;
        assert!(checks >= 1000, "{}: {checks} checks", c.case);
        assert!(
            held > 20,
            "{}: the counter held long enough to compare exactly only {held} times",
            c.case
        );
        assert!(
            moves > 50,
            "{}: the decoded value moved only {moves} times",
            c.case
        );
        assert!(
            raw_bad > 0,
            "{}: control: the raw binary count never tore under the skew in {slow_cycles} cycles",
            c.case
        );
    }
}

/// `[synchronizers] min_stages = 3`: three stages, and the simulated latency follows.
#[test]
fn min_stages_sets_the_synchronizer_depth() {
    let c = &CASES[0];
    let d = fix_and_check(c, "[synchronizers]\nmin_stages = 3\n", 3);
    let [checks, bad, _, raw_bad, _] = simulate(c, d.path(), 3);
    assert!(checks >= 1000 && raw_bad > 0);
    assert_eq!(bad, 0, "three stages: decoded value torn or late");
}

/// The simulation check fails on a broken carry (so passing it means something): the same
/// fixed design with the encoding removed (binary through the per-bit chains) tears, and
/// with one stage fewer than the title states it is early.
#[test]
fn the_simulation_check_catches_a_broken_carry() {
    let c = &CASES[0];
    let d = fix_and_check(c, "", 2);
    let file = rtl_files(d.path()).pop().unwrap();
    let fixed = std::fs::read_to_string(&file).unwrap();
    let q = c.counter;
    // mutant 1: binary instead of gray code, no decode
    let binary = fixed
        .replace(
            &format!("{q}_gray <= {q} ^ ({q} >> 1);"),
            &format!("{q}_gray <= {q};"),
        )
        .lines()
        .map(|l| {
            if l.trim_start().starts_with(&format!("wire [4:0] {q}_bin =")) {
                format!("    wire [4:0] {q}_bin = {q}_gray_sync2;")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert_ne!(binary, fixed);
    let [_, bad, ..] = simulate_text(c, &file, &binary, 2);
    assert!(
        bad > 0,
        "a binary bus through per-bit chains must tear under skew"
    );
    // mutant 2: the second stage skipped (one stage fewer than stated)
    let short = fixed.replace(
        &format!("{q}_gray_sync2 <= {q}_gray_sync1;"),
        &format!("{q}_gray_sync2 <= {q}_gray;"),
    );
    assert_ne!(short, fixed);
    let [_, bad, ..] = simulate_text(c, &file, &short, 2);
    assert!(
        bad > 0,
        "a chain one stage short is earlier than the stated latency"
    );
}

#[test]
fn no_gray_code_where_it_would_be_wrong() {
    // (case, crossing rule, the reason said)
    let cases: &[(&str, &str, &str)] = &[
        (
            "x1_input_load",
            "multibit-crossing",
            "is loaded from input `pos_i`",
        ),
        ("x2_step2", "unsynchronized-crossing", "steps by 2"),
        ("x3_not_counter", "multibit-crossing", "is not a counter"),
        (
            "x4_wrap",
            "unsynchronized-crossing",
            "loaded with a constant while it counts",
        ),
        ("x5_modules", "unsynchronized-crossing", "different modules"),
    ];
    let mut dirs: Vec<String> = std::fs::read_dir(fixtures().join("fix/nogray"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    dirs.sort();
    assert_eq!(
        dirs,
        cases.iter().map(|c| c.0.to_string()).collect::<Vec<_>>()
    );
    for (case, rule, why) in cases {
        let d = copy_case(&fixtures().join("fix/nogray").join(case));
        let files = rtl_files(d.path());
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{case}: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{case}: {e}"));
        let (before, _) = check(d.path(), &[]);
        assert!(
            before.iter().any(|f| f["rule"] == *rule),
            "{case}: {before:#?}"
        );
        let orig = texts(d.path());
        let (after, stderr) = check(d.path(), &["--fix", RULES]);
        assert!(
            !stderr.contains("+++ b/"),
            "{case}: a fix was made: {stderr}"
        );
        assert_eq!(texts(d.path()), orig, "{case}: text changed");
        assert_eq!(keys(&after), keys(&before), "{case}");
        let line = stderr
            .lines()
            .find(|l| l.starts_with(&format!("seam: no fix for {rule}")))
            .unwrap_or_else(|| panic!("{case}: no reason given: {stderr}"));
        assert!(line.contains(why), "{case}: reason `{why}` not in: {line}");
    }
}

// ------------------------------------------------------------------ through the editor

fn actions_for(
    c: &mut lsp_client::LspClient,
    uri: &str,
    d: &serde_json::Value,
) -> Vec<serde_json::Value> {
    let r = c.call(
        "textDocument/codeAction",
        serde_json::json!({ "textDocument": { "uri": uri }, "range": d["range"], "context": { "diagnostics": [d] } }),
    );
    r.as_array().cloned().unwrap_or_default()
}

/// The code action of a crossing diagnostic through `seam serve` (LSP 3.17 CodeAction, kind
/// `quickfix`, preferred; WorkspaceEdit `documentChanges` with the document version): applied
/// to the buffer it gives the same text as `seam check --fix`, the crossing diagnostics on the
/// counter clear with no new one, and the action is no longer offered.
#[test]
fn the_code_action_carries_the_counter_as_gray_code() {
    use lsp_client::{LspClient, Utf16Doc};
    use serde_json::{json, Value};
    for (case, file, rule) in [
        ("g2_sv_chain_down", "gh_tank_left.sv", "multibit-crossing"),
        ("g3_sv_readers", "gh_tray.sv", "unsynchronized-crossing"),
    ] {
        let d = copy_case(&fixtures().join("fix/gray").join(case));
        let path = d.path().join(file);
        let mut c = LspClient::start(
            d.path(),
            LspClient::default_capabilities(),
            json!({ "testMode": true }),
        );
        let uri = c.open(&path, 1);
        c.wait_analyzed(&uri, 1);
        let before = c.diags(&uri);
        let diag = before
            .iter()
            .find(|x| x["code"] == rule)
            .unwrap_or_else(|| panic!("{case}: no {rule}: {before:?}"))
            .clone();
        let actions = actions_for(&mut c, &uri, &diag);
        let gray = actions
            .iter()
            .find(|a| a["isPreferred"] == true)
            .unwrap_or_else(|| panic!("{case}: no preferred action: {actions:?}"))
            .clone();
        assert_eq!(gray["kind"], "quickfix");
        let title = gray["title"].as_str().unwrap();
        assert!(
            title.contains("as gray code") && title.contains("latency"),
            "{case}: {title}"
        );
        let dcs = gray["edit"]["documentChanges"].as_array().unwrap();
        assert_eq!(dcs.len(), 1, "{case}: one document edited");
        assert_eq!(dcs[0]["textDocument"]["version"], 1);
        let mut doc = Utf16Doc::new(&std::fs::read_to_string(&path).unwrap());
        let mut es: Vec<&Value> = dcs[0]["edits"].as_array().unwrap().iter().collect();
        let pos = |e: &Value, k: &str| {
            (
                e["range"][k]["line"].as_u64().unwrap() as usize,
                e["range"][k]["character"].as_u64().unwrap() as usize,
            )
        };
        es.sort_by_key(|e| std::cmp::Reverse(pos(e, "start")));
        let changes: Vec<Value> = es
            .into_iter()
            .map(|e| {
                let (sl, sc) = pos(e, "start");
                let (el, ec) = pos(e, "end");
                doc.edit(sl, sc, el, ec, e["newText"].as_str().unwrap())
            })
            .collect();
        c.change(&uri, 2, Value::Array(changes));
        c.wait_analyzed(&uri, 2);
        let after = c.diags(&uri);
        let crossing = |x: &&Value| {
            x["code"] == "multibit-crossing"
                || x["code"] == "unsynchronized-crossing"
                || x["code"] == "syntax-error"
        };
        assert!(!after.iter().any(|x| crossing(&x)), "{case}: {after:?}");
        let mut expect: Vec<String> = before
            .iter()
            .filter(|x| !crossing(x))
            .map(|x| x["code"].to_string())
            .collect();
        let mut got: Vec<String> = after.iter().map(|x| x["code"].to_string()).collect();
        expect.sort();
        got.sort();
        assert_eq!(got, expect, "{case}: no new diagnostic");
        // the batch checker makes the same edit (the reference)
        let other = copy_case(&fixtures().join("fix/gray").join(case));
        check(other.path(), &["--fix", RULES]);
        assert_eq!(
            doc.text,
            std::fs::read_to_string(other.path().join(file)).unwrap(),
            "{case}"
        );
        for x in &after {
            let again = actions_for(&mut c, &uri, x);
            assert!(
                !again
                    .iter()
                    .any(|a| a["title"].as_str().unwrap().contains("gray code")),
                "{case}: {again:?}"
            );
        }
        assert_eq!(c.shutdown_and_exit().code(), Some(0));
    }
}
