//! `seam serve`: the language server (tower-lsp over stdio).
//!
//! The transport owns stdout: at start fd 1 is duplicated for the JSON-RPC stream and then
//! pointed at stderr, so a stray print anywhere in the process cannot corrupt the stream.
//! Logs go to stderr through `tracing`.
//!
//! Module map: `state` (the ordered state thread and the snapshots requests read), `documents`
//! (ropey text, positions, edit log), `convert` (spans, encodings, findings to diagnostics),
//! `hover`, `inlay`, `lens`, `actions`.

mod actions;
mod convert;
mod documents;
mod hover;
mod inlay;
mod lens;
mod mtbf_view;
mod state;

use std::path::PathBuf;
use std::pin::Pin;
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{mpsc, Arc, OnceLock};
use std::task::{Context, Poll};
use std::time::Duration;

use clap::Args;
use serde_json::{json, Value};
use tokio::sync::{mpsc as tmpsc, oneshot};
use tower_lsp::jsonrpc::{Error as RpcError, Request, Response, Result as RpcResult};
use tower_lsp::lsp_types::notification::Notification;
use tower_lsp::lsp_types::*;
use tower_lsp::{Client, LanguageServer, LspService, Server};

use documents::Encoding;
use state::{key_of, Event, Outgoing, Settings, Shared};

#[derive(Args)]
pub struct ServeArgs {
    /// Log filter for stderr (error, warn, info, debug, trace, or a tracing filter).
    #[arg(long, default_value = "info")]
    pub log_level: String,
    /// Per-file parse time limit in seconds.
    #[arg(long, default_value_t = 60)]
    pub parse_timeout: u64,
    /// Accepted for clients that pass it; stdio is the only transport.
    #[arg(long, hide = true)]
    pub stdio: bool,
}

pub const CMD_REANALYZE: &str = "seam.reanalyze";
pub const CMD_MODULE: &str = "seam.moduleCrossings";
pub const CMD_MTBF: &str = "seam.mtbf";

/// Test mode only: every analysis cycle is done (see `Outgoing::Analyzed`).
enum Analyzed {}
impl Notification for Analyzed {
    type Params = Value;
    const METHOD: &'static str = "seam/analyzed";
}

struct Running {
    tx: mpsc::Sender<Event>,
    shared: Arc<Shared>,
}

struct Backend {
    client: Client,
    args: ServeArgs,
    running: OnceLock<Running>,
    shutdown_seen: Arc<AtomicBool>,
    /// Client capabilities needed after `initialize`.
    caps: OnceLock<ClientCapabilities>,
}

impl Backend {
    /// Push onto the ordered queue; called before any `.await` in every handler.
    fn send(&self, ev: Event) {
        if let Some(r) = self.running.get() {
            if r.tx.send(ev).is_err() {
                tracing::error!("the state thread is gone");
            }
        }
    }

    fn shared(&self) -> Option<&Arc<Shared>> {
        self.running.get().map(|r| &r.shared)
    }
}

fn negotiate(caps: &ClientCapabilities) -> Encoding {
    let offered = caps
        .general
        .as_ref()
        .and_then(|g| g.position_encodings.as_ref());
    match offered {
        Some(list) if list.contains(&PositionEncodingKind::UTF8) => Encoding::Utf8,
        _ => Encoding::Utf16,
    }
}

fn root_of(params: &InitializeParams) -> PathBuf {
    let from_uri = |u: &Url| u.to_file_path().ok();
    params
        .workspace_folders
        .as_ref()
        .and_then(|f| f.first())
        .and_then(|f| from_uri(&f.uri))
        .or_else(|| params.root_uri.as_ref().and_then(from_uri))
        .or_else(|| {
            #[allow(deprecated)]
            params.root_path.as_ref().map(PathBuf::from)
        })
        .or_else(|| std::env::current_dir().ok())
        .unwrap_or_else(|| PathBuf::from("."))
}

#[tower_lsp::async_trait]
impl LanguageServer for Backend {
    async fn initialize(&self, params: InitializeParams) -> RpcResult<InitializeResult> {
        let enc = negotiate(&params.capabilities);
        let mut settings = Settings::default();
        if let Some(o) = &params.initialization_options {
            settings.apply(o);
        }
        let root = root_of(&params);
        if params
            .workspace_folders
            .as_ref()
            .is_some_and(|f| f.len() > 1)
        {
            tracing::warn!(
                "several workspace folders: the design is read from the first, {}",
                root.display()
            );
        }
        tracing::info!("root {}, position encoding {:?}", root.display(), enc);
        let progress = params
            .capabilities
            .window
            .as_ref()
            .and_then(|w| w.work_done_progress)
            .unwrap_or(false);
        let _ = self.caps.set(params.capabilities.clone());
        if self.running.get().is_none() {
            let shared = Arc::new(Shared::new(enc, settings.clone()));
            let (out_tx, out_rx) = tmpsc::unbounded_channel();
            let refresh = refresh_support(&params.capabilities);
            tokio::spawn(publisher(self.client.clone(), out_rx, refresh));
            let tx = state::start(
                shared.clone(),
                out_tx,
                state::StateArgs {
                    root,
                    settings,
                    parse_timeout: Duration::from_secs(self.args.parse_timeout.max(1)),
                    work_done_progress: progress,
                },
            );
            let _ = self.running.set(Running { tx, shared });
        }
        let kind = match enc {
            Encoding::Utf8 => PositionEncodingKind::UTF8,
            Encoding::Utf16 => PositionEncodingKind::UTF16,
        };
        Ok(InitializeResult {
            server_info: Some(ServerInfo {
                name: "seam".into(),
                version: Some(env!("CARGO_PKG_VERSION").into()),
            }),
            capabilities: ServerCapabilities {
                position_encoding: Some(kind),
                text_document_sync: Some(TextDocumentSyncCapability::Options(
                    TextDocumentSyncOptions {
                        open_close: Some(true),
                        change: Some(TextDocumentSyncKind::INCREMENTAL),
                        will_save: None,
                        will_save_wait_until: None,
                        save: Some(TextDocumentSyncSaveOptions::Supported(true)),
                    },
                )),
                hover_provider: Some(HoverProviderCapability::Simple(true)),
                code_action_provider: Some(CodeActionProviderCapability::Options(
                    CodeActionOptions {
                        code_action_kinds: Some(vec![CodeActionKind::QUICKFIX]),
                        ..CodeActionOptions::default()
                    },
                )),
                inlay_hint_provider: Some(OneOf::Left(true)),
                code_lens_provider: Some(CodeLensOptions {
                    resolve_provider: Some(false),
                }),
                execute_command_provider: Some(ExecuteCommandOptions {
                    commands: vec![CMD_REANALYZE.into(), CMD_MODULE.into(), CMD_MTBF.into()],
                    ..ExecuteCommandOptions::default()
                }),
                workspace: Some(WorkspaceServerCapabilities {
                    workspace_folders: Some(WorkspaceFoldersServerCapabilities {
                        supported: Some(true),
                        change_notifications: Some(OneOf::Left(true)),
                    }),
                    file_operations: None,
                }),
                ..ServerCapabilities::default()
            },
        })
    }

    async fn initialized(&self, _: InitializedParams) {
        self.send(Event::Index { full: true });
        let caps = self.caps.get().cloned().unwrap_or_default();
        let ws = caps.workspace.unwrap_or_default();
        let client = self.client.clone();
        let dynamic_watch = ws
            .did_change_watched_files
            .and_then(|w| w.dynamic_registration)
            .unwrap_or(false);
        let pull_config = ws.configuration.unwrap_or(false);
        let tx = self.running.get().map(|r| r.tx.clone());
        // client requests are awaited only from spawned tasks
        tokio::spawn(async move {
            if dynamic_watch {
                let watchers = json!({ "watchers": [
                    { "globPattern": "**/*.{v,sv,vh,svh}" },
                    { "globPattern": "**/*.{f,flist,vc}" },
                    { "globPattern": "**/seam.toml" },
                ]});
                let reg = Registration {
                    id: "seam-watched-files".into(),
                    method: "workspace/didChangeWatchedFiles".into(),
                    register_options: Some(watchers),
                };
                if let Err(e) = client.register_capability(vec![reg]).await {
                    tracing::warn!("client refused file watching: {e}");
                }
            }
            if pull_config {
                fetch_config(&client, tx).await;
            }
        });
    }

    async fn shutdown(&self) -> RpcResult<()> {
        self.send(Event::Shutdown);
        self.shutdown_seen.store(true, Ordering::SeqCst);
        Ok(())
    }

    async fn did_open(&self, p: DidOpenTextDocumentParams) {
        let d = p.text_document;
        self.send(Event::Open {
            uri: d.uri,
            version: d.version,
            text: d.text,
        });
    }

    async fn did_change(&self, p: DidChangeTextDocumentParams) {
        self.send(Event::Change {
            uri: p.text_document.uri,
            version: p.text_document.version,
            changes: p.content_changes,
        });
    }

    async fn did_close(&self, p: DidCloseTextDocumentParams) {
        self.send(Event::Close {
            uri: p.text_document.uri,
        });
    }

    async fn did_save(&self, p: DidSaveTextDocumentParams) {
        // the buffer already counts for itself; what a save changes for others (an included
        // header, seam.toml, a filelist) is what a watched-file change would, for clients
        // that do not watch files
        let ev = FileEvent {
            uri: p.text_document.uri,
            typ: FileChangeType::CHANGED,
        };
        self.send(Event::Watched(vec![ev]));
    }

    async fn did_change_watched_files(&self, p: DidChangeWatchedFilesParams) {
        self.send(Event::Watched(p.changes));
    }

    async fn did_change_configuration(&self, p: DidChangeConfigurationParams) {
        let has_ours = p.settings.get("seam").is_some_and(|s| s.is_object());
        if has_ours {
            self.send(Event::Settings(p.settings));
            return;
        }
        let pull = self
            .caps
            .get()
            .and_then(|c| c.workspace.as_ref())
            .and_then(|w| w.configuration)
            .unwrap_or(false);
        if pull {
            let client = self.client.clone();
            let tx = self.running.get().map(|r| r.tx.clone());
            tokio::spawn(async move { fetch_config(&client, tx).await });
        }
    }

    async fn did_change_workspace_folders(&self, p: DidChangeWorkspaceFoldersParams) {
        tracing::info!(
            "workspace folders changed (+{} -{}); the design stays the one read at start",
            p.event.added.len(),
            p.event.removed.len()
        );
    }

    async fn hover(&self, p: HoverParams) -> RpcResult<Option<Hover>> {
        let Some(sh) = self.shared() else {
            return Ok(None);
        };
        let key = key_of(&p.text_document_position_params.text_document.uri);
        let (Some(file), design) = (sh.file(&key), sh.design()) else {
            return Ok(None);
        };
        let texts = hover::design_texts(&sh, &design);
        let card = hover::hover(
            &design,
            &key,
            &file,
            p.text_document_position_params.position,
            sh.encoding,
            &texts,
        );
        Ok(card)
    }

    async fn inlay_hint(&self, p: InlayHintParams) -> RpcResult<Option<Vec<InlayHint>>> {
        let Some(sh) = self.shared() else {
            return Ok(None);
        };
        if !sh.settings().inlay_hints {
            return Ok(Some(vec![]));
        }
        let key = key_of(&p.text_document.uri);
        let (Some(file), design) = (sh.file(&key), sh.design()) else {
            return Ok(None);
        };
        Ok(Some(inlay::hints(
            &design,
            &key,
            &file,
            p.range,
            sh.encoding,
        )))
    }

    async fn code_lens(&self, p: CodeLensParams) -> RpcResult<Option<Vec<CodeLens>>> {
        let Some(sh) = self.shared() else {
            return Ok(None);
        };
        let key = key_of(&p.text_document.uri);
        let (Some(file), design) = (sh.file(&key), sh.design()) else {
            return Ok(None);
        };
        Ok(Some(lens::lenses(
            &design,
            &key,
            &p.text_document.uri,
            &file,
            sh.encoding,
        )))
    }

    async fn code_action(&self, p: CodeActionParams) -> RpcResult<Option<CodeActionResponse>> {
        let Some(sh) = self.shared() else {
            return Ok(None);
        };
        let key = key_of(&p.text_document.uri);
        let Some(file) = sh.file(&key) else {
            return Ok(None);
        };
        Ok(Some(actions::actions(&p, &sh, &key, &file)))
    }

    async fn execute_command(&self, p: ExecuteCommandParams) -> RpcResult<Option<Value>> {
        match p.command.as_str() {
            CMD_REANALYZE => {
                self.send(Event::Index { full: true });
                Ok(None)
            }
            CMD_MODULE => {
                let Some(sh) = self.shared() else {
                    return Ok(None);
                };
                let module = p
                    .arguments
                    .get(1)
                    .and_then(Value::as_str)
                    .unwrap_or_default()
                    .to_string();
                let design = sh.design();
                let (text, list) = lens::module_crossings(&design, &module);
                self.client.show_message(MessageType::INFO, text).await;
                Ok(Some(list))
            }
            CMD_MTBF => {
                let Some(sh) = self.shared() else {
                    return Ok(None);
                };
                let design = sh.design();
                let text = crate::cli::mtbf::human(&design.analysis.mtbf, true);
                self.client.show_message(MessageType::INFO, text).await;
                Ok(Some(crate::cli::mtbf::report_json(
                    &design.analysis.mtbf,
                    true,
                )))
            }
            other => Err(RpcError::invalid_params(format!("unknown command {other}"))),
        }
    }
}

/// Settings from the client's `seam` configuration section.
async fn fetch_config(client: &Client, tx: Option<mpsc::Sender<Event>>) {
    let item = ConfigurationItem {
        scope_uri: None,
        section: Some("seam".into()),
    };
    match client.configuration(vec![item]).await {
        Ok(mut v) => {
            if let (Some(first), Some(tx)) = (v.pop(), tx) {
                if first.is_object() {
                    let _ = tx.send(Event::Settings(first));
                }
            }
        }
        Err(e) => tracing::debug!("workspace/configuration: {e}"),
    }
}

fn refresh_support(c: &ClientCapabilities) -> (bool, bool) {
    let ws = c.workspace.as_ref();
    let inlay = ws
        .and_then(|w| w.inlay_hint.as_ref())
        .and_then(|i| i.refresh_support)
        .unwrap_or(false);
    let lens = ws
        .and_then(|w| w.code_lens.as_ref())
        .and_then(|i| i.refresh_support)
        .unwrap_or(false);
    (inlay, lens)
}

/// Sends what the state thread queues, in order. Progress sequences and refresh requests wait
/// for client replies, so they run in tasks of their own.
async fn publisher(
    client: Client,
    mut rx: tmpsc::UnboundedReceiver<Outgoing>,
    refresh: (bool, bool),
) {
    let mut progress: std::collections::HashMap<String, tmpsc::UnboundedSender<WorkDoneProgress>> =
        Default::default();
    let refreshing = Arc::new(AtomicBool::new(false));
    while let Some(msg) = rx.recv().await {
        match msg {
            Outgoing::Publish {
                uri,
                diagnostics,
                version,
            } => client.publish_diagnostics(uri, diagnostics, version).await,
            Outgoing::ProgressBegin {
                token,
                title,
                message,
            } => {
                let (ptx, mut prx) = tmpsc::unbounded_channel::<WorkDoneProgress>();
                let _ = ptx.send(WorkDoneProgress::Begin(WorkDoneProgressBegin {
                    title,
                    cancellable: Some(false),
                    message: Some(message),
                    percentage: Some(0),
                }));
                progress.insert(token.clone(), ptx);
                let client = client.clone();
                tokio::spawn(async move {
                    let tok = NumberOrString::String(token);
                    let create = client.send_request::<request::WorkDoneProgressCreate>(
                        WorkDoneProgressCreateParams { token: tok.clone() },
                    );
                    match tokio::time::timeout(Duration::from_secs(10), create).await {
                        Ok(Ok(())) => {}
                        _ => {
                            tracing::debug!("client did not create a progress token");
                            while prx.recv().await.is_some() {}
                            return;
                        }
                    }
                    while let Some(v) = prx.recv().await {
                        client
                            .send_notification::<notification::Progress>(ProgressParams {
                                token: tok.clone(),
                                value: ProgressParamsValue::WorkDone(v),
                            })
                            .await;
                    }
                });
            }
            Outgoing::ProgressReport {
                token,
                message,
                percentage,
            } => {
                if let Some(p) = progress.get(&token) {
                    let _ = p.send(WorkDoneProgress::Report(WorkDoneProgressReport {
                        cancellable: None,
                        message: Some(message),
                        percentage: Some(percentage.min(100)),
                    }));
                }
            }
            Outgoing::ProgressEnd { token, message } => {
                if let Some(p) = progress.remove(&token) {
                    let _ = p.send(WorkDoneProgress::End(WorkDoneProgressEnd {
                        message: Some(message),
                    }));
                }
            }
            Outgoing::Analyzed(v) => client.send_notification::<Analyzed>(v).await,
            Outgoing::Refresh => {
                if (refresh.0 || refresh.1) && !refreshing.swap(true, Ordering::SeqCst) {
                    let client = client.clone();
                    let flag = refreshing.clone();
                    tokio::spawn(async move {
                        if refresh.0 {
                            let _ = client.inlay_hint_refresh().await;
                        }
                        if refresh.1 {
                            let _ = client.code_lens_refresh().await;
                        }
                        flag.store(false, Ordering::SeqCst);
                    });
                }
            }
            Outgoing::Message(t, m) => client.show_message(t, m).await,
        }
    }
}

/// Test-only: the server's text of an open document, after every change sent before it.
async fn document_text(b: &Backend, p: Value) -> RpcResult<Value> {
    let enabled = b.shared().map(|s| s.settings().test_mode).unwrap_or(false);
    let uri = p
        .get("uri")
        .and_then(Value::as_str)
        .and_then(|u| Url::parse(u).ok());
    // queue first (synchronously), then check: the request keeps its place in the order
    let (reply, rx) = oneshot::channel();
    if let (true, Some(uri)) = (enabled, uri.clone()) {
        b.send(Event::DocumentText { uri, reply });
    } else {
        drop(reply);
    }
    if !enabled {
        return Err(RpcError::method_not_found());
    }
    if uri.is_none() {
        return Err(RpcError::invalid_params("expected {\"uri\": ...}"));
    }
    match rx.await {
        Ok(Some(text)) => Ok(json!({ "text": text })),
        Ok(None) => Ok(Value::Null),
        Err(_) => Err(RpcError::internal_error()),
    }
}

/// Notices the `exit` notification, so the process ends even if the client keeps stdin open.
struct ExitWatch<S> {
    inner: S,
    exit: Option<oneshot::Sender<()>>,
}

impl<S> tower_service::Service<Request> for ExitWatch<S>
where
    S: tower_service::Service<Request, Response = Option<Response>>,
{
    type Response = S::Response;
    type Error = S::Error;
    type Future = S::Future;

    fn poll_ready(&mut self, cx: &mut Context<'_>) -> Poll<Result<(), Self::Error>> {
        self.inner.poll_ready(cx)
    }

    fn call(&mut self, req: Request) -> Self::Future {
        let is_exit = req.method() == "exit";
        let f = self.inner.call(req);
        if is_exit {
            if let Some(tx) = self.exit.take() {
                let _ = tx.send(());
            }
        }
        f
    }
}

/// The JSON-RPC output: bytes go to a writer thread that owns the saved stdout descriptor.
struct Output {
    tx: Option<mpsc::Sender<Vec<u8>>>,
}

impl tokio::io::AsyncWrite for Output {
    fn poll_write(
        self: Pin<&mut Self>,
        _: &mut Context<'_>,
        buf: &[u8],
    ) -> Poll<std::io::Result<usize>> {
        match &self.tx {
            Some(tx) if tx.send(buf.to_vec()).is_ok() => Poll::Ready(Ok(buf.len())),
            _ => Poll::Ready(Err(std::io::Error::new(
                std::io::ErrorKind::BrokenPipe,
                "output closed",
            ))),
        }
    }
    fn poll_flush(self: Pin<&mut Self>, _: &mut Context<'_>) -> Poll<std::io::Result<()>> {
        Poll::Ready(Ok(()))
    }
    fn poll_shutdown(mut self: Pin<&mut Self>, _: &mut Context<'_>) -> Poll<std::io::Result<()>> {
        self.tx = None;
        Poll::Ready(Ok(()))
    }
}

/// Take fd 1 for the transport and point fd 1 at stderr.
#[cfg(unix)]
fn take_stdout() -> Box<dyn std::io::Write + Send> {
    use std::os::unix::io::FromRawFd;
    // SAFETY: plain descriptor calls; the duplicate is owned by the returned File only.
    unsafe {
        let fd = libc::fcntl(1, libc::F_DUPFD_CLOEXEC, 3);
        if fd < 0 {
            return Box::new(std::io::stdout());
        }
        libc::dup2(2, 1);
        Box::new(std::fs::File::from_raw_fd(fd))
    }
}

#[cfg(not(unix))]
fn take_stdout() -> Box<dyn std::io::Write + Send> {
    Box::new(std::io::stdout())
}

pub fn run(args: ServeArgs) -> ExitCode {
    let mut sink = take_stdout();
    let filter = tracing_subscriber::EnvFilter::try_new(&args.log_level)
        .unwrap_or_else(|_| tracing_subscriber::EnvFilter::new("info"));
    let _ = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .with_ansi(false)
        .try_init();

    let (wtx, wrx) = mpsc::channel::<Vec<u8>>();
    let writer = std::thread::Builder::new()
        .name("seam-stdout".into())
        .spawn(move || {
            for chunk in wrx {
                if sink.write_all(&chunk).and_then(|_| sink.flush()).is_err() {
                    break;
                }
            }
        });
    let rt = match tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()
    {
        Ok(rt) => rt,
        Err(e) => {
            eprintln!("seam: error: cannot start the async runtime: {e}");
            return ExitCode::from(2);
        }
    };
    let shutdown_seen = Arc::new(AtomicBool::new(false));
    let exited = Arc::new(AtomicBool::new(false));
    {
        let shutdown_seen = shutdown_seen.clone();
        let exited = exited.clone();
        rt.block_on(async move {
            let (service, socket) = LspService::build(|client| Backend {
                client,
                args,
                running: OnceLock::new(),
                shutdown_seen,
                caps: OnceLock::new(),
            })
            .custom_method("seam/documentText", document_text)
            .finish();
            let (etx, erx) = oneshot::channel();
            let service = ExitWatch {
                inner: service,
                exit: Some(etx),
            };
            let out = Output { tx: Some(wtx) };
            let server = Server::new(tokio::io::stdin(), out, socket).serve(service);
            tokio::select! {
                _ = server => {}
                _ = erx => {
                    exited.store(true, Ordering::SeqCst);
                    // let the last responses reach the writer
                    tokio::time::sleep(Duration::from_millis(20)).await;
                }
            }
        });
    }
    rt.shutdown_background();
    // everything queued for stdout is written before the process ends
    if let Ok(w) = writer {
        let (done_tx, done_rx) = mpsc::channel();
        std::thread::spawn(move || {
            let _ = w.join();
            let _ = done_tx.send(());
        });
        let _ = done_rx.recv_timeout(Duration::from_secs(2));
    }
    // LSP spec, "exit": code 0 when shutdown came first, else 1
    if shutdown_seen.load(Ordering::SeqCst) {
        ExitCode::SUCCESS
    } else {
        tracing::info!(
            "ended without a shutdown request (exit seen: {})",
            exited.load(Ordering::SeqCst)
        );
        ExitCode::from(1)
    }
}
