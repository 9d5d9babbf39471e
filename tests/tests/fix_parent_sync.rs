//! Quick fix "insert a synchronizer in the parent" (`unsynchronized-crossing` into a module
//! of which only some instances cross), end to end through `seam check --fix`. Outside
//! references: sv-parser (Seam's parser: no `syntax-error` after the fix), Icarus Verilog
//! (`iverilog -g2012` compiles the fixed design, and simulates the latency), Verilator
//! (`verilator --lint-only`). Fixtures: `tests/fixtures/fix/parent/*` (parent and child in
//! separate files; Verilog and SystemVerilog; with and without reset; a bit-select
//! connection, ordered connections, a falling-edge child, two crossing instances and a taken
//! name) and `tests/fixtures/fix/noparent/*` (no fix: the connection is an expression, the
//! clock connection is not a plain name, the parent is instantiated with different crossing
//! status).

use std::collections::BTreeSet;
use std::path::PathBuf;
use std::process::Command;

use seam_tests::fixcase::*;
use seam_tests::*;

const RULE: &str = "unsynchronized-crossing";

#[test]
fn every_parent_fixture_is_fixed_and_still_compiles() {
    let all = cases("parent");
    assert!(all.len() >= 5, "at least 5 fixtures");
    let mut langs = BTreeSet::new();
    for case in all {
        let name = case.file_name().unwrap().to_string_lossy().to_string();
        let d = copy_case(&case);
        let files = rtl_files(d.path());
        assert!(
            files.len() >= 2,
            "{name}: parent and child in separate files"
        );
        // the original is valid RTL (Icarus Verilog, Verilator) and has the finding
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} original: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} original: {e}"));
        let (before, _) = check(d.path(), &[]);
        assert!(!of_rule(&before, RULE).is_empty(), "{name}: no finding");

        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(
            stderr.contains("-flop synchronizer for `") && stderr.contains(" only; review"),
            "{name}: no parent-side synchronizer diff: {stderr}"
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
        // only the parent file changes; the child module is untouched
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
                && l.contains("_sync1, ")
                && l.contains("_sync2;")),
            "{name}: stage declarations: {t}"
        );
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
fn the_connection_is_replaced_and_names_are_unique() {
    let d = copy_case(&fixtures().join("fix/parent/pa5_v_two_crossing"));
    check(d.path(), &["--fix", RULE]);
    let t = std::fs::read_to_string(d.path().join("hv_feeder.v")).unwrap();
    // `feed_sync1` is taken: each crossing instance gets its own renumbered stages on its
    // own clock, and the instance that does not cross keeps the raw signal
    assert!(
        t.contains("reg feed_2_sync1, feed_2_sync2;") && t.contains("always @(posedge clk_b)"),
        "{t}"
    );
    assert!(
        t.contains("reg feed_3_sync1, feed_3_sync2;") && t.contains("always @(posedge clk_c)"),
        "{t}"
    );
    assert!(
        t.contains(".feed(feed_2_sync2)") && t.contains(".feed(feed_3_sync2)"),
        "{t}"
    );
    assert!(
        t.contains("hv_pump u_a (.clk(clk_sched), .feed(feed),"),
        "{t}"
    );
    // a bit select connection becomes the last stage; ordered connections keep their order
    let d = copy_case(&fixtures().join("fix/parent/pa3_v_bitsel"));
    check(d.path(), &["--fix", RULE]);
    let t = std::fs::read_to_string(d.path().join("hv_vent.v")).unwrap();
    assert!(
        t.contains("flags_2_sync1 <= flags[2];") && t.contains(".en(flags_2_sync2)"),
        "{t}"
    );
    assert!(
        t.contains("u_front (.clk(clk_clim), .rst(rst_clim), .en(flags[2])"),
        "{t}"
    );
    let d = copy_case(&fixtures().join("fix/parent/pa4_sv_ordered_negedge"));
    check(d.path(), &["--fix", RULE]);
    let t = std::fs::read_to_string(d.path().join("hv_porch.sv")).unwrap();
    assert!(
        t.contains("u_right (clk_right, dark_sync2, lit_right);")
            && t.contains("always_ff @(negedge clk_right)"),
        "{t}"
    );
}

#[test]
fn no_parent_side_synchronizer_where_it_would_be_wrong() {
    // (fixture, words of the reason `seam check --fix` prints)
    let want = [
        (
            "nq1_concat",
            "is an expression, not a plain name or bit select",
        ),
        (
            "nq2_clock_expr",
            "clock connection of `u_b.clk` is not a plain name",
        ),
        ("nq3_parent_twice", "instantiated several times"),
    ];
    assert_eq!(cases("noparent").len(), want.len());
    for (case, why) in want {
        let d = copy_case(&fixtures().join("fix/noparent").join(case));
        let files = rtl_files(d.path());
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{case}: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{case}: {e}"));
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

/// How one fixture is driven in the latency testbench.
struct Lat {
    case: &'static str,
    top: &'static str,
    decls: &'static str,
    dest_clk: &'static str,
    dest_edge: &'static str,
    /// Statements that put `val` on the crossing source right now (between dest edges).
    drive: &'static str,
    setup: &'static str,
    /// The source register bit and the inserted last stage, as tb paths.
    source: &'static str,
    last: &'static str,
}

/// Latency by simulation (Icarus Verilog): the source changes strictly between destination
/// edges e(k-1) and e(k) and then holds; the last stage of the inserted N-stage synchronizer
/// in the parent (N = 2, `min_stages` default) shows the new value right after e(k+N-1) and
/// not before. Trials sweep the change over the destination period; with a reset, the stages
/// hold the source's reset value while it is asserted.
#[test]
fn latency_of_the_parent_side_synchronizer_by_simulation() {
    let n_stages = 2;
    let cases = [
        Lat {
            case: "pa1_zones",
            top: "gh_zones",
            decls: "reg clk_th = 0, clk_b = 0, want_i = 0; wire heat_a, heat_b;",
            dest_clk: "clk_b",
            dest_edge: "posedge",
            drive: "want_i = val; #0.1 clk_th = 1; #0.1 clk_th = 0;",
            setup: "#0.1 clk_th = 1; #0.1 clk_th = 0;",
            source: "dut.want",
            last: "dut.want_sync2",
        },
        Lat {
            case: "pa2_sv_reset",
            top: "hv_brood",
            decls: "reg clk_clim = 0, clk_outer = 0, rst_n = 1, cold_i = 0; wire warm_in, warm_out;",
            dest_clk: "clk_outer",
            dest_edge: "posedge",
            drive: "cold_i = val; #0.1 clk_clim = 1; #0.1 clk_clim = 0;",
            setup: "#1 rst_n = 0; #1; if (dut.need_heat_sync1 !== 1'b1 || dut.need_heat_sync2 !== 1'b1) $display(\"BADRESET\"); rst_n = 1; repeat (3) begin #1 clk_clim = 1; #1 clk_clim = 0; end",
            source: "dut.need_heat",
            last: "dut.need_heat_sync2",
        },
        Lat {
            case: "pa3_v_bitsel",
            top: "hv_vent",
            decls: "reg clk_clim = 0, clk_rear = 0, rst = 0; reg [3:0] flags_i = 0; wire spin_front, spin_rear;",
            dest_clk: "clk_rear",
            dest_edge: "posedge",
            drive: "flags_i[2] = val; #0.1 clk_clim = 1; #0.1 clk_clim = 0;",
            setup: "#1 rst = 1; #1; if (dut.flags_2_sync1 !== 1'b0 || dut.flags_2_sync2 !== 1'b0) $display(\"BADRESET\"); rst = 0; repeat (3) begin #1 clk_clim = 1; #1 clk_clim = 0; end",
            source: "dut.flags[2]",
            last: "dut.flags_2_sync2",
        },
        Lat {
            case: "pa4_sv_ordered_negedge",
            top: "hv_porch",
            decls: "reg clk_sense = 0, clk_right = 0, dark_i = 0; wire lit_left, lit_right;",
            dest_clk: "clk_right",
            dest_edge: "negedge",
            drive: "dark_i = val; #0.1 clk_sense = 1; #0.1 clk_sense = 0;",
            setup: "#0.1 clk_sense = 1; #0.1 clk_sense = 0;",
            source: "dut.dark",
            last: "dut.dark_sync2",
        },
        Lat {
            case: "pa5_v_two_crossing",
            top: "hv_feeder",
            decls: "reg clk_sched = 0, clk_b = 0, clk_c = 0, hungry_i = 0; wire run_a, run_b, run_c;",
            dest_clk: "clk_b",
            dest_edge: "posedge",
            drive: "hungry_i = val; #0.1 clk_sched = 1; #0.1 clk_sched = 0;",
            setup: "#0.1 clk_sched = 1; #0.1 clk_sched = 0;",
            source: "dut.feed",
            last: "dut.feed_2_sync2",
        },
        Lat {
            case: "pa5_v_two_crossing",
            top: "hv_feeder",
            decls: "reg clk_sched = 0, clk_b = 0, clk_c = 0, hungry_i = 0; wire run_a, run_b, run_c;",
            dest_clk: "clk_c",
            dest_edge: "posedge",
            drive: "hungry_i = val; #0.1 clk_sched = 1; #0.1 clk_sched = 0;",
            setup: "#0.1 clk_sched = 1; #0.1 clk_sched = 0;",
            source: "dut.feed",
            last: "dut.feed_3_sync2",
        },
    ];
    for c in cases {
        let d = copy_case(&fixtures().join("fix/parent").join(c.case));
        check(d.path(), &["--fix", RULE]);
        let period = 40;
        let trials = 19;
        let tb = format!(
            "`timescale 1ns/10ps\nmodule tb;\n  {decls}\n  {top} dut (.*);\n  always #{half} {clk} = ~{clk};\n  integer t, k;\n  reg val;\n  initial begin\n    {setup}\n    repeat (4) @({edge} {clk});\n    for (t = 0; t < {trials}; t = t + 1) begin\n      val = ~{source};\n      @({edge} {clk});\n      #(1 + t * 2);\n      {drive}\n      for (k = 1; k <= 4; k = k + 1) begin\n        @({edge} {clk}); #0.5;\n        $display(\"T %0d K %0d V %b W %b\", t, k, {last}, val);\n      end\n    end\n    $finish;\n  end\nendmodule\n",
            decls = c.decls,
            top = c.top,
            half = period / 2,
            clk = c.dest_clk,
            edge = c.dest_edge,
            setup = c.setup,
            trials = trials,
            source = c.source,
            drive = c.drive,
            last = c.last,
        );
        let tbf = d.path().join("tb_latency.sv");
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
        assert!(
            !out.contains("BADRESET"),
            "{}: stages not at the source's reset value",
            c.case
        );
        let mut seen = 0;
        for line in out.lines().filter(|l| l.starts_with("T ")) {
            let w: Vec<&str> = line.split_whitespace().collect();
            let (k, v, want): (u32, &str, &str) = (w[3].parse().unwrap(), w[5], w[7]);
            // edge K counts from e(k): new value right after e(k+N-1), i.e. K = N, not before
            if k < n_stages {
                assert_ne!(v, want, "{}: new value too early: {line}", c.case);
            } else {
                assert_eq!(v, want, "{}: new value missing: {line}", c.case);
            }
            seen += 1;
        }
        assert_eq!(seen, trials * 4, "{}: {out}", c.case);
    }
}
