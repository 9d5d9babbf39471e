//! The state thread: the one owner of every document, model and diagnostic set.
//!
//! LSP handlers run concurrently (tower-lsp polls up to four at once), so none of them touches
//! this state. Each handler pushes an [`Event`] onto one unbounded queue, synchronously, before
//! its first `.await`; this thread applies the events in queue order. Requests read immutable
//! snapshots that this thread publishes after each change ([`Shared`]): a per-file
//! `Arc<FileSnap>` in a DashMap (cloned out, guard dropped at once) and one `Arc<DesignSnap>`
//! for the analysis. Anything that must see every earlier change (the test-only
//! `seam/documentText` request) goes through the queue itself.
//!
//! Scheduling: an edit marks its file due after the debounce; one file is parsed at a time, on
//! its own big-stack thread (sv-parser recurses deeply), under `catch_unwind` and a watchdog;
//! a result for a version that is no longer current is dropped; when no parse is due the design
//! layer reruns over every model (open buffers override disk) and only the diagnostic sets that
//! changed are published, with the document version.

use std::collections::{HashMap, HashSet};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, RecvTimeoutError};
use std::sync::{Arc, RwLock};
use std::time::{Duration, Instant};

use dashmap::DashMap;
use ropey::Rope;
use seam_analysis::config::{self, Config};
use seam_analysis::finding::{self, Finding};
use seam_analysis::model::{FileModel, Problem, Span};
use seam_analysis::parse::{self, MacroTable, ParseOptions};
use seam_analysis::report::Analysis;
use serde_json::{json, Value};
use tokio::sync::{mpsc as tmpsc, oneshot};
use tower_lsp::lsp_types::{
    Diagnostic, DiagnosticSeverity, FileChangeType, FileEvent, MessageType, NumberOrString, Range,
    TextDocumentContentChangeEvent, Url,
};

use super::convert::{self, TextView};
use super::documents::{self, Edit, Encoding};
use crate::project;
use crate::worker::{self, Job};

/// sv-parser's recursion is deep; the nesting guard in `parse_file` bounds it (as in worker.rs).
const PARSE_STACK: usize = 1 << 29;
/// The state thread runs the design layer, which walks the hierarchy recursively.
const STATE_STACK: usize = 1 << 26;

// ---------------------------------------------------------------------------------------------
// Settings
// ---------------------------------------------------------------------------------------------

/// Client settings: `initializationOptions`, then the `seam` section of workspace/configuration.
#[derive(Clone, Debug)]
pub struct Settings {
    pub inlay_hints: bool,
    /// Enables `seam/documentText` and the `seam/analyzed` notification (tests, benchmarks).
    pub test_mode: bool,
    /// Base URL of the rule pages (`<base><rule>.md`).
    pub docs_base: Option<Url>,
    pub debounce: Duration,
}

impl Default for Settings {
    fn default() -> Self {
        // the rule pages of the source tree this binary was built from, while they exist
        let docs = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("..")
            .join("docs")
            .join("rules");
        let docs_base = docs
            .canonicalize()
            .ok()
            .and_then(|d| Url::from_directory_path(d).ok());
        Settings {
            inlay_hints: true,
            test_mode: false,
            docs_base,
            debounce: Duration::from_millis(100),
        }
    }
}

impl Settings {
    /// Apply the keys present in a settings object (unknown keys are ignored).
    pub fn apply(&mut self, v: &Value) {
        let v = v.get("seam").filter(|s| s.is_object()).unwrap_or(v);
        if let Some(b) = v.get("inlayHints").and_then(Value::as_bool) {
            self.inlay_hints = b;
        }
        if let Some(b) = v.get("testMode").and_then(Value::as_bool) {
            self.test_mode = b;
        }
        if let Some(ms) = v.get("debounceMs").and_then(Value::as_u64) {
            self.debounce = Duration::from_millis(ms.min(10_000));
        }
        if let Some(s) = v
            .get("rulesDocsUrl")
            .and_then(Value::as_str)
            .filter(|s| !s.trim().is_empty())
        {
            let s = if s.ends_with('/') {
                s.to_string()
            } else {
                format!("{s}/")
            };
            match Url::parse(&s) {
                Ok(u) => self.docs_base = Some(u),
                Err(e) => tracing::warn!("rulesDocsUrl {s:?} is not a URL: {e}"),
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Snapshots read by requests
// ---------------------------------------------------------------------------------------------

/// One document (or disk file) as the state thread last saw it.
#[derive(Clone, Debug)]
pub struct FileSnap {
    pub version: Option<i32>,
    pub text: Rope,
    /// Edits since the oldest model of this file still referenced by a snapshot.
    pub edits: Arc<Vec<Edit>>,
}

/// What the last analysis used for one file.
#[derive(Clone, Debug)]
pub struct DesignFile {
    pub display: String,
    /// The model the analysis saw (for a file that does not parse: its last good modules).
    pub model: Arc<FileModel>,
    /// Edit number of the text the modules were parsed from.
    pub good_seq: u64,
    pub stale: bool,
}

/// The last analysis and the models it was run on.
#[derive(Clone, Debug, Default)]
pub struct DesignSnap {
    pub analysis: Arc<Analysis>,
    pub files: HashMap<Url, DesignFile>,
}

pub struct Shared {
    pub encoding: Encoding,
    pub files: DashMap<Url, Arc<FileSnap>>,
    pub design: RwLock<Arc<DesignSnap>>,
    pub settings: RwLock<Arc<Settings>>,
}

impl Shared {
    pub fn new(encoding: Encoding, settings: Settings) -> Self {
        Shared {
            encoding,
            files: DashMap::new(),
            design: RwLock::new(Arc::new(DesignSnap::default())),
            settings: RwLock::new(Arc::new(settings)),
        }
    }

    /// The file's snapshot; the map guard is dropped before this returns.
    pub fn file(&self, key: &Url) -> Option<Arc<FileSnap>> {
        self.files.get(key).map(|r| r.value().clone())
    }

    pub fn design(&self) -> Arc<DesignSnap> {
        self.design.read().map(|g| g.clone()).unwrap_or_default()
    }

    pub fn settings(&self) -> Arc<Settings> {
        self.settings.read().map(|g| g.clone()).unwrap_or_default()
    }
}

/// The one spelling of a file URI used as a key (clients differ in case and escaping).
pub fn key_of(uri: &Url) -> Url {
    if uri.scheme() != "file" {
        return uri.clone();
    }
    match uri.to_file_path() {
        Ok(p) => {
            let p = p.canonicalize().unwrap_or(p);
            Url::from_file_path(&p).unwrap_or_else(|_| uri.clone())
        }
        Err(_) => uri.clone(),
    }
}

// ---------------------------------------------------------------------------------------------
// Events in, messages out
// ---------------------------------------------------------------------------------------------

pub enum Event {
    Open {
        uri: Url,
        version: i32,
        text: String,
    },
    Change {
        uri: Url,
        version: i32,
        changes: Vec<TextDocumentContentChangeEvent>,
    },
    Close {
        uri: Url,
    },
    Watched(Vec<FileEvent>),
    Settings(Value),
    /// (Re)read the project; `full` also re-parses every file.
    Index {
        full: bool,
    },
    Indexed(Box<IndexResult>),
    Parsed(Box<ParseDone>),
    DocumentText {
        uri: Url,
        reply: oneshot::Sender<Option<String>>,
    },
    Shutdown,
}

/// What the state thread asks the async side to send to the client, in order.
pub enum Outgoing {
    Publish {
        uri: Url,
        diagnostics: Vec<Diagnostic>,
        version: Option<i32>,
    },
    ProgressBegin {
        token: String,
        title: String,
        message: String,
    },
    ProgressReport {
        token: String,
        message: String,
        percentage: u32,
    },
    ProgressEnd {
        token: String,
        message: String,
    },
    /// Test mode: one analysis cycle is done and its diagnostics are queued.
    Analyzed(Value),
    /// Inlay hints and code lenses may have changed.
    Refresh,
    Message(MessageType, String),
}

pub type OutTx = tmpsc::UnboundedSender<Outgoing>;

// ---------------------------------------------------------------------------------------------
// Project and parsing jobs
// ---------------------------------------------------------------------------------------------

/// The project in force: the last configuration that loaded.
pub struct ProjectState {
    pub root: PathBuf,
    pub config: Arc<Config>,
    pub jobs: Vec<Job>,
    pub options: ParseOptions,
    pub macros: MacroTable,
    /// Where the configured filelist is (a change to it re-reads the project).
    pub filelist: Option<PathBuf>,
}

/// A problem loading the project, shown as a diagnostic on the file it is in.
#[derive(Clone, Debug)]
pub struct LoadProblem {
    pub file: PathBuf,
    pub line: usize,
    pub column: usize,
    pub message: String,
}

pub struct IndexedFile {
    pub text: String,
    pub model: FileModel,
    pub macros_out: MacroTable,
}

pub struct IndexResult {
    id: u64,
    project: Arc<ProjectState>,
    problems: Vec<LoadProblem>,
    /// Parsed files by disk path (`full` runs only).
    files: Option<HashMap<PathBuf, IndexedFile>>,
}

pub struct ParseDone {
    id: u64,
    key: Url,
    seq: u64,
    model: FileModel,
    macros_out: MacroTable,
}

struct InFlight {
    id: u64,
    key: Url,
    seq: u64,
    deadline: Instant,
}

#[derive(Clone)]
struct ModelAt {
    model: Arc<FileModel>,
    seq: u64,
    /// The document version parsed (open documents).
    version: Option<i32>,
}

fn parses(m: &FileModel) -> bool {
    !m.problems.iter().any(|p| !p.hint)
}

struct FileEntry {
    key: Url,
    /// The URI as the client spelled it (publish under that).
    client_uri: Url,
    display: String,
    disk: PathBuf,
    /// Document version while open in the editor.
    open: Option<i32>,
    /// Part of the project's file set (else: syntax diagnostics only).
    in_design: bool,
    /// Verilog or SystemVerilog source (headers are only tracked).
    source: bool,
    text: Rope,
    seq: u64,
    edits: Vec<Edit>,
    /// Last model that parsed, and the last parse result (good or not).
    good: Option<ModelAt>,
    last: Option<ModelAt>,
    macros_out: Option<MacroTable>,
    due: Option<Instant>,
}

impl FileEntry {
    fn new(key: Url, display: String, disk: PathBuf, text: &str) -> Self {
        let source = is_source(&disk);
        FileEntry {
            client_uri: key.clone(),
            key,
            display,
            disk,
            open: None,
            in_design: false,
            source,
            text: Rope::from_str(text),
            seq: 0,
            edits: Vec::new(),
            good: None,
            last: None,
            macros_out: None,
            due: None,
        }
    }

    fn stale(&self) -> bool {
        matches!((&self.good, &self.last), (Some(g), Some(l)) if !parses(&l.model) && g.seq != l.seq)
    }

    /// The model analysis sees: while the text does not parse, the last good modules with the
    /// current problems.
    fn effective(&self) -> Option<(FileModel, u64)> {
        let last = self.last.as_ref()?;
        if self.stale() {
            let g = self.good.as_ref()?;
            let mut m = (*g.model).clone();
            m.problems = last.model.problems.clone();
            Some((m, g.seq))
        } else {
            Some(((*last.model).clone(), last.seq))
        }
    }

    fn replace_text(&mut self, text: &str) -> bool {
        if self.text == text {
            return false;
        }
        self.seq += 1;
        self.edits.push(Edit {
            seq: self.seq,
            start: 0,
            old_end: self.text.len_bytes(),
            new_len: text.len(),
            whole: true,
        });
        self.text = Rope::from_str(text);
        true
    }

    fn snap(&self) -> Arc<FileSnap> {
        Arc::new(FileSnap {
            version: self.open,
            text: self.text.clone(),
            edits: Arc::new(self.edits.clone()),
        })
    }
}

fn is_source(p: &Path) -> bool {
    matches!(
        p.extension().and_then(|e| e.to_str()),
        Some("v") | Some("sv")
    )
}

fn is_hdl(p: &Path) -> bool {
    matches!(
        p.extension().and_then(|e| e.to_str()),
        Some("v") | Some("sv") | Some("vh") | Some("svh")
    )
}

fn problem_model(display: &str, message: &str) -> FileModel {
    FileModel {
        path: display.to_string(),
        language: parse::language_of(display),
        modules: vec![],
        packages: vec![],
        problems: vec![Problem {
            hint: false,
            span: Span {
                file: display.into(),
                line: 1,
                column: 1,
                end_line: 1,
                end_column: 1,
                ..Default::default()
            },
            message: message.to_string(),
        }],
        waivers: vec![],
        includes: vec![],
    }
}

/// Macro tables equal in what they define (where a macro was defined does not matter).
fn same_macros(a: &MacroTable, b: &MacroTable) -> bool {
    a.defs.len() == b.defs.len()
        && a.defs
            .iter()
            .zip(b.defs.iter())
            .all(|((ka, va), (kb, vb))| {
                ka == kb
                    && match (va, vb) {
                        (Some(x), Some(y)) => x.args == y.args && x.body == y.body,
                        (None, None) => true,
                        _ => false,
                    }
            })
}

fn file_uri(p: &Path) -> Option<Url> {
    let p = p.canonicalize().unwrap_or_else(|_| p.to_path_buf());
    Url::from_file_path(p).ok()
}

/// The file set when no configuration has ever loaded: every source under the root.
fn fallback_jobs(root: &Path) -> Vec<Job> {
    let all: Vec<PathBuf> = walkdir::WalkDir::new(root)
        .into_iter()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_type().is_file())
        .map(|e| e.into_path())
        .filter(|p| {
            !p.components()
                .any(|c| c.as_os_str() == "target" || c.as_os_str() == ".git")
        })
        .collect();
    let files = seam_analysis::filelist::default_file_set(&all, root);
    let mut files: Vec<PathBuf> = files;
    files.sort();
    files
        .into_iter()
        .map(|p| Job {
            display: project::display_path(root, &p),
            disk: p,
        })
        .collect()
}

fn fallback_project(root: &Path) -> ProjectState {
    ProjectState {
        root: root.to_path_buf(),
        config: Arc::new(Config::default()),
        jobs: fallback_jobs(root),
        options: ParseOptions::default(),
        macros: MacroTable::with_defines([("SYNTHESIS", None)]),
        filelist: None,
    }
}

/// Read the project (the same rules as `seam check`), keeping `prev` when the configuration
/// does not load.
fn load_project(
    root: &Path,
    prev: Option<&Arc<ProjectState>>,
) -> (Arc<ProjectState>, Vec<LoadProblem>) {
    let cfg_path = root.join("seam.toml");
    let mut problems = Vec::new();
    let keep = |problems: Vec<LoadProblem>| {
        let p = prev
            .cloned()
            .unwrap_or_else(|| Arc::new(fallback_project(root)));
        (p, problems)
    };
    let config = if cfg_path.is_file() {
        let text = match std::fs::read_to_string(&cfg_path) {
            Ok(t) => t,
            Err(e) => {
                problems.push(LoadProblem {
                    file: cfg_path.clone(),
                    line: 1,
                    column: 1,
                    message: format!("cannot read: {e}"),
                });
                return keep(problems);
            }
        };
        match config::parse_config("seam.toml", &text) {
            Ok(c) => Some(c),
            Err(e) => {
                problems.push(LoadProblem {
                    file: cfg_path.clone(),
                    line: e.line.max(1),
                    column: e.column.max(1),
                    message: format!(
                        "{}{} (the last configuration that loaded stays in force)",
                        e.key
                            .as_deref()
                            .map(|k| format!("{k}: "))
                            .unwrap_or_default(),
                        e.message
                    ),
                });
                return keep(problems);
            }
        }
    } else {
        None
    };
    let loaded = if config.is_some() {
        project::load(&[], Some(&cfg_path))
    } else {
        project::load(&[root.to_path_buf()], None)
    };
    match loaded {
        Ok(p) => {
            let filelist = p.config.design.filelist.as_ref().map(|f| p.root.join(f));
            let ps = ProjectState {
                root: p.root,
                config: Arc::new(p.config),
                jobs: p.jobs,
                options: p.options,
                macros: p.macros,
                filelist,
            };
            (Arc::new(ps), problems)
        }
        Err(e) => {
            let (line, column) = config
                .as_ref()
                .and_then(|c| {
                    c.location("design.filelist")
                        .or_else(|| c.location("design.files"))
                })
                .unwrap_or((1, 1));
            problems.push(LoadProblem {
                file: cfg_path.clone(),
                line,
                column,
                message: format!("{} (the last file set that loaded stays in force)", e.0),
            });
            keep(problems)
        }
    }
}

/// Parse options for one file: includes are also looked up beside it (as in worker.rs).
fn options_for(opts: &ParseOptions, disk: &Path) -> ParseOptions {
    let mut o = opts.clone();
    if let Some(d) = disk.parent() {
        o.include_dirs.push(d.to_path_buf());
    }
    o
}

/// The whole index: project, then every file (killable workers, as `seam check`), plus the
/// macro table after each file for later in-process re-parses.
fn run_index(
    id: u64,
    root: PathBuf,
    prev: Option<Arc<ProjectState>>,
    full: bool,
    limit: Duration,
    token: String,
    out: OutTx,
) -> IndexResult {
    let (project, problems) = load_project(&root, prev.as_ref());
    if !full {
        return IndexResult {
            id,
            project,
            problems,
            files: None,
        };
    }
    let n = project.jobs.len();
    let _ = out.send(Outgoing::ProgressReport {
        token: token.clone(),
        message: format!("reading {n} files"),
        percentage: 5,
    });
    let mut texts = Vec::with_capacity(n);
    let mut macros_after = Vec::with_capacity(n);
    let mut macros = project.macros.clone();
    for (i, j) in project.jobs.iter().enumerate() {
        let bytes = std::fs::read(&j.disk).unwrap_or_default();
        let text = String::from_utf8_lossy(&bytes).to_string();
        let opts = options_for(&project.options, &j.disk);
        let path = j.disk.to_string_lossy().to_string();
        let pp = catch_unwind(AssertUnwindSafe(|| {
            parse::preprocess(&path, &j.display, &text, &macros, &opts)
        }));
        if let Ok(Ok(pp)) = pp {
            macros = pp.macros_out.clone();
        }
        macros_after.push(macros.clone());
        texts.push(text);
        if i % 16 == 15 {
            let pct = 5 + (i * 25 / n.max(1)) as u32;
            let _ = out.send(Outgoing::ProgressReport {
                token: token.clone(),
                message: format!("preprocessed {}/{n}", i + 1),
                percentage: pct,
            });
        }
    }
    let _ = out.send(Outgoing::ProgressReport {
        token: token.clone(),
        message: format!("parsing {n} files"),
        percentage: 30,
    });
    let parallel = std::thread::available_parallelism()
        .map(|p| p.get())
        .unwrap_or(2);
    let models = worker::parse_all(
        &project.jobs,
        project.macros.clone(),
        &project.options,
        limit,
        parallel,
    );
    let mut files = HashMap::new();
    for ((j, model), (text, macros_out)) in project
        .jobs
        .iter()
        .zip(models)
        .zip(texts.into_iter().zip(macros_after))
    {
        files.insert(
            j.disk.clone(),
            IndexedFile {
                text,
                model,
                macros_out,
            },
        );
    }
    let _ = out.send(Outgoing::ProgressReport {
        token,
        message: "analysing".into(),
        percentage: 90,
    });
    IndexResult {
        id,
        project,
        problems,
        files: Some(files),
    }
}

// ---------------------------------------------------------------------------------------------
// The state
// ---------------------------------------------------------------------------------------------

pub struct StateArgs {
    pub root: PathBuf,
    pub settings: Settings,
    pub parse_timeout: Duration,
    pub work_done_progress: bool,
}

pub struct State {
    shared: Arc<Shared>,
    out: OutTx,
    tx: mpsc::Sender<Event>,
    enc: Encoding,
    settings: Settings,
    root: PathBuf,
    parse_timeout: Duration,
    progress: bool,

    project: Option<Arc<ProjectState>>,
    load_problems: Vec<LoadProblem>,
    entries: HashMap<Url, FileEntry>,
    /// Design files in compile order.
    order: Vec<Url>,
    dirty: HashSet<Url>,
    inflight: Option<InFlight>,
    next_job: u64,
    /// The index job running, and whether another (full or not) is wanted after it.
    indexing: Option<u64>,
    index_again: Option<bool>,
    indexed_once: bool,
    analysis_wanted: bool,
    published: HashMap<Url, Vec<Diagnostic>>,
    /// Open documents whose diagnostics have not been published since they were opened.
    unannounced: HashSet<Url>,
    generation: u64,
    shutting_down: bool,
}

/// Start the state thread; returns the queue every handler pushes onto.
pub fn start(shared: Arc<Shared>, out: OutTx, args: StateArgs) -> mpsc::Sender<Event> {
    let (tx, rx) = mpsc::channel::<Event>();
    let state = State {
        shared,
        out,
        tx: tx.clone(),
        enc: Encoding::Utf16,
        settings: args.settings,
        root: args.root,
        parse_timeout: args.parse_timeout,
        progress: args.work_done_progress,
        project: None,
        load_problems: Vec::new(),
        entries: HashMap::new(),
        order: Vec::new(),
        dirty: HashSet::new(),
        inflight: None,
        next_job: 1,
        indexing: None,
        index_again: None,
        indexed_once: false,
        analysis_wanted: false,
        published: HashMap::new(),
        unannounced: HashSet::new(),
        generation: 0,
        shutting_down: false,
    };
    let spawned = std::thread::Builder::new()
        .name("seam-state".into())
        .stack_size(STATE_STACK)
        .spawn(move || {
            let mut state = state;
            state.enc = state.shared.encoding;
            state.run(rx)
        });
    if let Err(e) = spawned {
        tracing::error!("cannot start the state thread: {e}");
    }
    tx
}

impl State {
    fn run(&mut self, rx: mpsc::Receiver<Event>) {
        loop {
            let wait = self
                .next_wake()
                .map(|t| t.saturating_duration_since(Instant::now()));
            let first = match wait {
                Some(d) => rx.recv_timeout(d),
                None => rx.recv().map_err(|_| RecvTimeoutError::Disconnected),
            };
            match first {
                Ok(ev) => self.guarded(ev),
                Err(RecvTimeoutError::Timeout) => {}
                Err(RecvTimeoutError::Disconnected) => break,
            }
            // apply everything already queued before deciding what to parse
            while let Ok(ev) = rx.try_recv() {
                self.guarded(ev);
            }
            if let Err(p) = catch_unwind(AssertUnwindSafe(|| self.tick())) {
                tracing::error!("internal error while scheduling: {}", panic_text(&p));
                self.inflight = None;
            }
        }
        tracing::debug!("state thread done");
    }

    fn guarded(&mut self, ev: Event) {
        if let Err(p) = catch_unwind(AssertUnwindSafe(|| self.handle(ev))) {
            tracing::error!("internal error handling an event: {}", panic_text(&p));
        }
    }

    fn next_wake(&self) -> Option<Instant> {
        if let Some(j) = &self.inflight {
            return Some(j.deadline);
        }
        // nothing is parsed while indexing, before the first index, or after shutdown: wait
        // for the next event (a due file must not make the loop spin)
        if self.indexing.is_some() || !self.indexed_once || self.shutting_down {
            return None;
        }
        self.dirty
            .iter()
            .filter_map(|k| self.entries.get(k)?.due)
            .min()
    }

    fn handle(&mut self, ev: Event) {
        match ev {
            Event::Open { uri, version, text } => self.open(uri, version, text),
            Event::Change {
                uri,
                version,
                changes,
            } => self.change(&uri, version, &changes),
            Event::Close { uri } => self.close(&uri),
            Event::Watched(evs) => self.watched(evs),
            Event::Settings(v) => {
                self.settings.apply(&v);
                if let Ok(mut g) = self.shared.settings.write() {
                    *g = Arc::new(self.settings.clone());
                }
                self.analysis_wanted = true;
                let _ = self.out.send(Outgoing::Refresh);
            }
            Event::Index { full } => self.request_index(full),
            Event::Indexed(r) => self.indexed(*r),
            Event::Parsed(d) => self.parsed(*d),
            Event::DocumentText { uri, reply } => {
                let key = key_of(&uri);
                let text = self
                    .entries
                    .get(&key)
                    .filter(|e| e.open.is_some())
                    .map(|e| e.text.to_string());
                let _ = reply.send(text);
            }
            Event::Shutdown => self.shutting_down = true,
        }
    }

    // ----- documents -----

    fn display_for(&self, path: &Path) -> String {
        let root = self
            .project
            .as_ref()
            .map(|p| p.root.clone())
            .unwrap_or_else(|| self.root.clone());
        project::display_path(&root, path)
    }

    fn update_snap(&self, key: &Url) {
        match self.entries.get(key) {
            Some(e) => {
                self.shared.files.insert(key.clone(), e.snap());
            }
            None => {
                self.shared.files.remove(key);
            }
        }
    }

    fn mark_dirty(&mut self, key: &Url, at: Instant) {
        if let Some(e) = self.entries.get_mut(key) {
            if e.source {
                e.due = Some(at);
                self.dirty.insert(key.clone());
            }
        }
    }

    fn open(&mut self, uri: Url, version: i32, text: String) {
        let key = key_of(&uri);
        let disk = key
            .to_file_path()
            .unwrap_or_else(|_| PathBuf::from(uri.path()));
        if !self.entries.contains_key(&key) {
            let display = self.display_for(&disk);
            self.entries
                .insert(key.clone(), FileEntry::new(key.clone(), display, disk, ""));
        }
        let e = self.entries.get_mut(&key).expect("entry just made");
        e.open = Some(version);
        e.client_uri = uri;
        let changed = e.replace_text(&text) || e.last.is_none();
        self.unannounced.insert(key.clone());
        if changed {
            self.mark_dirty(&key, Instant::now());
        }
        self.analysis_wanted = true;
        self.update_snap(&key);
    }

    fn change(&mut self, uri: &Url, version: i32, changes: &[TextDocumentContentChangeEvent]) {
        let key = key_of(uri);
        let enc = self.enc;
        let debounce = self.settings.debounce;
        let Some(e) = self.entries.get_mut(&key) else {
            tracing::warn!("didChange for {uri}, which is not open; ignored");
            return;
        };
        if let Some(old) = e.open {
            if version <= old {
                tracing::warn!("didChange for {uri}: version {version} after {old}");
            }
        }
        for c in changes {
            e.seq += 1;
            let edit = documents::apply_change(&mut e.text, c, enc, e.seq);
            e.edits.push(edit);
        }
        e.open = Some(version);
        self.mark_dirty(&key, Instant::now() + debounce);
        self.update_snap(&key);
    }

    fn close(&mut self, uri: &Url) {
        let key = key_of(uri);
        let Some(e) = self.entries.get_mut(&key) else {
            return;
        };
        e.open = None;
        e.client_uri = key.clone();
        self.unannounced.remove(&key);
        let keep = e.in_design && e.disk.is_file();
        if keep {
            let text = std::fs::read(&e.disk)
                .map(|b| String::from_utf8_lossy(&b).to_string())
                .unwrap_or_default();
            if e.replace_text(&text) {
                self.mark_dirty(&key, Instant::now());
            }
        } else {
            self.entries.remove(&key);
            self.dirty.remove(&key);
        }
        self.analysis_wanted = true;
        self.update_snap(&key);
    }

    fn watched(&mut self, evs: Vec<FileEvent>) {
        let mut index: Option<bool> = None;
        let root = self
            .project
            .as_ref()
            .map(|p| p.root.clone())
            .unwrap_or_else(|| self.root.clone());
        let filelist = self.project.as_ref().and_then(|p| p.filelist.clone());
        for fe in evs {
            let Ok(path) = fe.uri.to_file_path() else {
                continue;
            };
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            let canon = path.canonicalize().unwrap_or_else(|_| path.clone());
            let is_config =
                name == "seam.toml" && path.parent().map(|d| same_dir(d, &root)).unwrap_or(false);
            let is_filelist = filelist.as_ref().is_some_and(|f| same_file(f, &path))
                || matches!(
                    path.extension().and_then(|e| e.to_str()),
                    Some("f") | Some("flist") | Some("vc")
                );
            if is_config || is_filelist {
                tracing::info!("{} changed: reading the project again", path.display());
                index = Some(true);
                continue;
            }
            if !is_hdl(&path) {
                continue;
            }
            let key = key_of(&fe.uri);
            if fe.typ == FileChangeType::CREATED || fe.typ == FileChangeType::DELETED {
                index = Some(index.unwrap_or(false));
            }
            if fe.typ == FileChangeType::DELETED {
                continue;
            }
            // a changed file not open in the editor: its disk text is what counts
            if let Some(e) = self.entries.get_mut(&key) {
                if e.open.is_none() {
                    let text = std::fs::read(&path)
                        .map(|b| String::from_utf8_lossy(&b).to_string())
                        .unwrap_or_default();
                    if e.replace_text(&text) {
                        let at = Instant::now() + self.settings.debounce;
                        self.mark_dirty(&key, at);
                        self.update_snap(&key);
                    }
                }
            }
            // a header: every file that includes it is parsed again
            if !is_source(&path) {
                let includers: Vec<Url> = self
                    .entries
                    .values()
                    .filter(|e| {
                        e.last.as_ref().is_some_and(|m| {
                            m.model.includes.iter().any(|inc| {
                                let ip = Path::new(inc);
                                same_file(ip, &canon)
                                    || (ip.is_relative() && ip.file_name() == canon.file_name())
                            })
                        })
                    })
                    .map(|e| e.key.clone())
                    .collect();
                for k in includers {
                    self.mark_dirty(&k, Instant::now());
                }
            }
        }
        if let Some(full) = index {
            self.request_index(full);
        }
    }

    // ----- indexing -----

    fn request_index(&mut self, full: bool) {
        if self.indexing.is_some() {
            self.index_again = Some(self.index_again.unwrap_or(false) || full);
            return;
        }
        let id = self.next_job;
        self.next_job += 1;
        self.indexing = Some(id);
        let token = format!("seam-index-{id}");
        if self.progress {
            let _ = self.out.send(Outgoing::ProgressBegin {
                token: token.clone(),
                title: "Seam".into(),
                message: if full {
                    "indexing the design".into()
                } else {
                    "reading the file set".into()
                },
            });
        }
        let root = self.root.clone();
        let prev = self.project.clone();
        let limit = self.parse_timeout;
        let tx = self.tx.clone();
        let out = if self.progress {
            self.out.clone()
        } else {
            tmpsc::unbounded_channel().0
        };
        let spawned = std::thread::Builder::new()
            .name("seam-index".into())
            .spawn(move || {
                let r = catch_unwind(AssertUnwindSafe(|| {
                    run_index(id, root.clone(), prev.clone(), full, limit, token, out)
                }));
                let r = r.unwrap_or_else(|p| {
                    tracing::error!("internal error while indexing: {}", panic_text(&p));
                    let project = prev.unwrap_or_else(|| Arc::new(fallback_project(&root)));
                    IndexResult {
                        id,
                        project,
                        problems: vec![],
                        files: None,
                    }
                });
                let _ = tx.send(Event::Indexed(Box::new(r)));
            });
        if let Err(e) = spawned {
            tracing::error!("cannot start indexing: {e}");
            self.indexing = None;
        }
    }

    fn indexed(&mut self, r: IndexResult) {
        if self.indexing != Some(r.id) {
            return;
        }
        self.indexing = None;
        let token = format!("seam-index-{}", r.id);
        let full = r.files.is_some();
        let prev_options = self
            .project
            .as_ref()
            .map(|p| (p.options.include_dirs.clone(), p.macros.clone()));
        let project = r.project;
        self.root = project.root.clone();
        self.load_problems = r.problems;
        let options_changed = prev_options.is_some_and(|(dirs, m)| {
            dirs != project.options.include_dirs || !same_macros(&m, &project.macros)
        });
        let mut files = r.files.unwrap_or_default();

        let now = Instant::now();
        let mut new_order = Vec::with_capacity(project.jobs.len());
        let mut in_set: HashSet<Url> = HashSet::new();
        for j in &project.jobs {
            let Some(key) = file_uri(&j.disk) else {
                continue;
            };
            if !in_set.insert(key.clone()) {
                continue;
            }
            new_order.push(key.clone());
            let indexed = files.remove(&j.disk);
            let fresh = !self.entries.contains_key(&key);
            let e = self.entries.entry(key.clone()).or_insert_with(|| {
                FileEntry::new(key.clone(), j.display.clone(), j.disk.clone(), "")
            });
            e.display = j.display.clone();
            e.in_design = true;
            let mut dirty = false;
            match indexed {
                Some(ix) => {
                    if e.open.is_none() {
                        e.replace_text(&ix.text);
                    }
                    if e.text == ix.text.as_str() {
                        let at = ModelAt {
                            model: Arc::new(ix.model),
                            seq: e.seq,
                            version: e.open,
                        };
                        if parses(&at.model) || e.good.is_none() {
                            e.good = Some(at.clone());
                        }
                        e.last = Some(at);
                        e.macros_out = Some(ix.macros_out);
                        e.due = None;
                    } else {
                        dirty = true; // an open buffer that differs from disk
                    }
                }
                None => {
                    if e.open.is_none() {
                        let text = std::fs::read(&j.disk)
                            .map(|b| String::from_utf8_lossy(&b).to_string())
                            .unwrap_or_default();
                        dirty |= e.replace_text(&text);
                    }
                    dirty |= fresh || e.last.is_none() || options_changed;
                }
            }
            if dirty {
                self.mark_dirty(&key, now);
            } else if full {
                self.dirty.remove(&key);
            }
            self.update_snap(&key);
        }
        // files that left the set: open ones stay (syntax only), the rest go
        let gone: Vec<Url> = self
            .entries
            .keys()
            .filter(|k| !in_set.contains(*k))
            .cloned()
            .collect();
        for k in gone {
            let keep = self.entries.get(&k).is_some_and(|e| e.open.is_some());
            if keep {
                if let Some(e) = self.entries.get_mut(&k) {
                    e.in_design = false;
                }
            } else {
                self.entries.remove(&k);
                self.dirty.remove(&k);
                self.update_snap(&k);
            }
        }
        self.order = new_order;
        self.project = Some(project);
        self.indexed_once = true;
        self.analysis_wanted = true;
        if self.progress {
            let n = self.order.len();
            let _ = self.out.send(Outgoing::ProgressEnd {
                token,
                message: format!("{n} files"),
            });
        }
        if let Some(full) = self.index_again.take() {
            self.request_index(full);
        }
    }

    // ----- parsing -----

    fn tick(&mut self) {
        if self.shutting_down {
            return;
        }
        let now = Instant::now();
        if let Some(j) = &self.inflight {
            if now < j.deadline {
                return;
            }
            // the watchdog: the parse thread cannot be stopped; its late result is ignored
            let (key, seq) = (j.key.clone(), j.seq);
            self.inflight = None;
            let display = self
                .entries
                .get(&key)
                .map(|e| e.display.clone())
                .unwrap_or_default();
            let msg = format!(
                "parsing took longer than {} s and was abandoned; file not analysed",
                self.parse_timeout.as_secs()
            );
            let macros_out = self.macros_before(&key);
            self.adopt(&key, seq, problem_model(&display, &msg), macros_out);
        }
        if self.indexing.is_some() || !self.indexed_once {
            return;
        }
        // the earliest due file in compile order
        let ix: HashMap<&Url, usize> = self.order.iter().enumerate().map(|(i, k)| (k, i)).collect();
        let next = self
            .dirty
            .iter()
            .filter(|k| {
                self.entries
                    .get(*k)
                    .and_then(|e| e.due)
                    .is_some_and(|d| d <= now)
            })
            .min_by_key(|k| (ix.get(k).copied().unwrap_or(usize::MAX), (*k).clone()))
            .cloned();
        if let Some(key) = next {
            self.start_parse(&key);
            return;
        }
        // files still in their debounce are analysed with their last model, mapped through
        // the edits since
        if self.analysis_wanted && self.inflight.is_none() {
            self.analyse();
        }
    }

    /// Macros in force before a file: what its predecessor in compile order leaves defined.
    fn macros_before(&self, key: &Url) -> MacroTable {
        let base = self
            .project
            .as_ref()
            .map(|p| p.macros.clone())
            .unwrap_or_default();
        let Some(pos) = self.order.iter().position(|k| k == key) else {
            return base;
        };
        self.order[..pos]
            .iter()
            .rev()
            .find_map(|k| self.entries.get(k).and_then(|e| e.macros_out.clone()))
            .unwrap_or(base)
    }

    fn start_parse(&mut self, key: &Url) {
        let macros = self.macros_before(key);
        let opts = self
            .project
            .as_ref()
            .map(|p| p.options.clone())
            .unwrap_or_default();
        let Some(e) = self.entries.get_mut(key) else {
            return;
        };
        e.due = None;
        self.dirty.remove(key);
        let id = self.next_job;
        self.next_job += 1;
        let seq = e.seq;
        let text = e.text.to_string();
        let display = e.display.clone();
        let disk = e.disk.clone();
        let opts = options_for(&opts, &disk);
        let tx = self.tx.clone();
        let k = key.clone();
        self.inflight = Some(InFlight {
            id,
            key: key.clone(),
            seq,
            deadline: Instant::now() + self.parse_timeout,
        });
        let spawned = std::thread::Builder::new()
            .name("seam-parse".into())
            .stack_size(PARSE_STACK)
            .spawn(move || {
                let path = disk.to_string_lossy().to_string();
                let out = catch_unwind(AssertUnwindSafe(|| {
                    parse::parse_file(&path, &display, text.as_bytes(), &macros, &opts)
                }));
                let (model, macros_out) = match out {
                    Ok(o) => (o.model, o.macros_out),
                    Err(_) => (
                        problem_model(
                            &display,
                            "the parser failed on this file (internal panic); not analysed",
                        ),
                        macros,
                    ),
                };
                let _ = tx.send(Event::Parsed(Box::new(ParseDone {
                    id,
                    key: k,
                    seq,
                    model,
                    macros_out,
                })));
            });
        if let Err(err) = spawned {
            tracing::error!("cannot start a parse thread: {err}");
            self.inflight = None;
            let display = self
                .entries
                .get(key)
                .map(|e| e.display.clone())
                .unwrap_or_default();
            let m = self.macros_before(key);
            self.adopt(
                key,
                seq,
                problem_model(&display, "cannot start a parser thread; file not analysed"),
                m,
            );
        }
    }

    fn parsed(&mut self, d: ParseDone) {
        if self.inflight.as_ref().map(|j| j.id) != Some(d.id) {
            return; // abandoned by the watchdog
        }
        self.inflight = None;
        self.adopt(&d.key, d.seq, d.model, d.macros_out);
    }

    fn adopt(&mut self, key: &Url, seq: u64, model: FileModel, macros_out: MacroTable) {
        let Some(e) = self.entries.get_mut(key) else {
            return;
        };
        if e.seq != seq {
            tracing::debug!(
                "dropping a parse of {} at edit {seq}; the text is at {}",
                e.display,
                e.seq
            );
            return;
        }
        let at = ModelAt {
            model: Arc::new(model),
            seq,
            version: e.open,
        };
        if parses(&at.model) || e.good.is_none() {
            e.good = Some(at.clone());
        }
        e.last = Some(at);
        let macros_changed = e
            .macros_out
            .as_ref()
            .map(|m| !same_macros(m, &macros_out))
            .unwrap_or(true);
        e.macros_out = Some(macros_out);
        let in_design = e.in_design;
        self.analysis_wanted = true;
        if macros_changed && in_design && self.indexed_once {
            // every later file sees different macros now
            let now = Instant::now();
            if let Some(pos) = self.order.iter().position(|k| k == key) {
                let later: Vec<Url> = self.order[pos + 1..].to_vec();
                for k in later {
                    self.mark_dirty(&k, now);
                }
            }
        }
    }

    // ----- analysis and publishing -----

    fn analyse(&mut self) {
        self.analysis_wanted = false;
        self.generation += 1;
        let config = self
            .project
            .as_ref()
            .map(|p| p.config.clone())
            .unwrap_or_default();
        let mut models = Vec::new();
        let mut design_files = HashMap::new();
        let mut by_display = HashMap::new();
        for k in &self.order {
            let Some(e) = self.entries.get(k) else {
                continue;
            };
            let Some((m, good_seq)) = e.effective() else {
                continue;
            };
            design_files.insert(
                k.clone(),
                DesignFile {
                    display: e.display.clone(),
                    model: Arc::new(m.clone()),
                    good_seq,
                    stale: e.stale(),
                },
            );
            by_display.insert(e.display.clone(), k.clone());
            models.push(m);
        }
        let started = Instant::now();
        let analysis = match catch_unwind(AssertUnwindSafe(|| {
            seam_analysis::analyze(&models, &config)
        })) {
            Ok(a) => a,
            Err(p) => {
                tracing::error!("internal error in the design analysis: {}", panic_text(&p));
                let _ = self.out.send(Outgoing::Message(
                    MessageType::ERROR,
                    "Seam: internal error in the design analysis; showing syntax findings only"
                        .into(),
                ));
                Analysis {
                    findings: models.iter().flat_map(finding::syntax_findings).collect(),
                    files: models.len(),
                    modules: models.iter().map(|m| m.modules.len()).sum(),
                    ..Analysis::default()
                }
            }
        };
        tracing::debug!(
            "analysis of {} files took {:?}",
            models.len(),
            started.elapsed()
        );
        drop(models);

        // files outside the design (open, but not in the file set): their syntax findings
        let mut extra: Vec<Finding> = Vec::new();
        for e in self.entries.values().filter(|e| !e.in_design && e.source) {
            if let Some(l) = &e.last {
                extra.extend(finding::syntax_findings(&l.model));
                by_display.insert(e.display.clone(), e.key.clone());
                design_files.insert(
                    e.key.clone(),
                    DesignFile {
                        display: e.display.clone(),
                        model: l.model.clone(),
                        good_seq: l.seq,
                        stale: false,
                    },
                );
            }
        }

        let mut sets: HashMap<Url, Vec<Diagnostic>> = HashMap::new();
        for e in self.entries.values() {
            if e.source {
                sets.insert(e.key.clone(), Vec::new());
            }
        }
        let docs = self.settings.docs_base.clone();
        let mut aux: HashMap<Url, Option<Rope>> = HashMap::new();
        for f in analysis.findings.iter().chain(extra.iter()) {
            let Some((uri, range, stale)) = self.place(&f.span, &f.rule, &by_display, &mut aux)
            else {
                tracing::warn!("finding {} names no file: {}", f.rule, f.message);
                continue;
            };
            let related = f
                .related
                .iter()
                .filter_map(|r| {
                    let (u, rg, _) = self.place(&r.span, "", &by_display, &mut aux)?;
                    Some((self.publish_uri(&u), rg, r.message.clone()))
                })
                .collect();
            sets.entry(uri).or_default().push(convert::diagnostic(
                f,
                range,
                related,
                stale,
                docs.as_ref(),
            ));
        }
        for p in &self.load_problems {
            let Some(uri) = file_uri(&p.file) else {
                continue;
            };
            let text = std::fs::read_to_string(&p.file)
                .ok()
                .map(|t| Rope::from_str(&t));
            let pos = match &text {
                Some(t) => {
                    documents::line_col_to_position(t, p.line as u32, p.column as u32, self.enc)
                }
                None => tower_lsp::lsp_types::Position::new(
                    p.line.saturating_sub(1) as u32,
                    p.column.saturating_sub(1) as u32,
                ),
            };
            let end = match &text {
                Some(t) => documents::line_col_to_position(t, p.line as u32, u32::MAX, self.enc),
                None => pos,
            };
            sets.entry(uri).or_default().push(Diagnostic {
                range: Range { start: pos, end },
                severity: Some(DiagnosticSeverity::ERROR),
                code: Some(NumberOrString::String("invalid-config".into())),
                source: Some("seam".into()),
                message: p.message.clone(),
                ..Diagnostic::default()
            });
        }
        // sets that were published before and have no entry now are cleared
        for uri in self.published.keys() {
            sets.entry(uri.clone()).or_default();
        }
        let mut keys: Vec<Url> = sets.keys().cloned().collect();
        keys.sort();
        for key in keys {
            let mut diags = sets.remove(&key).unwrap_or_default();
            diags.sort_by(|a, b| {
                (a.range.start, a.range.end, &a.message).cmp(&(
                    b.range.start,
                    b.range.end,
                    &b.message,
                ))
            });
            let before = self.published.get(&key);
            let announce = self.unannounced.remove(&key);
            let changed = announce
                || match before {
                    Some(b) => *b != diags,
                    None => !diags.is_empty(),
                };
            if !changed {
                continue;
            }
            let version = self.entries.get(&key).and_then(|e| e.open);
            let uri = self.publish_uri(&key);
            if diags.is_empty()
                && self
                    .entries
                    .get(&key)
                    .map(|e| e.open.is_none())
                    .unwrap_or(true)
            {
                self.published.remove(&key);
            } else {
                self.published.insert(key.clone(), diags.clone());
            }
            let _ = self.out.send(Outgoing::Publish {
                uri,
                diagnostics: diags,
                version,
            });
        }

        // the snapshot requests read, and edits no snapshot needs any more
        let snap = DesignSnap {
            analysis: Arc::new(analysis),
            files: design_files,
        };
        if let Ok(mut g) = self.shared.design.write() {
            *g = Arc::new(snap);
        }
        let keys: Vec<Url> = self.entries.keys().cloned().collect();
        for k in keys {
            let Some(e) = self.entries.get_mut(&k) else {
                continue;
            };
            let keep_from = match (&e.good, &e.last) {
                (Some(g), Some(l)) => g.seq.min(l.seq),
                (_, Some(l)) => l.seq,
                _ => continue,
            };
            let before = e.edits.len();
            e.edits.retain(|ed| ed.seq > keep_from);
            if e.edits.len() != before {
                self.update_snap(&k);
            }
        }
        if self.settings.test_mode {
            // per open document: the version whose parse this analysis used, and whether a
            // newer one is still waiting
            let versions: serde_json::Map<String, Value> = self
                .entries
                .values()
                .filter(|e| e.open.is_some())
                .map(|e| {
                    let parsed = e.last.as_ref().and_then(|l| l.version);
                    (
                        e.client_uri.to_string(),
                        json!({ "parsed": parsed, "current": e.open, "pending": self.dirty.contains(&e.key) }),
                    )
                })
                .collect();
            let _ = self.out.send(Outgoing::Analyzed(
                json!({ "generation": self.generation, "documents": versions }),
            ));
        }
        let _ = self.out.send(Outgoing::Refresh);
    }

    fn publish_uri(&self, key: &Url) -> Url {
        self.entries
            .get(key)
            .map(|e| e.client_uri.clone())
            .unwrap_or_else(|| key.clone())
    }

    /// Where a span is now: its file's key, its range in the current text, and whether it
    /// comes from the last good model of a file that does not parse now.
    fn place(
        &self,
        span: &Span,
        rule: &str,
        by_display: &HashMap<String, Url>,
        aux: &mut HashMap<Url, Option<Rope>>,
    ) -> Option<(Url, Range, bool)> {
        let key = by_display.get(&span.file).cloned().or_else(|| {
            if span.file.is_empty() {
                return None;
            }
            let p = Path::new(&span.file);
            let p = if p.is_absolute() {
                p.to_path_buf()
            } else {
                self.root.join(p)
            };
            file_uri(&p)
        })?;
        if let Some(e) = self.entries.get(&key) {
            let stale = e.stale() && rule != "syntax-error";
            let seq = match (&e.good, &e.last) {
                (Some(g), _) if stale => g.seq,
                (_, Some(l)) => l.seq,
                _ => e.seq,
            };
            let view = TextView {
                text: &e.text,
                edits: &e.edits,
            };
            return Some((
                key,
                convert::span_range(Some(&view), seq, span, self.enc),
                stale,
            ));
        }
        // a file the design does not hold (seam.toml, an include): read it once
        let text = aux.entry(key.clone()).or_insert_with(|| {
            key.to_file_path()
                .ok()
                .and_then(|p| std::fs::read_to_string(p).ok())
                .map(|t| Rope::from_str(&t))
        });
        let view = text.as_ref().map(|t| TextView {
            text: t,
            edits: &[],
        });
        let range = convert::span_range(view.as_ref(), 0, span, self.enc);
        Some((key, range, false))
    }
}

fn same_dir(a: &Path, b: &Path) -> bool {
    let ca = a.canonicalize().unwrap_or_else(|_| a.to_path_buf());
    let cb = b.canonicalize().unwrap_or_else(|_| b.to_path_buf());
    ca == cb
}

fn same_file(a: &Path, b: &Path) -> bool {
    same_dir(a, b)
}

pub fn panic_text(p: &Box<dyn std::any::Any + Send>) -> String {
    p.downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| p.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "panic".into())
}
