//! A small JSON-RPC client for `seam serve` over stdio, for the end-to-end LSP tests.
//!
//! Framing and message shapes follow the LSP specification 3.17 ("Base Protocol": a
//! `Content-Length` header, `\r\n\r\n`, a UTF-8 JSON body). The client answers the server's own
//! requests (progress tokens, capability registration, configuration) the way an editor would,
//! records every notification, and keeps the latest diagnostics per URI.
//!
//! [`Utf16Doc`] is the client's copy of a document: it applies incremental changes with
//! UTF-16 positions using std's UTF-16 codec and the spec's line breaks, independently of the
//! server's ropey-based store, so the two can be compared.

use std::collections::{BTreeSet, HashMap};
use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, Command, ExitStatus, Stdio};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use serde_json::{json, Value};

/// How long a wait may take before the test fails (a bound against hangs, not a measurement).
pub const WAIT: Duration = Duration::from_secs(60);

/// The binary under test: `SEAM_BIN` when set, else the workspace build.
pub fn server_bin() -> PathBuf {
    match std::env::var_os("SEAM_BIN") {
        Some(p) => PathBuf::from(p),
        None => crate::seam_bin(),
    }
}

/// `file://` URI of a path (canonical; bytes outside the unreserved set percent-encoded, as
/// RFC 3986 asks).
pub fn file_uri(p: &Path) -> String {
    let p = p.canonicalize().unwrap_or_else(|_| p.to_path_buf());
    let mut s = String::from("file://");
    for b in p.to_string_lossy().as_bytes() {
        let c = *b as char;
        if c.is_ascii_alphanumeric() || "/-._~".contains(c) {
            s.push(c);
        } else {
            s.push_str(&format!("%{:02X}", b));
        }
    }
    s
}

pub struct LspClient {
    child: Child,
    stdin: Option<ChildStdin>,
    rx: Receiver<(Instant, Value)>,
    next_id: i64,
    stderr: Arc<Mutex<String>>,
    /// Every notification from the server, in arrival order.
    pub notifications: Vec<Value>,
    /// Every request from the server, in arrival order.
    pub server_requests: Vec<Value>,
    /// Latest `textDocument/publishDiagnostics` params per URI.
    pub diagnostics: HashMap<String, Value>,
    /// Every `publishDiagnostics` in arrival order, and when each was read off the pipe.
    pub publishes: Vec<Value>,
    pub publish_at: Vec<Instant>,
    /// When the last message handled was read off the pipe (for the latency benchmark).
    pub last_at: Instant,
    pub init_result: Value,
    /// Answer for `workspace/configuration` (the `seam` section).
    pub configuration: Value,
    /// Responses that arrived while waiting for something else, by id.
    responses: HashMap<i64, Value>,
}

fn read_message(r: &mut impl BufRead) -> Option<Value> {
    let mut len: Option<usize> = None;
    loop {
        let mut line = String::new();
        if r.read_line(&mut line).ok()? == 0 {
            return None;
        }
        let line = line.trim_end_matches(['\r', '\n']);
        if line.is_empty() {
            break;
        }
        if let Some((k, v)) = line.split_once(':') {
            if k.eq_ignore_ascii_case("content-length") {
                len = v.trim().parse().ok();
            }
        }
    }
    let mut body = vec![0u8; len?];
    r.read_exact(&mut body).ok()?;
    serde_json::from_slice(&body).ok()
}

impl LspClient {
    /// Start `seam serve` in `root` and run `initialize` / `initialized`.
    pub fn start(root: &Path, capabilities: Value, init_options: Value) -> LspClient {
        Self::start_args(root, capabilities, init_options, &[])
    }

    pub fn start_args(
        root: &Path,
        capabilities: Value,
        init_options: Value,
        args: &[&str],
    ) -> LspClient {
        let mut child = Command::new(server_bin())
            .arg("serve")
            .args(args)
            .current_dir(root)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start seam serve");
        let stdout = child.stdout.take().expect("stdout");
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            let mut r = BufReader::new(stdout);
            while let Some(m) = read_message(&mut r) {
                if tx.send((Instant::now(), m)).is_err() {
                    break;
                }
            }
        });
        let stderr = Arc::new(Mutex::new(String::new()));
        let err_pipe = child.stderr.take().expect("stderr");
        let sink = stderr.clone();
        std::thread::spawn(move || {
            for line in BufReader::new(err_pipe).lines().map_while(Result::ok) {
                if let Ok(mut s) = sink.lock() {
                    s.push_str(&line);
                    s.push('\n');
                }
            }
        });
        let stdin = child.stdin.take();
        let mut c = LspClient {
            child,
            stdin,
            rx,
            next_id: 1,
            stderr,
            notifications: vec![],
            server_requests: vec![],
            diagnostics: HashMap::new(),
            publishes: vec![],
            publish_at: vec![],
            last_at: Instant::now(),
            init_result: Value::Null,
            configuration: Value::Null,
            responses: HashMap::new(),
        };
        let root_uri = file_uri(root);
        let name = root
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        let r = c.request(
            "initialize",
            json!({
                "processId": std::process::id(),
                "rootUri": root_uri,
                "workspaceFolders": [{ "uri": root_uri, "name": name }],
                "capabilities": capabilities,
                "initializationOptions": init_options,
            }),
        );
        c.init_result = r
            .get("result")
            .cloned()
            .unwrap_or_else(|| panic!("initialize failed: {r}"));
        c.notify("initialized", json!({}));
        c
    }

    /// Client capabilities of a plain editor: UTF-16 only, progress, file watching.
    pub fn default_capabilities() -> Value {
        json!({
            "window": { "workDoneProgress": true },
            "workspace": { "didChangeWatchedFiles": { "dynamicRegistration": true }, "configuration": false },
            "textDocument": { "publishDiagnostics": { "relatedInformation": true, "versionSupport": true } },
        })
    }

    pub fn stderr_text(&self) -> String {
        self.stderr.lock().map(|s| s.clone()).unwrap_or_default()
    }

    fn write(&mut self, v: &Value) {
        let body = serde_json::to_vec(v).expect("json");
        let stdin = self.stdin.as_mut().expect("stdin open");
        stdin
            .write_all(format!("Content-Length: {}\r\n\r\n", body.len()).as_bytes())
            .expect("write header");
        stdin.write_all(&body).expect("write body");
        stdin.flush().expect("flush");
    }

    pub fn notify(&mut self, method: &str, params: Value) {
        self.write(&json!({ "jsonrpc": "2.0", "method": method, "params": params }));
    }

    /// Send a request without waiting; returns its id.
    pub fn send_request(&mut self, method: &str, params: Value) -> i64 {
        let id = self.next_id;
        self.next_id += 1;
        let mut m = json!({ "jsonrpc": "2.0", "id": id, "method": method });
        if !params.is_null() {
            m["params"] = params;
        }
        self.write(&m);
        id
    }

    /// Send a request and wait for its response (the whole response object).
    pub fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.send_request(method, params);
        self.response(id)
    }

    /// The `result` of a request; panics on an error response.
    pub fn call(&mut self, method: &str, params: Value) -> Value {
        let r = self.request(method, params);
        if let Some(e) = r.get("error") {
            panic!("{method} failed: {e}\nserver log:\n{}", self.stderr_text());
        }
        r.get("result").cloned().unwrap_or(Value::Null)
    }

    pub fn response(&mut self, id: i64) -> Value {
        let deadline = Instant::now() + WAIT;
        loop {
            if let Some(r) = self.responses.remove(&id) {
                return r;
            }
            let m = self.next_message(deadline).unwrap_or_else(|| {
                panic!(
                    "no response to request {id}\nserver log:\n{}",
                    self.stderr_text()
                )
            });
            self.dispatch(m);
        }
    }

    fn next_message(&mut self, deadline: Instant) -> Option<Value> {
        let left = deadline.saturating_duration_since(Instant::now());
        match self.rx.recv_timeout(left) {
            Ok((at, m)) => {
                self.last_at = at;
                Some(m)
            }
            Err(RecvTimeoutError::Timeout) | Err(RecvTimeoutError::Disconnected) => None,
        }
    }

    /// Record a message; answer server requests as an editor would.
    fn dispatch(&mut self, m: Value) {
        let has_method = m.get("method").is_some();
        let id = m.get("id").cloned();
        match (has_method, id) {
            (true, Some(id)) => {
                let method = m["method"].as_str().unwrap_or("").to_string();
                let result = match method.as_str() {
                    "workspace/configuration" => {
                        let n = m["params"]["items"]
                            .as_array()
                            .map(|a| a.len())
                            .unwrap_or(1);
                        Some(Value::Array(vec![self.configuration.clone(); n]))
                    }
                    "window/workDoneProgress/create"
                    | "client/registerCapability"
                    | "client/unregisterCapability"
                    | "workspace/inlayHint/refresh"
                    | "workspace/codeLens/refresh" => Some(Value::Null),
                    _ => None,
                };
                self.server_requests.push(m);
                let reply = match result {
                    Some(r) => json!({ "jsonrpc": "2.0", "id": id, "result": r }),
                    None => {
                        json!({ "jsonrpc": "2.0", "id": id, "error": { "code": -32601, "message": "not handled by the test client" } })
                    }
                };
                self.write(&reply);
            }
            (true, None) => {
                if m["method"] == "textDocument/publishDiagnostics" {
                    let uri = m["params"]["uri"].as_str().unwrap_or("").to_string();
                    self.diagnostics.insert(uri, m["params"].clone());
                    self.publishes.push(m["params"].clone());
                    self.publish_at.push(self.last_at);
                }
                self.notifications.push(m);
            }
            (false, Some(id)) => {
                if let Some(i) = id.as_i64() {
                    self.responses.insert(i, m);
                }
            }
            (false, None) => {}
        }
    }

    /// Wait until `pred` holds for a notification that arrives from now on; returns it.
    pub fn wait_notification(&mut self, what: &str, mut pred: impl FnMut(&Value) -> bool) -> Value {
        let deadline = Instant::now() + WAIT;
        loop {
            let m = self.next_message(deadline).unwrap_or_else(|| {
                panic!(
                    "timed out waiting for {what}\nserver log:\n{}",
                    self.stderr_text()
                )
            });
            let is_note = m.get("method").is_some() && m.get("id").is_none();
            self.dispatch(m.clone());
            if is_note && pred(&m) {
                return m;
            }
        }
    }

    /// Read messages until `pred` holds for the client's state (latest diagnostics...);
    /// false if it still does not after [`WAIT`] (the caller asserts, showing the difference).
    pub fn wait_until(&mut self, mut pred: impl FnMut(&LspClient) -> bool) -> bool {
        let deadline = Instant::now() + WAIT;
        while !pred(self) {
            match self.next_message(deadline) {
                Some(m) => self.dispatch(m),
                None => return false,
            }
        }
        true
    }

    /// Wait for the test-mode `seam/analyzed` notification that covers `version` of `uri`
    /// (parsed at or after it, nothing newer waiting). Diagnostics of that cycle arrived first.
    pub fn wait_analyzed(&mut self, uri: &str, version: i64) -> Value {
        let uri = uri.to_string();
        self.wait_notification(&format!("analysis of {uri} v{version}"), |m| {
            m["method"] == "seam/analyzed"
                && m["params"]["documents"][&uri]["parsed"]
                    .as_i64()
                    .is_some_and(|v| v >= version)
                && m["params"]["documents"][&uri]["pending"] == false
        })
    }

    /// Wait for the next `seam/analyzed` (any document).
    pub fn wait_any_analysis(&mut self) -> Value {
        self.wait_notification("an analysis", |m| m["method"] == "seam/analyzed")
    }

    /// Latest diagnostics for a URI (empty when none were published).
    pub fn diags(&self, uri: &str) -> Vec<Value> {
        self.diagnostics
            .get(uri)
            .and_then(|p| p["diagnostics"].as_array().cloned())
            .unwrap_or_default()
    }

    pub fn open(&mut self, path: &Path, version: i64) -> String {
        let uri = file_uri(path);
        let text = std::fs::read_to_string(path).expect("read file to open");
        self.open_text(&uri, &text, version);
        uri
    }

    pub fn open_text(&mut self, uri: &str, text: &str, version: i64) {
        let lang = if uri.ends_with(".sv") {
            "systemverilog"
        } else {
            "verilog"
        };
        self.notify(
            "textDocument/didOpen",
            json!({ "textDocument": { "uri": uri, "languageId": lang, "version": version, "text": text } }),
        );
    }

    pub fn change(&mut self, uri: &str, version: i64, changes: Value) {
        self.notify(
            "textDocument/didChange",
            json!({ "textDocument": { "uri": uri, "version": version }, "contentChanges": changes }),
        );
    }

    /// `shutdown`, then `exit`; the process's exit status.
    pub fn shutdown_and_exit(mut self) -> ExitStatus {
        let r = self.request("shutdown", Value::Null);
        assert!(r.get("error").is_none(), "shutdown failed: {r}");
        self.notify("exit", Value::Null);
        self.wait_exit()
    }

    /// Wait for the process to end by itself (bounded), then close its input.
    pub fn wait_exit(&mut self) -> ExitStatus {
        let deadline = Instant::now() + Duration::from_secs(20);
        loop {
            if let Some(st) = self.child.try_wait().expect("try_wait") {
                self.stdin = None;
                return st;
            }
            if Instant::now() > deadline {
                let _ = self.child.kill();
                panic!(
                    "seam serve did not exit\nserver log:\n{}",
                    self.stderr_text()
                );
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

impl Drop for LspClient {
    fn drop(&mut self) {
        if let Ok(None) = self.child.try_wait() {
            let _ = self.child.kill();
            let _ = self.child.wait();
        }
        if std::thread::panicking() {
            eprintln!("--- seam serve log ---\n{}", self.stderr_text());
        }
    }
}

/// A range from UTF-16 positions, as JSON.
pub fn range(sl: u64, sc: u64, el: u64, ec: u64) -> Value {
    json!({ "start": { "line": sl, "character": sc }, "end": { "line": el, "character": ec } })
}

/// The client's copy of a document, edited with UTF-16 positions (LSP spec "Position",
/// "Text Documents": lines end at `\n`, `\r\n` or `\r`; a character past the end of a line is
/// the line's end).
#[derive(Clone, Debug, Default)]
pub struct Utf16Doc {
    pub text: String,
}

impl Utf16Doc {
    pub fn new(text: &str) -> Self {
        Utf16Doc {
            text: text.to_string(),
        }
    }

    /// Byte offset of each line start.
    pub fn line_starts(&self) -> Vec<usize> {
        let b = self.text.as_bytes();
        let mut starts = vec![0];
        let mut i = 0;
        while i < b.len() {
            if b[i] == b'\n' || (b[i] == b'\r' && b.get(i + 1) != Some(&b'\n')) {
                starts.push(i + 1);
            }
            i += 1;
        }
        starts
    }

    /// Byte range of a line's content (without its line break).
    pub fn line_bytes(&self, line: usize) -> (usize, usize) {
        let starts = self.line_starts();
        let s = starts[line.min(starts.len() - 1)];
        let mut e = starts.get(line + 1).copied().unwrap_or(self.text.len());
        let b = self.text.as_bytes();
        if e > s && b[e - 1] == b'\n' {
            e -= 1;
        }
        if e > s && b[e - 1] == b'\r' {
            e -= 1;
        }
        (s, e)
    }

    pub fn line_count(&self) -> usize {
        self.line_starts().len()
    }

    /// Length of a line in UTF-16 code units.
    pub fn line_len16(&self, line: usize) -> usize {
        let (s, e) = self.line_bytes(line);
        self.text[s..e].encode_utf16().count()
    }

    /// Byte offset of a UTF-16 position (which must not split a surrogate pair).
    pub fn offset(&self, line: usize, ch16: usize) -> usize {
        if line >= self.line_count() {
            return self.text.len();
        }
        let (s, e) = self.line_bytes(line);
        let units: Vec<u16> = self.text[s..e].encode_utf16().collect();
        let k = ch16.min(units.len());
        let prefix = String::from_utf16(&units[..k]).expect("position splits a surrogate pair");
        s + prefix.len()
    }

    /// The UTF-16 position of a byte offset.
    pub fn position(&self, off: usize) -> (usize, usize) {
        let starts = self.line_starts();
        let line = match starts.binary_search(&off) {
            Ok(l) => l,
            Err(l) => l - 1,
        };
        (line, self.text[starts[line]..off].encode_utf16().count())
    }

    /// Apply a ranged change; returns the JSON change event that describes it.
    pub fn edit(&mut self, sl: usize, sc: usize, el: usize, ec: usize, new: &str) -> Value {
        let a = self.offset(sl, sc);
        let b = self.offset(el, ec);
        self.text.replace_range(a..b, new);
        json!({ "range": range(sl as u64, sc as u64, el as u64, ec as u64), "text": new })
    }
}

/// Copy a folder tree (the tests edit copies, never the repository's files).
pub fn copy_tree(src: &Path, dst: &Path) {
    for e in walkdir_files(src) {
        let rel = e.strip_prefix(src).expect("under src");
        let to = dst.join(rel);
        if let Some(d) = to.parent() {
            std::fs::create_dir_all(d).expect("mkdir");
        }
        std::fs::copy(&e, &to).expect("copy");
    }
}

fn walkdir_files(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).expect("read_dir").flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p);
            }
        }
    }
    out.sort();
    out
}

/// `seam ARGS` (the same binary as the server) with JSON on stdout.
pub fn seam_json(args: &[&str], cwd: &Path) -> Option<Value> {
    let out = Command::new(server_bin())
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("run seam");
    serde_json::from_slice(&out.stdout).ok()
}

/// The batch checker's findings for a folder (`seam check DIR --format json`).
pub fn checker_findings(dir: &Path) -> Vec<Value> {
    let v = seam_json(&["check", &dir.to_string_lossy(), "--format", "json"], dir)
        .unwrap_or_else(|| panic!("seam check {} --format json gave no JSON", dir.display()));
    v["findings"].as_array().cloned().unwrap_or_default()
}

/// The path of a URI relative to `root`, with `/` separators.
pub fn rel_path(uri: &str, root: &Path) -> String {
    let root = file_uri(root);
    uri.strip_prefix(&root)
        .map(|s| s.trim_start_matches('/').to_string())
        .unwrap_or_else(|| uri.to_string())
}

/// (file, rule, line, column, end line, end column).
pub type Key = (String, String, u64, u64, u64, u64);

/// (file, rule, line, column, end line, end column) of the checker's findings; 1-based, code
/// points (DESIGN.md section 8); the demo is ASCII, so code points equal UTF-16 units.
pub fn checker_keys(dir: &Path) -> (BTreeSet<Key>, Vec<Value>) {
    let f = checker_findings(dir);
    let keys = f
        .iter()
        .map(|x| {
            (
                x["file"].as_str().unwrap().to_string(),
                x["rule"].as_str().unwrap().to_string(),
                x["line"].as_u64().unwrap(),
                x["column"].as_u64().unwrap(),
                x["end_line"].as_u64().unwrap(),
                x["end_column"].as_u64().unwrap(),
            )
        })
        .collect();
    (keys, f)
}

/// The same keys from the server's latest diagnostics (LSP positions are 0-based), leaving
/// out what the checker does not report by design.
pub fn server_keys(c: &LspClient, root: &Path) -> BTreeSet<Key> {
    let mut out = BTreeSet::new();
    for (uri, p) in &c.diagnostics {
        for d in p["diagnostics"].as_array().unwrap() {
            // config problems are not findings; stale findings (kept from the last version of
            // a file that parsed) are the server's own: the checker black-boxes such a file
            if d["code"] == "invalid-config" || d["data"]["stale"] == true {
                continue;
            }
            let r = &d["range"];
            out.insert((
                rel_path(uri, root),
                d["code"].as_str().unwrap().to_string(),
                r["start"]["line"].as_u64().unwrap() + 1,
                r["start"]["character"].as_u64().unwrap() + 1,
                r["end"]["line"].as_u64().unwrap() + 1,
                r["end"]["character"].as_u64().unwrap() + 1,
            ));
        }
    }
    out
}
