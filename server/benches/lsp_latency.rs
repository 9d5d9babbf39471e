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
//! debounce set to 0 (the server's own work); each also as a ratio to the parse time.

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
        s.push_str(&format!("  wire [15:0] lvl_{k};\n  wire new_{k}, surge_{k}, ovr_{k};\n"));
        s.push_str(&format!(
            "  tg_bench_chan_{k} u_chan_{k} (.clk_adc(clk_adc), .clk_sys(clk_sys), .rst_n(rst_n), .adc_data(adc_data), .adc_valid(adc_valid),\n    .level_sys(lvl_{k}), .level_new(new_{k}), .surge(surge_{k}), .ovr(ovr_{k}));\n"
        ));
    }
    let any: Vec<String> = (0..channels).map(|k| format!("surge_{k}")).collect();
    s.push_str(&format!("  wire any_surge = {};\n", any.join(" | ")));
    s.push_str("  assign level_0 = lvl_0;\n  // the deliberate bug: an ADC-domain flag read in the system domain\n  always @(posedge clk_sys or negedge rst_n)\n    if (!rst_n) alarm_q <= 1'b0;\n    else\nalarm_q <= ovr_0 | any_surge;\nendmodule\n");
    s
}

fn percentile(sorted: &[Duration], p: f64) -> Duration {
    let i = ((sorted.len() as f64 - 1.0) * p).round() as usize;
    sorted[i.min(sorted.len() - 1)]
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

/// sv-parser alone (preprocess + parse) on the text: the baseline.
fn parse_time(text: &str, path: &Path, runs: usize) -> Duration {
    let defines = std::collections::HashMap::new();
    let inc: Vec<std::path::PathBuf> = vec![];
    let mut t: Vec<Duration> = (0..runs)
        .map(|_| {
            let t0 = Instant::now();
            let r = sv_parser::parse_sv_str(text, path, &defines, &inc, false, false);
            let d = t0.elapsed();
            assert!(r.is_ok(), "the generated file parses");
            d
        })
        .collect();
    t.sort();
    t[t.len() / 2]
}

/// The server's own steps in-process: parse_file (sv-parser + the model) and analyze.
fn steps(dir: &Path, file: &Path, text: &str, runs: usize) -> (Duration, Duration) {
    use seam_analysis::parse::{parse_file, MacroTable, ParseOptions};
    let macros = MacroTable::with_defines([("SYNTHESIS", None)]);
    let opts = ParseOptions::default();
    let path = file.to_string_lossy().to_string();
    let cfg_text = std::fs::read_to_string(dir.join("seam.toml")).unwrap();
    let config = seam_analysis::config::parse_config("seam.toml", &cfg_text).unwrap();
    let mut p = Vec::new();
    let mut a = Vec::new();
    for _ in 0..runs {
        let t0 = Instant::now();
        let out = parse_file(&path, "rtl/tg_bench_station.v", text.as_bytes(), &macros, &opts);
        p.push(t0.elapsed());
        let models = vec![out.model];
        let t1 = Instant::now();
        let r = seam_analysis::analyze(&models, &config);
        a.push(t1.elapsed());
        assert!(r.modules > 0);
    }
    p.sort();
    a.sort();
    (p[p.len() / 2], a[a.len() / 2])
}

struct Run {
    median: Duration,
    p95: Duration,
    published: usize,
    n: usize,
}

/// One-character edits (a space in and out at the start of the line with the unsynchronized
/// read); time from sending didChange to the publishDiagnostics of that version (or, if the
/// diagnostics did not change, the test-mode `seam/analyzed` of that version).
fn latency(dir: &Path, file: &Path, debounce_ms: u64, edits: usize) -> Run {
    let mut c = LspClient::start(
        dir,
        LspClient::default_capabilities(),
        json!({ "testMode": true, "debounceMs": debounce_ms }),
    );
    let uri = c.open(file, 1);
    c.wait_analyzed(&uri, 1);
    let mut doc = Utf16Doc::new(&std::fs::read_to_string(file).unwrap());
    let line = doc.text.lines().position(|l| l.starts_with("alarm_q <= ovr_0")).unwrap();
    let mut times = Vec::new();
    let mut published = 0;
    for i in 0..edits + 3 {
        let v = i as i64 + 2;
        let ch = if i % 2 == 0 { doc.edit(line, 0, line, 0, " ") } else { doc.edit(line, 0, line, 1, "") };
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
        match publish {
            Some(k) => {
                published += 1;
                times.push(c.publish_at[k] - t0);
            }
            None => times.push(analysed - t0),
        }
    }
    let _ = c.shutdown_and_exit();
    times.sort();
    Run { median: percentile(&times, 0.5), p95: percentile(&times, 0.95), published, n: times.len() }
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

    let parse = parse_time(&text, &file, if quick { 3 } else { 9 });
    let with_debounce = latency(&dir, &file, 100, edits);
    let no_debounce = latency(&dir, &file, 0, edits);
    let parse_after = parse_time(&text, &file, if quick { 3 } else { 9 });
    // big stack, as the server gives its parse threads (sv-parser recurses deeply)
    let (d2, f2, t2) = (dir.clone(), file.clone(), text.clone());
    let (ours, analysis) = std::thread::Builder::new()
        .stack_size(1 << 29)
        .spawn(move || steps(&d2, &f2, &t2, if quick { 3 } else { 9 }))
        .unwrap()
        .join()
        .unwrap();
    let parse = parse.min(parse_after);

    println!(
        "lsp_latency: one-character edit in a {lines}-line file ({} bytes), {} edits per row",
        text.len(),
        with_debounce.n
    );
    println!("  baseline sv-parser parse (preprocess + parse), median: {:.1} ms", ms(parse));
    println!(
        "  in-process, median: parse_file (sv-parser + model) {:.1} ms ({:.2}x), analyze {:.1} ms ({:.2}x)",
        ms(ours),
        ours.as_secs_f64() / parse.as_secs_f64(),
        ms(analysis),
        analysis.as_secs_f64() / parse.as_secs_f64()
    );
    println!(
        "  {:<28} {:>10} {:>10} {:>12} {:>12} {:>10}",
        "edit to publish", "median ms", "p95 ms", "median/parse", "p95/parse", "published"
    );
    for (name, r) in [("debounce 100 ms (default)", &with_debounce), ("debounce 0 ms", &no_debounce)] {
        println!(
            "  {:<28} {:>10.1} {:>10.1} {:>12.2} {:>12.2} {:>7}/{}",
            name,
            ms(r.median),
            ms(r.p95),
            r.median.as_secs_f64() / parse.as_secs_f64(),
            r.p95.as_secs_f64() / parse.as_secs_f64(),
            r.published,
            r.n
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

fn tempfile_dir() -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("seam-bench-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}
