//! seam-analysis: the pure CDC analysis library behind the `seam` language server and checker.
//!
//! Nothing here does LSP, async or I/O beyond what the caller passes in (sv-parser itself reads
//! `include files from the include directories the caller names).

pub mod config;
pub mod filelist;
pub mod mtbf;
pub mod model;
pub mod parse;
pub mod finding;
pub mod report;
pub mod design;
pub mod cdc;

pub use design::analyze;
