//! Edit-to-publish latency of `seam serve` for a one-character edit in a ~1,500-line RTL file,
//! beside sv-parser's parse time of the same file measured in the same run (the baseline).
//!
//! Run: `cargo bench -p seam-server --bench lsp_latency` (release build of the real binary,
//! spoken to over stdio by the tests' JSON-RPC client). The file is generated here from a
//! template: a tide-gauge station with pressure channels, each an ADC-domain accumulator, a
//! toggle synchronizer into the system domain and a small state machine, plus one deliberate
//! unsynchronized read, whose diagnostic moves with each edit (so every edit publishes).
//!
//! Reported: median and p95 over the edits, for the default debounce (100 ms) and with the
//! debounce set to 0 (the server's own work), and the same as ratios to the baseline: each
//! edit is paired with an sv-parser parse of the file run just before it, so a busy machine
//! slows both alike. Then parse_file and analyze in-process, also paired with the baseline.

use std::path::Path;
use std::time::{Duration, Instant};

use seam_tests::lsp_client::{LspClient, Utf16Doc};
use serde_json::json;

const CHANNEL: &str = r#"// Pressure channel @K: averages 16 ADC samples, hands the result to the system clock.
module tg_bench_chan_@K #(parameter W = 16, parameter [W-1:0] HIGH = 16'h8000) (
  input  wire         clk_adc,
  input  wire         clk_sys,
  input  wire         rst_n,
  input  wire [W-1:0] adc_data,
  input  wire         adc_valid,
  output reg  [W-1:0] level_sys,
  output reg          level_new,
  output reg          surge,
  output wire         ovr
);
  // ADC side: running sum of 16 samples, toggle when a new average is held
  reg [W-1:0] cap_q;
  reg [W+3:0] acc_q;
  reg [3:0]   cnt_q;
  reg         tgl_q;
  reg         ovr_q;
  always @(posedge clk_adc or negedge rst_n)
    if (!rst_n) begin
      cap_q <= {W{1'b0}};
      acc_q <= {(W+4){1'b0}};
      cnt_q <= 4'd0;
      tgl_q <= 1'b0;
      ovr_q <= 1'b0;
    end else if (adc_valid) begin
      acc_q <= acc_q + {4'd0, adc_data};
      cnt_q <= cnt_q + 4'd1;
      ovr_q <= &adc_data;
      if (cnt_q == 4'd15) begin
        cap_q <= acc_q[W+3:4];
        acc_q <= {(W+4){1'b0}};
        tgl_q <= ~tgl_q;
      end
    end
  assign ovr = ovr_q;

  // system side: the toggle passes two flops; the held word is taken on its edge
  reg tgl_s1, tgl_s2, tgl_s3;
  always @(posedge clk_sys or negedge rst_n)
    if (!rst_n) begin
      tgl_s1    <= 1'b0;
      tgl_s2    <= 1'b0;
      tgl_s3    <= 1'b0;
      level_sys <= {W{1'b0}};
      level_new <= 1'b0;
    end else begin
      tgl_s1    <= tgl_q;
      tgl_s2    <= tgl_s1;
      tgl_s3    <= tgl_s2;
      level_new <= tgl_s2 ^ tgl_s3;
      if (tgl_s2 ^ tgl_s3)
        level_sys <= cap_q;
    end

  // surge detector: rising above HIGH for four new samples in a row
  localparam IDLE = 2'd0, RISE = 2'd1, HOLD = 2'd2, DONE = 2'd3;
  reg [1:0] st_q;
  reg [1:0] run_q;
  always @(posedge clk_sys or negedge rst_n)
    if (!rst_n) begin
      st_q  <= IDLE;
      run_q <= 2'd0;
      surge <= 1'b0;
    end else if (level_new) begin
      case (st_q)
        IDLE: if (level_sys > HIGH) begin st_q <= RISE; run_q <= 2'd1; end
        RISE: if (level_sys > HIGH) begin
                run_q <= run_q + 2'd1;
                if (run_q == 2'd3) st_q <= HOLD;
              end else st_q <= IDLE;
        HOLD: begin surge <= 1'b1; st_q <= DONE; end
        DONE: if (level_sys <= HIGH) begin surge <= 1'b0; st_q <= IDLE; end
      endcase
    end
endmodule

"#;

fn station(channels: usize) -> String {
    let mut s = String::from("// Tide-gauge station, generated for the latency benchmark.\n\n");
    for k in 0..channels {
        s.push_str(&CHANNEL.replace("@K", &k.to_string()));
    }
    s.push_str("module tg_bench_top (\n  input  wire        clk_adc,\n  input  wire        clk_sys,\n  input  wire        rst_n,\n  input  wire [15:0] adc_data,\n  input  wire        adc_valid,\n  output reg         alarm_q,\n  output wire [15:0] level_0\n);\n");
    for k in 0..channels {
        s.push_str(&format!(
            "  wire [15:0] lvl_{k};\n  wire new_{k}, surge_{k}, ovr_{k};\n"
        ));
        s.push_str(&format!(
            "  tg_bench_chan_{k} u_chan_{k} (.clk_adc(clk_adc), .clk_sys(clk_sys), .rst_n(rst_n), .adc_data(adc_data), .adc_valid(adc_valid),\n    .level_sys(lvl_{k}), .level_new(new_{k}), .surge(surge_{k}), .ovr(ovr_{k}));\n"
        ));
    }
    let any: Vec<String> = (0..channels).map(|k| format!("surge_{k}")).collect();
    s.push_str(&format!("  wire any_surge = {};\n", any.join(" | ")));
    s.push_str("  assign level_0 = lvl_0;\n  // the deliberate bug: an ADC-domain flag read in the system domain\n  always @(posedge clk_sys or negedge rst_n)\n    if (!rst_n) alarm_q <= 1'b0;\n    else\nalarm_q <= ovr_0 | any_surge;\nendmodule\n");
    s
}

/// sv-parser alone (preprocess + parse) on the text, once: the baseline.
fn parse_once(text: &str, path: &Path) -> Duration {
    let defines = std::collections::HashMap::new();
    let inc: Vec<std::path::PathBuf> = vec![];
    let t0 = Instant::now();
    let r = sv_parser::parse_sv_str(text, path, &defines, &inc, false, false);
    let d = t0.elapsed();
    assert!(r.is_ok(), "the generated file parses");
    d
}

/// Median and p95 of a sample.
fn stats(mut v: Vec<f64>) -> (f64, f64) {
    v.sort_by(|a, b| a.total_cmp(b));
    let at = |p: f64| v[(((v.len() - 1) as f64) * p).round() as usize];
    (at(0.5), at(0.95))
}

/// The server's own steps in-process, each run paired with a baseline parse: ratios of
/// parse_file (sv-parser + the model) and of analyze to sv-parser's parse time.
fn steps(dir: &Path, file: &Path, text: &str, runs: usize) -> ((f64, f64), (f64, f64)) {
    use seam_analysis::parse::{parse_file, MacroTable, ParseOptions};
    let macros = MacroTable::with_defines([("SYNTHESIS", None)]);
    let opts = ParseOptions::default();
    let path = file.to_string_lossy().to_string();
    let cfg_text = std::fs::read_to_string(dir.join("seam.toml")).unwrap();
    let config = seam_analysis::config::parse_config("seam.toml", &cfg_text).unwrap();
    let (mut rp, mut ra) = (Vec::new(), Vec::new());
    for _ in 0..runs {
        let base = parse_once(text, file).as_secs_f64();
        let t0 = Instant::now();
        let out = parse_file(
            &path,
            "rtl/tg_bench_station.v",
            text.as_bytes(),
            &macros,
            &opts,
        );
        let p = t0.elapsed().as_secs_f64();
        let models = vec![out.model];
        let t1 = Instant::now();
        let r = seam_analysis::analyze(&models, &config);
        let an = t1.elapsed().as_secs_f64();
        assert!(r.modules > 0);
        rp.push(p / base);
        ra.push(an / base);
    }
    (stats(rp), stats(ra))
}

struct Run {
    /// Latency median and p95 (s), the paired baseline's median (s), ratio median and p95.
    latency: (f64, f64),
    baseline: f64,
    ratio: (f64, f64),
    published: usize,
    n: usize,
}

/// One-character edits (a space in and out at the start of the line with the unsynchronized
/// read); time from sending didChange to the publishDiagnostics of that version (or, if the
/// diagnostics did not change, the test-mode `seam/analyzed` of that version). Each edit is
/// paired with a baseline parse just before it, so load on the machine hits both alike.
fn latency(dir: &Path, file: &Path, text: &str, debounce_ms: u64, edits: usize) -> Run {
    let mut c = LspClient::start(
        dir,
        LspClient::default_capabilities(),
        json!({ "testMode": true, "debounceMs": debounce_ms }),
    );
    let uri = c.open(file, 1);
    c.wait_analyzed(&uri, 1);
    let mut doc = Utf16Doc::new(&std::fs::read_to_string(file).unwrap());
    let line = doc
        .text
        .lines()
        .position(|l| l.starts_with("alarm_q <= ovr_0"))
        .unwrap();
    let (mut lat, mut base, mut ratio) = (Vec::new(), Vec::new(), Vec::new());
    let mut published = 0;
    for i in 0..edits + 3 {
        let b = parse_once(text, file).as_secs_f64();
        let v = i as i64 + 2;
        let ch = if i % 2 == 0 {
            doc.edit(line, 0, line, 0, " ")
        } else {
            doc.edit(line, 0, line, 1, "")
        };
        let before = c.publishes.len();
        let t0 = Instant::now();
        c.change(&uri, v, json!([ch]));
        c.wait_analyzed(&uri, v);
        let analysed = c.last_at;
        let publish = (before..c.publishes.len())
            .find(|&k| c.publishes[k]["uri"] == uri.as_str() && c.publishes[k]["version"] == v);
        if i < 3 {
            continue; // warm-up
        }
        let t = match publish {
            Some(k) => {
                published += 1;
                c.publish_at[k] - t0
            }
            None => analysed - t0,
        }
        .as_secs_f64();
        lat.push(t);
        base.push(b);
        ratio.push(t / b);
    }
    let _ = c.shutdown_and_exit();
    let n = lat.len();
    Run {
        latency: stats(lat),
        baseline: stats(base).0,
        ratio: stats(ratio),
        published,
        n,
    }
}

fn main() {
    // the release binary of this build (cargo sets this for benches)
    std::env::set_var("SEAM_BIN", env!("CARGO_BIN_EXE_seam"));
    let quick = std::env::args().any(|a| a == "--quick");
    let edits = if quick { 10 } else { 40 };
    let dir = tempfile_dir();
    let channels = 18;
    let text = station(channels);
    let file = dir.join("rtl").join("tg_bench_station.v");
    std::fs::create_dir_all(file.parent().unwrap()).unwrap();
    std::fs::write(&file, &text).unwrap();
    std::fs::write(
        dir.join("seam.toml"),
        "[design]\nfiles = [\"rtl/*.v\"]\ntop = [\"tg_bench_top\"]\n\n[clocks]\nclk_sys = { frequency = \"100 MHz\" }\nclk_adc = { frequency = \"61.44 MHz\" }\n\n[inputs]\nadc_data = \"clk_adc\"\nadc_valid = \"clk_adc\"\n",
    )
    .unwrap();
    let lines = text.lines().count();

    let with_debounce = latency(&dir, &file, &text, 100, edits);
    let no_debounce = latency(&dir, &file, &text, 0, edits);
    // big stack, as the server gives its parse threads (sv-parser recurses deeply)
    let (d2, f2, t2) = (dir.clone(), file.clone(), text.clone());
    let (parse_ratio, analyze_ratio) = std::thread::Builder::new()
        .stack_size(1 << 29)
        .spawn(move || steps(&d2, &f2, &t2, if quick { 3 } else { 9 }))
        .unwrap()
        .join()
        .unwrap();

    println!(
        "lsp_latency: one-character edit in a {lines}-line file ({} bytes), {} edits per row",
        text.len(),
        with_debounce.n
    );
    println!(
        "  baseline: sv-parser parse_sv_str (preprocess + parse) of the same text, run before each edit; median {:.1} ms",
        no_debounce.baseline * 1e3
    );
    println!(
        "  {:<27} {:>10} {:>8} {:>14} {:>11} {:>10}",
        "edit to publish", "median ms", "p95 ms", "median ratio", "p95 ratio", "published"
    );
    for (name, r) in [
        ("debounce 100 ms (default)", &with_debounce),
        ("debounce 0 ms", &no_debounce),
    ] {
        println!(
            "  {:<27} {:>10.1} {:>8.1} {:>14.2} {:>11.2} {:>7}/{}",
            name,
            r.latency.0 * 1e3,
            r.latency.1 * 1e3,
            r.ratio.0,
            r.ratio.1,
            r.published,
            r.n
        );
    }
    println!(
        "  in-process, paired with the baseline: parse_file (sv-parser + model) {:.2}x (p95 {:.2}x), analyze {:.3}x (p95 {:.3}x)",
        parse_ratio.0, parse_ratio.1, analyze_ratio.0, analyze_ratio.1
    );
    let _ = std::fs::remove_dir_all(&dir);
}

fn tempfile_dir() -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("seam-bench-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}
