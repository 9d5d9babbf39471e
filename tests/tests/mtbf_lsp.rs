//! MTBF in the editor: the hover on a synchronizer stage and the code lens on the top module,
//! through `seam serve` driven by the scripted JSON-RPC client, on copies of the fixtures in
//! tests/fixtures/mtbf.
//!
//! References: LSP specification 3.17 ("Hover": MarkupContent of kind markdown; "Code Lens":
//! a Command with a title); the expected figures are the DESIGN.md section 6 formula
//! MTBF = e^(t_r/τ)/(T_W·f_clk·f_data), t_r = (N − 1)(T − t_setup − t_clk→q), evaluated here
//! in plain f64 (no seam code), printed with 3 significant digits as docs/mtbf.md says.
//! A year is the Julian year, 365.25 days (IAU; from memory).

use std::path::Path;

use seam_tests::lsp_client::*;
use serde_json::{json, Value};

const YEAR_S: f64 = 365.25 * 86_400.0;

fn fixture_copy(name: &str) -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    copy_tree(&seam_tests::fixtures().join("mtbf").join(name), d.path());
    d
}

fn printed_years(years: f64) -> String {
    let mut e = years.log10().floor() as i32;
    let mut m = years / 10f64.powi(e);
    if (m * 100.0).round() >= 1000.0 {
        m /= 10.0;
        e += 1;
    }
    format!(
        "{:.2}e{}{:02} years",
        m,
        if e < 0 { '-' } else { '+' },
        e.unsigned_abs()
    )
}

fn years(n: u32, period: f64, overhead: f64, tau: f64, tw: f64, f: f64, a: f64) -> f64 {
    (f64::from(n - 1) * (period - overhead) / tau).exp() / (tw * f * a) / YEAR_S
}

/// Open `file` of `root`, wait for its analysis; (client, uri, lines).
fn open(root: &Path, file: &str) -> (LspClient, String, Vec<String>) {
    let mut c = LspClient::start(
        root,
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let path = root.join(file);
    let uri = c.open(&path, 1);
    c.wait_analyzed(&uri, 1);
    let lines = std::fs::read_to_string(&path)
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect();
    (c, uri, lines)
}

/// Hover markdown on the first occurrence of `word` on the first line containing `line_has`
/// (all ASCII, so UTF-16 columns are byte columns).
fn hover_on(c: &mut LspClient, uri: &str, lines: &[String], line_has: &str, word: &str) -> String {
    let l = lines
        .iter()
        .position(|x| x.contains(line_has))
        .unwrap_or_else(|| panic!("{line_has} not in the file"));
    let ch = lines[l].find(word).unwrap() + 1;
    let h = c.call(
        "textDocument/hover",
        json!({ "textDocument": { "uri": uri }, "position": { "line": l, "character": ch } }),
    );
    assert_eq!(
        h["contents"]["kind"], "markdown",
        "LSP 3.17 MarkupContent: {h}"
    );
    h["contents"]["value"].as_str().unwrap().to_string()
}

fn lens_titles(c: &mut LspClient, uri: &str) -> Vec<String> {
    let l = c.call(
        "textDocument/codeLens",
        json!({ "textDocument": { "uri": uri } }),
    );
    l.as_array()
        .cloned()
        .unwrap_or_default()
        .iter()
        .map(|x: &Value| x["command"]["title"].as_str().unwrap_or("").to_string())
        .collect()
}

#[test]
fn hover_on_a_stage_shows_the_inputs_the_figure_and_the_caution() {
    let d = fixture_copy("stages");
    let (mut c, uri, lines) = open(d.path(), "sr_trigger.v");
    // fixture: 500 MHz, τ = 100 ps, T_W = 50 ps, overhead 150 ps, async_toggle 1 MHz
    let two = years(2, 2e-9, 150e-12, 100e-12, 50e-12, 500e6, 1e6);
    for word in ["a_s1", "a_s2"] {
        let md = hover_on(&mut c, &uri, &lines, "reg a_s1, a_s2;", word);
        for needle in [
            "MTBF estimate".to_string(),
            printed_years(two),
            "2 stages".to_string(),
            "`clk_smp`".to_string(),
            "f_clk = 500 MHz".to_string(),
            "f_data = 1 MHz".to_string(),
            "τ = 100 ps".to_string(),
            "T_W = 50 ps".to_string(),
            "t_r = 1.85 ns".to_string(),
            "below it".to_string(),
            "3 stages".to_string(),
            // the caution of the hover footer
            "estimates".to_string(),
            "not silicon data".to_string(),
        ] {
            assert!(md.contains(&needle), "{word}: {needle:?} not in\n{md}");
        }
        assert!(!md.contains("inf") && !md.contains("NaN"), "{md}");
    }
    // the three-stage chain meets it
    let md = hover_on(&mut c, &uri, &lines, "reg b_s1, b_s2, b_s3;", "b_s2");
    let three = years(3, 2e-9, 150e-12, 100e-12, 50e-12, 500e6, 1e6);
    assert!(
        md.contains(&printed_years(three)) && md.contains("meets it"),
        "{md}"
    );
    // negative: a register that is no stage has no MTBF lines
    let md = hover_on(&mut c, &uri, &lines, "output reg  [7:0] count_a", "count_a");
    assert!(!md.contains("MTBF estimate"), "{md}");
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn hover_names_the_setting_when_a_frequency_is_unknown() {
    let d = fixture_copy("unknown");
    let (mut c, uri, lines) = open(d.path(), "sr_ctl.v");
    let md = hover_on(&mut c, &uri, &lines, "reg cal_s1;", "cal_s1");
    assert!(
        md.contains("[clocks] clk_hk = { frequency = \"…\" }"),
        "the seam.toml key instead of a number:\n{md}"
    );
    assert!(
        !md.contains(" years"),
        "no figure without a frequency:\n{md}"
    );
    let md = hover_on(&mut c, &uri, &lines, "reg gain_s1;", "gain_s1");
    assert!(md.contains("f_clk = 200 MHz"), "{md}");
    assert!(md.contains("[mtbf.toggle] gain_q"), "{md}");
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn code_lens_on_the_top_module_gives_the_design_total_and_the_weakest() {
    let d = fixture_copy("fleet");
    let (mut c, uri, lines) = open(d.path(), "sr_array.v");
    let titles = lens_titles(&mut c, &uri);
    let modules = lines
        .iter()
        .filter(|l| l.trim_start().starts_with("module "))
        .count();
    // one lens per module header, plus one on the top (sr_array), none on sr_sync2
    assert_eq!(titles.len(), modules + 1, "{titles:?}");
    let mtbf: Vec<&String> = titles.iter().filter(|t| t.contains("MTBF")).collect();
    assert_eq!(mtbf.len(), 1, "{titles:?}");
    let m = years(2, 4e-9, 150e-12, 110e-12, 50e-12, 250e6, 1e6);
    for needle in [
        "design MTBF estimate".to_string(),
        printed_years(m / 12.0),
        "below".to_string(),
        "weakest".to_string(),
        printed_years(m),
    ] {
        assert!(mtbf[0].contains(&needle), "{needle:?} not in {}", mtbf[0]);
    }
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}
