//! Quick fix "insert synchronizer" (`unsynchronized-crossing`), end to end through
//! `seam check --fix`. Outside references: sv-parser (Seam's parser: no `syntax-error` after
//! the fix), Icarus Verilog (`iverilog -g2012` compiles the fixed design, and simulates the
//! latency), Verilator (`verilator --lint-only`). Fixtures: `tests/fixtures/fix/sync/*`
//! (positive: Verilog and SystemVerilog, with and without reset, across files, async input,
//! bit select, tabs and a name clash, negedge) and `tests/fixtures/fix/nosync/*` (no fix may be
//! offered: a bus, a pulse without frequencies, logic of two source bits). A pulse from a
//! faster clock and a module whose instances do not all cross now have fixes of their own
//! (`fix_pulse_sync.rs`, `fix_parent_sync.rs`).

use std::path::PathBuf;
use std::process::Command;

use seam_tests::fixcase::*;
use seam_tests::*;

const RULE: &str = "unsynchronized-crossing";

#[test]
fn every_positive_fixture_is_fixed_and_still_compiles() {
    let all = cases("sync");
    assert!(all.len() >= 5, "at least 5 fixtures");
    for case in all {
        let name = case.file_name().unwrap().to_string_lossy().to_string();
        let d = copy_case(&case);
        let files = rtl_files(d.path());
        // the original is valid RTL (outside references) and has the finding
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} original: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} original: {e}"));
        let (before, _) = check(d.path(), &[]);
        assert!(
            !of_rule(&before, RULE).is_empty(),
            "{name}: no finding to fix"
        );

        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(
            stderr.contains("--- a/") && stderr.contains("+++ b/"),
            "{name}: no diff printed: {stderr}"
        );
        // sv-parser parses the fixed text (Seam's parser): no syntax-error
        assert!(
            of_rule(&after, "syntax-error").is_empty(),
            "{name}: {after:?}"
        );
        assert!(
            of_rule(&after, RULE).is_empty(),
            "{name}: finding still there: {after:#?}"
        );
        // no new finding of any other rule
        let new: Vec<_> = keys(&after).difference(&keys(&before)).cloned().collect();
        assert!(new.is_empty(), "{name}: new findings {new:?}");
        // Icarus Verilog and Verilator accept the fixed design
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
        // a stage register per DESIGN.md section 7: `<sig>_sync1`, `<sig>_sync2`, in the
        // file's language
        let fixed = texts(d.path());
        let changed: Vec<&(PathBuf, String)> = fixed
            .iter()
            .filter(|(p, t)| {
                std::fs::read_to_string(case.join(p.file_name().unwrap())).unwrap() != *t
            })
            .collect();
        assert_eq!(changed.len(), 1, "{name}: one file rewritten");
        let (p, t) = changed[0];
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
        assert_eq!(
            texts(d.path()),
            fixed,
            "{name}: text changed on the second run"
        );
    }
}

#[test]
fn the_fixed_text_keeps_the_files_indentation_and_avoids_taken_names() {
    let d = copy_case(&fixtures().join("fix/sync/s6_tabs_clash"));
    check(d.path(), &["--fix", RULE]);
    let t = std::fs::read_to_string(d.path().join("gh_rain.v")).unwrap();
    // `rain_sync1` is an existing port: the fix must not take it
    assert!(t.contains("\treg rain_2_sync1, rain_2_sync2;\n"), "{t}");
    assert!(t.contains("\t\train_2_sync1 <= rain;\n"), "{t}");
    // both readers on clk_log read the last stage
    assert!(
        t.contains("wet <= rain_2_sync2;") && t.contains("if (rain_2_sync2)"),
        "{t}"
    );
    assert!(!t.contains("wet <= rain;"));
}

#[test]
fn no_synchronizer_where_it_would_be_wrong() {
    let all = cases("nosync");
    assert!(all.len() >= 3);
    for case in all {
        let name = case.file_name().unwrap().to_string_lossy().to_string();
        let d = copy_case(&case);
        let files = rtl_files(d.path());
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name}: {e}"));
        let (before, _) = check(d.path(), &[]);
        // the negative fixture does have a crossing finding (of some rule)...
        assert!(
            before
                .iter()
                .any(|f| f["rule"] == RULE || f["rule"] == "multibit-crossing"),
            "{name}: {before:#?}"
        );
        // ...but no fix is made, the text is untouched, and the reason is said
        let orig = texts(d.path());
        let (after, stderr) = check(d.path(), &["--fix", RULE]);
        assert!(
            !stderr.contains("+++ b/"),
            "{name}: a fix was made: {stderr}"
        );
        assert_eq!(texts(d.path()), orig, "{name}");
        assert_eq!(keys(&after), keys(&before), "{name}");
        if !of_rule(&before, RULE).is_empty() {
            assert!(
                stderr.contains("no fix for unsynchronized-crossing"),
                "{name}: {stderr}"
            );
        }
    }
}

#[test]
fn waivers_for_any_rule_from_the_cli() {
    // waive every finding of the bus fixture (no RTL fix there): each becomes waived
    let d = copy_case(&fixtures().join("fix/nosync/n1_bus"));
    let (before, _) = check(d.path(), &[]);
    let n = before.iter().filter(|f| f["waived"] == false).count();
    assert!(n > 0);
    let (after, stderr) = check(d.path(), &["--fix", "waive:all"]);
    assert!(
        stderr.lines().any(|l| l.starts_with('+')
            && l.trim_start_matches('+')
                .trim_start()
                .starts_with("// seam: allow(")),
        "{stderr}"
    );
    assert!(after.iter().all(|f| f["waived"] == true), "{after:#?}");
    assert_eq!(
        after.len(),
        before.len(),
        "waived findings are kept and counted"
    );
    iverilog_compiles(&rtl_files(d.path()), &[]).unwrap();
    // a rule that is not one is a usage error (exit 2)
    let out = seam(&["check", "--fix", "no-such-rule"], d.path());
    assert_eq!(out.status.code(), Some(2));
}

/// How one fixture is driven in the latency testbench.
struct Lat {
    case: &'static str,
    top: &'static str,
    /// Testbench declarations (`reg`/`wire` of the top's ports, initial values).
    decls: &'static str,
    dest_clk: &'static str,
    dest_edge: &'static str,
    /// Statements that put `val` on the crossing source right now (between dest edges).
    drive: &'static str,
    /// Statements run once at the start (reset, fill the chain).
    setup: &'static str,
    /// The source register or input, and the inserted last stage, as tb paths.
    source: &'static str,
    last: &'static str,
}

/// Latency by simulation (Icarus Verilog): the source changes strictly between destination
/// edges e(k-1) and e(k) and then holds; the last stage of the inserted N-stage synchronizer
/// (N = 2, `min_stages` default) shows the new value right after e(k+N-1) and not before.
/// Trials sweep the change over the destination period.
#[test]
fn latency_of_the_inserted_synchronizer_by_simulation() {
    let n_stages = 2;
    let cases = [
        Lat {
            case: "s1_v_plain",
            top: "gh_valve",
            decls: "reg clk_sense = 0, clk_act = 0, moist_low = 0; wire valve_on;",
            dest_clk: "clk_act",
            dest_edge: "posedge",
            drive: "moist_low = val; #0.1 clk_sense = 1; #0.1 clk_sense = 0;",
            setup: "#0.1 clk_sense = 1; #0.1 clk_sense = 0;",
            source: "dut.dry",
            last: "dut.dry_sync2",
        },
        Lat {
            case: "s2_sv_reset",
            top: "gh_fan",
            decls: "reg clk_env = 0, clk_pwm = 0, rst_n = 1, hot_i = 0; wire fan_q;",
            dest_clk: "clk_pwm",
            dest_edge: "posedge",
            drive: "hot_i = val; #0.1 clk_env = 1; #0.1 clk_env = 0;",
            // reset: the stages take the source's reset value (1) while reset is asserted
            setup: "#1 rst_n = 0; #1; if (dut.too_hot_sync1 !== 1'b1 || dut.too_hot_sync2 !== 1'b1) $display(\"BADRESET\"); rst_n = 1; repeat (3) begin #1 clk_env = 1; #1 clk_env = 0; end",
            source: "dut.too_hot",
            last: "dut.too_hot_sync2",
        },
        Lat {
            case: "s4_async_in",
            top: "gh_door",
            decls: "reg clk_ctl = 0, rst = 0, door_open = 0; wire alarm;",
            dest_clk: "clk_ctl",
            dest_edge: "posedge",
            drive: "door_open = val;",
            setup: "#1 rst = 1; #1 rst = 0;",
            source: "door_open",
            last: "dut.door_open_sync2",
        },
        Lat {
            case: "s7_negedge",
            top: "gh_frost",
            decls: "reg clk_temp = 0, clk_heat = 0, cold_i = 0; wire heater;",
            dest_clk: "clk_heat",
            dest_edge: "negedge",
            drive: "cold_i = val; #0.1 clk_temp = 1; #0.1 clk_temp = 0;",
            setup: "#0.1 clk_temp = 1; #0.1 clk_temp = 0;",
            source: "dut.freezing",
            last: "dut.freezing_sync2",
        },
    ];
    for c in cases {
        let d = copy_case(&fixtures().join("fix/sync").join(c.case));
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
        let files = rtl_files(d.path());
        let o = Command::new("iverilog")
            .args(["-g2012", "-o"])
            .arg(&sim)
            .arg(&tbf)
            .args(&files)
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
