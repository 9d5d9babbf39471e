//! MTBF in the editor: hover lines for a synchronizer stage and the code lens on the top
//! module. Both read the analysis' one MTBF table (`Analysis::mtbf`); the hover footer adds
//! the caution that the figures are estimates.

use seam_analysis::cdc::mtbf_table::clock_setting;
use seam_analysis::mtbf::{format_frequency, format_frequency_limit, format_time, format_years};
use seam_analysis::report::{Analysis, MtbfReport, RegisterInfo, SyncEstimate, SyncMtbf};

/// The synchronizer a register is a stage of, if any.
pub fn sync_of<'a>(a: &'a Analysis, r: &RegisterInfo) -> Option<&'a SyncMtbf> {
    let name = format!("{}.{}", r.instance, r.signal);
    a.mtbf
        .synchronizers
        .iter()
        .find(|s| s.stage_registers.iter().any(|n| *n == name))
}

fn devices(r: &MtbfReport) -> String {
    if r.units == 1 {
        "1 device".into()
    } else {
        format!("{} devices", r.units)
    }
}

fn figure(s: &SyncMtbf) -> String {
    match &s.estimate {
        SyncEstimate::Figure { log10_s, .. } => format_years(*log10_s),
        SyncEstimate::NoSettlingSlack { .. } => "no settling slack".into(),
        SyncEstimate::Unbounded => "unbounded (the source never changes)".into(),
        SyncEstimate::Unknown { .. } => "unknown".into(),
    }
}

/// Hover lines for a register that is a synchronizer stage. `figures` is set when a number
/// is shown (the hover then carries the estimate caution).
pub fn stage_lines(a: &Analysis, r: &RegisterInfo, figures: &mut bool) -> Vec<String> {
    let Some(s) = sync_of(a, r) else {
        return vec![];
    };
    let m = &a.mtbf;
    let mut out = Vec::new();
    let bits = if s.bits == 1 {
        "1 bit".to_string()
    } else {
        format!("{} bits", s.bits)
    };
    let head = format!(
        "MTBF estimate of this synchronizer (`{}` ← `{}`, {} stages, {bits})",
        s.destination, s.source, s.stages
    );
    match &s.estimate {
        SyncEstimate::Figure {
            per_bit_log10_s,
            log10_s,
            fleet_log10_s,
        } => {
            *figures = true;
            let mut line = format!("{head}: **{}**", format_years(*log10_s));
            if s.bits > 1 {
                line.push_str(&format!(" ({} per bit)", format_years(*per_bit_log10_s)));
            }
            if m.units > 1 {
                line.push_str(&format!(
                    "; {} across {}",
                    format_years(*fleet_log10_s),
                    devices(m)
                ));
            }
            line.push_str(&format!(
                "; target {} years: {}",
                m.target_years,
                if s.meets_target == Some(true) {
                    "meets it"
                } else {
                    "below it"
                }
            ));
            out.push(line);
        }
        SyncEstimate::NoSettlingSlack { slack_s } => {
            *figures = true;
            out.push(format!(
                "{head}: **no settling slack** (a stage step leaves {} after t_setup + t_clk→q + t_routing)",
                format_time(*slack_s)
            ));
        }
        SyncEstimate::Unbounded => out.push(format!(
            "{head}: unbounded (the source's transition rate is 0)"
        )),
        SyncEstimate::Unknown { .. } => out.push(format!("{head}: no figure yet")),
    }
    // the inputs, or the setting to give instead of a number
    let missing: &[String] = match &s.estimate {
        SyncEstimate::Unknown { missing } => missing,
        _ => &[],
    };
    match s.dest_clock_hz {
        Some(f) => {
            *figures = true;
            out.push(format!(
                "Destination clock `{}`: f_clk = {}",
                s.dest_clock,
                format_frequency(f)
            ));
        }
        None => out.push(format!(
            "Destination clock `{}`: f_clk unknown; set `{}`",
            s.dest_clock,
            clock_setting(&s.dest_clock)
        )),
    }
    match s.f_data_hz {
        Some(f) => out.push(format!(
            "f_data = {} (source transitions per second, from {})",
            format_frequency(f),
            s.f_data_from
        )),
        None => {
            let dest = clock_setting(&s.dest_clock);
            for k in missing.iter().filter(|k| **k != dest) {
                out.push(format!("f_data unknown; set `{k}`"));
            }
        }
    }
    let mut model = vec![
        format!("τ = {} ps", m.tau_ps),
        format!("T_W = {} ps", m.window_ps),
        format!("t_setup = {} ps", m.setup_ps),
        format!("t_clk→q = {} ps", m.clock_to_q_ps),
        format!("t_routing = {} ps", m.routing_ps),
    ];
    if let Some(t) = s.stage_time_s {
        let half = if s.half_period_steps > 0 {
            format!(" ({} half-period step(s))", s.half_period_steps)
        } else {
            String::new()
        };
        model.push(format!("T_stage = {}{half}", format_time(t)));
    }
    if let Some(t) = s.t_r_s {
        model.push(format!("t_r = {}", format_time(t)));
    }
    out.push(model.join(", "));
    if m.placeholder {
        out.push(
            "τ and T_W are placeholder defaults: set `[mtbf] tau_ps` and `window_ps` from vendor data"
                .into(),
        );
    }
    if s.meets_target == Some(false) {
        let mut ways = Vec::new();
        if let Some(n) = s.min_stages.filter(|n| *n > s.stages) {
            ways.push(format!("{n} stages"));
        }
        if let Some(f) = s.max_dest_hz {
            ways.push(format!(
                "a destination clock of at most {}",
                format_frequency_limit(f)
            ));
        }
        if !ways.is_empty() {
            out.push(format!("Would meet the target: {}", ways.join(", or ")));
        }
    }
    out
}

/// Code lens title on a top module: the design MTBF and the weakest synchronizer; `None`
/// when the design has no synchronizer.
pub fn top_lens_title(m: &MtbfReport) -> Option<String> {
    if m.synchronizers.is_empty() {
        return None;
    }
    let total = match m.design_log10_s {
        Some(l) => {
            let target_log10 =
                m.target_years.log10() + seam_analysis::mtbf::SECONDS_PER_YEAR.log10();
            format!(
                "design MTBF estimate {} across {} ({} the {}-year target)",
                format_years(l),
                devices(m),
                if l >= target_log10 { "meets" } else { "below" },
                m.target_years
            )
        }
        None => "design MTBF estimate: no figure".to_string(),
    };
    let weakest = m
        .weakest
        .and_then(|i| m.synchronizers.get(i))
        .map(|s| {
            format!(
                " · weakest: {} ← {}, {}",
                s.destination,
                s.source,
                figure(s)
            )
        })
        .unwrap_or_default();
    let uncounted = if m.uncounted > 0 {
        format!(" · {} without a figure", m.uncounted)
    } else {
        String::new()
    };
    Some(format!("{total}{weakest}{uncounted}"))
}
