//! A real editor as the outside reference: Neovim headless (Debian `neovim`, its built-in LSP
//! client; version 0.7 has no inlay hints or position-encoding negotiation, which the scripted
//! client covers) runs `seam serve` on the demo design. Checked: the diagnostics Neovim
//! received (`vim.diagnostic.get`) are the findings `seam check --format json` reports for the
//! file; a hover answers; edits made through Neovim's own incremental sync leave the server
//! with Neovim's buffer text; Neovim's stop (shutdown + exit) ends the server with code 0.

use std::collections::BTreeSet;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use seam_tests::lsp_client::*;
use serde_json::Value;

const SCRIPT: &str = r#"
local out = {}
local bin, root, file = vim.env.SEAM_BIN, vim.env.SEAM_ROOT, vim.env.SEAM_FILE
local hl, hc = tonumber(vim.env.SEAM_HOVER_LINE), tonumber(vim.env.SEAM_HOVER_COL)
vim.cmd("edit " .. vim.fn.fnameescape(file))
local buf = vim.api.nvim_get_current_buf()
local exited = nil
local id = vim.lsp.start_client({
  name = "seam",
  cmd = { bin, "serve", "--log-level", "warn" },
  root_dir = root,
  init_options = { testMode = true },
  flags = { debounce_text_changes = 0 },
  on_exit = function(code, signal) exited = { code = code, signal = signal } end,
})
out.client = id ~= nil
vim.lsp.buf_attach_client(buf, id)
out.waited = vim.wait(60000, function() return #vim.diagnostic.get(buf) > 0 end, 50)
out.diagnostics = {}
for _, d in ipairs(vim.diagnostic.get(buf)) do
  table.insert(out.diagnostics, { lnum = d.lnum, col = d.col, code = d.code, severity = d.severity, message = d.message })
end
local uri = vim.uri_from_bufnr(buf)
local hov = vim.lsp.buf_request_sync(buf, "textDocument/hover",
  { textDocument = { uri = uri }, position = { line = hl, character = hc } }, 20000)
out.hover = (hov and hov[id] and hov[id].result and hov[id].result.contents.value) or vim.NIL
-- edits through Neovim's own change tracking (incremental sync)
vim.api.nvim_buf_set_lines(buf, 0, 0, false, { "// relevé de marée 🌊 — contrôle" })
vim.api.nvim_buf_set_text(buf, 3, 2, 3, 2, { "é€𝄞" })
-- after multi-byte text on the same line (API columns are bytes; the client sends UTF-16)
vim.api.nvim_buf_set_text(buf, 3, 11, 3, 11, { "Ω" })
vim.api.nvim_buf_set_text(buf, 0, 10, 0, 13, {})
vim.api.nvim_buf_set_lines(buf, 5, 6, false, {})
vim.api.nvim_buf_set_text(buf, 1, 0, 2, 0, { "// joined ", "" })
local txt = vim.lsp.buf_request_sync(buf, "seam/documentText", { uri = uri }, 20000)
out.server_text = (txt and txt[id] and txt[id].result and txt[id].result.text) or vim.NIL
out.buffer_text = table.concat(vim.api.nvim_buf_get_lines(buf, 0, -1, false), "\n") .. "\n"
vim.lsp.stop_client(id)
vim.wait(20000, function() return exited ~= nil end, 50)
out.exit = exited or vim.NIL
local f = io.open(vim.env.SEAM_OUT, "w")
f:write(vim.fn.json_encode(out))
f:close()
vim.cmd("qa!")
"#;

#[test]
fn neovim_receives_diagnostics_and_hover() {
    if Command::new("nvim").arg("--version").output().is_err() {
        eprintln!("SKIPPED: nvim is not installed (tests/run installs the Debian package neovim)");
        return;
    }
    let work = tempfile::tempdir().unwrap();
    let root = work.path().join("demo");
    copy_tree(&seam_tests::repo_root().join("tests").join("demo"), &root);
    let file = root.join("rtl").join("tg_logger.v");
    let text = std::fs::read_to_string(&file).unwrap();
    let hover_line = text
        .lines()
        .position(|l| l.contains("reg storm_s1, storm_s2;"))
        .expect("demo line");
    let hover_col = text
        .lines()
        .nth(hover_line)
        .unwrap()
        .find("storm_s2")
        .unwrap()
        + 2;
    let script = work.path().join("seam_test.lua");
    std::fs::write(&script, SCRIPT).unwrap();
    let out_file = work.path().join("out.json");

    let mut child = Command::new("nvim")
        .args(["--headless", "--clean", "-n", "-c"])
        .arg(format!("luafile {}", script.display()))
        .env("SEAM_BIN", server_bin())
        .env("SEAM_ROOT", &root)
        .env("SEAM_FILE", &file)
        .env("SEAM_OUT", &out_file)
        .env("SEAM_HOVER_LINE", hover_line.to_string())
        .env("SEAM_HOVER_COL", hover_col.to_string())
        .env("XDG_CACHE_HOME", work.path().join("cache"))
        .env("XDG_STATE_HOME", work.path().join("state"))
        .env("XDG_DATA_HOME", work.path().join("data"))
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start nvim");
    let deadline = Instant::now() + Duration::from_secs(120);
    while child.try_wait().unwrap().is_none() {
        if Instant::now() > deadline {
            let _ = child.kill();
            panic!("nvim did not finish");
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    let out: Value =
        serde_json::from_str(&std::fs::read_to_string(&out_file).expect("nvim wrote its results"))
            .unwrap();
    assert_eq!(out["client"], true);
    assert_eq!(out["waited"], true, "Neovim received diagnostics: {out}");

    // vim.diagnostic items: 0-based lnum, byte col (the demo is ASCII) and the LSP code
    let got: BTreeSet<(u64, u64, String)> = out["diagnostics"]
        .as_array()
        .unwrap()
        .iter()
        .map(|d| {
            (
                d["lnum"].as_u64().unwrap() + 1,
                d["col"].as_u64().unwrap() + 1,
                d["code"].as_str().unwrap_or("").to_string(),
            )
        })
        .collect();
    let want: BTreeSet<(u64, u64, String)> = checker_findings(&root)
        .iter()
        .filter(|f| f["file"] == "rtl/tg_logger.v")
        .map(|f| {
            (
                f["line"].as_u64().unwrap(),
                f["column"].as_u64().unwrap(),
                f["rule"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert_eq!(
        got, want,
        "Neovim's diagnostics are the checker's findings for tg_logger.v"
    );

    let hover = out["hover"]
        .as_str()
        .unwrap_or_else(|| panic!("no hover: {out}"));
    assert!(hover.contains("storm_s2"), "{hover}");
    match seam_json(
        &["domains", "--format", "json", &root.to_string_lossy()],
        &root,
    )
    .and_then(|v| v["registers"].as_array().cloned())
    .and_then(|r| {
        r.into_iter()
            .find(|r| r["signal"] == "storm_s2" && r["file"] == "rtl/tg_logger.v")
    }) {
        Some(r) => {
            let dom = r["domain"].as_str().unwrap();
            assert!(
                hover.contains(&format!("`{dom}`")),
                "hover names the domain {dom}: {hover}"
            );
        }
        None => eprintln!("note: seam domains does not list storm_s2; hover domain check skipped"),
    }

    assert_eq!(
        out["server_text"], out["buffer_text"],
        "server text after Neovim's incremental edits"
    );
    assert_eq!(
        out["exit"]["code"], 0,
        "server exit code after Neovim's stop: {out}"
    );
}
