//! seam-analysis: the pure CDC analysis library behind the `seam` language server and checker.
//!
//! Nothing here does LSP, async or I/O beyond what the caller passes in (sv-parser itself reads
//! `include files from the include directories the caller names).

pub mod cdc;
pub mod config;
pub mod design;
pub mod filelist;
pub mod finding;
pub mod fix;
pub mod model;
pub mod mtbf;
pub mod parse;
pub mod report;

pub use design::analyze;
