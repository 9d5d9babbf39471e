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
