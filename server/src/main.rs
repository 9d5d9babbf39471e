//! `seam`: the CDC language server (`seam serve`) and batch checker (`seam check`).

mod cli;
mod output;
mod project;
mod worker;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

#[derive(Parser)]
#[command(name = "seam", version, about = "Clock-domain-crossing checks for Verilog and SystemVerilog")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check a design and report findings (exit 0 clean, 1 errors, 2 usage or config error).
    Check(cli::check::CheckArgs),
    /// Print the per-file model of each FILE as JSON.
    Model(cli::model::ModelArgs),
    /// Internal: parse one file in a worker process (stdin request, stdout replies).
    #[command(name = "__parse-worker", hide = true)]
    ParseWorker,
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match cli.command {
        Command::Check(a) => cli::check::run(a),
        Command::Model(a) => cli::model::run(a),
        Command::ParseWorker => worker::serve_one(),
    }
}
