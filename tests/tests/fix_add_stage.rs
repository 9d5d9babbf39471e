//! Quick fix "add one synchronizer stage" (`low-mtbf`), end to end through `seam check --fix`
//! and the language server. Outside references: sv-parser (Seam's parser: no `syntax-error`
//! after the fix), Icarus Verilog (`iverilog -g2012` compiles the fixed design and simulates
//! its latency and its readers), Verilator (`verilator --lint-only`), the published MTBF
//! formula MTBF = e^(t_r/τ) / (T_W · f_clk · f_data) (recomputed here for the stage count the
//! title names), LSP 3.17 (hover `MarkupContent`, `CodeAction`). Fixtures:
//! `tests/fixtures/fix/add_stage/*` (Verilog and SystemVerilog, with and without reset, stages
//! in one process and in several, a last stage read by several processes, negedge and tabs,
//! a module instantiated twice, a chain that needs more than one more stage) and
//! `tests/fixtures/fix/noadd_stage/*` (no fix may be offered: a trusted synchronizer module,
//! a synchronizer cell, no settling slack, stages that are bits of one vector). A last stage
//! that is an output port gets its new stage in front of it (`a7`).

use std::path::{Path, PathBuf};
use std::process::Command;

use seam_tests::fixcase::*;
use seam_tests::lsp_client::*;
use seam_tests::*;
use serde_json::{json, Value};

const RULE: &str = "low-mtbf";

fn is_word(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '_'
}

/// Whether `line` holds `w` as a whole word.
fn has_word(line: &str, w: &str) -> bool {
    line.match_indices(w).any(|(i, _)| {
        let before = line[..i].chars().next_back().map_or(true, |c| !is_word(c));
        let after = line[i + w.len()..]
            .chars()
            .next()
            .map_or(true, |c| !is_word(c));
        before && after
    })
}

/// `line` with every whole word `from` written as `to`.
fn replace_word(line: &str, from: &str, to: &str) -> String {
    let mut out = String::new();
    let mut rest = line;
    while let Some(i) = rest.find(from) {
        let before = rest[..i].chars().next_back().map_or(true, |c| !is_word(c))
            && (out.is_empty() || i > 0 || !out.chars().next_back().is_some_and(is_word));
        let after = rest[i + from.len()..]
            .chars()
            .next()
            .map_or(true, |c| !is_word(c));
        out.push_str(&rest[..i]);
        out.push_str(if before && after { to } else { from });
        rest = &rest[i + from.len()..];
    }
    out.push_str(rest);
    out
}

/// One positive fixture: the file, the old last stage, the stage the fix adds, the old count.
struct Pos {
    case: &'static str,
    file: &'static str,
    old: &'static str,
    new: &'static str,
    stages: u32,
    indent: &'static str,
}

const POSITIVE: &[Pos] = &[
    Pos {
        case: "a1_v_one_proc",
        file: "wb_wind.v",
        old: "tick_s",
        new: "tick_s_stage3",
        stages: 2,
        indent: "  ",
    },
    Pos {
        case: "a2_sv_separate",
        file: "wb_rain.sv",
        old: "flag_q2",
        new: "flag_q3",
        stages: 2,
        indent: "  ",
    },
    Pos {
        case: "a3_v_readers",
        file: "wb_hatch.v",
        old: "hatch_b",
        new: "hatch_b_stage3",
        stages: 2,
        indent: "  ",
    },
    Pos {
        case: "a4_sv_negedge_tabs",
        file: "wb_power.sv",
        old: "low_s2",
        new: "low_s4",
        stages: 2,
        indent: "\t",
    },
    Pos {
        case: "a5_v_three_stages",
        file: "wb_mast.v",
        old: "t3",
        new: "t4",
        stages: 3,
        indent: "  ",
    },
    // the last stage is an output port: the new stage goes in front of it, so `old` here
    // is the stage before the port
    Pos {
        case: "a7_v_output_port",
        file: "wb_lamp.v",
        old: "test_m",
        new: "test_m_stage2",
        stages: 2,
        indent: "  ",
    },
];

#[test]
fn every_positive_fixture_gains_one_stage_and_still_compiles() {
    assert!(cases("add_stage").len() >= 5, "at least 5 fixtures");
    for c in POSITIVE {
        let d = copy_case(&fixtures().join("fix/add_stage").join(c.case));
        let files = rtl_files(d.path());
        let name = c.case;
        // the original is valid RTL (Icarus Verilog, Verilator) and has the finding
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} original: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} original: {e}"));
        let (before, _) = check(d.path(), &[]);
        let found = of_rule(&before, RULE);
        assert!(!found.is_empty(), "{name}: no finding to fix: {before:#?}");
        assert!(
            found.iter().all(|f| f["message"]
                .as_str()
                .unwrap()
                .contains(&format!("{} stages", c.stages))),
            "{name}: {found:?}"
        );
        let orig = std::fs::read_to_string(d.path().join(c.file)).unwrap();

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
        // N + 1 stages meet the fixture's target: the finding is gone, nothing new came
        assert!(
            of_rule(&after, RULE).is_empty(),
            "{name}: finding still there: {after:#?}"
        );
        let new: Vec<_> = keys(&after).difference(&keys(&before)).cloned().collect();
        assert!(new.is_empty(), "{name}: new findings {new:?}");
        // Icarus Verilog and Verilator accept the fixed design
        iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{name} fixed: {e}"));
        verilator_lints(&files, &[], None).unwrap_or_else(|e| panic!("{name} fixed: {e}"));

        let fixed = texts(d.path());
        let changed: Vec<&(PathBuf, String)> = fixed
            .iter()
            .filter(|(p, t)| {
                std::fs::read_to_string(
                    fixtures()
                        .join("fix/add_stage")
                        .join(c.case)
                        .join(p.file_name().unwrap()),
                )
                .unwrap()
                    != *t
            })
            .collect();
        assert_eq!(changed.len(), 1, "{name}: one file rewritten");
        let t = &changed[0].1;
        // one new register, in the file's language and indentation, with a name of its own
        let kw = if c.file.ends_with(".sv") {
            "logic"
        } else {
            "reg"
        };
        assert!(
            t.contains(&format!("\n{}{kw} {};\n", c.indent, c.new)),
            "{name}: declaration of {}: {t}",
            c.new
        );
        assert!(!has_word(&orig, c.new), "{name}: the new name was taken");
        // the new stage loads the old last stage, and nothing else reads the old one: each
        // line naming it declares it, loads it, or is the new stage's load
        let load = format!("{} <= {};", c.new, c.old);
        assert!(t.contains(&load), "{name}: {t}");
        for l in t.lines().filter(|l| has_word(l, c.old)) {
            let trimmed = l.trim_start();
            let decl = trimmed.starts_with("reg ") || trimmed.starts_with("logic ");
            // `old <= ...` anywhere on the line (aligned or after an event control)
            let write = l.match_indices(c.old).any(|(i, _)| {
                has_word(&l[i..i + c.old.len()], c.old)
                    && l[..i].chars().next_back().map_or(true, |ch| !is_word(ch))
                    && l[i + c.old.len()..].trim_start().starts_with("<=")
            });
            assert!(
                decl || write || l.contains(&load) || trimmed.starts_with("//"),
                "{name}: `{}` still read: {l}",
                c.old
            );
        }
        // nothing of the old text is lost: with the new name read back as the old one, the
        // original lines are still there, in order (only insertions and renamed reads)
        let back: Vec<String> = t.lines().map(|l| replace_word(l, c.new, c.old)).collect();
        let mut it = back.iter();
        for l in orig.lines() {
            assert!(it.any(|x| x == l), "{name}: line lost or changed: {l}\n{t}");
        }
        // and what is added is the declaration, a comment and the process (5 lines, 6 with
        // a reset branch)
        let solid = |x: &str| x.lines().filter(|l| !l.trim().is_empty()).count();
        let added = if t.contains(&format!("else {load}")) {
            6
        } else {
            5
        };
        assert_eq!(solid(t), solid(&orig) + added, "{name}: {t}");
        // after the fix the action is no longer offered: a second run changes nothing
        let (_, stderr2) = check(d.path(), &["--fix", RULE]);
        assert!(
            !stderr2.contains("+++ b/"),
            "{name}: fixed twice: {stderr2}"
        );
        assert_eq!(texts(d.path()), fixed, "{name}: changed on the second run");
    }
}

/// How one fixture is driven in the latency testbench.
struct Lat {
    case: &'static str,
    top: &'static str,
    decls: &'static str,
    clk: &'static str,
    edge: &'static str,
    /// Put `val` on the asynchronous source.
    drive: &'static str,
    setup: &'static str,
    source: &'static str,
    /// The new last stage, as a tb path.
    last: &'static str,
    /// Old stage count N.
    n: u32,
}

/// Latency by simulation (Icarus Verilog): the source changes strictly between destination
/// edges e(k-1) and e(k) and then holds; after the fix the new last stage shows the value
/// right after e(k+N) and not before (N = old stage count), swept over the period.
#[test]
fn latency_after_the_fix_is_one_more_cycle_by_simulation() {
    let cases = [
        Lat {
            case: "a1_v_one_proc",
            top: "wb_wind",
            decls: "reg clk_sys = 0, rst_n = 1, cup_tick = 0; wire [7:0] tick_cycles;",
            clk: "clk_sys",
            edge: "posedge",
            drive: "cup_tick = val;",
            setup: "#1 rst_n = 0; #1; if (dut.tick_s_stage3 !== 1'b0) $display(\"BADRESET\"); rst_n = 1;",
            source: "cup_tick",
            last: "dut.tick_s_stage3",
            n: 2,
        },
        Lat {
            case: "a2_sv_separate",
            top: "wb_rain",
            decls: "reg clk_log = 0, bucket = 0; wire [3:0] wet_cycles;",
            clk: "clk_log",
            edge: "posedge",
            drive: "bucket = val;",
            setup: "",
            source: "bucket",
            last: "dut.flag_q3",
            n: 2,
        },
        Lat {
            case: "a3_v_readers",
            top: "wb_hatch",
            decls: "reg clk_ctl = 0, rst = 0, hatch_open = 0, armed = 1; wire alarm, lamp; wire [5:0] open_cycles;",
            clk: "clk_ctl",
            edge: "posedge",
            drive: "hatch_open = val;",
            setup: "#1 rst = 1; #1; if (dut.hatch_b_stage3 !== 1'b0) $display(\"BADRESET\"); rst = 0;",
            source: "hatch_open",
            last: "dut.hatch_b_stage3",
            n: 2,
        },
        Lat {
            case: "a4_sv_negedge_tabs",
            top: "wb_power",
            decls: "reg clk_pwr = 0, rst_n = 1, batt_ok_n = 1; wire shed_load;",
            clk: "clk_pwr",
            edge: "negedge",
            drive: "batt_ok_n = val;",
            // the stages reset to 1, as the old last stage does
            setup: "#1 rst_n = 0; #1; if (dut.low_s4 !== 1'b1) $display(\"BADRESET\"); rst_n = 1;",
            source: "batt_ok_n",
            last: "dut.low_s4",
            n: 2,
        },
        Lat {
            case: "a5_v_three_stages",
            top: "wb_mast",
            decls: "reg clk_mast = 0, north_tick = 0, south_tick = 0; wire [3:0] north_busy, south_busy;",
            clk: "clk_mast",
            edge: "posedge",
            drive: "north_tick = val; south_tick = ~val;",
            setup: "",
            source: "north_tick",
            last: "dut.u_north.t4",
            n: 3,
        },
        Lat {
            case: "a7_v_output_port",
            top: "wb_lamp",
            decls: "reg clk_sys = 0, rst_n = 1, test_btn = 0; wire test_sys;",
            clk: "clk_sys",
            edge: "posedge",
            drive: "test_btn = val;",
            setup: "#1 rst_n = 0; #1; if (dut.test_m_stage2 !== 1'b0) $display(\"BADRESET\"); rst_n = 1;",
            source: "test_btn",
            // the port is the last stage again, one cycle later
            last: "test_sys",
            n: 2,
        },
    ];
    for c in cases {
        let d = copy_case(&fixtures().join("fix/add_stage").join(c.case));
        check(d.path(), &["--fix", RULE]);
        let period = 40;
        let trials = 19;
        let samples = c.n + 3;
        let tb = format!(
            "`timescale 1ns/10ps\nmodule tb;\n  {decls}\n  {top} dut (.*);\n  always #{half} {clk} = ~{clk};\n  integer t, k;\n  reg val;\n  initial begin\n    {setup}\n    repeat ({fill}) @({edge} {clk});\n    for (t = 0; t < {trials}; t = t + 1) begin\n      val = ~{source};\n      @({edge} {clk});\n      #(1 + t * 2);\n      {drive}\n      for (k = 1; k <= {samples}; k = k + 1) begin\n        @({edge} {clk}); #0.5;\n        $display(\"T %0d K %0d V %b W %b\", t, k, {last}, val);\n      end\n    end\n    $finish;\n  end\nendmodule\n",
            decls = c.decls,
            top = c.top,
            half = period / 2,
            clk = c.clk,
            edge = c.edge,
            setup = c.setup,
            fill = c.n + 3,
            source = c.source,
            drive = c.drive,
            last = c.last,
        );
        let tbf = d.path().join("tb_latency.sv");
        std::fs::write(&tbf, tb).unwrap();
        let sim = d.path().join("sim.out");
        let mut files = rtl_files(d.path());
        files.push(tbf.clone());
        let o = Command::new("iverilog")
            .args(["-g2012", "-o"])
            .arg(&sim)
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
            "{}: the new stage does not take the old last stage's reset value",
            c.case
        );
        let mut seen = 0;
        for line in out.lines().filter(|l| l.starts_with("T ")) {
            let w: Vec<&str> = line.split_whitespace().collect();
            let (k, v, want): (u32, &str, &str) = (w[3].parse().unwrap(), w[5], w[7]);
            // K counts edges from e(k): the value is there right after e(k+N), i.e. K = N+1
            if k <= c.n {
                assert_ne!(v, want, "{}: new value too early: {line}", c.case);
            } else {
                assert_eq!(v, want, "{}: new value missing: {line}", c.case);
            }
            seen += 1;
        }
        assert_eq!(seen, trials * samples, "{}: {out}", c.case);
    }
}

/// Every reader of the old last stage (a continuous assign, an `always @*` block and a
/// counter) now reads the new stage: simulated by Icarus Verilog with the same random
/// stimulus (the hatch changes between edges, the alarm is armed), the fixed design's outputs
/// after destination edge i + 1 are the original's after edge i.
#[test]
fn every_reader_sees_the_signal_one_cycle_later_by_simulation() {
    let src = fixtures().join("fix/add_stage/a3_v_readers");
    let orig = copy_case(&src);
    let fixed = copy_case(&src);
    check(fixed.path(), &["--fix", RULE]);
    let tb = "`timescale 1ns/10ps\nmodule tb;\n  reg clk_ctl = 0, rst = 0, hatch_open = 0, armed = 1;\n  wire alarm, lamp; wire [5:0] open_cycles;\n  wb_hatch dut (.*);\n  always #20 clk_ctl = ~clk_ctl;\n  integer i, seed;\n  initial begin\n    seed = 7;\n    #1 rst = 1; #2 rst = 0;\n    for (i = 0; i < 400; i = i + 1) begin\n      @(posedge clk_ctl); #0.5;\n      $display(\"S %0d %b %b %0d\", i, alarm, lamp, open_cycles);\n      #(1 + ($unsigned($random(seed)) % 37));\n      hatch_open = $random(seed);\n    end\n    $finish;\n  end\nendmodule\n";
    let run = |dir: &Path| -> Vec<Vec<String>> {
        std::fs::write(dir.join("tb_readers.sv"), tb).unwrap();
        let sim = dir.join("sim.out");
        let o = Command::new("iverilog")
            .args(["-g2012", "-o"])
            .arg(&sim)
            .args(rtl_files(dir))
            .arg(dir.join("tb_readers.sv"))
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let o = Command::new("vvp").arg(&sim).output().unwrap();
        String::from_utf8_lossy(&o.stdout)
            .lines()
            .filter(|l| l.starts_with("S "))
            .map(|l| l.split_whitespace().skip(2).map(str::to_string).collect())
            .collect()
    };
    let a = run(orig.path());
    let b = run(fixed.path());
    assert_eq!(a.len(), 400);
    assert_eq!(b.len(), 400);
    // the stimulus moves every reader (not a constant run)
    assert!(a.iter().any(|s| s[0] == "1") && a.iter().any(|s| s[0] == "0"));
    assert!(a.iter().any(|s| s[2] != "0"));
    for i in 0..399 {
        assert_eq!(
            b[i + 1],
            a[i],
            "edge {i}: fixed {:?}, original {:?}",
            b[i + 1],
            a[i]
        );
    }
}

/// The published formula, log10 of the fleet MTBF in seconds, for N stages with one full
/// destination period per step: t_r = (N−1)(T − t_setup − t_clk→q), MTBF = e^(t_r/τ) /
/// (T_W · f_clk · f_data), divided by the number of units.
fn fleet_log10_s(n: u32, f_clk: f64, f_data: f64, tau: f64, tw: f64, units: f64) -> f64 {
    let t_r = f64::from(n - 1) * (1.0 / f_clk - 50e-12 - 100e-12);
    t_r / tau / std::f64::consts::LN_10 - (tw * f_clk * f_data).log10() - units.log10()
}

#[test]
fn when_one_stage_is_not_enough_the_title_names_the_count_the_model_needs() {
    // a6: 500 MHz, τ = 300 ps, T_W = 50 ps, async 1 MHz (default), 40 units, 1000 years
    let target = (1000.0f64 * 31_557_600.0).log10(); // Julian year, common practice
    let needed = (2..=10u32)
        .find(|n| fleet_log10_s(*n, 500e6, 1e6, 300e-12, 50e-12, 40.0) >= target)
        .unwrap();
    assert!(needed > 3, "the fixture must need more than one more stage");
    let d = tempfile::tempdir().unwrap();
    copy_tree(&fixtures().join("fix/add_stage/a6_v_needs_more"), d.path());
    let path = d.path().join("wb_sonar.v");
    let mut c = LspClient::start(
        d.path(),
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let uri = c.open(&path, 1);
    c.wait_analyzed(&uri, 1);
    let diag = c
        .diags(&uri)
        .into_iter()
        .find(|x| x["code"] == RULE)
        .expect("low-mtbf diagnostic");
    let acts = actions_for(&mut c, &uri, &diag);
    let add = acts
        .iter()
        .find(|a| a["isPreferred"] == true)
        .unwrap_or_else(|| panic!("no preferred action: {acts:?}"));
    let title = add["title"].as_str().unwrap();
    // LSP 3.17 CodeAction: a quickfix whose title says the latency and the estimate
    assert_eq!(add["kind"], "quickfix");
    assert!(
        title.starts_with("Add one synchronizer stage after `echo_s2`")
            && title.contains("+1 `clk_fast` cycle of latency")
            && title.contains("estimated MTBF")
            && title.contains(&format!("{needed} stages would meet it")),
        "{title} (model: {needed})"
    );
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
    // in batch the fix runs pass after pass, one stage each, until the model's count is met
    let (after, stderr) = check(d.path(), &["--fix", RULE]);
    assert!(of_rule(&after, RULE).is_empty(), "{after:#?}");
    assert_eq!(
        stderr.matches("+++ b/").count() as u32,
        needed - 2,
        "{stderr}"
    );
    let t = std::fs::read_to_string(&path).unwrap();
    assert!(has_word(&t, &format!("echo_s{needed}")), "{t}");
    assert!(!has_word(&t, &format!("echo_s{}", needed + 1)), "{t}");
    let files = rtl_files(d.path());
    iverilog_compiles(&files, &[]).unwrap();
    verilator_lints(&files, &[], None).unwrap();
}

/// (case, words the reason must hold)
const NEGATIVE: &[(&str, &[&str])] = &[
    (
        "n1_trusted_module",
        &["trusted synchronizer `u_dusk`", "raise its stage parameter"],
    ),
    (
        "n2_cell",
        &["synchronizer cell `u_tide_sync`", "choose a longer cell"],
    ),
    ("n4_no_slack", &["no settling slack"]),
    ("n5_vector", &["bits of the vector `north_q`"]),
];

#[test]
fn no_stage_is_added_where_it_would_be_wrong() {
    assert!(cases("noadd_stage").len() >= NEGATIVE.len());
    for (case, words) in NEGATIVE {
        let d = copy_case(&fixtures().join("fix/noadd_stage").join(case));
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
        assert_eq!(texts(d.path()), orig, "{case}");
        assert_eq!(keys(&after), keys(&before), "{case}");
        let note = stderr
            .lines()
            .find(|l| l.starts_with("seam: no fix for low-mtbf"))
            .unwrap_or_else(|| panic!("{case}: no reason: {stderr}"));
        for w in *words {
            assert!(note.contains(w), "{case}: {note}");
        }
    }
}

fn actions_for(c: &mut LspClient, uri: &str, d: &Value) -> Vec<Value> {
    let r = c.call(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": uri }, "range": d["range"], "context": { "diagnostics": [d] } }),
    );
    r.as_array().cloned().unwrap_or_default()
}

fn hover_at(c: &mut LspClient, uri: &str, line: u64, ch: u64) -> String {
    let h = c.call(
        "textDocument/hover",
        json!({ "textDocument": { "uri": uri }, "position": { "line": line, "character": ch } }),
    );
    // LSP 3.17 Hover: MarkupContent of kind markdown
    assert_eq!(h["contents"]["kind"], "markdown", "{h}");
    h["contents"]["value"].as_str().unwrap().to_string()
}

/// On a negative fixture the editor offers only the waiver, and the hover card over the
/// finding says why there is no automatic fix.
#[test]
fn hover_says_why_there_is_no_automatic_fix() {
    let d = tempfile::tempdir().unwrap();
    copy_tree(&fixtures().join("fix/noadd_stage/n2_cell"), d.path());
    let path = d.path().join("wb_tide.v");
    let mut c = LspClient::start(
        d.path(),
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let uri = c.open(&path, 1);
    c.wait_analyzed(&uri, 1);
    let diag = c
        .diags(&uri)
        .into_iter()
        .find(|x| x["code"] == RULE)
        .unwrap_or_else(|| panic!("no low-mtbf diagnostic"));
    let acts = actions_for(&mut c, &uri, &diag);
    assert!(!acts.is_empty());
    assert!(
        acts.iter()
            .all(|a| a["title"].as_str().unwrap().starts_with("Waive")),
        "{acts:?}"
    );
    let l = diag["range"]["start"]["line"].as_u64().unwrap();
    let ch = diag["range"]["start"]["character"].as_u64().unwrap();
    let md = hover_at(&mut c, &uri, l, ch + 1);
    let line = md
        .lines()
        .find(|x| x.starts_with("No automatic fix: "))
        .unwrap_or_else(|| panic!("no reason in the hover: {md}"));
    assert!(
        line.contains("synchronizer cell `u_tide_sync`") && line.contains("longer cell"),
        "{line}"
    );
    // away from the finding the card has no such line
    let text = std::fs::read_to_string(&path).unwrap();
    let decl = text
        .lines()
        .position(|x| x.contains("output reg [7:0] high_cycles"))
        .unwrap() as u64;
    let md2 = hover_at(&mut c, &uri, decl, 20);
    assert!(!md2.contains("No automatic fix"), "{md2}");
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

/// On a positive fixture the editor offers the stage as the preferred quick fix; once it is
/// applied the diagnostic is gone and the action is no longer offered, and a fixed finding's
/// hover has no "No automatic fix" line.
#[test]
fn the_editor_offers_the_stage_and_not_again_after_it() {
    let d = tempfile::tempdir().unwrap();
    copy_tree(&fixtures().join("fix/add_stage/a2_sv_separate"), d.path());
    let path = d.path().join("wb_rain.sv");
    let mut c = LspClient::start(
        d.path(),
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let uri = c.open(&path, 1);
    c.wait_analyzed(&uri, 1);
    let diag = c
        .diags(&uri)
        .into_iter()
        .find(|x| x["code"] == RULE)
        .expect("low-mtbf diagnostic");
    let l = diag["range"]["start"]["line"].as_u64().unwrap();
    let ch = diag["range"]["start"]["character"].as_u64().unwrap();
    let md = hover_at(&mut c, &uri, l, ch + 1);
    assert!(!md.contains("No automatic fix"), "{md}");
    let acts = actions_for(&mut c, &uri, &diag);
    let add = acts
        .iter()
        .find(|a| a["isPreferred"] == true)
        .unwrap_or_else(|| panic!("{acts:?}"))
        .clone();
    assert!(add["title"]
        .as_str()
        .unwrap()
        .starts_with("Add one synchronizer stage after `flag_q2`"));
    // LSP 3.17 WorkspaceEdit.documentChanges: versioned edits of the open document
    let dcs = add["edit"]["documentChanges"].as_array().unwrap();
    assert_eq!(dcs.len(), 1);
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
    assert!(
        !after
            .iter()
            .any(|x| x["code"] == RULE || x["code"] == "syntax-error"),
        "{after:?}"
    );
    for x in &after {
        let again = actions_for(&mut c, &uri, x);
        assert!(
            !again
                .iter()
                .any(|a| a["title"].as_str().unwrap().contains("synchronizer stage")),
            "{again:?}"
        );
    }
    // the batch checker makes the same edit (the reference for the editor's)
    let other = copy_case(&fixtures().join("fix/add_stage/a2_sv_separate"));
    check(other.path(), &["--fix", RULE]);
    assert_eq!(
        doc.text,
        std::fs::read_to_string(other.path().join("wb_rain.sv")).unwrap()
    );
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}
