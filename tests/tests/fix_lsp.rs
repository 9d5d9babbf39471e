//! Quick fixes through the language server: `seam serve` with the scripted JSON-RPC client.
//! The client asks for the code actions of an `unsynchronized-crossing` diagnostic, applies
//! the preferred action's WorkspaceEdit to its buffer, and sends the result as a change.
//! References: LSP 3.17 ("CodeAction": kind `quickfix`, `isPreferred`; "WorkspaceEdit":
//! `documentChanges` with a versioned text document identifier), the batch checker
//! (`seam check --fix`) run on the same fixture, Icarus Verilog (compiles the edited text).

use seam_tests::lsp_client::*;
use seam_tests::*;
use serde_json::{json, Value};

fn actions_for(c: &mut LspClient, uri: &str, d: &Value) -> Vec<Value> {
    let r = c.call(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": uri }, "range": d["range"], "context": { "diagnostics": [d] } }),
    );
    r.as_array().cloned().unwrap_or_default()
}

/// Apply a TextDocumentEdit's edits to the buffer (last first, so earlier positions hold)
/// and return the change events in that order.
fn apply(doc: &mut Utf16Doc, edits: &[Value]) -> Vec<Value> {
    let mut es: Vec<&Value> = edits.iter().collect();
    let pos = |e: &Value, k: &str| {
        (
            e["range"][k]["line"].as_u64().unwrap() as usize,
            e["range"][k]["character"].as_u64().unwrap() as usize,
        )
    };
    es.sort_by_key(|e| std::cmp::Reverse(pos(e, "start")));
    es.into_iter()
        .map(|e| {
            let (sl, sc) = pos(e, "start");
            let (el, ec) = pos(e, "end");
            doc.edit(sl, sc, el, ec, e["newText"].as_str().unwrap())
        })
        .collect()
}

fn rules(ds: &[Value]) -> Vec<String> {
    let mut v: Vec<String> = ds
        .iter()
        .map(|d| d["code"].as_str().unwrap_or("").to_string())
        .collect();
    v.sort();
    v
}

fn run_case(case: &str, file: &str) {
    let d = tempfile::tempdir().unwrap();
    copy_tree(&fixtures().join("fix/sync").join(case), d.path());
    let path = d.path().join(file);
    let mut c = LspClient::start(
        d.path(),
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let uri = c.open(&path, 1);
    c.wait_analyzed(&uri, 1);
    let before = c.diags(&uri);
    let diag = before
        .iter()
        .find(|x| x["code"] == "unsynchronized-crossing")
        .unwrap_or_else(|| panic!("{case}: no diagnostic: {before:?}"))
        .clone();
    let actions = actions_for(&mut c, &uri, &diag);
    // LSP 3.17 CodeAction: quickfix kind; the synchronizer is the preferred (main) fix
    let sync = actions
        .iter()
        .find(|a| a["isPreferred"] == true)
        .unwrap_or_else(|| panic!("{case}: no preferred action: {actions:?}"))
        .clone();
    assert_eq!(sync["kind"], "quickfix");
    let title = sync["title"].as_str().unwrap();
    assert!(
        title.contains("synchronizer") && title.contains("latency"),
        "{title}"
    );
    // the waiver is offered too, not preferred
    assert!(actions
        .iter()
        .any(|a| a["isPreferred"] == false && a["title"].as_str().unwrap().starts_with("Waive")));
    // LSP 3.17 WorkspaceEdit.documentChanges: versioned edits of the open document
    let dcs = sync["edit"]["documentChanges"].as_array().unwrap();
    assert_eq!(dcs.len(), 1, "{case}: one document edited");
    assert_eq!(dcs[0]["textDocument"]["uri"], uri);
    assert_eq!(dcs[0]["textDocument"]["version"], 1);
    let mut doc = Utf16Doc::new(&std::fs::read_to_string(&path).unwrap());
    let changes = apply(&mut doc, dcs[0]["edits"].as_array().unwrap());
    c.change(&uri, 2, Value::Array(changes));
    c.wait_analyzed(&uri, 2);
    let after = c.diags(&uri);
    assert!(
        !after
            .iter()
            .any(|x| x["code"] == "unsynchronized-crossing" || x["code"] == "syntax-error"),
        "{case}: {after:?}"
    );
    let mut expect = rules(&before);
    expect.retain(|r| r != "unsynchronized-crossing");
    assert_eq!(rules(&after), expect, "{case}: no new diagnostic");
    // the same fix as the batch checker's (the reference for the edit)
    let other = tempfile::tempdir().unwrap();
    copy_tree(&fixtures().join("fix/sync").join(case), other.path());
    let o = seam(&["check", "--fix", "unsynchronized-crossing"], other.path());
    assert!(o.status.code().is_some());
    assert_eq!(
        doc.text,
        std::fs::read_to_string(other.path().join(file)).unwrap(),
        "{case}"
    );
    // Icarus Verilog compiles the edited buffer with the other files of the case
    std::fs::write(&path, &doc.text).unwrap();
    let files: Vec<_> = std::fs::read_dir(d.path())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("v" | "sv")))
        .collect();
    iverilog_compiles(&files, &[]).unwrap_or_else(|e| panic!("{case}: {e}"));
    // after the fix its action is no longer offered (for any diagnostic left)
    for x in &after {
        let again = actions_for(&mut c, &uri, x);
        assert!(
            !again
                .iter()
                .any(|a| a["title"].as_str().unwrap().contains("synchronizer")),
            "{case}: {again:?}"
        );
    }
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn synchronizer_action_applies_and_clears_the_diagnostic() {
    run_case("s1_v_plain", "gh_valve.v");
    run_case("s2_sv_reset", "gh_fan.sv");
}

#[test]
fn across_files_the_edit_is_in_the_destination_file() {
    // the diagnostic is in gh_pump.sv; gh_tank.sv and gh_level.v stay as they are
    run_case("s3_files", "gh_pump.sv");
}
