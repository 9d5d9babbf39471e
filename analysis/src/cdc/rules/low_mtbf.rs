//! `low-mtbf`: a synchronizer whose estimated MTBF (its bits, across `units` devices) is below
//! `[mtbf] target_years`, or has no settling slack; and, when the design total is below the
//! target, the weakest synchronizers without which the design would meet it.
//! The figures come from `cdc::mtbf_table`; they are estimates, not silicon data.

use crate::design::Ctx;
use crate::finding::{Finding, Severity};
use crate::mtbf::{
    format_frequency, format_frequency_limit, format_time, format_years, SECONDS_PER_YEAR,
};
use crate::report::{MtbfReport, SyncEstimate, SyncMtbf};

pub const ID: &str = "low-mtbf";

/// `1000` for 1000.0, `0.5` for 0.5: the target as the user wrote it.
fn number(x: f64) -> String {
    format!("{x}")
}

fn devices(r: &MtbfReport) -> String {
    if r.units > 1 {
        format!(" across {} devices", r.units)
    } else {
        String::new()
    }
}

/// `synchronizer of `x` (A → B, 2 stages, 4 bits)`.
fn subject(s: &SyncMtbf) -> String {
    let bits = if s.bits > 1 {
        format!(", {} bits", s.bits)
    } else {
        String::new()
    };
    format!(
        "synchronizer of `{}` ({} → {}, {} stages{bits})",
        s.source, s.source_domain, s.destination_domain, s.stages
    )
}

/// The inputs beside the figure.
fn inputs(r: &MtbfReport, s: &SyncMtbf) -> String {
    let mut v = Vec::new();
    if let Some(t) = s.t_r_s {
        v.push(format!("t_r = {}", format_time(t)));
    }
    if let Some(f) = s.dest_clock_hz {
        v.push(format!("f_clk = {}", format_frequency(f)));
    }
    if let Some(f) = s.f_data_hz {
        v.push(format!("f_data = {}", format_frequency(f)));
    }
    v.push(format!("τ = {} ps", r.tau_ps));
    v.push(format!("T_W = {} ps", r.window_ps));
    if r.placeholder {
        v.push("τ and T_W are placeholder defaults".into());
    }
    v.join(", ")
}

/// What would meet the target: the stage count, else the destination frequency.
fn remedy(s: &SyncMtbf) -> String {
    let freq = s.max_dest_hz.map(|f| {
        format!(
            "a destination clock of at most {}",
            format_frequency_limit(f)
        )
    });
    match (s.min_stages, freq) {
        (Some(n), Some(f)) if n > s.stages => format!("{n} stages would meet it, or {f}"),
        (Some(n), None) if n > s.stages => format!("{n} stages would meet it"),
        (_, Some(f)) => format!("{f} would meet it"),
        _ => "no stage count up to 10 meets it; lower the transition rate or use a better synchronizer flop".into(),
    }
}

fn finding(s: &SyncMtbf, message: String) -> Finding {
    let mut f = Finding::new(ID, Severity::Warning, s.span.clone(), message);
    f.signal = Some(s.source.clone());
    f.source_domain = Some(s.source_domain.clone());
    f.destination_domain = Some(s.destination_domain.clone());
    f
}

/// `_ctx` keeps the rules' common shape; everything this rule needs is in the table.
pub fn check(_ctx: &Ctx, r: &MtbfReport, out: &mut Vec<Finding>) {
    let target_log10 = r.target_years.log10() + SECONDS_PER_YEAR.log10();
    let target = number(r.target_years);
    let mut flagged = vec![false; r.synchronizers.len()];
    // 1. synchronizers that miss the target on their own
    for (i, s) in r.synchronizers.iter().enumerate() {
        let message = match &s.estimate {
            SyncEstimate::Figure { fleet_log10_s, .. } if *fleet_log10_s < target_log10 => {
                format!(
                    "{}: estimated MTBF {}{}, below the target of {target} years; {} ({})",
                    subject(s),
                    format_years(*fleet_log10_s),
                    devices(r),
                    remedy(s),
                    inputs(r, s)
                )
            }
            SyncEstimate::NoSettlingSlack { slack_s } => {
                let overhead = (r.setup_ps + r.clock_to_q_ps + r.routing_ps) * 1e-12;
                let stage = s.stage_time_s.map(format_time).unwrap_or_default();
                let freq = s
                    .max_dest_hz
                    .map(|f| {
                        format!(
                            "; a destination clock of at most {} would meet the target",
                            format_frequency_limit(f)
                        )
                    })
                    .unwrap_or_default();
                format!(
                    "{}: no settling slack: a stage step of {stage} is not longer than t_setup + t_clk→q + t_routing = {} (slack {}){freq} ({})",
                    subject(s),
                    format_time(overhead),
                    format_time(*slack_s),
                    inputs(r, s)
                )
            }
            _ => continue,
        };
        flagged[i] = true;
        out.push(finding(s, message));
    }
    // 2. the design total: the weakest synchronizers without which the design would meet it
    let Some(total) = r.design_log10_s else {
        return;
    };
    if total >= target_log10 {
        return;
    }
    let mut figures: Vec<(usize, f64)> = r
        .synchronizers
        .iter()
        .enumerate()
        .filter_map(|(i, s)| match s.estimate {
            SyncEstimate::Figure { log10_s, .. } => Some((i, log10_s)),
            _ => None,
        })
        .collect();
    figures.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    let units = r.units.max(1) as f64;
    let mut k = 0;
    while k < figures.len() {
        let rest: Vec<(f64, u32)> = figures[k..].iter().map(|(_, l)| (*l, 1)).collect();
        match crate::mtbf::design_log10_seconds(&rest, units) {
            Some(l) if l < target_log10 => k += 1,
            _ => break,
        }
    }
    // share of the design's failure rate: (1/MTBF_i) / (1/MTBF_design), fleet figures
    let share: f64 = figures[..k]
        .iter()
        .map(|(_, l)| 10f64.powf(total - (l - units.log10())))
        .sum::<f64>()
        .min(1.0);
    let uncounted = if r.uncounted > 0 {
        format!(
            "; {} synchronizer(s) without a figure are not counted",
            r.uncounted
        )
    } else {
        String::new()
    };
    // one finding per place: a module instantiated many times names its instances
    let mut places: Vec<(crate::model::Span, Vec<usize>)> = Vec::new();
    for &(i, _) in &figures[..k] {
        if flagged[i] {
            continue;
        }
        let span = &r.synchronizers[i].span;
        match places.iter_mut().find(|(p, _)| p == span) {
            Some((_, v)) => v.push(i),
            None => places.push((span.clone(), vec![i])),
        }
    }
    for (_, members) in places {
        let s = &r.synchronizers[members[0]];
        let own = match s.estimate {
            SyncEstimate::Figure { fleet_log10_s, .. } => format_years(fleet_log10_s),
            _ => continue,
        };
        let who = if members.len() == 1 {
            "it is one of".to_string()
        } else {
            let names: Vec<String> = members
                .iter()
                .take(4)
                .map(|&j| format!("`{}`", r.synchronizers[j].destination))
                .collect();
            let more = members.len().saturating_sub(4);
            format!(
                "{} instances of this chain ({}{}) are among",
                members.len(),
                names.join(", "),
                if more > 0 {
                    format!(" and {more} more")
                } else {
                    String::new()
                }
            )
        };
        out.push(finding(
            s,
            format!(
                "{}: estimated MTBF {own}{} meets the target alone, but the design total of {}{} is below the target of {target} years; {who} the {k} weakest synchronizers ({:.0}% of the estimated failure rate), without which the design would meet it{uncounted} ({})",
                subject(s),
                devices(r),
                format_years(total),
                devices(r),
                share * 100.0,
                inputs(r, s)
            ),
        ));
    }
}
