//! Derived clock → clock-enable strobe (`derived-clock`), DESIGN.md section 7.

use serde::{Deserialize, Serialize};

use super::{Fix, TextOf};
use crate::finding::Finding;
use crate::model::FileModel;

/// What the design layer found for a flop-derived clock (see `fix::plan`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StrobeHint {
    pub file: String,
    pub module: String,
}

pub fn fix(
    _f: &Finding,
    _h: &StrobeHint,
    _files: &[FileModel],
    _text_of: &TextOf,
) -> Result<Fix, String> {
    Err("not available".into())
}
