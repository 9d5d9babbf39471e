//! `seam model FILE...`: the per-file models as JSON (one array, in compile order).

use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Duration;

use clap::Args;

use crate::{project, worker};

#[derive(Args)]
pub struct ModelArgs {
    /// Files (or folders) to read.
    #[arg(required = true)]
    pub paths: Vec<PathBuf>,
    /// seam.toml to use (default: the nearest one above the first path).
    #[arg(long)]
    pub config: Option<PathBuf>,
}

pub fn run(a: ModelArgs) -> ExitCode {
    let proj = match project::load(&a.paths, a.config.as_deref()) {
        Ok(p) => p,
        Err(e) => return super::usage_error(e.0),
    };
    let models = worker::parse_all(
        &proj.jobs,
        proj.macros.clone(),
        &proj.options,
        Duration::from_secs(60),
        2,
    );
    match serde_json::to_string_pretty(&models) {
        Ok(s) => {
            println!("{s}");
            ExitCode::SUCCESS
        }
        Err(e) => super::usage_error(e),
    }
}
