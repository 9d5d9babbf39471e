//! Per-synchronizer MTBF estimates from the elaborated design (DESIGN.md section 6).
//!
//! Every synchronized crossing (each crossing bit goes through a chain of at least
//! `[synchronizers] min_stages` stages) gets one [`SyncMtbf`]: the stages of each bit are
//! walked to find the time between consecutive capturing edges, the destination frequency
//! comes from the first stage's root clock in `[clocks]`, and the transition rate of each
//! source bit from `[mtbf.toggle]`, else `data_rate` × the source clock, else `async_toggle`.
//! A W-bit crossing counts W bits. The design total adds every synchronizer with a figure,
//! times `units`. The result is plain data in the report, so the rule, the CLI, the HTML
//! report and the server all read this one computation.

use crate::cdc::crossings::{Bit, Crossings, DIn};
use crate::cdc::short;
use crate::design::netlist::SigId;
use crate::design::Ctx;
use crate::model::Edge;
use crate::mtbf::{self, MtbfParams, MtbfResult, SyncInput};
use crate::report::{MtbfReport, SyncEstimate, SyncMtbf};

/// The estimate of one bit, before the bits of a crossing are combined.
enum BitEstimate {
    Known {
        input: SyncInput,
        result: MtbfResult,
        f_data_from: String,
        source_clock: Option<String>,
    },
    /// A half-period step without slack (the model's own check covers full periods).
    HalfStepNoSlack {
        input: SyncInput,
        slack_s: f64,
    },
    Unknown(Vec<String>),
}

/// A `[clocks]` or `[mtbf.toggle]` key as written in seam.toml (quoted unless bare).
pub fn toml_key(name: &str) -> String {
    let bare = !name.is_empty()
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-');
    if bare {
        name.to_string()
    } else {
        format!("\"{}\"", name.replace('\\', "\\\\").replace('"', "\\\""))
    }
}

/// The seam.toml line that gives a clock its frequency.
pub fn clock_setting(clock: &str) -> String {
    format!("[clocks] {} = {{ frequency = \"…\" }}", toml_key(clock))
}

fn clock_hz(ctx: &Ctx, clock: &str) -> Option<f64> {
    ctx.config
        .clocks
        .get(clock)
        .and_then(|c| c.frequency_hz)
        .filter(|f| f.is_finite() && *f > 0.0)
}

/// The stage bits of the chain that starts at `start` (stage 1 first), `len` stages long.
fn chain_bits(ctx: &Ctx, cx: &Crossings, start: Bit, len: u32) -> Vec<Bit> {
    let mut out = vec![start];
    let mut cur = start;
    let mut remaining = len;
    // bounded: every step lowers `remaining`
    while remaining > 1 && out.len() < 64 {
        let next = cx
            .same_clock_followers(ctx, cur)
            .into_iter()
            .map(|f| (cx.chain_len(ctx, f.bit, 0), f.bit))
            .filter(|(l, b)| *l + 1 >= remaining && !out.contains(b))
            .max_by_key(|(l, b)| (*l, std::cmp::Reverse(*b)));
        let Some((_, b)) = next else { break };
        out.push(b);
        cur = b;
        remaining -= 1;
    }
    out
}

/// Steps between consecutive stages where the next one captures on the other edge.
fn half_steps(ctx: &Ctx, chain: &[Bit]) -> u32 {
    let edge = |s: SigId| ctx.reg_clock.get(&s).map(|c| c.edge).unwrap_or(Edge::Any);
    chain
        .windows(2)
        .filter(|w| {
            let (a, b) = (edge(w[0].0), edge(w[1].0));
            a != b && a != Edge::Any && b != Edge::Any
        })
        .count() as u32
}

/// The time between consecutive capturing edges, as the model takes it: `None` for one full
/// period per step, else the mean over the steps (t_r is the sum of the steps' slacks, which
/// is (N − 1) · (mean step − overhead) when every step has slack).
pub fn stage_time_s(period_s: f64, steps: u32, half: u32) -> Option<f64> {
    if half == 0 || steps == 0 {
        return None;
    }
    let half = half.min(steps);
    let total = f64::from(steps - half) * period_s + f64::from(half) * period_s * 0.5;
    Some(total / f64::from(steps))
}

/// A source bit by name: `geo_trig[3]` for a bit of a vector, `trig_a` for a scalar.
fn bit_name(ctx: &Ctx, leaf: Bit) -> String {
    let sig = &ctx.n.sigs[leaf.0];
    if sig.width.unwrap_or(1) > 1 && !sig.memory {
        format!("{}[{}]", short(ctx, leaf.0), i64::from(leaf.1) + sig.lsb)
    } else {
        short(ctx, leaf.0)
    }
}

/// `[mtbf.toggle]` rate of a source bit: the entry for the bit (`name[3]`), else the signal.
fn toggle_rate(ctx: &Ctx, leaf: Bit) -> Option<(f64, String)> {
    let full = &ctx.n.sigs[leaf.0].name;
    let name = short(ctx, leaf.0);
    let idx = i64::from(leaf.1) + ctx.n.sigs[leaf.0].lsb;
    let wide = ctx.n.sigs[leaf.0].width.unwrap_or(1) > 1;
    let mut keys = Vec::new();
    if wide {
        keys.push(format!("{name}[{idx}]"));
        keys.push(format!("{full}[{idx}]"));
    }
    keys.push(name.clone());
    keys.push(full.clone());
    keys.into_iter()
        .find_map(|k| ctx.config.mtbf.toggle.get(&k).map(|hz| (*hz, k)))
}

/// The source clock of a leaf: a register's root clock, or the `[inputs]` clock of a top
/// input; `None` for an asynchronous input.
fn source_clock(ctx: &Ctx, leaf: SigId) -> Option<String> {
    if ctx.g.is_reg(leaf) {
        return ctx.reg_clock.get(&leaf).and_then(|c| c.root.clone());
    }
    let port = &ctx.n.sigs[leaf].local;
    match ctx.config.inputs.get(port.as_str()) {
        Some(v) if v != "async" => Some(v.clone()),
        _ => None,
    }
}

fn bit_estimate(
    ctx: &Ctx,
    params: &MtbfParams,
    dest_clock: Option<&str>,
    leaf: Bit,
    stages: u32,
    half: u32,
) -> BitEstimate {
    let mut missing = Vec::new();
    let dest_hz = match dest_clock {
        Some(c) => {
            let f = clock_hz(ctx, c);
            if f.is_none() {
                missing.push(clock_setting(c));
            }
            f
        }
        None => None,
    };
    let src_clock = source_clock(ctx, leaf.0);
    let (f_data, from) = match toggle_rate(ctx, leaf) {
        Some((hz, key)) => (Some(hz), format!("[mtbf.toggle] {}", toml_key(&key))),
        None => match &src_clock {
            Some(c) => match clock_hz(ctx, c) {
                Some(f) => (
                    Some(mtbf::transition_rate_hz(params, None, Some(f))),
                    format!(
                        "data_rate {} × {c} ({})",
                        params.data_rate,
                        mtbf::format_frequency(f)
                    ),
                ),
                None => {
                    missing.push(format!(
                        "{} or [mtbf.toggle] {} = \"…\"",
                        clock_setting(c),
                        toml_key(&short(ctx, leaf.0))
                    ));
                    (None, String::new())
                }
            },
            None => (
                Some(params.async_toggle_hz),
                "async_toggle (asynchronous input)".to_string(),
            ),
        },
    };
    let (Some(dest_hz), Some(f_data)) = (dest_hz, f_data) else {
        return BitEstimate::Unknown(missing);
    };
    let period = 1.0 / dest_hz;
    let input = SyncInput {
        stages: stages.max(1),
        dest_clock_hz: dest_hz,
        f_data_hz: f_data,
        stage_time_s: stage_time_s(period, stages.saturating_sub(1), half),
        bits: 1,
    };
    // a half-period step must have slack of its own, whatever the mean step leaves
    if half > 0 && stages >= 2 && f_data > 0.0 {
        let slack = 0.5 * period - params.overhead_s();
        if !(slack > 0.0) {
            return BitEstimate::HalfStepNoSlack {
                input,
                slack_s: slack,
            };
        }
    }
    match mtbf::synchronizer_mtbf(params, &input) {
        Ok(result) => BitEstimate::Known {
            input,
            result,
            f_data_from: from,
            source_clock: src_clock,
        },
        Err(e) => BitEstimate::Unknown(vec![e.to_string()]),
    }
}

/// The MTBF table of the design: one entry per synchronized crossing, and the design total.
pub fn compute(ctx: &Ctx, cx: &Crossings) -> MtbfReport {
    let cfg = &ctx.config.mtbf;
    let params = MtbfParams::from(cfg);
    let defaults = MtbfParams::default();
    let min = ctx.config.synchronizers.min_stages.max(1);
    let mut report = MtbfReport {
        target_years: cfg.target_years,
        units: cfg.units,
        tau_ps: cfg.tau_ps,
        window_ps: cfg.window_ps,
        setup_ps: cfg.setup_ps,
        clock_to_q_ps: cfg.clock_to_q_ps,
        routing_ps: cfg.routing_ps,
        placeholder: cfg.tau_ps == defaults.tau_ps && cfg.window_ps == defaults.window_ps,
        tops: ctx
            .n
            .insts
            .iter()
            .filter(|i| i.parent.is_none())
            .map(|i| i.module.clone())
            .collect(),
        ..MtbfReport::default()
    };
    let reg_name = |s: SigId| {
        let sig = &ctx.n.sigs[s];
        format!("{}.{}", ctx.n.insts[sig.inst].path, sig.local)
    };
    for d in &cx.dests {
        let synced = !d.bits.is_empty()
            && d.bits
                .iter()
                .all(|(_, din, len)| matches!(din, DIn::Single { .. }) && *len >= min);
        if !synced {
            continue;
        }
        let dest_clock = ctx.reg_clock.get(&d.reg).and_then(|c| c.root.clone());
        let Some(dest_clock_name) = dest_clock.clone() else {
            continue;
        };
        let mut stage_registers: Vec<String> = Vec::new();
        let mut estimates = Vec::new();
        let mut max_half = 0;
        let mut first_leaf = None;
        for (b, din, len) in &d.bits {
            let DIn::Single { leaf, .. } = din else {
                continue;
            };
            first_leaf.get_or_insert(*leaf);
            let chain = chain_bits(ctx, cx, (d.reg, *b), *len);
            for (s, _) in &chain {
                let n = reg_name(*s);
                if !stage_registers.contains(&n) {
                    stage_registers.push(n);
                }
            }
            let half = half_steps(ctx, &chain);
            max_half = max_half.max(half);
            estimates.push(bit_estimate(
                ctx,
                &params,
                dest_clock.as_deref(),
                *leaf,
                chain.len() as u32,
                half,
            ));
        }
        let bits = estimates.len() as u32;
        let stages = d.bits.iter().map(|b| b.2).min().unwrap_or(min);
        let source = first_leaf
            .map(|l| bit_name(ctx, l))
            .or_else(|| d.sources.values().flatten().next().map(|s| short(ctx, *s)))
            .unwrap_or_default();
        let source_domain = d.sources.keys().next().cloned().unwrap_or_default();
        let mut entry = SyncMtbf {
            source,
            source_domain,
            destination: short(ctx, d.reg),
            destination_domain: d.domain.clone(),
            stage_registers,
            stages,
            bits,
            dest_clock_hz: clock_hz(ctx, &dest_clock_name),
            dest_clock: dest_clock_name,
            source_clock: None,
            f_data_hz: None,
            f_data_from: String::new(),
            stage_time_s: None,
            half_period_steps: max_half,
            t_r_s: None,
            estimate: SyncEstimate::Unbounded,
            meets_target: None,
            min_stages: None,
            max_dest_hz: None,
            span: d.read_span.clone(),
        };
        combine(&params, &mut entry, estimates);
        report.synchronizers.push(entry);
    }
    // design total over the synchronizers with a figure (each already counts its W bits)
    let items: Vec<(f64, u32)> = report
        .synchronizers
        .iter()
        .filter_map(|s| match s.estimate {
            SyncEstimate::Figure { log10_s, .. } => Some((log10_s, 1)),
            _ => None,
        })
        .collect();
    report.design_log10_s = mtbf::design_log10_seconds(&items, params.units);
    report.uncounted = report
        .synchronizers
        .iter()
        .filter(|s| {
            matches!(
                s.estimate,
                SyncEstimate::NoSettlingSlack { .. } | SyncEstimate::Unknown { .. }
            )
        })
        .count();
    report.weakest = weakest(&report.synchronizers);
    report
}

/// The synchronizer with the highest failure rate: one without settling slack first, else the
/// lowest figure.
pub fn weakest(syncs: &[SyncMtbf]) -> Option<usize> {
    if let Some(i) = syncs
        .iter()
        .position(|s| matches!(s.estimate, SyncEstimate::NoSettlingSlack { .. }))
    {
        return Some(i);
    }
    syncs
        .iter()
        .enumerate()
        .filter_map(|(i, s)| match s.estimate {
            SyncEstimate::Figure { log10_s, .. } => Some((i, log10_s)),
            _ => None,
        })
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(i, _)| i)
}

/// Combine the bits of one crossing into its entry: the weakest bit gives the inputs shown;
/// the figure adds the failure rates of all bits.
fn combine(params: &MtbfParams, e: &mut SyncMtbf, estimates: Vec<BitEstimate>) {
    let mut missing: Vec<String> = Vec::new();
    let mut no_slack: Option<(f64, SyncInput)> = None;
    let mut items: Vec<(f64, u32)> = Vec::new();
    // (per-bit log10 s or +inf, input, t_r, from, source clock) of the weakest bit so far
    let mut weakest: Option<(f64, SyncInput, Option<f64>, String, Option<String>)> = None;
    for est in estimates {
        match est {
            BitEstimate::Unknown(m) => {
                for k in m {
                    if !missing.contains(&k) {
                        missing.push(k);
                    }
                }
            }
            BitEstimate::HalfStepNoSlack { input, slack_s } => {
                if no_slack.as_ref().map_or(true, |(s, _)| slack_s < *s) {
                    no_slack = Some((slack_s, input));
                }
            }
            BitEstimate::Known {
                input,
                result,
                f_data_from,
                source_clock,
            } => {
                let (l, t_r) = match result {
                    MtbfResult::Seconds { log10_s, t_r_s } => {
                        items.push((log10_s, 1));
                        (log10_s, Some(t_r_s))
                    }
                    MtbfResult::Infinite => (f64::INFINITY, None),
                    MtbfResult::NoSettlingSlack => {
                        let slack = mtbf::settling_slack_s(params, &input);
                        if no_slack.as_ref().map_or(true, |(s, _)| slack < *s) {
                            no_slack = Some((slack, input));
                        }
                        continue;
                    }
                };
                if weakest.as_ref().map_or(true, |w| l < w.0) {
                    weakest = Some((l, input, t_r, f_data_from, source_clock));
                }
            }
        }
    }
    let bits = e.bits.max(1);
    if !missing.is_empty() {
        e.estimate = SyncEstimate::Unknown { missing };
        return;
    }
    let solve_on = |input: &SyncInput, e: &mut SyncMtbf| {
        let all_bits = SyncInput { bits, ..*input };
        // more stages are assumed on the same clock and edge as stage 1
        e.min_stages = mtbf::min_stages(
            params,
            &SyncInput {
                stage_time_s: None,
                ..all_bits
            },
        );
        e.max_dest_hz = mtbf::max_dest_frequency_hz(params, &all_bits);
    };
    if let Some((slack_s, input)) = no_slack {
        e.f_data_hz = Some(input.f_data_hz);
        e.stage_time_s = Some(input.stage_time());
        e.estimate = SyncEstimate::NoSettlingSlack { slack_s };
        e.meets_target = Some(false);
        if let Some((_, _, _, from, clk)) = &weakest {
            e.f_data_from = from.clone();
            e.source_clock = clk.clone();
        }
        solve_on(&input, e);
        return;
    }
    let Some((per_bit, input, t_r, from, clk)) = weakest else {
        e.estimate = SyncEstimate::Unbounded;
        e.meets_target = Some(true);
        return;
    };
    e.f_data_hz = Some(input.f_data_hz);
    e.f_data_from = from;
    e.source_clock = clk;
    e.stage_time_s = Some(input.stage_time());
    e.t_r_s = t_r;
    let one_device = mtbf::design_log10_seconds(&items, 1.0);
    let fleet = mtbf::design_log10_seconds(&items, params.units);
    match (one_device, fleet) {
        (Some(log10_s), Some(fleet_log10_s)) if per_bit.is_finite() => {
            e.estimate = SyncEstimate::Figure {
                per_bit_log10_s: per_bit,
                log10_s,
                fleet_log10_s,
            };
            e.meets_target = Some(mtbf::meets_target(fleet_log10_s, params));
            solve_on(&input, e);
        }
        _ => {
            e.estimate = SyncEstimate::Unbounded;
            e.meets_target = Some(true);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stage_time_is_the_mean_step() {
        // Definition (DESIGN.md section 6): a step is one period on the same edge, half a
        // period on the other edge; t_r = Σ (step − overhead) = (N − 1)(mean − overhead).
        assert_eq!(stage_time_s(10e-9, 1, 0), None);
        assert_eq!(stage_time_s(10e-9, 0, 1), None);
        assert!((stage_time_s(10e-9, 1, 1).unwrap() - 5e-9).abs() < 1e-21);
        assert!((stage_time_s(10e-9, 2, 1).unwrap() - 7.5e-9).abs() < 1e-21);
        // more half steps than steps cannot happen; it is clamped, never negative
        assert!((stage_time_s(10e-9, 2, 5).unwrap() - 5e-9).abs() < 1e-21);
        // Σ of slacks equals (N − 1)·(mean − o) for any mix
        let (p, o) = (8e-9, 0.3e-9);
        for steps in 1..6u32 {
            for half in 0..=steps {
                let sum = f64::from(steps - half) * (p - o) + f64::from(half) * (p / 2.0 - o);
                let mean = stage_time_s(p, steps, half).unwrap_or(p);
                assert!((f64::from(steps) * (mean - o) - sum).abs() < 1e-18);
            }
        }
    }

    #[test]
    fn keys_are_quoted_unless_bare() {
        // TOML 1.0 bare keys: A-Za-z0-9_- (toml.io, "Keys").
        assert_eq!(toml_key("clk_sys"), "clk_sys");
        assert_eq!(toml_key("u_pll.clk_out"), "\"u_pll.clk_out\"");
        assert_eq!(toml_key("a\"b"), "\"a\\\"b\"");
        assert_eq!(toml_key(""), "\"\"");
    }
}
