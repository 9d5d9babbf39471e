//! Mutation tests (DESIGN.md section 10): correct designs stay silent; each mutant, broken
//! one way at a time, is flagged with its exact rule and line. Every original and every
//! mutant compiles with `iverilog -g2012` (outside reference: the mutants are valid RTL, so
//! a finding is about CDC structure, not syntax).

use std::path::Path;

use seam_tests::*;

struct Base<'a> {
    files: &'a [&'a str],
    toml: &'a str,
}

struct Mutant {
    name: &'static str,
    file: &'static str,
    old: &'static str,
    new: &'static str,
    /// Replace the seam.toml instead of (or as well as) the RTL.
    toml: Option<&'static str>,
    rule: &'static str,
    /// A text on the line where the finding must be.
    anchor: &'static str,
}

const TWO_CLK: &str = "[inputs]\novr_in = \"clk_adc\"\nup_in = \"clk_link\"\nrdy_in = \"clk_link\"\nlvl_in = \"clk_adc\"\nflood_in = \"clk_adc\"\nreq_in = \"clk_adc\"\nen_in = \"clk_sys\"\nhi_in = \"clk_adc\"\n\n[clocks]\nclk_adc = {}\nclk_sys = {}\nclk_link = {}\n";

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
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "error" || f["severity"] == "warning")
        .map(|f| {
            (
                f["rule"].as_str().unwrap().to_string(),
                f["file"].as_str().unwrap().to_string(),
                f["line"].as_u64().unwrap(),
                f["message"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

fn setup(base: &Base, toml: &str) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    for f in base.files {
        let src = fixtures().join("cdc").join(f);
        let name = Path::new(f).file_name().unwrap();
        std::fs::copy(&src, d.path().join(name)).unwrap();
    }
    std::fs::write(d.path().join("seam.toml"), toml).unwrap();
    d
}

fn compiles(dir: &Path) {
    let files: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            matches!(
                p.extension().and_then(|x| x.to_str()),
                Some("v") | Some("sv")
            )
        })
        .collect();
    iverilog_compiles(&files, &[])
        .unwrap_or_else(|e| panic!("iverilog rejects {}: {e}", dir.display()));
}

fn run(base: Base<'_>, mutants: &[Mutant]) {
    let d = setup(&base, base.toml);
    compiles(d.path());
    let f = findings(d.path());
    assert!(
        f.is_empty(),
        "original {:?} must be silent: {f:#?}",
        base.files
    );
    for m in mutants {
        let d = setup(&base, m.toml.unwrap_or(base.toml));
        let name = Path::new(m.file).file_name().unwrap();
        let p = d.path().join(name);
        let text = std::fs::read_to_string(&p).unwrap();
        assert!(
            m.old.is_empty() || text.contains(m.old),
            "{}: pattern {:?} not in {}",
            m.name,
            m.old,
            m.file
        );
        let mutated = if m.old.is_empty() {
            text
        } else {
            text.replacen(m.old, m.new, 1)
        };
        std::fs::write(&p, &mutated).unwrap();
        compiles(d.path());
        let line = mutated
            .lines()
            .position(|l| l.contains(m.anchor))
            .unwrap_or_else(|| panic!("{}: anchor {:?}", m.name, m.anchor))
            as u64
            + 1;
        let got = findings(d.path());
        assert!(
            got.iter()
                .any(|(r, file, l, _)| r == m.rule && file == name.to_str().unwrap() && *l == line),
            "mutant {}: expected {} at {}:{line}, got {got:#?}",
            m.name,
            m.rule,
            name.to_string_lossy()
        );
        assert!(
            got.iter().all(|(r, ..)| r == m.rule),
            "mutant {}: only {} expected, got {got:#?}",
            m.name,
            m.rule
        );
    }
}

#[test]
fn separate_statements_chain() {
    let f = "good/g1_separate.v";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "drop a stage",
                file: f,
                old: "      s2 <= s1;\n      cnt <= cnt + {7'd0, s2};",
                new: "      cnt <= cnt + {7'd0, s1};",
                toml: None,
                rule: "unsynchronized-crossing",
                anchor: "s1 <= ovr_q;",
            },
            Mutant {
                name: "tap stage 1",
                file: f,
                old: "      cnt <= cnt + {7'd0, s2};",
                new: "      cnt <= cnt + {7'd0, s2 & s1};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "s2 & s1",
            },
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: "s1 <= ovr_q;",
                new: "s1 <= ovr_q ^ ovr_in;",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "s1 <= ovr_q ^ ovr_in;",
            },
        ],
    );
}

#[test]
fn concatenation_shift_chain() {
    let f = "good/g2_concat.sv";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: "up_s <= {up_s[0], up_q};",
                new: "up_s <= {up_s[0], up_q & other_q};",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "up_q & other_q",
            },
            Mutant {
                name: "drop a stage",
                file: f,
                old: "cnt <= cnt + {7'd0, up_s[1]};",
                new: "cnt <= cnt + {7'd0, up_s[0]};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "up_s[0]};",
            },
        ],
    );
}

#[test]
fn chain_across_processes() {
    let f = "good/g3_two_procs.v";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "clock a stage on the other edge",
                file: f,
                old: "always @(posedge clk_sys) rdy_s2 <= rdy_s1;",
                new: "always @(negedge clk_sys) rdy_s2 <= rdy_s1;",
                toml: None,
                rule: "unsynchronized-crossing",
                anchor: "rdy_s1 <= rdy_q",
            },
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: "rdy_s1 <= rdy_q;",
                new: "rdy_s1 <= rdy_q | spare_q;",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "rdy_s1 <= rdy_q | spare_q",
            },
        ],
    );
}

#[test]
fn chain_through_wrapper_cells() {
    let f = "good/g4_cells.v";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "drop a stage",
                file: f,
                old: "cnt <= cnt + {7'd0, m2};",
                new: "cnt <= cnt + {7'd0, m1};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "{7'd0, m1}",
            },
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: ".d(lvl_q), .q(m1)",
                new: ".d(lvl_q & aux_q), .q(m1)",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "always @(posedge ck) q <= d;",
            },
        ],
    );
}

#[test]
fn edge_detect_on_last_stage() {
    let f = "good/g5_edge.sv";
    run(
        Base {
            files: &[f],
            toml: "[clocks]\nclk_adc = {}\nclk_sys = {}\n",
        },
        &[
            Mutant {
                name: "edge detect taps stage 1",
                file: f,
                old: "wire pulse = t2 ^ t3;",
                new: "wire pulse = t1 ^ t2;",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "wire pulse = t1 ^ t2;",
            },
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: "t1 <= tgl;",
                new: "t1 <= tgl ^ extra;",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "t1 <= tgl ^ extra;",
            },
        ],
    );
}

#[test]
fn source_bit_gated_by_destination_terms() {
    let f = "good/g6_local_gate.v";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "gate with a second source bit",
                file: f,
                old: "r1 <= req_q & en_sys;",
                new: "r1 <= req_q & req2_q;",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "r1 <= req_q & req2_q;",
            },
            Mutant {
                name: "drop a stage",
                file: f,
                old: "cnt <= cnt + {7'd0, r2};",
                new: "cnt <= cnt + {7'd0, r1};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "{7'd0, r1}",
            },
        ],
    );
}

#[test]
fn clocks_in_one_group() {
    let f = "good/g7_group.v";
    let grouped = "[clocks]\nclk_sys = { frequency = \"100 MHz\", group = \"main\" }\nclk_half = { frequency = \"50 MHz\", group = \"main\" }\n\n[inputs]\nd_in = \"clk_sys\"\n";
    let split = "[clocks]\nclk_sys = { frequency = \"100 MHz\", group = \"main\" }\nclk_half = { frequency = \"50 MHz\" }\n\n[inputs]\nd_in = \"clk_sys\"\n";
    run(
        Base {
            files: &[f],
            toml: grouped,
        },
        &[Mutant {
            name: "move a clock out of its group",
            file: f,
            old: "",
            new: "",
            toml: Some(split),
            rule: "unsynchronized-crossing",
            anchor: "d_h <= d_q",
        }],
    );
}

#[test]
fn three_stage_chain_for_async_input() {
    let f = "good/g8_async3.v";
    let toml = "[inputs]\nstorm_n = \"async\"\n\n[synchronizers]\nmin_stages = 3\n";
    run(
        Base { files: &[f], toml },
        &[
            Mutant {
                name: "drop a stage",
                file: f,
                old: "cnt <= cnt + {7'd0, a3};",
                new: "cnt <= cnt + {7'd0, a2};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "{7'd0, a2}",
            },
            Mutant {
                name: "drop the third stage",
                file: f,
                old: "    a3 <= a2;\n  end\n  always @(posedge clk_sys) cnt <= cnt + {7'd0, a3};",
                new: "  end\n  always @(posedge clk_sys) cnt <= cnt + {7'd0, a2};",
                toml: None,
                rule: "unsynchronized-crossing",
                anchor: "a1 <= storm_n;",
            },
        ],
    );
}

#[test]
fn crossing_across_files_and_hierarchy() {
    let files = &["hier/h_src.v", "hier/h_dst.v", "hier/h_top.v"];
    run(
        Base {
            files,
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "drop a stage",
                file: "hier/h_dst.v",
                old: "cnt <= cnt + {7'd0, h2};",
                new: "cnt <= cnt + {7'd0, h1};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "{7'd0, h1}",
            },
            Mutant {
                name: "no synchronizer",
                file: "hier/h_dst.v",
                old: "cnt <= cnt + {7'd0, h2};",
                new: "cnt <= cnt + {7'd0, hi};",
                toml: None,
                rule: "unsynchronized-crossing",
                anchor: "{7'd0, hi}",
            },
        ],
    );
}

#[test]
fn chain_of_separate_registers_as_one_concatenation() {
    let f = "good/g9_concat_regs.v";
    run(
        Base {
            files: &[f],
            toml: TWO_CLK,
        },
        &[
            Mutant {
                name: "tap stage 1",
                file: f,
                old: "cnt <= cnt + {7'd0, f2};",
                new: "cnt <= cnt + {7'd0, f1};",
                toml: None,
                rule: "synchronizer-stage-fanout",
                anchor: "{7'd0, f1}",
            },
            Mutant {
                name: "gate stage 1 with another source bit",
                file: f,
                old: "{f1, flood_q};",
                new: "{f1, flood_q & spare_q};",
                toml: None,
                rule: "logic-before-synchronizer",
                anchor: "flood_q & spare_q",
            },
        ],
    );
}
