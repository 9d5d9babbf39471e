//! `seam`: the CDC language server (`seam serve`) and batch checker (`seam check`).

mod cli;
mod lsp;
mod output;
mod project;
mod worker;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

#[derive(Parser)]
#[command(
    name = "seam",
    version,
    about = "Clock-domain-crossing checks for Verilog and SystemVerilog"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check a design and report findings (exit 0 clean, 1 errors, 2 usage or config error).
    Check(cli::check::CheckArgs),
    /// List every register with its clock, edge and domain.
    Domains(cli::domains::DomainsArgs),
    /// Print a rule's documentation (without RULE: list every rule).
    Explain(cli::explain::ExplainArgs),
    /// Print the per-file model of each FILE as JSON.
    Model(cli::model::ModelArgs),
    /// List every synchronizer with its MTBF estimate and the design total (--solve: what meets the target).
    Mtbf(cli::mtbf::MtbfArgs),
    /// Run the language server (LSP over stdio).
    Serve(lsp::ServeArgs),
    /// Internal: parse one file in a worker process (stdin request, stdout replies).
    #[command(name = "__parse-worker", hide = true)]
    ParseWorker,
}

fn main() -> ExitCode {
    // a closed pipe (`seam domains | head`) ends the program quietly, as Unix tools do
    #[cfg(unix)]
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            if !e.use_stderr() {
                let _ = e.print(); // --help, --version
                return ExitCode::SUCCESS;
            }
            return cli::usage_error(one_line_clap_error(&e));
        }
    };
    match cli.command {
        Command::Check(a) => cli::check::run(a),
        Command::Domains(a) => cli::domains::run(a),
        Command::Explain(a) => cli::explain::run(a),
        Command::Model(a) => cli::model::run(a),
        Command::Mtbf(a) => cli::mtbf::run(a),
        Command::Serve(a) => lsp::run(a),
        Command::ParseWorker => worker::serve_one(),
    }
}

/// A clap error as one line: its message and hints, without the usage block.
fn one_line_clap_error(e: &clap::Error) -> String {
    if e.kind() == clap::error::ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
        use clap::CommandFactory;
        let cmd = Cli::command();
        let names: Vec<&str> = cmd
            .get_subcommands()
            .filter(|c| !c.is_hide_set())
            .map(|c| c.get_name())
            .collect();
        return format!(
            "missing subcommand ({}); try 'seam --help'",
            names.join(", ")
        );
    }
    let text = e.render().to_string();
    let parts: Vec<&str> = text
        .lines()
        .map(str::trim)
        .take_while(|l| !l.starts_with("Usage:") && !l.starts_with("For more information"))
        .filter(|l| !l.is_empty())
        .collect();
    let line = parts.join(" ");
    let line = line.strip_prefix("error: ").unwrap_or(&line).to_string();
    if line.is_empty() {
        "bad arguments; try 'seam --help'".to_string()
    } else {
        format!("{line}; try 'seam --help'")
    }
}
