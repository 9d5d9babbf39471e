//! Trusted synchronizers (`[synchronizers] modules`) and `synchronizer` cells are checked for
//! use: on the destination clock they are clean, on the source clock the crossing moves to
//! the reader and is reported there, naming the misused synchronizer. Fixture: a pitch
//! controller reading a blade-encoder flag (tests/fixtures/trusted); every variant compiles
//! with iverilog (outside reference: the Debian `iverilog` package).

use std::path::Path;

use seam_tests::*;

const TOML_MODULE: &str = "[clocks]\nclk_ctl = {}\nclk_enc = {}\n\n[inputs]\nenc_a = \"clk_enc\"\n\n[synchronizers]\nmodules = [\"pc_sync_lib\"]\n";
const TOML_CELL: &str = "[clocks]\nclk_ctl = {}\nclk_enc = {}\n\n[inputs]\nenc_a = \"clk_enc\"\n\n[cells]\npc_sync_cell = { kind = \"synchronizer\", clock = \"clk\", input = \"d\", output = \"q\", stages = 2 }\n";

fn design(dir: &Path, sync_clk: &str, cell: bool) {
    let src = fixtures().join("trusted");
    let mut top = std::fs::read_to_string(src.join("pitch_top.v"))
        .unwrap()
        .replace("SYNC_CLK", sync_clk);
    if cell {
        top = top.replace("pc_sync_lib u_sync", "pc_sync_cell u_sync");
        std::fs::write(dir.join("seam.toml"), TOML_CELL).unwrap();
    } else {
        std::fs::copy(src.join("pc_sync_lib.v"), dir.join("pc_sync_lib.v")).unwrap();
        std::fs::write(dir.join("seam.toml"), TOML_MODULE).unwrap();
    }
    std::fs::write(dir.join("pitch_top.v"), top).unwrap();
}

fn findings(dir: &Path) -> Vec<serde_json::Value> {
    let out = seam(&["check", "--format", "json"], dir);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "error" || f["severity"] == "warning")
        .cloned()
        .collect()
}

#[test]
fn trusted_module_on_the_destination_clock_is_clean() {
    let d = tempfile::tempdir().unwrap();
    design(d.path(), "clk_ctl", false);
    if have("iverilog") {
        iverilog_compiles(
            &[d.path().join("pc_sync_lib.v"), d.path().join("pitch_top.v")],
            &[],
        )
        .unwrap();
    }
    let f = findings(d.path());
    assert!(f.is_empty(), "{f:?}");
}

#[test]
fn trusted_module_on_the_source_clock_is_reported_at_the_reader() {
    let d = tempfile::tempdir().unwrap();
    design(d.path(), "clk_enc", false);
    if have("iverilog") {
        iverilog_compiles(
            &[d.path().join("pc_sync_lib.v"), d.path().join("pitch_top.v")],
            &[],
        )
        .unwrap();
    }
    let f = findings(d.path());
    assert_eq!(f.len(), 1, "{f:?}");
    assert_eq!(f[0]["rule"], "unsynchronized-crossing");
    assert_eq!(f[0]["line"], 15, "the reader in pitch_top.v: {}", f[0]);
    let m = f[0]["message"].as_str().unwrap();
    assert!(
        m.contains("`u_sync` is a trusted synchronizer `pc_sync_lib`, but it is clocked in domain clk_enc, not clk_ctl"),
        "{m}"
    );
}

#[test]
fn synchronizer_cell_on_the_destination_clock_is_clean() {
    let d = tempfile::tempdir().unwrap();
    design(d.path(), "clk_ctl", true);
    let f = findings(d.path());
    assert!(f.is_empty(), "{f:?}");
}

#[test]
fn synchronizer_cell_on_the_source_clock_is_reported_at_the_reader() {
    let d = tempfile::tempdir().unwrap();
    design(d.path(), "clk_enc", true);
    let f = findings(d.path());
    assert_eq!(f.len(), 1, "{f:?}");
    assert_eq!(f[0]["rule"], "unsynchronized-crossing");
    assert_eq!(f[0]["line"], 15);
    let m = f[0]["message"].as_str().unwrap();
    assert!(m.contains("trusted synchronizer `pc_sync_cell`"), "{m}");
    assert!(m.contains("clocked in domain clk_enc, not clk_ctl"), "{m}");
}
