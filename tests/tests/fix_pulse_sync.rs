//! Quick fix "insert a toggle pulse synchronizer" (`unsynchronized-crossing` of a one-cycle
//! pulse from a faster clock), end to end through `seam check --fix`. Outside references:
//! sv-parser (Seam's parser: no `syntax-error` after the fix), Icarus Verilog (`iverilog
//! -g2012` compiles the fixed design and simulates it), Verilator (`verilator --lint-only`).
//! The toggle scheme itself is common practice; what is checked is the stated behaviour.
//! Fixtures: `tests/fixtures/fix/pulse/*` (Verilog and SystemVerilog; no reset, reset on both
//! sides, on the destination only, on the source only; strobe and edge-detect pulses; tabs,
//! a taken name, a falling-edge reader) and `tests/fixtures/fix/nopulse/*` (no fix: a pulse
//! without frequencies, a pulse whose register is in another module than its reader).

use std::collections::BTreeSet;
use std::path::PathBuf;
use std::process::Command;

use seam_tests::fixcase::*;
use seam_tests::*;

const RULE: &str = "unsynchronized-crossing";

#[test]
fn every_pulse_fixture_is_fixed_and_still_compiles() {
    let all = cases("pulse");
    assert!(all.len() >= 5, "at least 5 fixtures");
    let mut langs = BTreeSet::new();
    for case in all {
        let name = case.file_name().unwrap().to_string_lossy().to_string();
        let d = copy_case(&case);
        let files = rtl_files(d.path());
        // the original is valid RTL (Icarus Verilog, Verilator) and has the finding
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} original: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} original: {e}"));
        let (before, _) = check(d.path(), &[]);
        assert!(!of_rule(&before, RULE).is_empty(), "{name}: no finding");

        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(
            stderr.contains("# Insert a toggle pulse synchronizer") && stderr.contains("+++ b/"),
            "{name}: no pulse synchronizer diff: {stderr}"
        );
        // sv-parser parses the fixed text (Seam's parser): no syntax-error
        assert!(
            of_rule(&after, "syntax-error").is_empty(),
            "{name}: {after:?}"
        );
        assert!(of_rule(&after, RULE).is_empty(), "{name}: {after:#?}");
        let new: Vec<_> = keys(&after).difference(&keys(&before)).cloned().collect();
        assert!(new.is_empty(), "{name}: new findings {new:?}");
        // Icarus Verilog and Verilator accept the fixed design
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
        // toggle, N + 1 = 3 chain flops, and the XOR of the last two as the read
        let fixed = texts(d.path());
        let changed: Vec<&(PathBuf, String)> = fixed
            .iter()
            .filter(|(p, t)| {
                std::fs::read_to_string(case.join(p.file_name().unwrap())).unwrap() != *t
            })
            .collect();
        assert_eq!(changed.len(), 1, "{name}: one file rewritten");
        let (p, t) = changed[0];
        langs.insert(p.extension().unwrap().to_string_lossy().to_string());
        let decl = if p.extension().unwrap() == "sv" {
            "logic "
        } else {
            "reg "
        };
        assert!(
            t.lines().any(|l| l.trim_start().starts_with(decl)
                && l.contains("_tgl1")
                && l.contains("_psync1")
                && l.contains("_psync3")
                && !l.contains("_psync4")),
            "{name}: declarations: {t}"
        );
        assert!(t.contains("_psync2 ^ "), "{name}: XOR read: {t}");
        // after the fix the action is no longer offered: a second run changes nothing
        let (_, stderr2) = check(d.path(), &["--fix", RULE]);
        assert!(
            !stderr2.contains("+++ b/"),
            "{name}: fixed twice: {stderr2}"
        );
        assert_eq!(texts(d.path()), fixed, "{name}: changed on the second run");
    }
    assert_eq!(langs.len(), 2, "Verilog and SystemVerilog fixtures");
}

#[test]
fn no_pulse_synchronizer_where_it_would_be_wrong() {
    // (fixture, words of the reason `seam check --fix` prints)
    let want = [
        ("np1_no_freq", "frequencies are not given"),
        ("np2_across", "in another module"),
    ];
    let all = cases("nopulse");
    assert_eq!(all.len(), want.len());
    for (case, why) in want {
        let d = copy_case(&fixtures().join("fix/nopulse").join(case));
        iverilog_compiles(&rtl_files(d.path()), &[]).unwrap_or_else(|e| panic!("{case}: {e}"));
        let (before, _) = check(d.path(), &[]);
        assert!(!of_rule(&before, RULE).is_empty(), "{case}: {before:#?}");
        let orig = texts(d.path());
        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(
            !stderr.contains("+++ b/"),
            "{case}: a fix was made: {stderr}"
        );
        assert_eq!(texts(d.path()), orig, "{case}: text changed");
        assert_eq!(keys(&after), keys(&before), "{case}");
        assert!(
            stderr.contains("no fix for unsynchronized-crossing") && stderr.contains(why),
            "{case}: reason missing: {stderr}"
        );
    }
}

/// How one fixture is driven in the pulse testbench.
struct Sim {
    case: &'static str,
    top: &'static str,
    decls: &'static str,
    src_clk: &'static str,
    dst_clk: &'static str,
    dst_edge: &'static str,
    /// The input that makes one source pulse when high for one source cycle.
    input: &'static str,
    setup: &'static str,
    /// Pulse register, and the last two inserted chain flops (tb paths below `dut.`).
    src: &'static str,
    a: &'static str,
    b: &'static str,
}

/// By simulation (Icarus Verilog): random source pulses, spaced at least N + 1 destination
/// cycles apart as the fix's title states, over more than 1,000 source cycles. The
/// destination read (`a ^ b`) must show exactly one pulse of one destination cycle per
/// source pulse, in order, none extra, each N..N+1 destination cycles after the toggle flips.
#[test]
fn pulses_arrive_once_each_by_simulation() {
    let n: f64 = 2.0; // `min_stages` default
    let (sh, dh) = (3.013_f64, 17.711_f64); // half periods (ns): the source is faster
    let sims = [
        Sim {
            case: "p1_seed_fast",
            top: "gh_seed",
            decls: "reg clk_eye = 0, clk_cnt = 0, seed_i = 0; wire [7:0] seeds;",
            src_clk: "clk_eye",
            dst_clk: "clk_cnt",
            dst_edge: "posedge",
            input: "seed_i",
            setup: "",
            src: "seen",
            a: "seen_psync2",
            b: "seen_psync3",
        },
        Sim {
            case: "p2_sv_reset",
            top: "hv_gate",
            decls: "reg clk_gate = 0, clk_log = 0, rst_n = 1, beam_i = 0; wire [15:0] bees;",
            src_clk: "clk_gate",
            dst_clk: "clk_log",
            dst_edge: "posedge",
            input: "beam_i",
            setup: "#2 rst_n = 0; #100 rst_n = 1;",
            src: "bee_in",
            a: "bee_in_psync2",
            b: "bee_in_psync3",
        },
        Sim {
            case: "p3_v_dest_reset",
            top: "hv_swarm",
            decls: "reg clk_mic = 0, clk_alarm = 0, rst = 0, buzz_i = 0; wire [7:0] alerts;",
            src_clk: "clk_mic",
            dst_clk: "clk_alarm",
            dst_edge: "posedge",
            input: "buzz_i",
            setup: "#2 rst = 1; #100 rst = 0;",
            src: "buzz_start",
            a: "buzz_start_psync2",
            b: "buzz_start_psync3",
        },
        Sim {
            case: "p4_sv_tabs_negedge",
            top: "hv_scale",
            decls:
                "reg clk_adc = 0, clk_scale = 0, ready_i = 0; wire tick_psync1; wire [9:0] samples;",
            src_clk: "clk_adc",
            dst_clk: "clk_scale",
            dst_edge: "negedge",
            input: "ready_i",
            setup: "",
            src: "tick",
            a: "tick_2_psync2",
            b: "tick_2_psync3",
        },
        Sim {
            case: "p5_v_src_reset",
            top: "hv_lid",
            decls: "reg clk_lid = 0, clk_panel = 0, rst_n = 1, lift_i = 0; wire opened;",
            src_clk: "clk_lid",
            dst_clk: "clk_panel",
            dst_edge: "posedge",
            input: "lift_i",
            setup: "#2 rst_n = 0; #100 rst_n = 1;",
            src: "lid_open",
            a: "lid_open_psync2",
            b: "lid_open_psync3",
        },
    ];
    assert_eq!(
        sims.len(),
        cases("pulse").len(),
        "every pulse fixture is simulated"
    );
    let (ts, td) = (2.0 * sh, 2.0 * dh);
    // N + 1 destination cycles, in whole source cycles (the stated spacing rule)
    let min_gap = ((n + 1.0) * td / ts).ceil() as u32;
    let pulses = 400;
    for c in sims {
        let d = copy_case(&fixtures().join("fix/pulse").join(c.case));
        check(d.path(), &["--fix", RULE]);
        let tb = format!(
            "`timescale 1ns/1ps
module tb;
  {decls}
  {top} dut (.*);
  always #{sh} {sclk} = ~{sclk};
  initial begin #1.3; forever #{dh} {dclk} = ~{dclk}; end
  integer i, gap, cyc = 0;
  integer seed = 11;
  reg go = 0;
  always @(posedge {sclk}) begin
    cyc = cyc + 1;
    if (go && dut.{src} === 1'b1) $display(\"S %0.3f\", $realtime);
  end
  always @({dedge} {dclk}) if (go) begin
    if ((dut.{a} ^ dut.{b}) === 1'b1) $display(\"D %0.3f\", $realtime);
    else if ((dut.{a} ^ dut.{b}) !== 1'b0) $display(\"X %0.3f\", $realtime);
  end
  initial begin
    {setup}
    repeat (8) @(posedge {dclk});
    go = 1;
    cyc = 0;
    for (i = 0; i < {pulses}; i = i + 1) begin
      @(negedge {sclk}); {input} = 1;
      @(negedge {sclk}); {input} = 0;
      gap = {min_gap} + ($random(seed) & 31);
      repeat (gap) @(negedge {sclk});
    end
    repeat (8) @(posedge {dclk});
    $display(\"CYC %0d\", cyc);
    $finish;
  end
endmodule
",
            decls = c.decls,
            top = c.top,
            sclk = c.src_clk,
            dclk = c.dst_clk,
            dedge = c.dst_edge,
            src = c.src,
            a = c.a,
            b = c.b,
            setup = c.setup,
            input = c.input,
        );
        let tbf = d.path().join("tb_pulse.sv");
        std::fs::write(&tbf, tb).unwrap();
        let sim = d.path().join("sim.out");
        let o = Command::new("iverilog")
            .args(["-g2012", "-o"])
            .arg(&sim)
            .arg(&tbf)
            .args(rtl_files(d.path()))
            .output()
            .unwrap();
        assert!(
            o.status.success(),
            "{}: {}",
            c.case,
            String::from_utf8_lossy(&o.stderr)
        );
        let o = Command::new("vvp").arg(&sim).output().unwrap();
        let out = String::from_utf8_lossy(&o.stdout);
        let times = |tag: &str| -> Vec<f64> {
            out.lines()
                .filter_map(|l| l.strip_prefix(tag))
                .map(|v| v.trim().parse().unwrap())
                .collect()
        };
        let (s, dst, x) = (times("S "), times("D "), times("X "));
        let cyc: u32 = times("CYC ").first().copied().unwrap_or(0.0) as u32;
        assert!(cyc >= 1000, "{}: only {cyc} source cycles", c.case);
        assert!(
            x.is_empty(),
            "{}: unknown destination pulse at {x:?}",
            c.case
        );
        assert_eq!(s.len(), pulses, "{}: source pulses", c.case);
        // exactly one destination pulse per source pulse (none lost, none extra)
        assert_eq!(dst.len(), s.len(), "{}: destination pulses", c.case);
        let lats: Vec<f64> = s.iter().zip(&dst).map(|(a, b)| (b - a) / td).collect();
        eprintln!(
            "{}: {cyc} source cycles, {} source pulses, {} destination pulses, latency {:.2}..{:.2} destination cycles after the toggle",
            c.case,
            s.len(),
            dst.len(),
            lats.iter().cloned().fold(f64::MAX, f64::min),
            lats.iter().cloned().fold(f64::MIN, f64::max)
        );
        for (k, (ts_k, td_k)) in s.iter().zip(&dst).enumerate() {
            // one destination cycle long: the next sampling edge is low
            if k + 1 < dst.len() {
                assert!(
                    dst[k + 1] - td_k > td * 1.5,
                    "{}: pulse {k} lasts more than one cycle",
                    c.case
                );
            }
            // in order, N..N+1 destination cycles after the toggle flips
            let lat = (td_k - ts_k) / td;
            assert!(
                lat > n - 0.01 && lat <= n + 1.01,
                "{}: pulse {k}: latency {lat:.2} destination cycles",
                c.case
            );
        }
    }
}
