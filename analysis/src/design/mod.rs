//! The design layer: module index, elaboration per instance, clocks and domains.

use crate::config::Config;
use crate::finding;
use crate::model::FileModel;
use crate::report::Analysis;

/// Analyse a whole design: every file's model (in compile order) and the project config.
pub fn analyze(models: &[FileModel], _config: &Config) -> Analysis {
    let findings = models.iter().flat_map(finding::syntax_findings).collect();
    Analysis {
        findings,
        files: models.len(),
        modules: models.iter().map(|m| m.modules.len()).sum(),
        ..Analysis::default()
    }
}
