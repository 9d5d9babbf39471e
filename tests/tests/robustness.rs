//! Hostile and half-typed input: every case gives a located finding within bounded time and
//! the `seam` process exits normally (0 or 1, never a crash, never 2).

use std::path::Path;
use std::time::{Duration, Instant};

use seam_tests::*;

fn check_json(dir: &Path, extra: &[&str]) -> (serde_json::Value, i32, Duration) {
    let t = Instant::now();
    let mut args = vec!["check", "--format", "json", "--parse-timeout", "20"];
    args.extend_from_slice(extra);
    let out = seam(&args, dir);
    let took = t.elapsed();
    let code = out.status.code().expect("seam exited by a signal");
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "bad JSON ({e}): {}\n{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    });
    (v, code, took)
}

fn one_file(name: &str, bytes: &[u8]) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    std::fs::write(d.path().join(name), bytes).unwrap();
    d
}

fn findings(v: &serde_json::Value) -> Vec<serde_json::Value> {
    v["findings"].as_array().cloned().unwrap_or_default()
}

fn assert_one_syntax_error(v: &serde_json::Value, what: &str) -> serde_json::Value {
    let f = findings(v);
    let se: Vec<_> = f.iter().filter(|x| x["rule"] == "syntax-error").collect();
    assert_eq!(se.len(), 1, "{what}: {v}");
    assert!(se[0]["line"].as_u64().unwrap() >= 1);
    se[0].clone()
}

#[test]
fn deep_parenthesis_nest() {
    let src = format!(
        "module deep(output wire y);\n  assign y = {}1'b1{};\nendmodule\n",
        "(".repeat(5000),
        ")".repeat(5000)
    );
    let d = one_file("deep.v", src.as_bytes());
    let (v, code, took) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "deep nest");
    assert!(f["message"].as_str().unwrap().contains("nesting"), "{f}");
    assert_eq!(f["line"], 2);
    assert!(took < Duration::from_secs(30));
}

#[test]
fn macro_expanding_to_deep_nesting() {
    // one macro that wraps its argument in 40 parentheses, used 8 deep: 320 levels only
    // after expansion (the source text itself nests 8 levels)
    let mut src = format!("`define N0(x) {} x {}\n", "(".repeat(40), ")".repeat(40));
    let use_site = (0..8).fold("1'b1".to_string(), |acc, _| format!("`N0({acc})"));
    src.push_str(&format!(
        "module mdeep(output wire y);\n  assign y = {use_site};\nendmodule\n"
    ));
    let d = one_file("mdeep.v", src.as_bytes());
    let (v, code, _) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "macro nest");
    assert!(
        f["message"].as_str().unwrap().contains("macro expansion"),
        "{f}"
    );
}

#[test]
fn file_over_the_size_limit() {
    let d = tempfile::tempdir().unwrap();
    std::fs::write(
        d.path().join("seam.toml"),
        "[design]\nmax_file_bytes = 1000\n",
    )
    .unwrap();
    let body = format!(
        "module big(output wire y);\n{}  assign y = 1'b0;\nendmodule\n",
        "  // padding padding padding\n".repeat(100)
    );
    std::fs::write(d.path().join("big.v"), body).unwrap();
    let (v, code, _) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "size");
    assert!(
        f["message"].as_str().unwrap().contains("over the limit"),
        "{f}"
    );
}

#[test]
fn random_bytes() {
    // deterministic pseudo-random bytes (xorshift), 200 KB
    let mut x: u64 = 0x9E3779B97F4A7C15;
    let bytes: Vec<u8> = (0..200_000)
        .map(|_| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            (x >> 24) as u8
        })
        .collect();
    let d = one_file("noise.v", &bytes);
    let (v, code, took) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "random");
    assert!(f["message"].as_str().unwrap().contains("UTF-8"), "{f}");
    assert!(took < Duration::from_secs(30));
    // and as valid UTF-8 noise (printable ASCII soup): still one located error
    let soup: String = bytes.iter().map(|b| (b' ' + (b % 95)) as char).collect();
    let d = one_file("soup.v", soup.as_bytes());
    let (v, code, took) = check_json(d.path(), &[]);
    assert_eq!(code, 1, "{v}");
    assert_one_syntax_error(&v, "soup");
    assert!(took < Duration::from_secs(40));
}

#[test]
fn include_cycle() {
    let d = tempfile::tempdir().unwrap();
    std::fs::write(d.path().join("a.vh"), "`include \"b.vh\"\n").unwrap();
    std::fs::write(d.path().join("b.vh"), "`include \"a.vh\"\n").unwrap();
    std::fs::write(
        d.path().join("top.v"),
        "`include \"a.vh\"\nmodule top(output wire y);\n  assign y = 1'b0;\nendmodule\n",
    )
    .unwrap();
    let (v, code, took) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "cycle");
    assert_eq!(f["line"], 1, "{f}");
    assert!(took < Duration::from_secs(30));
}

#[test]
fn empty_file_is_reported_not_fatal() {
    let d = one_file("empty.v", b"");
    let (v, code, _) = check_json(d.path(), &[]);
    assert_eq!(code, 0, "an empty file is not an error: {v}");
    let f = findings(&v);
    assert_eq!(f.len(), 1, "{v}");
    assert_eq!(f[0]["severity"], "hint");
    assert!(f[0]["message"]
        .as_str()
        .unwrap()
        .contains("no design units"));
}

#[test]
fn half_typed_buffer_points_at_the_line() {
    let src = "module tg_half(input clk, input d, output reg q);\n  always @(posedge clk) begin\n    q <= d\n  end\nendmodule\n";
    let d = one_file("half.v", src.as_bytes());
    let (v, code, _) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    let f = assert_one_syntax_error(&v, "half");
    let line = f["line"].as_u64().unwrap();
    assert!(
        (3..=4).contains(&line),
        "error near the missing semicolon: {f}"
    );
}

#[test]
fn missing_include_points_at_the_include_line() {
    let src = "// header\n\n`include \"not_there.vh\"\nmodule m(output wire y);\n  assign y = 1'b0;\nendmodule\n";
    let d = one_file("inc.v", src.as_bytes());
    let (v, _, _) = check_json(d.path(), &[]);
    let f = assert_one_syntax_error(&v, "missing include");
    assert_eq!(
        (f["line"].as_u64(), f["column"].as_u64()),
        (Some(3), Some(1)),
        "{f}"
    );
    assert!(f["message"].as_str().unwrap().contains("not_there.vh"));
}

#[test]
fn undefined_macro_points_at_its_use() {
    let src = "module m(output wire [3:0] y);\n  assign y = `NOT_DEFINED_W;\nendmodule\n";
    let d = one_file("mac.v", src.as_bytes());
    let (v, _, _) = check_json(d.path(), &[]);
    let f = assert_one_syntax_error(&v, "undefined macro");
    assert_eq!(
        (f["line"].as_u64(), f["column"].as_u64()),
        (Some(2), Some(14)),
        "{f}"
    );
}

#[test]
fn good_files_survive_beside_bad_ones() {
    let d = tempfile::tempdir().unwrap();
    std::fs::write(d.path().join("bad.v"), "module bad(\n").unwrap();
    std::fs::write(
        d.path().join("good.v"),
        "module good(input a, output b);\n  assign b = a;\nendmodule\n",
    )
    .unwrap();
    let (v, code, _) = check_json(d.path(), &[]);
    assert_eq!(code, 1);
    assert_eq!(v["files"], 2);
    assert_eq!(v["modules"], 1, "the good module is still analysed: {v}");
    assert_one_syntax_error(&v, "bad beside good");
}

#[test]
fn usage_and_config_errors_exit_2_with_one_line() {
    let d = tempfile::tempdir().unwrap();
    let out = seam(&["check", "no/such/path"], d.path());
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no/such/path") && err.lines().count() == 1,
        "{err}"
    );
    std::fs::write(
        d.path().join("seam.toml"),
        "[design]\nfiles = [\"*.v\"]\n\n[clocks]\nclk = { frequency = \"fast\" }\n",
    )
    .unwrap();
    let out = seam(&["check"], d.path());
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("seam.toml:5") && err.contains("frequency"),
        "{err}"
    );
    let out = seam(&["check", "--format", "yaml"], d.path());
    assert_eq!(out.status.code(), Some(2));
}

/// A clock that passes arithmetic or a comparison (`clk_pump == 1'b1`) on its way to a flop
/// once sent clock tracing into unbounded recursion (a stack overflow on OpenTitan's
/// spi_device). Now the clock is still traced to its root, through the gate.
#[test]
fn clock_through_comparison_and_arithmetic() {
    let src = "module pump_ctl(input wire clk_pump, input wire d, output reg q, output reg r);\n  \
wire k1 = (clk_pump == 1'b1);\n  wire k2 = clk_pump + 1'b0;\n  \
always @(posedge k1) q <= d;\n  always @(posedge k2) r <= d;\nendmodule\n";
    let d = one_file("pump_ctl.v", src.as_bytes());
    let (v, code, _) = check_json(d.path(), &[]);
    assert!(code == 0 || code == 1, "exit {code}: {v}");
    assert!(
        !findings(&v).iter().any(|f| f["message"]
            .as_str()
            .unwrap_or("")
            .contains("internal error")),
        "{v}"
    );
    let out = seam(&["domains", "--format", "json"], d.path());
    let dv: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let regs = dv["registers"].as_array().unwrap();
    assert_eq!(regs.len(), 2, "{dv}");
    for r in regs {
        assert_eq!(r["clock"], "clk_pump", "{dv}");
    }
}
