//! `seam mtbf`: every synchronizer with its MTBF estimate and the design total; `--solve`
//! adds the fewest stages and the highest destination frequency that meet the target.
//! It prints the analysis' one MTBF table (`Analysis::mtbf`); nothing is recomputed here.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, ValueEnum};
use seam_analysis::mtbf::{
    format_frequency, format_frequency_limit, format_time, format_years, CAUTION, SECONDS_PER_YEAR,
};
use seam_analysis::report::{MtbfReport, SyncEstimate, SyncMtbf};
use serde_json::{json, Value};

#[derive(Clone, Copy, ValueEnum)]
pub enum MtbfFormat {
    Human,
    Json,
}

#[derive(Args)]
pub struct MtbfArgs {
    /// Files or folders (default: the design in seam.toml, else the current folder).
    pub paths: Vec<PathBuf>,
    #[arg(long)]
    pub config: Option<PathBuf>,
    /// Also give, per synchronizer, the fewest stages and the highest destination clock
    /// frequency that meet `[mtbf] target_years`.
    #[arg(long)]
    pub solve: bool,
    #[arg(long, value_enum, default_value = "human")]
    pub format: MtbfFormat,
}

fn figure_text(s: &SyncMtbf) -> String {
    match &s.estimate {
        SyncEstimate::Figure { log10_s, .. } => format_years(*log10_s),
        SyncEstimate::NoSettlingSlack { .. } => "no settling slack".into(),
        SyncEstimate::Unbounded => "unbounded (never changes)".into(),
        SyncEstimate::Unknown { .. } => "unknown".into(),
    }
}

fn verdict(s: &SyncMtbf) -> &'static str {
    match s.meets_target {
        Some(true) => "meets",
        Some(false) => "BELOW",
        None => "?",
    }
}

/// log10 seconds → log10 years (Julian years, as everywhere in the model).
fn log10_years(l: f64) -> f64 {
    l - SECONDS_PER_YEAR.log10()
}

fn sync_json(s: &SyncMtbf, solve: bool) -> Value {
    let (per_bit, one, fleet) = match &s.estimate {
        SyncEstimate::Figure {
            per_bit_log10_s,
            log10_s,
            fleet_log10_s,
        } => (
            Some(log10_years(*per_bit_log10_s)),
            Some(log10_years(*log10_s)),
            Some(log10_years(*fleet_log10_s)),
        ),
        _ => (None, None, None),
    };
    let kind = match &s.estimate {
        SyncEstimate::Figure { .. } => "figure",
        SyncEstimate::NoSettlingSlack { .. } => "no_settling_slack",
        SyncEstimate::Unbounded => "unbounded",
        SyncEstimate::Unknown { .. } => "unknown",
    };
    let missing = match &s.estimate {
        SyncEstimate::Unknown { missing } => missing.clone(),
        _ => vec![],
    };
    let mut v = json!({
        "source": s.source,
        "source_domain": s.source_domain,
        "destination": s.destination,
        "destination_domain": s.destination_domain,
        "stage_registers": s.stage_registers,
        "stages": s.stages,
        "bits": s.bits,
        "dest_clock": s.dest_clock,
        "dest_clock_hz": s.dest_clock_hz,
        "source_clock": s.source_clock,
        "f_data_hz": s.f_data_hz,
        "f_data_from": s.f_data_from,
        "stage_time_s": s.stage_time_s,
        "half_period_steps": s.half_period_steps,
        "t_r_s": s.t_r_s,
        "estimate": kind,
        "mtbf": figure_text(s),
        "log10_years_per_bit": per_bit,
        "log10_years": one,
        "log10_years_fleet": fleet,
        "meets_target": s.meets_target,
        "missing_settings": missing,
        "file": s.span.file,
        "line": s.span.line,
        "column": s.span.column,
    });
    if solve {
        v["min_stages"] = json!(s.min_stages);
        v["max_dest_clock_hz"] = json!(s.max_dest_hz);
    }
    v
}

pub fn report_json(r: &MtbfReport, solve: bool) -> Value {
    json!({
        "version": 1,
        "caution": CAUTION,
        "target_years": r.target_years,
        "units": r.units,
        "parameters": {
            "tau_ps": r.tau_ps, "window_ps": r.window_ps, "setup_ps": r.setup_ps,
            "clock_to_q_ps": r.clock_to_q_ps, "routing_ps": r.routing_ps,
            "placeholder_defaults": r.placeholder,
        },
        "design": {
            "mtbf": r.design_log10_s.map(format_years),
            "log10_years": r.design_log10_s.map(log10_years),
            "meets_target": r.design_log10_s.map(|l| log10_years(l) >= r.target_years.log10()),
            "uncounted": r.uncounted,
            "weakest": r.weakest.and_then(|i| r.synchronizers.get(i)).map(|s| s.destination.clone()),
        },
        "synchronizers": r.synchronizers.iter().map(|s| sync_json(s, solve)).collect::<Vec<_>>(),
    })
}

pub fn human(r: &MtbfReport, solve: bool) -> String {
    let mut out = String::new();
    let devices = if r.units == 1 {
        "1 device".to_string()
    } else {
        format!("{} devices", r.units)
    };
    out.push_str(&format!(
        "MTBF estimates: target {} years for the design across {devices}; τ = {} ps, T_W = {} ps, t_setup = {} ps, t_clk→q = {} ps, t_routing = {} ps{}\n",
        r.target_years,
        r.tau_ps,
        r.window_ps,
        r.setup_ps,
        r.clock_to_q_ps,
        r.routing_ps,
        if r.placeholder {
            " (τ and T_W are placeholder defaults: set them from vendor data)"
        } else {
            ""
        }
    ));
    if r.synchronizers.is_empty() {
        out.push_str("no synchronizers found\n");
    } else {
        let mut rows: Vec<Vec<String>> = vec![{
            let mut h: Vec<String> = [
                "synchronizer",
                "from → to",
                "N",
                "bits",
                "f_clk",
                "f_data",
                "t_r",
                "MTBF (all bits)",
            ]
            .iter()
            .map(|s| s.to_string())
            .collect();
            if r.units > 1 {
                h.push(format!("across {devices}"));
            }
            h.push("target".into());
            if solve {
                h.push("min N".into());
                h.push("max f_clk".into());
            }
            h
        }];
        for s in &r.synchronizers {
            let mut row = vec![
                format!("{} ← {}", s.destination, s.source),
                format!("{} → {}", s.source_domain, s.destination_domain),
                s.stages.to_string(),
                s.bits.to_string(),
                s.dest_clock_hz
                    .map(format_frequency)
                    .unwrap_or_else(|| "?".into()),
                s.f_data_hz
                    .map(format_frequency)
                    .unwrap_or_else(|| "?".into()),
                s.t_r_s.map(format_time).unwrap_or_else(|| "–".into()),
                figure_text(s),
            ];
            if r.units > 1 {
                row.push(match &s.estimate {
                    SyncEstimate::Figure { fleet_log10_s, .. } => format_years(*fleet_log10_s),
                    _ => figure_text(s),
                });
            }
            row.push(verdict(s).into());
            if solve {
                let unknown = matches!(s.estimate, SyncEstimate::Unknown { .. });
                row.push(match s.min_stages {
                    Some(n) => n.to_string(),
                    None if unknown => "–".into(),
                    None => "> 10".into(),
                });
                row.push(
                    s.max_dest_hz
                        .map(format_frequency_limit)
                        .unwrap_or_else(|| "–".into()),
                );
            }
            rows.push(row);
        }
        let cols = rows[0].len();
        let widths: Vec<usize> = (0..cols)
            .map(|c| {
                rows.iter()
                    .map(|r| r.get(c).map_or(0, |x| x.chars().count()))
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        for row in &rows {
            let line: Vec<String> = row
                .iter()
                .zip(&widths)
                .map(|(x, w)| format!("{x}{}", " ".repeat(w.saturating_sub(x.chars().count()))))
                .collect();
            out.push_str(line.join("  ").trim_end());
            out.push('\n');
        }
        for s in &r.synchronizers {
            if let SyncEstimate::Unknown { missing } = &s.estimate {
                out.push_str(&format!(
                    "{}: no figure; set {}\n",
                    s.destination,
                    missing.join("; ")
                ));
            }
        }
    }
    match r.design_log10_s {
        Some(l) => {
            let meets = log10_years(l) >= r.target_years.log10();
            out.push_str(&format!(
                "design total across {devices}: {} ({} the target of {} years)",
                format_years(l),
                if meets { "meets" } else { "below" },
                r.target_years
            ));
            if r.uncounted > 0 {
                out.push_str(&format!(
                    "; {} synchronizer(s) without a figure not counted",
                    r.uncounted
                ));
            }
            out.push('\n');
        }
        None => out.push_str("design total: no figure\n"),
    }
    if let Some(s) = r.weakest.and_then(|i| r.synchronizers.get(i)) {
        out.push_str(&format!(
            "weakest: {} ← {} ({})\n",
            s.destination,
            s.source,
            figure_text(s)
        ));
    }
    out.push_str(&format!("{CAUTION}\n"));
    out
}

pub fn run(a: MtbfArgs) -> ExitCode {
    let an = match super::load_and_analyze(&a.paths, a.config.as_deref()) {
        Ok(x) => x,
        Err(code) => return code,
    };
    match a.format {
        MtbfFormat::Json => println!(
            "{}",
            serde_json::to_string_pretty(&report_json(&an.mtbf, a.solve)).unwrap_or_default()
        ),
        MtbfFormat::Human => print!("{}", human(&an.mtbf, a.solve)),
    }
    ExitCode::SUCCESS
}
