//! Ordering and text fidelity: a burst of incremental edits (multi-byte text, UTF-16
//! positions) reaches the server's document store in order and intact; a form feed or U+2028
//! in a comment does not shift line numbers.
//! References: LSP specification 3.17, "Text Documents" (line endings `\n`, `\r\n`, `\r`
//! only; positions in UTF-16 code units unless negotiated) and "TextDocumentContentChangeEvent"
//! (changes in one notification apply in order); the client's copy is edited with std's UTF-16
//! codec, not with the server's code.

use seam_tests::lsp_client::*;
use serde_json::{json, Value};

/// Deterministic xorshift64 (no seed from the clock: a failure replays).
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.0 = x;
        x
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// A UTF-16 column on `line` that does not split a surrogate pair.
fn column(doc: &Utf16Doc, line: usize, rng: &mut Rng) -> usize {
    let (s, e) = doc.line_bytes(line);
    let mut cols = vec![0];
    let mut n = 0;
    for ch in doc.text[s..e].chars() {
        n += ch.len_utf16();
        cols.push(n);
    }
    cols[rng.below(cols.len())]
}

#[test]
fn rapid_incremental_edits_keep_the_text() {
    let d = tempfile::tempdir().unwrap();
    let start = "// Station log — niveau de la marée 🌊\nmodule tg_log_text (input wire clk_sys);\n  // Größe: 3 m\r\n  wire a;\rendmodule\n";
    let path = d.path().join("tg_log_text.v");
    std::fs::write(&path, start).unwrap();
    let mut c = LspClient::start(
        d.path(),
        LspClient::default_capabilities(),
        json!({ "testMode": true }),
    );
    let uri = c.open(&path, 1);
    let mut doc = Utf16Doc::new(start);
    let pieces = [
        "é", "🌊", "中文", "x", "\n", "\r\n", "\r", "Ωμ", "  ", "𝄞𝄞", "reg r;", "\u{2028}",
        "\u{000C}", "",
    ];
    let mut rng = Rng(0x005E_A1DE_2026);
    let mut version = 1;
    for i in 0..200 {
        // 1 to 3 changes per notification, applied in order
        let n = 1 + rng.below(3);
        let mut changes: Vec<Value> = Vec::new();
        for _ in 0..n {
            let lines = doc.line_count();
            let l1 = rng.below(lines);
            let c1 = column(&doc, l1, &mut rng);
            let (l2, c2) = if rng.below(3) == 0 {
                (l1, c1) // pure insertion
            } else {
                let l2 = (l1 + rng.below(2)).min(lines - 1);
                let c2 = column(&doc, l2, &mut rng);
                if (l2, c2) < (l1, c1) {
                    (l1, c1)
                } else {
                    (l2, c2)
                }
            };
            let text = if i % 50 == 49 {
                ""
            } else {
                pieces[rng.below(pieces.len())]
            };
            changes.push(doc.edit(l1, c1, l2, c2, text));
        }
        version += 1;
        c.change(&uri, version, Value::Array(changes));
    }
    // the test-only request is queued behind every change sent before it
    let got = c.call("seam/documentText", json!({ "uri": uri }));
    let got = got["text"].as_str().expect("document text");
    assert_eq!(
        got, doc.text,
        "server text differs from the client's after 200 edits"
    );
    assert_eq!(c.shutdown_and_exit().code(), Some(0));
}

#[test]
fn form_feed_and_line_separator_do_not_shift_lines() {
    let body = |comment: &str| {
        format!("// {comment}\nmodule tg_ff (input wire clk_sys, output reg q);\n  always @(posedge clk_sys) q <= ;\nendmodule\n")
    };
    let plain = body("page one  page two  end");
    let odd = body("page one\u{000C}page two\u{2028}end");
    let d = tempfile::tempdir().unwrap();
    let mut seen = Vec::new();
    for (name, text) in [("tg_ff_plain.v", &plain), ("tg_ff_odd.v", &odd)] {
        let p = d.path().join(name);
        std::fs::write(&p, text).unwrap();
        let mut c = LspClient::start(
            d.path(),
            LspClient::default_capabilities(),
            json!({ "testMode": true }),
        );
        let uri = c.open(&p, 1);
        c.wait_analyzed(&uri, 1);
        let e = c
            .diags(&uri)
            .into_iter()
            .find(|x| x["code"] == "syntax-error")
            .expect("syntax error");
        seen.push(e["range"].clone());
        // the error is on the line holding `q <= ;`, counted with the spec's line breaks only
        let doc = Utf16Doc::new(text);
        let want = (0..doc.line_count()).find(|&l| {
            let (s, e) = doc.line_bytes(l);
            doc.text[s..e].contains("q <= ;")
        });
        assert_eq!(
            e["range"]["start"]["line"].as_u64(),
            want.map(|l| l as u64),
            "{name}"
        );
        assert_eq!(c.shutdown_and_exit().code(), Some(0));
        std::fs::remove_file(&p).unwrap();
    }
    assert_eq!(seen[0], seen[1], "FF and U+2028 in a comment move nothing");
}
