//! `seam check --fix=RULE[,RULE]`: apply quick fixes, print each change as a unified diff,
//! then write the file atomically (a temporary file in the same folder, then a rename).
//!
//! `--fix=RULE` applies the RTL fix of each finding of that rule that has one (findings
//! without one are listed with the reason); `--fix=waive:RULE` inserts waiver comments.
//! Fixes are applied in passes: in each pass at most one fix per module (or per line, for
//! waivers), then the design is parsed and analysed again, so that every fix is planned on
//! the current text. A fix whose finding comes back stops the run (it never loops).

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Duration;

use seam_analysis::fix::{self, Fix};
use seam_analysis::model::FileModel;
use seam_analysis::report::Analysis;

use crate::project::Project;
use crate::worker;

/// The requested fixes: RTL fixes per rule, waivers per rule (`all` for every rule).
pub struct Request {
    pub rtl: BTreeSet<String>,
    pub waive: BTreeSet<String>,
}

pub fn parse_request(items: &[String]) -> Result<Request, String> {
    let mut r = Request {
        rtl: BTreeSet::new(),
        waive: BTreeSet::new(),
    };
    for it in items.iter().flat_map(|s| s.split(',')) {
        let it = it.trim();
        if it.is_empty() {
            continue;
        }
        let (waive, rule) = match it.strip_prefix("waive:") {
            Some(rule) => (true, rule),
            None => (false, it),
        };
        let known = seam_analysis::config::RULES
            .iter()
            .any(|(id, _)| *id == rule)
            || (waive && rule == "all");
        if !known || rule == "syntax-error" {
            return Err(format!(
                "--fix: unknown or unfixable rule `{rule}` (use a rule id, or waive:RULE)"
            ));
        }
        if waive {
            r.waive.insert(rule.to_string());
        } else {
            r.rtl.insert(rule.to_string());
        }
    }
    if r.rtl.is_empty() && r.waive.is_empty() {
        return Err("--fix needs at least one rule".into());
    }
    Ok(r)
}

/// The file a display path names, if it lies inside the workspace root.
fn inside(root: &Path, display: &str) -> Option<PathBuf> {
    let p = Path::new(display);
    if p.is_absolute() || display.split(['/', '\\']).any(|c| c == "..") {
        return None;
    }
    let root = root.canonicalize().ok()?;
    let full = root.join(p).canonicalize().ok()?;
    full.starts_with(&root).then_some(full)
}

/// Write `text` to `path` atomically: a temporary file next to it, then a rename over it.
pub fn write_atomic(path: &Path, text: &str) -> std::io::Result<()> {
    let dir = path.parent().unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "file".into());
    let tmp = dir.join(format!(".{name}.seam-fix-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(text.as_bytes())?;
        f.sync_all()?;
        if let Ok(meta) = std::fs::metadata(path) {
            let _ = std::fs::set_permissions(&tmp, meta.permissions());
        }
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

fn wanted(req: &Request, rule: &str) -> (bool, bool) {
    (
        req.rtl.contains(rule),
        req.waive.contains(rule) || req.waive.contains("all"),
    )
}

/// The fix to apply for a finding under this request: its RTL fix when that rule was asked
/// for, else its waiver when waivers were.
fn chosen(req: &Request, f: &seam_analysis::finding::Finding, fixes: Vec<Fix>) -> Option<Fix> {
    let (rtl, waive) = wanted(req, &f.rule);
    let rtl_fix = fixes.iter().find(|x| rtl && x.kind != "waive").cloned();
    rtl_fix.or_else(|| fixes.into_iter().find(|x| waive && x.kind == "waive"))
}

/// Identity of a finding across passes (its position moves as text is inserted).
fn identity(f: &seam_analysis::finding::Finding) -> (String, String) {
    (f.rule.clone(), f.message.clone())
}

pub struct Outcome {
    pub models: Vec<FileModel>,
    pub analysis: Analysis,
}

/// Run the passes. Diffs go to `diff_out`; notes (reasons no fix was made) to stderr.
pub fn run(
    req: &Request,
    proj: &Project,
    mut models: Vec<FileModel>,
    mut analysis: Analysis,
    timeout: Duration,
    jobs: usize,
    diff_out: &mut dyn Write,
) -> Result<Outcome, String> {
    let mut fixed: BTreeSet<(String, String)> = BTreeSet::new();
    let mut applied = 0usize;
    let mut reported: BTreeSet<(String, String)> = BTreeSet::new();
    for _pass in 0..500 {
        let disk: HashMap<String, PathBuf> = proj
            .jobs
            .iter()
            .map(|j| (j.display.clone(), j.disk.clone()))
            .collect();
        let text_of = |display: &str| -> Option<String> {
            let p = disk.get(display)?;
            std::fs::read_to_string(p).ok()
        };
        let mut texts: BTreeMap<String, String> = BTreeMap::new();
        let mut scopes: BTreeSet<String> = BTreeSet::new();
        let mut picked: Vec<Fix> = Vec::new();
        for f in &analysis.findings {
            let (rtl, waive) = wanted(req, &f.rule);
            if f.waived || !(rtl || waive) {
                continue;
            }
            let Some(fx) = chosen(req, f, fix::fixes_for(f, &fix::in_slice(&models), &text_of))
            else {
                if rtl && reported.insert(identity(f)) {
                    let why = fix::unavailable_reason(f, &fix::in_slice(&models), &text_of)
                        .unwrap_or_else(|| "this rule has no automatic fix".into());
                    eprintln!(
                        "seam: no fix for {} at {}:{}: {why}",
                        f.rule, f.span.file, f.span.line
                    );
                }
                continue;
            };
            if fixed.contains(&identity(f)) {
                return Err(format!(
                    "the fix for {} at {}:{} did not remove the finding; stopping (please report this design)",
                    f.rule, f.span.file, f.span.line
                ));
            }
            if scopes.contains(&fx.scope) || picked.iter().any(|p| p.edits == fx.edits) {
                continue; // next pass, planned on the new text
            }
            scopes.insert(fx.scope.clone());
            fixed.insert(identity(f));
            picked.push(fx);
        }
        if picked.is_empty() {
            break;
        }
        // apply per file, all or nothing for each fix
        let mut by_file: BTreeMap<String, Vec<&fix::TextEdit>> = BTreeMap::new();
        let mut titles: BTreeMap<String, Vec<String>> = BTreeMap::new();
        for p in &picked {
            for e in &p.edits {
                by_file.entry(e.file.clone()).or_default().push(e);
            }
            if let Some(e) = p.edits.first() {
                titles
                    .entry(e.file.clone())
                    .or_default()
                    .push(p.title.clone());
            }
        }
        for (file, edits) in &by_file {
            let Some(path) = inside(&proj.root, file) else {
                return Err(format!("{file}: outside the workspace; not written"));
            };
            let old = match texts.get(file) {
                Some(t) => t.clone(),
                None => std::fs::read_to_string(&path).map_err(|e| format!("{file}: {e}"))?,
            };
            let new = fix::apply(&old, edits)
                .ok_or_else(|| format!("{file}: the fixes overlap; nothing written"))?;
            for t in titles.get(file).into_iter().flatten() {
                let _ = writeln!(diff_out, "# {t}");
            }
            let diff = similar::TextDiff::from_lines(&old, &new);
            let _ = write!(
                diff_out,
                "{}",
                diff.unified_diff()
                    .context_radius(3)
                    .header(&format!("a/{file}"), &format!("b/{file}"))
            );
            write_atomic(&path, &new).map_err(|e| format!("{file}: cannot write: {e}"))?;
            texts.insert(file.clone(), new);
            applied += 1;
        }
        // plan the next pass on the new text
        models = worker::parse_all(
            &proj.jobs,
            proj.macros.clone(),
            &proj.options,
            timeout,
            jobs,
        );
        analysis = seam_analysis::analyze(&models, &proj.config);
    }
    if applied > 0 {
        eprintln!("seam: quick fixes written to {applied} file change(s); review the diff (every RTL fix changes latency or timing)");
    }
    Ok(Outcome { models, analysis })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn requests() {
        let r = parse_request(&["unsynchronized-crossing,waive:all".into()])
            .ok()
            .unwrap();
        assert!(r.rtl.contains("unsynchronized-crossing") && r.waive.contains("all"));
        assert!(parse_request(&["no-such-rule".into()]).is_err());
        assert!(parse_request(&["syntax-error".into()]).is_err());
        assert!(parse_request(&[]).is_err());
    }

    #[test]
    fn atomic_write_replaces_and_leaves_no_temp() {
        let dir = std::env::temp_dir().join(format!("seam-fix-test-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("a.v");
        std::fs::write(&p, "old").unwrap();
        write_atomic(&p, "new text").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "new text");
        let left: Vec<_> = std::fs::read_dir(&dir).unwrap().collect();
        assert_eq!(left.len(), 1);
        assert!(inside(&dir, "a.v").is_some());
        assert!(inside(&dir, "../a.v").is_none());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
