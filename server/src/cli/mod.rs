//! Subcommands of the `seam` binary; each parses its arguments and calls the analysis crate.

pub mod check;
pub mod domains;
pub mod explain;
pub mod fix;
pub mod model;
pub mod mtbf;

/// Print a one-line error and return exit code 2.
pub fn usage_error(msg: impl std::fmt::Display) -> std::process::ExitCode {
    eprintln!("seam: error: {msg}");
    std::process::ExitCode::from(2)
}

/// Load the project, parse every file (killable workers, 60 s each) and analyse the design:
/// the common start of `seam domains` and `seam mtbf`. A load error is the exit code 2.
pub fn load_and_analyze(
    paths: &[std::path::PathBuf],
    config: Option<&std::path::Path>,
) -> Result<seam_analysis::report::Analysis, std::process::ExitCode> {
    let proj = crate::project::load(paths, config).map_err(|e| usage_error(e.0))?;
    let jobs = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(2);
    let models = crate::worker::parse_all(
        &proj.jobs,
        proj.macros.clone(),
        &proj.options,
        std::time::Duration::from_secs(60),
        jobs,
    );
    Ok(seam_analysis::analyze(&models, &proj.config))
}
