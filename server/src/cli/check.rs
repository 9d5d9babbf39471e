//! `seam check`: analyse a design and report findings for people (human) and CI (json).

use std::path::PathBuf;
use std::process::ExitCode;
use std::time::{Duration, Instant};

use clap::{Args, ValueEnum};
use codespan_reporting::term::termcolor::{ColorChoice, StandardStream};
use seam_analysis::finding::Severity;

use crate::output;
use crate::{project, worker};

#[derive(Clone, Copy, ValueEnum)]
pub enum Format {
    Human,
    Json,
    Sarif,
}

#[derive(Clone, Copy, ValueEnum)]
pub enum Color {
    Auto,
    Always,
    Never,
}

#[derive(Args)]
pub struct CheckArgs {
    /// Files or folders to check (default: the design in seam.toml, else the current folder).
    pub paths: Vec<PathBuf>,
    /// seam.toml to use (default: the nearest one above the first path).
    #[arg(long)]
    pub config: Option<PathBuf>,
    #[arg(long, value_enum, default_value = "human")]
    pub format: Format,
    /// Also write a self-contained HTML report (domains, crossing map, crossings, findings).
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    #[arg(long, value_enum, default_value = "auto")]
    pub color: Color,
    /// Print only the summary line (human format).
    #[arg(long)]
    pub quiet: bool,
    /// Print time spent per phase to stderr.
    #[arg(long)]
    pub timings: bool,
    /// Only read the files (syntax errors and parse problems); skip the design and CDC rules.
    #[arg(long)]
    pub parse_only: bool,
    /// Per-file parse time limit in seconds.
    #[arg(long, default_value_t = 60)]
    pub parse_timeout: u64,
    /// Parallel parse workers (default: number of cores).
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Apply quick fixes for these rules (`waive:RULE` or `waive:all` inserts waivers): prints a
    /// unified diff, then writes each file atomically. The report is of the fixed design.
    #[arg(long, value_name = "RULE[,RULE]", value_delimiter = ',')]
    pub fix: Vec<String>,
}

pub fn run(a: CheckArgs) -> ExitCode {
    let t0 = Instant::now();
    let fix_req = if a.fix.is_empty() {
        None
    } else {
        match super::fix::parse_request(&a.fix) {
            Ok(r) => Some(r),
            Err(e) => return super::usage_error(e),
        }
    };
    let proj = match project::load(&a.paths, a.config.as_deref()) {
        Ok(p) => p,
        Err(e) => return super::usage_error(e.0),
    };
    let jobs = a.jobs.unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(2)
    });
    let t_load = t0.elapsed();
    // a progress bar on stderr, only for people watching a terminal
    let bar =
        (!a.quiet && std::io::IsTerminal::is_terminal(&std::io::stderr()) && proj.jobs.len() > 20)
            .then(|| {
                let b = indicatif::ProgressBar::new(proj.jobs.len() as u64);
                b.set_style(
                    indicatif::ProgressStyle::with_template(
                        "parsing {bar:30} {pos}/{len} files {elapsed}",
                    )
                    .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
                );
                b
            });
    let mut models = worker::parse_all_with_progress(
        &proj.jobs,
        proj.macros.clone(),
        &proj.options,
        Duration::from_secs(a.parse_timeout),
        jobs,
        &mut |done, _| {
            if let Some(b) = &bar {
                b.set_position(done as u64);
            }
        },
    );
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let t_parse = t0.elapsed() - t_load;
    let t_d0 = Instant::now();
    let mut analysis = if a.parse_only {
        seam_analysis::report::Analysis {
            findings: models
                .iter()
                .flat_map(seam_analysis::finding::syntax_findings)
                .collect(),
            files: models.len(),
            modules: models.iter().map(|m| m.modules.len()).sum(),
            ..Default::default()
        }
    } else {
        seam_analysis::analyze(&models, &proj.config)
    };
    let t_design = t_d0.elapsed();
    if let (Some(req), false) = (&fix_req, a.parse_only) {
        // diffs on stdout for people, on stderr when stdout carries JSON or SARIF
        let mut human_out = std::io::stdout();
        let mut err_out = std::io::stderr();
        let diff_out: &mut dyn std::io::Write = match a.format {
            Format::Human => &mut human_out,
            _ => &mut err_out,
        };
        let timeout = Duration::from_secs(a.parse_timeout);
        match super::fix::run(req, &proj, models, analysis, timeout, jobs, diff_out) {
            Ok(o) => {
                models = o.models;
                analysis = o.analysis;
            }
            Err(e) => return super::usage_error(e),
        }
    }
    analysis.findings.sort_by(|x, y| {
        (&x.span.file, x.span.line, x.span.column).cmp(&(&y.span.file, y.span.line, y.span.column))
    });
    let findings = &analysis.findings;
    let modules: usize = models.iter().map(|m| m.modules.len()).sum();
    if a.timings {
        eprintln!(
            "timings: load {:.3} s, parse {:.3} s ({} files, {} workers), design + rules {:.3} s ({:.1}% of parse)",
            t_load.as_secs_f64(),
            t_parse.as_secs_f64(),
            models.len(),
            jobs,
            t_design.as_secs_f64(),
            100.0 * t_design.as_secs_f64() / t_parse.as_secs_f64().max(1e-9)
        );
    }
    let src_root = proj.root.clone();
    let read_src = move |name: &str| std::fs::read_to_string(src_root.join(name)).ok();
    if let Some(path) = &a.report {
        if let Err(e) = output::html::write(path, &analysis, &proj.config, &read_src, &proj.root) {
            return super::usage_error(e);
        }
    }
    match a.format {
        Format::Sarif => println!(
            "{}",
            output::sarif::render(&analysis, &proj.config, &read_src, &proj.root)
        ),
        Format::Json => {
            let v = output::json::analysis_report(&analysis);
            println!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        }
        Format::Human => {
            let choice = match a.color {
                Color::Auto => {
                    if std::io::IsTerminal::is_terminal(&std::io::stdout()) {
                        ColorChoice::Auto
                    } else {
                        ColorChoice::Never
                    }
                }
                Color::Always => ColorChoice::Always,
                Color::Never => ColorChoice::Never,
            };
            let mut out = StandardStream::stdout(choice);
            if !a.quiet {
                let root = proj.root.clone();
                let read = move |name: &str| std::fs::read_to_string(root.join(name)).ok();
                let _ = output::human::render(&mut out, findings, &read);
            }
            println!(
                "seam: {} files, {} modules: {}",
                models.len(),
                modules,
                output::human::summary(findings)
            );
        }
    }
    let errors = findings
        .iter()
        .any(|f| !f.waived && f.severity == Severity::Error);
    if errors {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}
