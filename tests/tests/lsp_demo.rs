//! `seam serve` on the demo design (tests/demo, the tide-gauge station), checked against the
//! batch checker `seam check --format json` and `seam domains --format json` on the same text:
//! the server must publish exactly the findings the checker reports, follow an edit that adds
//! a crossing and its undo, and describe registers as `seam domains` lists them.
//!
//! The CDC-specific expectations (a crossing appears; a domain is shown) hold only where the
//! checker itself reports them; when it does not, the test says so on stderr and checks what
//! remains (the two front ends still have to agree).

use std::path::Path;

use seam_tests::lsp_client::*;
use serde_json::{json, Value};

fn demo_copy() -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    copy_tree(
        &seam_tests::repo_root().join("tests").join("demo"),
        d.path(),
    );
    d
}

fn test_options() -> Value {
    json!({ "testMode": true })
}

/// Related locations of a finding, as (file, line) from both sides.
fn related_match(c: &LspClient, root: &Path, findings: &[Value]) {
    for f in findings {
        let file = f["file"].as_str().unwrap();
        let uri = file_uri(&root.join(file));
        let line0 = f["line"].as_u64().unwrap() - 1;
        let col0 = f["column"].as_u64().unwrap() - 1;
        let d = c
            .diags(&uri)
            .into_iter()
            .find(|d| {
                d["code"] == f["rule"]
                    && d["range"]["start"]["line"] == line0
                    && d["range"]["start"]["character"] == col0
            })
            .unwrap_or_else(|| panic!("no diagnostic for {f}"));
        let want: Vec<(String, u64)> = f["related"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| {
                (
                    r["file"].as_str().unwrap().to_string(),
                    r["line"].as_u64().unwrap(),
                )
            })
            .collect();
        let got: Vec<(String, u64)> = d["relatedInformation"]
            .as_array()
            .cloned()
            .unwrap_or_default()
            .iter()
            .map(|r| {
                (
                    rel_path(r["location"]["uri"].as_str().unwrap(), root),
                    r["location"]["range"]["start"]["line"].as_u64().unwrap() + 1,
                )
            })
            .collect();
        assert_eq!(got, want, "relatedInformation of {}", f["rule"]);
        // LSP 3.16 "Diagnostic": code, codeDescription.href, data kept for code actions
        assert_eq!(d["source"], "seam");
        let href = d["codeDescription"]["href"].as_str().unwrap_or_default();
        assert!(
            href.ends_with(&format!("/{}.md", f["rule"].as_str().unwrap())),
            "{href}"
        );
        assert_eq!(d["data"]["rule"], f["rule"]);
        assert_eq!(d["data"]["signal"], f["signal"]);
    }
}

#[test]
fn diagnostics_match_the_checker_and_follow_an_edit_and_its_undo() {
    let work = demo_copy();
    let root = work.path();
    let (before, before_findings) = checker_keys(root);
    let mut c = LspClient::start(root, LspClient::default_capabilities(), test_options());
    let logger = root.join("rtl").join("tg_logger.v");
    let uri = c.open(&logger, 1);
    c.wait_analyzed(&uri, 1);
    // the whole design is published, open or not
    assert_eq!(
        server_keys(&c, root),
        before,
        "server and checker disagree on the demo"
    );
    related_match(&c, root, &before_findings);
    // LSP 3.15 "PublishDiagnosticsParams": the version of the open document
    assert_eq!(
        c.diagnostics[&uri]["version"], 1,
        "publish carries the document version"
    );

    // the edit: the toggle's delay register also samples an ADC-domain bit, unsynchronized
    let mut doc = Utf16Doc::new(&std::fs::read_to_string(&logger).unwrap());
    let at = doc.text.find("tgl_d    <= tgl_s;").expect("demo line") + "tgl_d    <= tgl_s".len();
    let (line, col) = doc.position(at);
    let insert = " ^ ovr_hi_q";
    let ch = doc.edit(line, col, line, col, insert);
    c.change(&uri, 2, json!([ch]));

    // what the checker says about the edited text
    let edited = demo_copy();
    std::fs::write(edited.path().join("rtl").join("tg_logger.v"), &doc.text).unwrap();
    let (after, after_findings) = checker_keys(edited.path());
    c.wait_analyzed(&uri, 2);
    assert_eq!(server_keys(&c, root), after, "after the edit");
    related_match(&c, root, &after_findings);
    assert_eq!(c.diagnostics[&uri]["version"], 2);
    let new_crossing = after.difference(&before).any(|k| {
        k.1 == "unsynchronized-crossing" && k.0 == "rtl/tg_logger.v" && k.2 == line as u64 + 1
    });
    if new_crossing {
        let on_line = c
            .diags(&uri)
            .iter()
            .filter(|d| {
                d["code"] == "unsynchronized-crossing" && d["range"]["start"]["line"] == line as u64
            })
            .count();
        assert_eq!(
            on_line, 1,
            "the crossing the edit adds is shown on its line"
        );
    } else {
        eprintln!(
            "note: seam check reports no new unsynchronized-crossing for the edit; crossing-specific check skipped"
        );
    }

    // undo: the set is the original one again
    let ch = doc.edit(line, col, line, col + insert.encode_utf16().count(), "");
    c.change(&uri, 3, json!([ch]));
    c.wait_analyzed(&uri, 3);
    assert_eq!(server_keys(&c, root), before, "after the undo");
    if new_crossing {
        assert!(!c
            .diags(&uri)
            .iter()
            .any(|d| d["code"] == "unsynchronized-crossing"
                && d["range"]["start"]["line"] == line as u64));
    }
    let st = c.shutdown_and_exit();
    assert_eq!(st.code(), Some(0));
}

/// `seam domains --format json` registers of one file, if the command is there.
fn domain_registers(root: &Path, file: &str) -> Option<(Vec<Value>, Vec<Value>)> {
    let v = seam_json(
        &["domains", "--format", "json", &root.to_string_lossy()],
        root,
    )?;
    let regs: Vec<Value> = v["registers"]
        .as_array()?
        .iter()
        .filter(|r| r["file"] == file)
        .cloned()
        .collect();
    if regs.is_empty() {
        return None;
    }
    Some((regs, v["clocks"].as_array().cloned().unwrap_or_default()))
}

fn hover_text(c: &mut LspClient, uri: &str, line: usize, ch: usize) -> String {
    let h = c.call(
        "textDocument/hover",
        json!({ "textDocument": { "uri": uri }, "position": { "line": line, "character": ch } }),
    );
    assert_eq!(h["contents"]["kind"], "markdown", "{h}");
    h["contents"]["value"].as_str().unwrap().to_string()
}

#[test]
fn hover_inlay_hints_and_code_lens_show_domains() {
    let work = demo_copy();
    let root = work.path();
    let mut c = LspClient::start(root, LspClient::default_capabilities(), test_options());
    let logger = root.join("rtl").join("tg_logger.v");
    let uri = c.open(&logger, 1);
    c.wait_analyzed(&uri, 1);
    let doc = Utf16Doc::new(&std::fs::read_to_string(&logger).unwrap());
    let lines: Vec<&str> = doc.text.lines().collect();

    let hints = c.call(
        "textDocument/inlayHint",
        json!({ "textDocument": { "uri": uri }, "range": range(0, 0, lines.len() as u64, 0) }),
    );
    let hints = hints.as_array().cloned().unwrap_or_default();
    assert!(!hints.is_empty(), "inlay hints are there");
    // every hint sits right after a name declared on its line (LSP 3.17 "InlayHint": position)
    for h in &hints {
        let l = h["position"]["line"].as_u64().unwrap() as usize;
        let ch = h["position"]["character"].as_u64().unwrap() as usize;
        let off = doc.offset(l, ch);
        let before = &doc.text[doc.line_bytes(l).0..off];
        assert!(
            before.ends_with(|c: char| c.is_alphanumeric() || c == '_'),
            "hint {h} not after a name: {before:?}"
        );
    }

    let lenses = c.call(
        "textDocument/codeLens",
        json!({ "textDocument": { "uri": uri } }),
    );
    let lenses = lenses.as_array().cloned().unwrap_or_default();
    let module_lines = lines
        .iter()
        .filter(|l| l.trim_start().starts_with("module "))
        .count();
    assert_eq!(lenses.len(), module_lines, "one lens per module header");
    let r = &lenses[0]["range"];
    let (l, s, e) = (
        r["start"]["line"].as_u64().unwrap() as usize,
        r["start"]["character"].as_u64().unwrap() as usize,
        r["end"]["character"].as_u64().unwrap() as usize,
    );
    assert_eq!(
        &doc.text[doc.offset(l, s)..doc.offset(l, e)],
        "tg_logger",
        "lens on the module name"
    );
    let title = lenses[0]["command"]["title"].as_str().unwrap().to_string();
    assert!(!title.is_empty());

    match domain_registers(root, "rtl/tg_logger.v") {
        Some((regs, clocks)) => {
            // each register seam domains lists has a hint on its line naming its domain
            for r in &regs {
                let dom = r["domain"].as_str().unwrap_or("no domain");
                let line0 = r["line"].as_u64().unwrap() - 1;
                let found = hints.iter().any(|h| {
                    h["position"]["line"] == line0 && h["label"].as_str().unwrap().contains(dom)
                });
                assert!(
                    found,
                    "no hint with {dom} for {} on line {}: {hints:?}",
                    r["signal"],
                    line0 + 1
                );
                assert!(title.contains(dom), "lens {title:?} names domain {dom}");
            }
            // hover on a register: its domain, clock, edge, frequency and the caution footer
            let reg = regs
                .iter()
                .find(|r| r["signal"] == "storm_s2")
                .or(regs.first())
                .unwrap();
            let name = reg["signal"].as_str().unwrap();
            let line0 = reg["line"].as_u64().unwrap() as usize - 1;
            let col = lines[line0].find(name).unwrap();
            let md = hover_text(&mut c, &uri, line0, col + 1);
            let dom = reg["domain"].as_str().unwrap();
            assert!(
                md.contains(&format!("`{dom}`")),
                "hover names the domain {dom}: {md}"
            );
            if let Some(clk) = clocks.iter().find(|k| k["name"] == reg["clock"]) {
                if let Some(hz) = clk["frequency_hz"].as_f64() {
                    let f = seam_analysis::config::format_frequency(hz);
                    assert!(md.contains(&f), "hover shows {f}: {md}");
                    assert!(
                        md.contains("estimates"),
                        "a figure is shown, so the caution is too: {md}"
                    );
                }
            }
            assert!(md.contains("structural and advisory"), "{md}");
            if let Some(st) = reg["stage"].as_array() {
                let want = format!(
                    "stage {} of {} from `{}`",
                    st[0],
                    st[1],
                    st[2].as_str().unwrap()
                );
                assert!(md.contains(&want), "hover shows {want}: {md}");
            }
            // hover on the clock net itself: its root, as seam domains names it
            if let Some(clk) = clocks.iter().find(|k| k["name"] == reg["clock"]) {
                let cname = clk["name"].as_str().unwrap();
                let l = lines
                    .iter()
                    .position(|l| l.trim_start().starts_with("input") && l.contains(cname))
                    .expect("the clock port of tg_logger");
                let md = hover_text(&mut c, &uri, l, lines[l].find(cname).unwrap() + 1);
                let root = clk["root"].as_str().unwrap();
                assert!(md.contains("clock"), "{md}");
                assert!(
                    md.contains(&format!("`{root}`")),
                    "clock hover names the root {root}: {md}"
                );
            }
            // a stage of the in-process chain shows "stage k of N" when seam domains says so
            if let Some(s1) = regs.iter().find(|r| r["stage"].is_array()) {
                let n = s1["signal"].as_str().unwrap();
                let l = s1["line"].as_u64().unwrap() as usize - 1;
                let md = hover_text(&mut c, &uri, l, lines[l].find(n).unwrap());
                let st = s1["stage"].as_array().unwrap();
                assert!(
                    md.contains(&format!("stage {} of {}", st[0], st[1])),
                    "{md}"
                );
            }
        }
        None => {
            eprintln!(
                "note: seam domains lists no registers for tg_logger.v; domain checks skipped, local facts checked"
            );
            let l = lines
                .iter()
                .position(|l| l.contains("alarm        <="))
                .unwrap();
            let md = hover_text(&mut c, &uri, l, lines[l].find("alarm").unwrap());
            assert!(md.contains("clk_sys"), "{md}");
        }
    }

    // the crossing count in the lens follows the checker's unsafe crossings into tg_logger
    let check = seam_json(
        &["check", &root.to_string_lossy(), "--format", "json"],
        root,
    )
    .unwrap();
    let unsafe_in = check["crossings"]
        .as_array()
        .map(|a| {
            a.iter()
                .filter(|x| {
                    x["status"] == "unsafe"
                        && x["destination"]
                            .as_str()
                            .unwrap_or("")
                            .starts_with("u_log.")
                        && x["file"] == "rtl/tg_logger.v"
                })
                .count()
        })
        .unwrap_or(0);
    if unsafe_in > 0 {
        assert!(
            title.contains(&format!("{unsafe_in} unsafe")),
            "lens {title:?} counts {unsafe_in} unsafe crossings"
        );
    } else {
        eprintln!(
            "note: the checker lists no unsafe crossing into tg_logger; lens count check skipped"
        );
    }

    // executeCommand behind the lens lists the same crossings
    let args = lenses[0]["command"]["arguments"].clone();
    let listed = c.call(
        "workspace/executeCommand",
        json!({ "command": lenses[0]["command"]["command"], "arguments": args }),
    );
    assert_eq!(
        listed
            .as_array()
            .map(|a| a.iter().filter(|x| x["status"] == "unsafe").count())
            .unwrap_or(0),
        unsafe_in
    );

    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn inlay_hints_can_be_switched_off() {
    let root = seam_tests::repo_root().join("tests").join("demo");
    let mut c = LspClient::start(
        &root,
        LspClient::default_capabilities(),
        json!({ "testMode": true, "inlayHints": false }),
    );
    let uri = c.open(&root.join("rtl").join("tg_logger.v"), 1);
    c.wait_analyzed(&uri, 1);
    let hints = c.call(
        "textDocument/inlayHint",
        json!({ "textDocument": { "uri": uri }, "range": range(0, 0, 100, 0) }),
    );
    assert_eq!(
        hints,
        json!([]),
        "initializationOptions {{\"inlayHints\": false}}"
    );
    // and back on through workspace/didChangeConfiguration (LSP 3.17: settings pushed)
    c.notify(
        "workspace/didChangeConfiguration",
        json!({ "settings": { "seam": { "inlayHints": true } } }),
    );
    // a request through the server's ordered queue: the settings change is applied after it
    c.call("seam/documentText", json!({ "uri": uri }));
    let hints = c.call(
        "textDocument/inlayHint",
        json!({ "textDocument": { "uri": uri }, "range": range(0, 0, 100, 0) }),
    );
    assert!(hints.as_array().is_some_and(|a| !a.is_empty()), "{hints}");
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn the_waive_action_waives_the_finding_as_the_checker_does() {
    let work = demo_copy();
    let root = work.path();
    let mut c = LspClient::start(root, LspClient::default_capabilities(), test_options());
    let logger = root.join("rtl").join("tg_logger.v");
    let uri = c.open(&logger, 1);
    c.wait_analyzed(&uri, 1);
    let Some(d) = c
        .diags(&uri)
        .into_iter()
        .find(|d| d["code"] != "syntax-error" && d["data"]["waived"] == false)
    else {
        eprintln!("note: no finding in tg_logger.v to waive; code action check skipped");
        return;
    };
    let rule = d["code"].as_str().unwrap().to_string();
    let actions = c.call(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": uri }, "range": d["range"], "context": { "diagnostics": [d] } }),
    );
    // LSP 3.17 "CodeAction": a quickfix whose edit is versioned (documentChanges)
    let a = actions
        .as_array()
        .unwrap()
        .iter()
        .find(|a| a["kind"] == "quickfix" && a["title"].as_str().unwrap().contains(&rule))
        .unwrap_or_else(|| panic!("no waive action: {actions}"))
        .clone();
    let dc = &a["edit"]["documentChanges"][0];
    assert_eq!(dc["textDocument"]["version"], 1);
    let e = &dc["edits"][0];
    let mut doc = Utf16Doc::new(&std::fs::read_to_string(&logger).unwrap());
    let r = &e["range"];
    let ch = doc.edit(
        r["start"]["line"].as_u64().unwrap() as usize,
        r["start"]["character"].as_u64().unwrap() as usize,
        r["end"]["line"].as_u64().unwrap() as usize,
        r["end"]["character"].as_u64().unwrap() as usize,
        e["newText"].as_str().unwrap(),
    );
    assert!(e["newText"]
        .as_str()
        .unwrap()
        .contains(&format!("seam: allow({rule})")));
    c.change(&uri, 2, json!([ch]));
    // the checker on the same text is the reference for what a waiver does
    let other = demo_copy();
    std::fs::write(other.path().join("rtl").join("tg_logger.v"), &doc.text).unwrap();
    let (want, findings) = checker_keys(other.path());
    c.wait_analyzed(&uri, 2);
    assert_eq!(server_keys(&c, root), want);
    let line_after = d["range"]["start"]["line"].as_u64().unwrap() + 2; // 1-based, one line lower
    let waived = findings
        .iter()
        .any(|f| f["rule"] == rule.as_str() && f["line"] == line_after && f["waived"] == true);
    if !waived {
        eprintln!("note: the checker does not count the inserted comment as a waiver of {rule}; check limited to agreement");
    }
    for f in findings.iter().filter(|f| f["file"] == "rtl/tg_logger.v") {
        let line0 = f["line"].as_u64().unwrap() - 1;
        let col0 = f["column"].as_u64().unwrap() - 1;
        let sd = c
            .diags(&uri)
            .into_iter()
            .find(|x| {
                x["code"] == f["rule"]
                    && x["range"]["start"]["line"] == line0
                    && x["range"]["start"]["character"] == col0
            })
            .unwrap();
        assert_eq!(
            sd["data"]["waived"], f["waived"],
            "{} waived as the checker says",
            f["rule"]
        );
        if f["waived"] == true {
            assert_eq!(
                sd["severity"], 4,
                "a waived finding is shown as a hint, not dropped"
            );
        }
    }
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}
