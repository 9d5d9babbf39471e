//! Shared helpers for Seam's end-to-end tests: locating the `seam` binary and fixtures,
//! running outside tools (iverilog, Verilator) and parsing fixtures in-process.

pub mod fixcase;
pub mod lsp_client;
pub mod real;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use seam_analysis::model::FileModel;
use seam_analysis::parse::{self, MacroTable, ParseOptions};

pub fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("repo root")
        .to_path_buf()
}

pub fn fixtures() -> PathBuf {
    repo_root().join("tests").join("fixtures")
}

static BUILD: std::sync::Once = std::sync::Once::new();

/// The `seam` binary of this build. It is rebuilt once per test process (a no-op when it is
/// up to date), so a test never runs a stale binary.
pub fn seam_bin() -> PathBuf {
    // test executables live in target/<profile>/deps; the binary in target/<profile>
    let exe = std::env::current_exe().expect("test exe");
    let profile_dir = exe.parent().and_then(|p| p.parent()).expect("target dir");
    let bin = profile_dir.join(format!("seam{}", std::env::consts::EXE_SUFFIX));
    BUILD.call_once(|| {
        let st = Command::new(env!("CARGO"))
            .args(["build", "-p", "seam-server", "--bin", "seam"])
            .current_dir(repo_root())
            .status()
            .expect("cargo build");
        assert!(st.success(), "building seam failed");
    });
    bin
}

pub fn seam(args: &[&str], cwd: &Path) -> Output {
    Command::new(seam_bin())
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("run seam")
}

/// Parse files in order in this process, carrying macros from file to file (as `seam` does).
pub fn parse_in_order(files: &[PathBuf], include_dirs: &[PathBuf]) -> Vec<FileModel> {
    let mut macros = MacroTable::with_defines([("SYNTHESIS", None)]);
    let opts = ParseOptions {
        include_dirs: include_dirs.to_vec(),
        ..ParseOptions::default()
    };
    let mut out = Vec::new();
    for f in files {
        let bytes = std::fs::read(f).expect("read fixture");
        let path = f.to_string_lossy().to_string();
        let name = f.file_name().unwrap().to_string_lossy().to_string();
        let r = parse::parse_file(&path, &name, &bytes, &macros, &opts);
        macros = r.macros_out;
        out.push(r.model);
    }
    out
}

/// Whether a tool is on PATH (tests/run installs iverilog, verilator and neovim).
pub fn have(tool: &str) -> bool {
    Command::new(tool).arg("--version").output().is_ok()
}

/// `iverilog -g2012` compile (outside reference: Icarus Verilog accepts the design).
pub fn iverilog_compiles(files: &[PathBuf], include_dirs: &[PathBuf]) -> Result<(), String> {
    let mut c = Command::new("iverilog");
    c.args(["-g2012", "-gsupported-assertions", "-o", "/dev/null"]);
    for d in include_dirs {
        c.arg(format!("-I{}", d.display()));
    }
    c.args(files);
    let o = c
        .output()
        .map_err(|e| format!("iverilog not runnable: {e}"))?;
    if o.status.success() {
        Ok(())
    } else {
        Err(String::from_utf8_lossy(&o.stderr).to_string())
    }
}

/// `verilator --lint-only` (outside reference: Verilator lints the design clean).
pub fn verilator_lints(
    files: &[PathBuf],
    include_dirs: &[PathBuf],
    top: Option<&str>,
) -> Result<(), String> {
    let mut c = Command::new("verilator");
    c.arg("--lint-only");
    for d in include_dirs {
        c.arg(format!("-I{}", d.display()));
    }
    if let Some(t) = top {
        c.args(["--top-module", t]);
    }
    c.args(files);
    let o = c
        .output()
        .map_err(|e| format!("verilator not runnable: {e}"))?;
    if o.status.success() {
        Ok(())
    } else {
        Err(String::from_utf8_lossy(&o.stderr).to_string())
    }
}
