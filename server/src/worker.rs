//! Parsing in killable worker processes.
//!
//! sv-parser can run away (deep recursion, pathological backtracking) and cannot be stopped
//! from inside. Each file is parsed by a child `seam __parse-worker`; the parent kills it at
//! the time limit and reports a finding instead. The child first sends the macros the file
//! leaves defined (right after preprocessing), so the next file of the compile order can
//! start while this one is still parsing.

use std::io::{BufRead, BufReader, Read, Write};
use std::path::PathBuf;
use std::process::{Child, Command, ExitCode, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

use seam_analysis::model::{FileModel, Problem, Span};
use seam_analysis::parse::{self, MacroTable, ParseOptions};
use serde::{Deserialize, Serialize};

#[derive(Serialize, Deserialize)]
struct Request {
    disk: PathBuf,
    display: String,
    macros: MacroTable,
    opts: ParseOptions,
}

/// One file to parse: where it is on disk and how findings name it.
#[derive(Clone, Debug)]
pub struct Job {
    pub disk: PathBuf,
    pub display: String,
}

const STACK: usize = 1 << 29; // sv-parser recursion is deep; the nesting guard bounds it

/// The child side: one request on stdin, `M <macros>` then `F <model>` lines on stdout.
pub fn serve_one() -> ExitCode {
    let mut input = String::new();
    if std::io::stdin().read_to_string(&mut input).is_err() {
        return ExitCode::from(2);
    }
    let Ok(req) = serde_json::from_str::<Request>(&input) else {
        return ExitCode::from(2);
    };
    let handle = std::thread::Builder::new()
        .stack_size(STACK)
        .spawn(move || {
            let out = std::io::stdout();
            let emit = |tag: &str, json: String| {
                let mut o = out.lock();
                let _ = writeln!(o, "{tag} {json}");
                let _ = o.flush();
            };
            let (model, macros) = parse_in_place(&req, &mut |m| {
                emit("M", serde_json::to_string(m).unwrap_or_default())
            });
            let _ = macros;
            emit("F", serde_json::to_string(&model).unwrap_or_default());
        });
    match handle.map(|h| h.join()) {
        Ok(Ok(())) => ExitCode::SUCCESS,
        _ => ExitCode::from(3),
    }
}

/// Read and parse one file in this process, reporting the macros as soon as they are known.
fn parse_in_place(
    req: &Request,
    on_macros: &mut dyn FnMut(&MacroTable),
) -> (FileModel, MacroTable) {
    let bytes = match std::fs::read(&req.disk) {
        Ok(b) => b,
        Err(e) => {
            on_macros(&req.macros);
            let model = problem_model(&req.display, format!("cannot read file: {e}"));
            return (model, req.macros.clone());
        }
    };
    let path = req.disk.to_string_lossy().to_string();
    let text = match parse::decode(&req.display, &bytes) {
        Ok(t) => t,
        Err(p) => {
            on_macros(&req.macros);
            let mut m = problem_model(&req.display, String::new());
            m.problems = vec![p];
            return (m, req.macros.clone());
        }
    };
    let mut opts = req.opts.clone();
    // includes are also looked up beside the including file
    if let Some(dir) = req.disk.parent() {
        opts.include_dirs.push(dir.to_path_buf());
    }
    match parse::preprocess(&path, &req.display, text, &req.macros, &opts) {
        Ok(pp) => {
            let macros = pp.macros_out.clone();
            on_macros(&macros);
            let model = parse::parse_preprocessed(&path, &req.display, text, pp, &opts);
            (model, macros)
        }
        Err(problem) => {
            on_macros(&req.macros);
            let mut m = problem_model(&req.display, String::new());
            m.problems = vec![*problem];
            m.waivers = parse::waiver_comments(&req.display, text);
            (m, req.macros.clone())
        }
    }
}

fn problem_model(display: &str, message: String) -> FileModel {
    FileModel {
        path: display.to_string(),
        language: parse::language_of(display),
        modules: vec![],
        packages: vec![],
        problems: if message.is_empty() {
            vec![]
        } else {
            vec![Problem {
                hint: false,
                span: Span {
                    file: display.into(),
                    line: 1,
                    column: 1,
                    end_line: 1,
                    end_column: 1,
                    ..Default::default()
                },
                message,
            }]
        },
        waivers: vec![],
        includes: vec![],
    }
}

enum Msg {
    Macros(usize, MacroTable),
    Model(usize, Box<FileModel>),
    Died(usize, String),
}

struct Running {
    child: Child,
    started: Instant,
    sent_macros: bool,
}

/// Parse every job in compile order, `parallel` children at a time, each under `limit`.
/// Macros defined by a file are in force for every later file.
pub fn parse_all(
    jobs: &[Job],
    initial: MacroTable,
    opts: &ParseOptions,
    limit: Duration,
    parallel: usize,
) -> Vec<FileModel> {
    parse_all_with_progress(jobs, initial, opts, limit, parallel, &mut |_, _| {})
}

/// As [`parse_all`], calling `progress(done, total)` as files finish.
pub fn parse_all_with_progress(
    jobs: &[Job],
    initial: MacroTable,
    opts: &ParseOptions,
    limit: Duration,
    parallel: usize,
    progress: &mut dyn FnMut(usize, usize),
) -> Vec<FileModel> {
    let exe = std::env::current_exe().ok();
    let Some(exe) = exe else {
        return parse_all_in_process(jobs, initial, opts);
    };
    let (tx, rx) = mpsc::channel::<Msg>();
    let mut models: Vec<Option<FileModel>> = vec![None; jobs.len()];
    let mut running: std::collections::BTreeMap<usize, Running> = Default::default();
    // macros_at[i] = macros in force before file i
    let mut macros_at: Vec<Option<MacroTable>> = vec![None; jobs.len() + 1];
    macros_at[0] = Some(initial);
    let mut next = 0usize;
    let parallel = parallel.max(1);
    let mut done = 0usize;
    let mut reported = 0usize;
    while done < jobs.len() {
        if done != reported {
            reported = done;
            progress(done, jobs.len());
        }
        // start what can start: the next file once its incoming macros are known
        while next < jobs.len() && running.len() < parallel && macros_at[next].is_some() {
            let req = Request {
                disk: jobs[next].disk.clone(),
                display: jobs[next].display.clone(),
                macros: macros_at[next].clone().unwrap_or_default(),
                opts: opts.clone(),
            };
            match spawn(&exe, &req, next, tx.clone()) {
                Some(child) => {
                    running.insert(
                        next,
                        Running {
                            child,
                            started: Instant::now(),
                            sent_macros: false,
                        },
                    );
                }
                None => {
                    // cannot spawn: parse here (no time limit, but still guarded)
                    let (m, mac) = in_thread(req);
                    models[next] = Some(m);
                    macros_at[next + 1] = Some(mac);
                    done += 1;
                }
            }
            next += 1;
        }
        match rx.recv_timeout(Duration::from_millis(50)) {
            Ok(Msg::Macros(i, m)) => {
                if let Some(r) = running.get_mut(&i) {
                    r.sent_macros = true;
                }
                macros_at[i + 1] = Some(m);
            }
            Ok(Msg::Model(i, m)) => {
                if let Some(mut r) = running.remove(&i) {
                    let _ = r.child.wait();
                }
                if models[i].is_none() {
                    models[i] = Some(*m);
                    done += 1;
                }
            }
            Ok(Msg::Died(i, why)) => {
                if let Some(mut r) = running.remove(&i) {
                    let _ = r.child.wait();
                    if !r.sent_macros {
                        macros_at[i + 1] = macros_at[i].clone();
                    }
                }
                if models[i].is_none() {
                    models[i] = Some(problem_model(&jobs[i].display, why));
                    done += 1;
                }
            }
            Err(_) => {}
        }
        // enforce the time limit
        let late: Vec<usize> = running
            .iter()
            .filter(|(_, r)| r.started.elapsed() > limit)
            .map(|(i, _)| *i)
            .collect();
        for i in late {
            if let Some(mut r) = running.remove(&i) {
                let _ = r.child.kill();
                let _ = r.child.wait();
                if !r.sent_macros {
                    macros_at[i + 1] = macros_at[i].clone();
                }
            }
            if models[i].is_none() {
                models[i] = Some(problem_model(
                    &jobs[i].display,
                    format!(
                        "parsing took longer than {} s and was stopped; file not analysed",
                        limit.as_secs()
                    ),
                ));
                done += 1;
            }
        }
    }
    models
        .into_iter()
        .map(|m| m.unwrap_or_else(|| problem_model("?", "internal: no result".into())))
        .collect()
}

fn spawn(exe: &PathBuf, req: &Request, i: usize, tx: mpsc::Sender<Msg>) -> Option<Child> {
    let mut child = Command::new(exe)
        .arg("__parse-worker")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .ok()?;
    let body = serde_json::to_vec(req).ok()?;
    let mut stdin = child.stdin.take()?;
    std::thread::spawn(move || {
        let _ = stdin.write_all(&body);
    });
    let stdout = child.stdout.take()?;
    std::thread::spawn(move || {
        let mut got_model = false;
        for line in BufReader::new(stdout).lines() {
            let Ok(line) = line else { break };
            if let Some(j) = line.strip_prefix("M ") {
                if let Ok(m) = serde_json::from_str(j) {
                    let _ = tx.send(Msg::Macros(i, m));
                }
            } else if let Some(j) = line.strip_prefix("F ") {
                if let Ok(m) = serde_json::from_str(j) {
                    got_model = true;
                    let _ = tx.send(Msg::Model(i, Box::new(m)));
                }
            }
        }
        if !got_model {
            let _ = tx.send(Msg::Died(
                i,
                "the parser crashed on this file (stack or memory exhausted?); file not analysed"
                    .into(),
            ));
        }
    });
    Some(child)
}

fn in_thread(req: Request) -> (FileModel, MacroTable) {
    let display = req.display.clone();
    std::thread::Builder::new()
        .stack_size(STACK)
        .spawn(move || parse_in_place(&req, &mut |_| {}))
        .ok()
        .and_then(|h| h.join().ok())
        .unwrap_or_else(|| {
            (
                problem_model(&display, "the parser failed on this file".into()),
                MacroTable::default(),
            )
        })
}

/// Fallback when no worker can be started.
pub fn parse_all_in_process(
    jobs: &[Job],
    initial: MacroTable,
    opts: &ParseOptions,
) -> Vec<FileModel> {
    let mut macros = initial;
    let mut out = Vec::new();
    for j in jobs {
        let req = Request {
            disk: j.disk.clone(),
            display: j.display.clone(),
            macros: macros.clone(),
            opts: opts.clone(),
        };
        let (m, mac) = in_thread(req);
        macros = mac;
        out.push(m);
    }
    out
}
