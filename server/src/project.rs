//! Finding the project: seam.toml, the file set, compile order, include dirs and defines.
//! This is the I/O half of loading; the analysis crate gets only text and options.

use std::path::{Path, PathBuf};

use seam_analysis::config::{self, Config};
use seam_analysis::filelist;
use seam_analysis::parse::{MacroTable, ParseOptions};

use crate::worker::Job;

pub struct Project {
    pub root: PathBuf,
    pub config: Config,
    #[allow(dead_code)] // kept for the language server, which watches it
    pub config_path: Option<PathBuf>,
    /// Files to compile, in compile order.
    pub jobs: Vec<Job>,
    pub options: ParseOptions,
    pub macros: MacroTable,
}

/// A load failure: always a one-line message (with file and line where there is one).
pub struct LoadError(pub String);

fn find_config(start: &Path) -> Option<PathBuf> {
    let mut dir = if start.is_dir() {
        Some(start)
    } else {
        start.parent()
    };
    while let Some(d) = dir {
        let c = d.join("seam.toml");
        if c.is_file() {
            return Some(c);
        }
        dir = d.parent();
    }
    None
}

pub fn display_path(root: &Path, p: &Path) -> String {
    let abs_root = root.canonicalize().unwrap_or_else(|_| root.to_path_buf());
    let abs = p.canonicalize().unwrap_or_else(|_| p.to_path_buf());
    match abs.strip_prefix(&abs_root) {
        Ok(r) => r.to_string_lossy().replace('\\', "/"),
        Err(_) => p.to_string_lossy().to_string(),
    }
}

fn is_source(p: &Path) -> bool {
    matches!(
        p.extension().and_then(|e| e.to_str()),
        Some("v") | Some("sv")
    )
}

fn all_files_under(dir: &Path) -> Vec<PathBuf> {
    walkdir::WalkDir::new(dir)
        .follow_links(false)
        .into_iter()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_type().is_file())
        .map(|e| e.into_path())
        .filter(|p| {
            !p.components()
                .any(|c| c.as_os_str() == "target" || c.as_os_str() == ".git")
        })
        .collect()
}

pub fn load(paths: &[PathBuf], config_arg: Option<&Path>) -> Result<Project, LoadError> {
    for p in paths {
        if !p.exists() {
            return Err(LoadError(format!(
                "{}: no such file or directory",
                p.display()
            )));
        }
    }
    let cwd = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let config_path = match config_arg {
        Some(c) => {
            if !c.is_file() {
                return Err(LoadError(format!("{}: config file not found", c.display())));
            }
            Some(c.to_path_buf())
        }
        None => find_config(paths.first().map(|p| p.as_path()).unwrap_or(&cwd)),
    };
    let root = match (&config_path, paths.first()) {
        (Some(c), _) => c
            .parent()
            .map(|p| p.to_path_buf())
            .unwrap_or_else(|| cwd.clone()),
        (None, Some(p)) if p.is_dir() => p.clone(),
        (None, Some(p)) => p
            .parent()
            .map(|x| x.to_path_buf())
            .unwrap_or_else(|| cwd.clone()),
        (None, None) => cwd.clone(),
    };
    let root = if root.as_os_str().is_empty() {
        PathBuf::from(".")
    } else {
        root
    };
    let config = match &config_path {
        Some(c) => {
            let text = std::fs::read_to_string(c)
                .map_err(|e| LoadError(format!("{}: cannot read: {e}", c.display())))?;
            let shown = display_path(&cwd, c);
            config::parse_config(&shown, &text).map_err(|e| LoadError(e.to_string()))?
        }
        None => Config::default(),
    };

    let mut include_dirs: Vec<PathBuf> = config
        .design
        .include_dirs
        .iter()
        .map(|d| root.join(d))
        .collect();
    let mut defines: Vec<(String, Option<String>)> = vec![("SYNTHESIS".into(), None)];
    for (k, v) in &config.design.defines {
        defines.push((k.clone(), if v.is_empty() { None } else { Some(v.clone()) }));
    }

    // the file set
    let mut ordered_by_list = false;
    let files: Vec<PathBuf> = if !paths.is_empty() {
        let mut v = Vec::new();
        for p in paths {
            if p.is_dir() {
                v.extend(filelist::default_file_set(&all_files_under(p), p));
            } else {
                v.push(p.clone());
            }
        }
        v
    } else if let Some(fl) = &config.design.filelist {
        let fl_path = root.join(fl);
        let list = filelist::parse_filelist(
            &fl_path,
            &mut |p: &Path| std::fs::read_to_string(p),
            &|name: &str| std::env::var(name).ok(),
        )
        .map_err(|e| LoadError(e.to_string()))?;
        include_dirs.extend(list.include_dirs.iter().cloned());
        defines.extend(list.defines.iter().cloned());
        ordered_by_list = true;
        list.files.clone()
    } else if !config.design.files.is_empty() {
        let mut gb = globset::GlobSetBuilder::new();
        for g in &config.design.files {
            let glob = globset::Glob::new(g)
                .map_err(|e| LoadError(format!("seam.toml: design.files: bad glob {g:?}: {e}")))?;
            gb.add(glob);
        }
        let set = gb
            .build()
            .map_err(|e| LoadError(format!("seam.toml: design.files: {e}")))?;
        let mut v: Vec<PathBuf> = all_files_under(&root)
            .into_iter()
            .filter(|p| {
                p.strip_prefix(&root)
                    .map(|r| set.is_match(r))
                    .unwrap_or(false)
            })
            .filter(|p| is_source(p))
            .collect();
        v.sort();
        v
    } else {
        filelist::default_file_set(&all_files_under(&root), &root)
    };

    let files = if ordered_by_list {
        files
    } else {
        let tagged: Vec<(PathBuf, bool)> = files
            .into_iter()
            .map(|p| {
                let pkg = std::fs::read(&p)
                    .map(|b| seam_analysis::parse::defines_package(&String::from_utf8_lossy(&b)))
                    .unwrap_or(false);
                (p, pkg)
            })
            .collect();
        filelist::compile_order(tagged)
    };

    let jobs = files
        .iter()
        .map(|p| Job {
            disk: p.clone(),
            display: display_path(&root, p),
        })
        .collect();
    let macros = MacroTable::with_defines(defines.iter().map(|(k, v)| (k.as_str(), v.as_deref())));
    let options = ParseOptions {
        include_dirs,
        max_file_bytes: config.design.max_file_bytes as usize,
        ..ParseOptions::default()
    };
    Ok(Project {
        root,
        config,
        config_path,
        jobs,
        options,
        macros,
    })
}
