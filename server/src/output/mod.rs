//! Renderers for findings: human (source excerpt with carets) and JSON (stable, versioned).

pub mod html;
pub mod human;
pub mod json;
pub mod sarif;
