//! `seam domains`: every register with its clock, edge, domain and reset source.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, ValueEnum};
use serde_json::json;

#[derive(Clone, Copy, ValueEnum)]
pub enum DomainsFormat {
    Human,
    Json,
}

#[derive(Args)]
pub struct DomainsArgs {
    /// Files or folders (default: the design in seam.toml, else the current folder).
    pub paths: Vec<PathBuf>,
    #[arg(long)]
    pub config: Option<PathBuf>,
    #[arg(long, value_enum, default_value = "human")]
    pub format: DomainsFormat,
}

pub fn run(a: DomainsArgs) -> ExitCode {
    let an = match super::load_and_analyze(&a.paths, a.config.as_deref()) {
        Ok(x) => x,
        Err(code) => return code,
    };
    let edge = |e: seam_analysis::model::Edge| match e {
        seam_analysis::model::Edge::Posedge => "posedge",
        seam_analysis::model::Edge::Negedge => "negedge",
        seam_analysis::model::Edge::Any => "any",
    };
    match a.format {
        DomainsFormat::Json => {
            let v = json!({
                "version": 1,
                "clocks": an.clocks.iter().map(|c| json!({
                    "name": c.name, "frequency_hz": c.frequency_hz, "group": c.group,
                    "root": c.root, "domain": c.domain,
                })).collect::<Vec<_>>(),
                "registers": an.registers.iter().map(|r| json!({
                    "instance": r.instance, "module": r.module, "signal": r.signal,
                    "file": r.span.file, "line": r.span.line,
                    "clock": r.clock, "edge": edge(r.edge), "domain": r.domain,
                    "derived_from": r.derived_from, "reset": r.reset,
                    "reset_source": r.reset_source,
                    "stage": r.stage.as_ref().map(|(k, n, from)| json!({"stage": k, "of": n, "from": from})),
                })).collect::<Vec<_>>(),
            });
            println!("{}", serde_json::to_string_pretty(&v).unwrap_or_default());
        }
        DomainsFormat::Human => {
            println!("clocks:");
            for c in &an.clocks {
                let f = c
                    .frequency_hz
                    .map(seam_analysis::config::format_frequency)
                    .unwrap_or_else(|| "frequency unknown".into());
                println!("  {:<16} {:<14} domain {}", c.name, f, c.domain);
            }
            println!("registers:");
            for r in &an.registers {
                let mut extra = String::new();
                if let Some(d) = &r.derived_from {
                    extra.push_str(&format!(" (clocked by register {d})"));
                }
                if let Some((k, n, from)) = &r.stage {
                    extra.push_str(&format!(" [stage {k} of {n} from {from}]"));
                }
                if let Some(rs) = &r.reset {
                    extra.push_str(&format!(" reset {rs}"));
                }
                if let Some(src) = &r.reset_source {
                    if let Some((k, n)) = src.own_stage {
                        extra.push_str(&format!(" [reset synchronizer stage {k} of {n}]"));
                    } else if !src.synchronized && r.domain.is_some() {
                        extra.push_str(" [released asynchronously]");
                    }
                }
                println!(
                    "  {:<32} {:<10} {} {}{}",
                    format!("{}.{}", r.instance, r.signal),
                    r.domain.as_deref().unwrap_or("?"),
                    edge(r.edge),
                    r.clock.as_deref().unwrap_or("?"),
                    extra
                );
            }
        }
    }
    ExitCode::SUCCESS
}
