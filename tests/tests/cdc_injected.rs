//! Injected crossings: a generated design of 50 modules (one file each, nested 50 deep),
//! every module with a correct two-flop synchronizer, and K unsynchronized crossings placed
//! at pseudo-random depths. Seam must find exactly those K, at their lines, and nothing else;
//! the same design with none must give zero findings. Every generated design compiles with
//! `iverilog -g2012` (outside reference: valid RTL).

use std::collections::BTreeSet;

use seam_tests::*;

const N: usize = 50;

/// Writes the design; returns the (file, line) of each injected crossing.
fn generate(dir: &std::path::Path, bad: &BTreeSet<usize>) -> Vec<(String, u64)> {
    let mut expected = Vec::new();
    for k in 0..N {
        let last = k + 1 == N;
        let mut v = String::new();
        v.push_str(&format!("// generated tide-gauge stage {k}\n"));
        v.push_str(&format!(
            "module gen_m{k} (input clk_a, input clk_b, input a_in, output reg [7:0] b_cnt);\n"
        ));
        v.push_str("  reg ra;\n  always @(posedge clk_a) ra <= ~a_in;\n");
        v.push_str(
            "  reg s1, s2;\n  always @(posedge clk_b) begin\n    s1 <= ra;\n    s2 <= s1;\n  end\n",
        );
        if bad.contains(&k) {
            v.push_str("  reg raw;\n");
            v.push_str("  always @(posedge clk_b) raw <= ra;\n");
            let line = v.lines().count() as u64;
            expected.push((format!("gen_m{k}.v"), line));
            v.push_str("  always @(posedge clk_b) b_cnt <= b_cnt + {7'd0, s2 ^ raw};\n");
        } else {
            v.push_str("  always @(posedge clk_b) b_cnt <= b_cnt + {7'd0, s2};\n");
        }
        if !last {
            v.push_str(&format!("  wire [7:0] unused_{k};\n  gen_m{} u_next (.clk_a(clk_a), .clk_b(clk_b), .a_in(ra), .b_cnt(unused_{k}));\n", k + 1));
        }
        v.push_str("endmodule\n");
        std::fs::write(dir.join(format!("gen_m{k}.v")), v).unwrap();
    }
    std::fs::write(
        dir.join("seam.toml"),
        "[design]\ntop = [\"gen_m0\"]\n\n[clocks]\nclk_a = { frequency = \"80 MHz\" }\nclk_b = { frequency = \"33 MHz\" }\n\n[inputs]\na_in = \"clk_a\"\n",
    )
    .unwrap();
    expected
}

fn check(dir: &std::path::Path) -> Vec<(String, String, u64)> {
    let files: Vec<_> = (0..N).map(|k| dir.join(format!("gen_m{k}.v"))).collect();
    iverilog_compiles(&files, &[]).expect("generated design compiles");
    let out = seam(&["check", "--format", "json"], dir);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap().into(),
                f["file"].as_str().unwrap().into(),
                f["line"].as_u64().unwrap(),
            )
        })
        .collect()
}

#[test]
fn clean_design_has_no_findings() {
    let d = tempfile::tempdir().unwrap();
    generate(d.path(), &BTreeSet::new());
    let f = check(d.path());
    assert!(f.is_empty(), "{f:#?}");
}

#[test]
fn every_injected_crossing_is_found_and_nothing_else() {
    // xorshift: deterministic positions spread over the depth of the hierarchy
    let mut x: u64 = 0x2545F4914F6CDD1D;
    for k_count in [1usize, 7, 13] {
        let mut bad = BTreeSet::new();
        while bad.len() < k_count {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            bad.insert((x % N as u64) as usize);
        }
        let d = tempfile::tempdir().unwrap();
        let expected = generate(d.path(), &bad);
        let got = check(d.path());
        let mut want: Vec<(String, String, u64)> = expected
            .into_iter()
            .map(|(f, l)| ("unsynchronized-crossing".to_string(), f, l))
            .collect();
        let mut got_sorted = got.clone();
        want.sort();
        got_sorted.sort();
        assert_eq!(got_sorted, want, "K = {k_count}, depths {bad:?}");
    }
}
