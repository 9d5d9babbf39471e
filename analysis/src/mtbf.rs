//! MTBF (mean time between failures) estimates for synchronizer chains.
//!
//! Model (DESIGN.md section 6), for one synchronized bit through an N-stage chain:
//!
//! ```text
//! MTBF = e^(t_r / τ) / (T_W · f_clk · f_data)
//! t_r  = (N − 1) · (T_stage − t_setup − t_clk→q − t_routing)
//! ```
//!
//! * `τ` (tau) is the flop's metastability resolution time constant and `T_W` its metastability
//!   window (also written T0); both are fitted constants for one process, voltage and
//!   temperature corner. The defaults here are **placeholders**, to be replaced by vendor data.
//! * `f_clk` is the destination clock frequency and `f_data` the number of source
//!   **transitions** per second (not clock cycles).
//! * `T_stage` is the time between the capturing edges of consecutive stages: one destination
//!   period, or half a period when a stage uses the other edge.
//!
//! Everything is computed as log10 of seconds, so figures of 10^(10^4) years neither overflow
//! nor print `inf`/`NaN`. The module is pure: no I/O, no panics on any input (invalid input is
//! an [`MtbfError`], not a crash).
//!
//! Caution: the figures are estimates from the published formula and the given parameters, not
//! silicon data. Defer to vendor characterization data and the team's sign-off flow
//! ([`CAUTION`] is the user-facing wording).

use std::f64::consts::LN_10;
use std::fmt;

/// Seconds per year used for every conversion: the Julian year (365.25 days), common practice.
pub const SECONDS_PER_YEAR: f64 = 31_557_600.0;

/// Highest stage count [`min_stages`] tries.
pub const DEFAULT_MAX_STAGES: u32 = 10;

/// Figures above this many years print as `"> 1e300 years"`.
const MAX_PRINTED_LOG10_YEARS: f64 = 300.0;

/// User-facing caution that goes beside every MTBF figure we print.
pub const CAUTION: &str = "MTBF figures are estimates from the published formula and the \
given parameters, not silicon data; defer to vendor characterization data and your sign-off flow.";

const PS: f64 = 1e-12;

/// Flop and design parameters of the model, as the `[mtbf]` table of seam.toml gives them.
///
/// The `Default` values are the DESIGN.md section 5 defaults. `tau_ps`, `window_ps`,
/// `setup_ps` and `clock_to_q_ps` are **placeholders**: replace them with the characterization
/// data of the flop your library uses as a synchronizer, at the corner you sign off.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MtbfParams {
    /// Resolution time constant τ in picoseconds (`tau_ps`). Placeholder default 25 ps.
    pub tau_ps: f64,
    /// Metastability window T_W (T0) in picoseconds (`window_ps`). Placeholder default 50 ps.
    pub window_ps: f64,
    /// Setup time of a stage flop in picoseconds (`setup_ps`). Placeholder default 50 ps.
    pub setup_ps: f64,
    /// Clock-to-Q delay of a stage flop in picoseconds (`clock_to_q_ps`). Placeholder default 100 ps.
    pub clock_to_q_ps: f64,
    /// Wire delay between stages in picoseconds (`routing_ps`). Default 0 ps.
    pub routing_ps: f64,
    /// Source transitions per source clock cycle (`data_rate`). Default 0.5.
    pub data_rate: f64,
    /// Transitions per second assumed for asynchronous inputs (`async_toggle`). Default 1 MHz.
    pub async_toggle_hz: f64,
    /// Required MTBF of the whole design (fleet of `units` devices), in years (`target_years`).
    /// Default 1000 years.
    pub target_years: f64,
    /// Devices in the field (`units`). Default 1.
    pub units: f64,
}

impl Default for MtbfParams {
    /// DESIGN.md section 5 defaults. The flop figures are placeholders, not vendor data.
    fn default() -> Self {
        MtbfParams {
            tau_ps: 25.0,
            window_ps: 50.0,
            setup_ps: 50.0,
            clock_to_q_ps: 100.0,
            routing_ps: 0.0,
            data_rate: 0.5,
            async_toggle_hz: 1e6,
            target_years: 1000.0,
            units: 1.0,
        }
    }
}

/// One synchronizer chain (or a W-bit crossing made of W such chains).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SyncInput {
    /// Chain length N (at least 1).
    pub stages: u32,
    /// Destination clock frequency f_clk in Hz.
    pub dest_clock_hz: f64,
    /// Source transitions per second f_data (0 = the signal never changes).
    pub f_data_hz: f64,
    /// Time between consecutive stages' capturing edges, in seconds. `None` = one full
    /// destination period; pass half a period when a stage uses the other edge.
    /// The solvers keep the ratio `stage_time_s · dest_clock_hz` fixed as they vary f_clk.
    pub stage_time_s: Option<f64>,
    /// Bits of the crossing (each bit has its own chain); at least 1.
    pub bits: u32,
}

/// MTBF of one synchronized bit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MtbfResult {
    /// A finite figure: log10 of the MTBF in seconds (always finite), and the resolution
    /// time t_r in seconds that went into it.
    Seconds { log10_s: f64, t_r_s: f64 },
    /// N ≥ 2 and T_stage − t_setup − t_clk→q − t_routing ≤ 0: the chain leaves no time to
    /// resolve; no figure is given.
    NoSettlingSlack,
    /// f_data = 0: the signal never changes, so it cannot fail.
    Infinite,
}

/// Invalid model input (a parameter out of range). Never a panic.
#[derive(Debug, Clone, PartialEq)]
pub struct MtbfError {
    /// The parameter, named as seam.toml names it where it has a key.
    pub what: &'static str,
    /// The value given.
    pub value: f64,
    /// What was expected.
    pub expected: &'static str,
}

impl fmt::Display for MtbfError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "invalid MTBF input {} = {}: expected {}",
            self.what, self.value, self.expected
        )
    }
}

impl std::error::Error for MtbfError {}

fn positive(what: &'static str, value: f64) -> Result<(), MtbfError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(MtbfError {
            what,
            value,
            expected: "a finite number greater than 0",
        })
    }
}

fn non_negative(what: &'static str, value: f64) -> Result<(), MtbfError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(MtbfError {
            what,
            value,
            expected: "a finite number, 0 or more",
        })
    }
}

fn finite(what: &'static str, value: f64) -> Result<(), MtbfError> {
    if value.is_finite() {
        Ok(())
    } else {
        Err(MtbfError {
            what,
            value,
            expected: "a finite number",
        })
    }
}

/// Map +inf to the largest finite value so that no caller ever sees inf.
fn clamp_finite(x: f64) -> f64 {
    if x == f64::INFINITY {
        f64::MAX
    } else if x == f64::NEG_INFINITY {
        f64::MIN
    } else {
        x
    }
}

impl MtbfParams {
    /// Check every parameter. Setup, clock-to-Q and routing may be negative (some flops have
    /// negative setup times) but must be finite; τ and T_W must be positive also once scaled
    /// to seconds.
    pub fn validate(&self) -> Result<(), MtbfError> {
        positive("tau_ps", self.tau_ps)?;
        positive("tau_ps", self.tau_ps * PS)?;
        positive("window_ps", self.window_ps)?;
        positive("window_ps", self.window_ps * PS)?;
        finite("setup_ps", self.setup_ps)?;
        finite("clock_to_q_ps", self.clock_to_q_ps)?;
        finite("routing_ps", self.routing_ps)?;
        finite("setup_ps + clock_to_q_ps + routing_ps", self.overhead_s())?;
        non_negative("data_rate", self.data_rate)?;
        non_negative("async_toggle", self.async_toggle_hz)?;
        positive("target_years", self.target_years)?;
        positive("units", self.units)?;
        Ok(())
    }

    /// t_setup + t_clk→q + t_routing, in seconds.
    pub fn overhead_s(&self) -> f64 {
        (self.setup_ps + self.clock_to_q_ps + self.routing_ps) * PS
    }

    /// log10 of the target in seconds (`target_years` · [`SECONDS_PER_YEAR`]).
    pub fn target_log10_seconds(&self) -> f64 {
        self.target_years.log10() + SECONDS_PER_YEAR.log10()
    }
}

impl From<&crate::config::MtbfConfig> for MtbfParams {
    /// The `[mtbf]` table of seam.toml as model parameters.
    fn from(m: &crate::config::MtbfConfig) -> Self {
        MtbfParams {
            tau_ps: m.tau_ps,
            window_ps: m.window_ps,
            setup_ps: m.setup_ps,
            clock_to_q_ps: m.clock_to_q_ps,
            routing_ps: m.routing_ps,
            data_rate: m.data_rate,
            async_toggle_hz: m.async_toggle_hz,
            target_years: m.target_years,
            units: m.units as f64,
        }
    }
}

impl SyncInput {
    /// Check the chain's inputs.
    pub fn validate(&self) -> Result<(), MtbfError> {
        if self.stages == 0 {
            return Err(MtbfError {
                what: "stages",
                value: 0.0,
                expected: "at least 1",
            });
        }
        if self.bits == 0 {
            return Err(MtbfError {
                what: "bits",
                value: 0.0,
                expected: "at least 1",
            });
        }
        positive("destination clock frequency (Hz)", self.dest_clock_hz)?;
        non_negative("transition rate f_data (Hz)", self.f_data_hz)?;
        if let Some(t) = self.stage_time_s {
            positive("stage time (s)", t)?;
        }
        Ok(())
    }

    /// T_stage in seconds: the given stage time, or one destination period.
    pub fn stage_time(&self) -> f64 {
        self.stage_time_s.unwrap_or(1.0 / self.dest_clock_hz)
    }
}

/// T_stage − t_setup − t_clk→q − t_routing, in seconds (may be ≤ 0).
pub fn settling_slack_s(params: &MtbfParams, input: &SyncInput) -> f64 {
    input.stage_time() - params.overhead_s()
}

/// Source transitions per second for a crossing, in DESIGN.md order of precedence: a
/// `[mtbf.toggle]` rate for the signal, else `data_rate` × the source clock frequency, else
/// (asynchronous source) `async_toggle`.
pub fn transition_rate_hz(
    params: &MtbfParams,
    toggle_hz: Option<f64>,
    source_clock_hz: Option<f64>,
) -> f64 {
    toggle_hz
        .or(source_clock_hz.map(|f| params.data_rate * f))
        .unwrap_or(params.async_toggle_hz)
}

/// MTBF of one bit through the chain `input` describes (`input.bits` is not applied here:
/// see [`crossing_log10_seconds`]).
///
/// log10 MTBF = t_r / (τ ln 10) − log10(T_W · f_clk · f_data). N = 1 gives t_r = 0 whatever the
/// slack. f_data = 0 gives [`MtbfResult::Infinite`]; for N ≥ 2, no positive slack gives
/// [`MtbfResult::NoSettlingSlack`].
pub fn synchronizer_mtbf(params: &MtbfParams, input: &SyncInput) -> Result<MtbfResult, MtbfError> {
    params.validate()?;
    input.validate()?;
    if input.f_data_hz == 0.0 {
        return Ok(MtbfResult::Infinite);
    }
    let t_r = if input.stages <= 1 {
        0.0
    } else {
        let slack = settling_slack_s(params, input);
        if slack.is_nan() || slack <= 0.0 {
            return Ok(MtbfResult::NoSettlingSlack);
        }
        clamp_finite(f64::from(input.stages - 1) * slack)
    };
    let tau_s = params.tau_ps * PS;
    let window_s = params.window_ps * PS;
    // Exponent term: t_r/τ in natural-log units, converted to decades. t_r ≥ 0 and τ > 0, so
    // this is ≥ 0 or +inf (clamped below); each log term is of a finite positive number.
    let decades = t_r / (tau_s * LN_10);
    let log10_s =
        decades - (window_s.log10() + input.dest_clock_hz.log10() + input.f_data_hz.log10());
    if log10_s.is_nan() {
        return Err(MtbfError {
            what: "MTBF",
            value: log10_s,
            expected: "a computable figure",
        });
    }
    Ok(MtbfResult::Seconds {
        log10_s: clamp_finite(log10_s),
        t_r_s: t_r,
    })
}

/// Design (fleet) MTBF: 1/MTBF_design = units · Σ W_i / MTBF_i, for items of
/// (log10 seconds per bit, bits W). Computed with log-sum-exp, so any spread of exponents is
/// exact to rounding and the result is finite.
///
/// Items with 0 bits or an infinite MTBF (`f64::INFINITY`) contribute nothing. Returns `None`
/// when nothing contributes (the design MTBF is unbounded), when `units` is not a finite
/// positive number, or when an item is NaN or −inf.
pub fn design_log10_seconds(items: &[(f64, u32)], units: f64) -> Option<f64> {
    if !(units.is_finite() && units > 0.0) {
        return None;
    }
    let mut terms: Vec<f64> = Vec::with_capacity(items.len());
    for &(log10_s, bits) in items {
        if bits == 0 || log10_s == f64::INFINITY {
            continue;
        }
        if log10_s.is_nan() || log10_s == f64::NEG_INFINITY {
            return None;
        }
        // log10 of this item's failure rate, W / MTBF.
        terms.push(f64::from(bits).log10() - log10_s);
    }
    let max = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if terms.is_empty() || !max.is_finite() {
        return None;
    }
    // Each 10^(x − max) is in (0, 1] and one of them is 1, so the sum is in [1, n].
    let sum: f64 = terms.iter().map(|x| 10f64.powf(x - max)).sum();
    let log10_rate = units.log10() + max + sum.log10();
    Some(clamp_finite(-log10_rate))
}

/// MTBF of a W-bit crossing across the fleet, as if it were the only crossing of the design:
/// MTBF_bit / (bits · units), in log10 seconds. `None` if `bits` is 0 or `units` invalid.
pub fn crossing_log10_seconds(per_bit_log10_s: f64, bits: u32, units: f64) -> Option<f64> {
    design_log10_seconds(&[(per_bit_log10_s, bits)], units)
}

/// Whether a figure (log10 seconds) meets `target_years`.
pub fn meets_target(log10_s: f64, params: &MtbfParams) -> bool {
    log10_s >= params.target_log10_seconds()
}

/// Does the crossing `input` (with its bits, and `params.units`) meet the target on its own?
/// `None` on invalid input.
fn crossing_meets_target(params: &MtbfParams, input: &SyncInput) -> Option<bool> {
    match synchronizer_mtbf(params, input).ok()? {
        MtbfResult::Infinite => Some(true),
        MtbfResult::NoSettlingSlack => Some(false),
        MtbfResult::Seconds { log10_s, .. } => {
            let crossing = crossing_log10_seconds(log10_s, input.bits, params.units)?;
            Some(meets_target(crossing, params))
        }
    }
}

/// Smallest chain length N (1 to [`DEFAULT_MAX_STAGES`]) with which the crossing meets
/// `target_years` on its own (bits and units included). `input.stages` is ignored. This is
/// the MTBF requirement only; `[synchronizers] min_stages` applies separately.
pub fn min_stages(params: &MtbfParams, input: &SyncInput) -> Option<u32> {
    min_stages_up_to(params, input, DEFAULT_MAX_STAGES)
}

/// [`min_stages`] with an explicit upper limit on N.
pub fn min_stages_up_to(params: &MtbfParams, input: &SyncInput, max_stages: u32) -> Option<u32> {
    (1..=max_stages).find(|&n| {
        let trial = SyncInput {
            stages: n,
            ..*input
        };
        crossing_meets_target(params, &trial) == Some(true)
    })
}

/// Highest destination clock frequency (Hz) at which the crossing, with `input.stages`
/// stages, meets `target_years` on its own (bits and units included). MTBF falls
/// monotonically as f_clk rises, so this bisects on ln f_clk between 1e-300 Hz and 1e300 Hz,
/// evaluating the model itself; the answer is the last frequency found to meet the target
/// (relative precision about 1e-14).
///
/// `input.dest_clock_hz` only fixes the ratio of a given `stage_time_s` to the period.
/// Returns `None` on invalid input, when even 1e-300 Hz misses the target, or when there is
/// no finite limit (for instance f_data = 0).
pub fn max_dest_frequency_hz(params: &MtbfParams, input: &SyncInput) -> Option<f64> {
    params.validate().ok()?;
    input.validate().ok()?;
    let fraction = match input.stage_time_s {
        None => None,
        Some(t) => {
            let k = t * input.dest_clock_hz;
            if !(k.is_finite() && k > 0.0) {
                return None;
            }
            Some(k)
        }
    };
    let meets = |ln_f: f64| -> bool {
        let f = ln_f.exp();
        if !(f.is_finite() && f > 0.0) {
            return false;
        }
        let trial = SyncInput {
            dest_clock_hz: f,
            stage_time_s: fraction.map(|k| k / f),
            ..*input
        };
        crossing_meets_target(params, &trial) == Some(true)
    };
    let mut lo = 1e-300f64.ln();
    let mut hi = 1e300f64.ln();
    if !meets(lo) || meets(hi) {
        return None;
    }
    for _ in 0..400 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if meets(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let f = lo.exp();
    if f.is_finite() && f > 0.0 {
        Some(f)
    } else {
        None
    }
}

/// A figure in log10 seconds as years, scientific notation with 3 significant digits:
/// `"3.17e+04 years"`. Above 1e300 years: `"> 1e300 years"`; below 1e-300 years:
/// `"< 1e-300 years"`; NaN: `"unknown"`. Never prints `inf` or `NaN`.
pub fn format_years(log10_seconds: f64) -> String {
    if log10_seconds.is_nan() {
        return "unknown".to_string();
    }
    let log10_years = log10_seconds - SECONDS_PER_YEAR.log10();
    if log10_years > MAX_PRINTED_LOG10_YEARS {
        return "> 1e300 years".to_string();
    }
    if log10_years < -MAX_PRINTED_LOG10_YEARS {
        return "< 1e-300 years".to_string();
    }
    let years = 10f64.powf(log10_years);
    format!("{} years", scientific3(years))
}

/// `x` (finite, positive) as `d.dde±XX`.
fn scientific3(x: f64) -> String {
    let rust = format!("{:.2e}", x); // e.g. "3.17e4", "1.23e-3"; rounding carries into the exponent
    match rust.split_once('e') {
        Some((mantissa, exp)) => match exp.parse::<i32>() {
            Ok(e) => format!(
                "{}e{}{:02}",
                mantissa,
                if e < 0 { '-' } else { '+' },
                e.unsigned_abs()
            ),
            Err(_) => rust,
        },
        None => rust,
    }
}

/// A result as text: years, `"no settling slack"`, or `"unbounded (the signal never changes)"`.
pub fn format_result(result: &MtbfResult) -> String {
    match result {
        MtbfResult::Seconds { log10_s, .. } => format_years(*log10_s),
        MtbfResult::NoSettlingSlack => "no settling slack".to_string(),
        MtbfResult::Infinite => "unbounded (the signal never changes)".to_string(),
    }
}

/// `value` (seconds or hertz) with an SI prefix and up to 4 significant digits, e.g.
/// `"61.44 MHz"`, `"9.85 ns"`, `"0 ps"`.
fn format_si(value: f64, unit: &str) -> String {
    if !value.is_finite() {
        return "unknown".to_string();
    }
    if value == 0.0 {
        return format!("0 {unit}");
    }
    const PREFIXES: [(f64, &str); 9] = [
        (1e12, "T"),
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "u"),
        (1e-9, "n"),
        (1e-12, "p"),
    ];
    let magnitude = value.abs();
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        .find(|(scale, _)| magnitude >= *scale * 0.999_999_5)
        .unwrap_or((1e-15, "f"));
    let scaled = value / scale;
    if scaled.abs() >= 1e6 || scaled.abs() < 1e-3 {
        return format!("{} {unit}", scientific3(value).replace('+', ""));
    }
    let decimals = (3 - scaled.abs().log10().floor() as i32).clamp(0, 6) as usize;
    let mut text = format!("{:.*}", decimals, scaled);
    if text.contains('.') {
        while text.ends_with('0') {
            text.pop();
        }
        if text.ends_with('.') {
            text.pop();
        }
    }
    format!("{text} {prefix}{unit}")
}

/// A frequency for display: `"100 MHz"`, `"61.44 MHz"` (one formatter for the whole crate:
/// [`crate::config::format_frequency`]).
pub fn format_frequency(hz: f64) -> String {
    crate::config::format_frequency(hz)
}

/// A computed frequency (a solver's answer) for display, rounded down to 4 significant
/// digits so that the printed value still meets the target: `"976.3 MHz"`.
pub fn format_frequency_limit(hz: f64) -> String {
    if !(hz.is_finite() && hz > 0.0) {
        return format_frequency(hz);
    }
    let scale = 10f64.powi(3 - hz.log10().floor() as i32);
    let rounded = (hz * scale).floor() / scale;
    format_frequency(if rounded > 0.0 { rounded } else { hz })
}

/// A time for display: `"8 ns"`, `"9.85 ns"`.
pub fn format_time(seconds: f64) -> String {
    format_si(seconds, "s")
}

/// A user-facing sentence with the figure and every input beside it, plus the caution (and a
/// reminder when τ and T_W are still the placeholder defaults).
pub fn describe(params: &MtbfParams, input: &SyncInput) -> String {
    let result = match synchronizer_mtbf(params, input) {
        Ok(result) => result,
        Err(e) => return format!("MTBF not computed: {e}. {CAUTION}"),
    };
    let mut text = format!("MTBF per bit: {}", format_result(&result));
    let mut inputs: Vec<String> = Vec::new();
    if let MtbfResult::Seconds { log10_s, t_r_s } = result {
        if input.bits > 1 || params.units != 1.0 {
            if let Some(c) = crossing_log10_seconds(log10_s, input.bits, params.units) {
                let devices = if params.units != 1.0 {
                    format!(" across {} devices", params.units)
                } else {
                    String::new()
                };
                text.push_str(&format!(
                    "; for {} bit{}{devices}: {}",
                    input.bits,
                    if input.bits == 1 { "" } else { "s" },
                    format_years(c)
                ));
            }
        }
        inputs.push(format!("t_r = {}", format_time(t_r_s)));
    }
    inputs.push(format!("N = {}", input.stages));
    inputs.push(format!("f_clk = {}", format_frequency(input.dest_clock_hz)));
    inputs.push(format!(
        "f_data = {} (transitions per second)",
        format_frequency(input.f_data_hz)
    ));
    inputs.push(format!("T_stage = {}", format_time(input.stage_time())));
    inputs.push(format!("τ = {} ps", params.tau_ps));
    inputs.push(format!("T_W = {} ps", params.window_ps));
    inputs.push(format!("t_setup = {} ps", params.setup_ps));
    inputs.push(format!("t_clk→q = {} ps", params.clock_to_q_ps));
    inputs.push(format!("t_routing = {} ps", params.routing_ps));
    inputs.push(format!("target {} years", params.target_years));
    let defaults = MtbfParams::default();
    let placeholder = if params.tau_ps == defaults.tau_ps && params.window_ps == defaults.window_ps
    {
        " τ and T_W are placeholder defaults: set [mtbf] tau_ps and window_ps from vendor data."
    } else {
        ""
    };
    format!("{text} ({}). {CAUTION}{placeholder}", inputs.join(", "))
}

/// Parse a frequency or a period into Hz. There is one parser for the whole crate, the one
/// seam.toml uses: [`crate::config::parse_frequency`].
pub fn parse_frequency(s: &str) -> Result<f64, String> {
    crate::config::parse_frequency(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A total order on results for the monotonicity properties:
    /// NoSettlingSlack < Seconds(l) (by l) < Infinite.
    fn rank(r: &MtbfResult) -> (u8, f64) {
        match r {
            MtbfResult::NoSettlingSlack => (0, 0.0),
            MtbfResult::Seconds { log10_s, .. } => (1, *log10_s),
            MtbfResult::Infinite => (2, 0.0),
        }
    }

    fn not_lower(a: &MtbfResult, b: &MtbfResult) -> bool {
        // is b >= a ?
        let (ka, la) = rank(a);
        let (kb, lb) = rank(b);
        kb > ka || (kb == ka && lb >= la - 1e-12 * la.abs().max(1.0))
    }

    fn input(stages: u32, f_clk: f64, f_data: f64) -> SyncInput {
        SyncInput {
            stages,
            dest_clock_hz: f_clk,
            f_data_hz: f_data,
            stage_time_s: None,
            bits: 1,
        }
    }

    /// Deterministic pseudo-random numbers for property-style loops (64-bit LCG constants
    /// from Knuth, MMIX; from memory).
    struct Lcg(u64);
    impl Lcg {
        fn next_unit(&mut self) -> f64 {
            self.0 = self
                .0
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 53) as f64
        }
        /// Log-uniform in [lo, hi].
        fn log_uniform(&mut self, lo: f64, hi: f64) -> f64 {
            (lo.ln() + (hi.ln() - lo.ln()) * self.next_unit()).exp()
        }
    }

    #[test]
    fn defaults_are_design_section_5() {
        // Values from /work/shared/DESIGN.md section 5 ([mtbf] table).
        let p = MtbfParams::default();
        assert_eq!(p.tau_ps, 25.0);
        assert_eq!(p.window_ps, 50.0);
        assert_eq!(p.setup_ps, 50.0);
        assert_eq!(p.clock_to_q_ps, 100.0);
        assert_eq!(p.routing_ps, 0.0);
        assert_eq!(p.data_rate, 0.5);
        assert_eq!(p.async_toggle_hz, 1e6);
        assert_eq!(p.target_years, 1000.0);
        assert_eq!(p.units, 1.0);
        assert!(p.validate().is_ok());
    }

    #[test]
    fn matches_direct_formula_for_moderate_values() {
        // The section 6 formula evaluated directly in f64 (no logs), where it does not overflow.
        let mut rng = Lcg(7);
        for _ in 0..500 {
            let p = MtbfParams {
                tau_ps: rng.log_uniform(5.0, 300.0),
                window_ps: rng.log_uniform(5.0, 300.0),
                setup_ps: rng.log_uniform(1.0, 200.0),
                clock_to_q_ps: rng.log_uniform(1.0, 200.0),
                routing_ps: rng.log_uniform(0.1, 100.0),
                ..MtbfParams::default()
            };
            let stages = 2 + (rng.next_unit() * 3.0) as u32;
            let f_clk = rng.log_uniform(1e6, 2e9);
            let f_data = rng.log_uniform(1e-2, 1e8);
            let s = input(stages, f_clk, f_data);
            let slack = 1.0 / f_clk - (p.setup_ps + p.clock_to_q_ps + p.routing_ps) * 1e-12;
            let r = synchronizer_mtbf(&p, &s).unwrap();
            if slack <= 0.0 {
                assert_eq!(r, MtbfResult::NoSettlingSlack);
                continue;
            }
            let t_r = f64::from(stages - 1) * slack;
            let exponent = t_r / (p.tau_ps * 1e-12);
            if exponent > 600.0 {
                continue; // direct form would overflow
            }
            let direct = exponent.exp() / (p.window_ps * 1e-12 * f_clk * f_data);
            match r {
                MtbfResult::Seconds { log10_s, t_r_s } => {
                    assert!((t_r_s - t_r).abs() <= 1e-12 * t_r, "t_r {t_r_s} vs {t_r}");
                    assert!(
                        (log10_s - direct.log10()).abs() < 1e-9,
                        "{log10_s} vs {}",
                        direct.log10()
                    );
                }
                other => panic!("expected a figure, got {other:?}"),
            }
        }
    }

    #[test]
    fn one_stage_has_no_resolution_time() {
        // N = 1 → t_r = 0, so MTBF = 1/(T_W f_clk f_data) even when the period is shorter than
        // setup + clk->q (DESIGN.md section 6 and the task brief).
        let p = MtbfParams::default();
        let s = input(1, 10e9, 1e6); // 100 ps period < 150 ps overhead
        let r = synchronizer_mtbf(&p, &s).unwrap();
        let expected = -(50e-12f64 * 10e9 * 1e6).log10();
        match r {
            MtbfResult::Seconds { log10_s, t_r_s } => {
                assert_eq!(t_r_s, 0.0);
                assert!((log10_s - expected).abs() < 1e-12);
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn no_slack_is_reported_not_computed() {
        let p = MtbfParams::default(); // overhead 150 ps
                                       // Period exactly 150 ps: slack 0 → no settling slack (≤ 0, DESIGN.md section 6).
        let at_zero = SyncInput {
            stage_time_s: Some(p.overhead_s()),
            ..input(2, 1e9, 1e6)
        };
        assert_eq!(
            synchronizer_mtbf(&p, &at_zero).unwrap(),
            MtbfResult::NoSettlingSlack
        );
        // 5 GHz → 200 ps period, but a half-period stage (other edge) gives 100 ps < 150 ps.
        let half = SyncInput {
            stage_time_s: Some(0.5 / 5e9),
            ..input(3, 5e9, 1e6)
        };
        assert_eq!(
            synchronizer_mtbf(&p, &half).unwrap(),
            MtbfResult::NoSettlingSlack
        );
        // Full period 200 ps leaves 50 ps.
        assert!(matches!(
            synchronizer_mtbf(&p, &input(3, 5e9, 1e6)).unwrap(),
            MtbfResult::Seconds { .. }
        ));
        // Any stage count ≥ 2 stays without slack.
        for n in 2..20 {
            assert_eq!(
                synchronizer_mtbf(&p, &input(n, 10e9, 1e3)).unwrap(),
                MtbfResult::NoSettlingSlack
            );
        }
    }

    #[test]
    fn zero_transitions_is_infinite() {
        let p = MtbfParams::default();
        assert_eq!(
            synchronizer_mtbf(&p, &input(2, 1e8, 0.0)).unwrap(),
            MtbfResult::Infinite
        );
        assert_eq!(
            synchronizer_mtbf(&p, &input(1, 1e8, 0.0)).unwrap(),
            MtbfResult::Infinite
        );
        assert_eq!(max_dest_frequency_hz(&p, &input(2, 1e8, 0.0)), None);
        assert_eq!(min_stages(&p, &input(2, 1e8, 0.0)), Some(1));
    }

    #[test]
    fn invalid_inputs_are_errors_not_panics() {
        let good = MtbfParams::default();
        let bad_params = [
            MtbfParams {
                tau_ps: 0.0,
                ..good
            },
            MtbfParams {
                tau_ps: -1.0,
                ..good
            },
            MtbfParams {
                tau_ps: f64::NAN,
                ..good
            },
            MtbfParams {
                tau_ps: 1e-320,
                ..good
            }, // underflows to 0 s
            MtbfParams {
                window_ps: f64::INFINITY,
                ..good
            },
            MtbfParams {
                setup_ps: f64::NAN,
                ..good
            },
            MtbfParams {
                clock_to_q_ps: f64::NEG_INFINITY,
                ..good
            },
            MtbfParams {
                routing_ps: f64::MAX,
                clock_to_q_ps: f64::MAX,
                ..good
            },
            MtbfParams {
                data_rate: -0.5,
                ..good
            },
            MtbfParams {
                async_toggle_hz: f64::NAN,
                ..good
            },
            MtbfParams {
                target_years: 0.0,
                ..good
            },
            MtbfParams { units: 0.0, ..good },
        ];
        let s = input(2, 1e8, 1e6);
        for p in bad_params {
            let e = synchronizer_mtbf(&p, &s).unwrap_err();
            assert!(!e.to_string().is_empty());
            assert_eq!(max_dest_frequency_hz(&p, &s), None);
            assert_eq!(min_stages(&p, &s), None);
            let text = describe(&p, &s);
            assert!(
                text.contains("not computed") && text.contains("not silicon data"),
                "{text}"
            );
        }
        let bad_inputs = [
            input(0, 1e8, 1e6),
            input(2, 0.0, 1e6),
            input(2, -1e8, 1e6),
            input(2, f64::NAN, 1e6),
            input(2, f64::INFINITY, 1e6),
            input(2, 1e8, -1.0),
            input(2, 1e8, f64::NAN),
            SyncInput {
                stage_time_s: Some(0.0),
                ..s
            },
            SyncInput {
                stage_time_s: Some(f64::NAN),
                ..s
            },
            SyncInput { bits: 0, ..s },
        ];
        for bad in bad_inputs {
            assert!(synchronizer_mtbf(&good, &bad).is_err(), "{bad:?}");
            assert_eq!(max_dest_frequency_hz(&good, &bad), None);
            if bad.stages != 0 {
                // min_stages ignores the given stage count, so only the other fields matter.
                assert_eq!(min_stages(&good, &bad), None);
            }
        }
        // Negative setup time is legal for real flops; must be accepted.
        let neg = MtbfParams {
            setup_ps: -20.0,
            ..good
        };
        assert!(synchronizer_mtbf(&neg, &s).is_ok());
    }

    #[test]
    fn huge_exponents_stay_finite_and_print_bounded() {
        let p = MtbfParams {
            tau_ps: 1e-6,
            ..MtbfParams::default()
        };
        // 1 Hz clock, 1e6 stages: t_r ≈ 1e6 s, t_r/τ ≈ 1e24 decades.
        let s = input(1_000_000, 1.0, 1.0);
        match synchronizer_mtbf(&p, &s).unwrap() {
            MtbfResult::Seconds { log10_s, .. } => {
                assert!(log10_s.is_finite());
                assert!(log10_s > 1e20);
                assert_eq!(format_years(log10_s), "> 1e300 years");
            }
            other => panic!("{other:?}"),
        }
        // Overflowing the exponent itself clamps instead of giving inf.
        let p2 = MtbfParams {
            tau_ps: 1e-290,
            ..MtbfParams::default()
        };
        let s2 = SyncInput {
            stage_time_s: Some(1e300),
            ..input(u32::MAX, 1.0, 1.0)
        };
        match synchronizer_mtbf(&p2, &s2).unwrap() {
            MtbfResult::Seconds { log10_s, t_r_s } => {
                assert!(log10_s.is_finite() && t_r_s.is_finite());
                assert_eq!(format_years(log10_s), "> 1e300 years");
            }
            other => panic!("{other:?}"),
        }
        let text = describe(&p2, &s2);
        assert!(!text.contains("inf") && !text.contains("NaN"), "{text}");
    }

    #[test]
    fn format_years_three_significant_digits() {
        let y = SECONDS_PER_YEAR.log10();
        // Hand-computed expectations (mantissa/exponent of the year figure).
        assert_eq!(format_years(31_700f64.log10() + y), "3.17e+04 years");
        assert_eq!(format_years(1.0f64.log10() + y), "1.00e+00 years");
        assert_eq!(format_years(0.001_234f64.log10() + y), "1.23e-03 years");
        assert_eq!(format_years(99_960f64.log10() + y), "1.00e+05 years"); // rounding carries
        assert_eq!(format_years(1.0e123f64.log10() + y), "1.00e+123 years");
        assert_eq!(format_years(250.0 + y), "1.00e+250 years");
        assert_eq!(format_years(300.5 + y), "> 1e300 years");
        assert_eq!(format_years(f64::MAX), "> 1e300 years");
        assert_eq!(format_years(f64::INFINITY), "> 1e300 years");
        assert_eq!(format_years(-400.0), "< 1e-300 years");
        assert_eq!(format_years(f64::NEG_INFINITY), "< 1e-300 years");
        assert_eq!(format_years(f64::NAN), "unknown");
        // Sweep: never inf/NaN, always the d.dde±XX shape or a bound.
        let mut l = -1000.0;
        while l < 1000.0 {
            let t = format_years(l);
            assert!(!t.contains("inf") && !t.contains("NaN"), "{l}: {t}");
            if !t.starts_with('<') && !t.starts_with('>') {
                let num = t.trim_end_matches(" years");
                let (m, e) = num.split_once('e').expect("scientific");
                assert_eq!(m.len(), 4, "{t}");
                assert!(e.starts_with('+') || e.starts_with('-'), "{t}");
                let back: f64 = num.parse().unwrap();
                let ly = l - y;
                assert!((back.log10() - ly).abs() < 0.003, "{l}: {t}");
            }
            l += 0.37;
        }
    }

    #[test]
    fn format_result_texts() {
        assert_eq!(
            format_result(&MtbfResult::NoSettlingSlack),
            "no settling slack"
        );
        assert!(format_result(&MtbfResult::Infinite).contains("never changes"));
        let l = 2.0 + SECONDS_PER_YEAR.log10();
        assert_eq!(
            format_result(&MtbfResult::Seconds {
                log10_s: l,
                t_r_s: 0.0
            }),
            "1.00e+02 years"
        );
    }

    #[test]
    fn parse_frequencies_and_periods() {
        // Unit definitions: SI prefixes (common practice).
        let cases: [(&str, f64); 16] = [
            ("100 MHz", 100e6),
            ("61.44MHz", 61.44e6),
            ("1 kHz", 1e3),
            ("10 Hz", 10.0),
            ("2 GHz", 2e9),
            ("8 ns", 125e6),
            ("10ps", 1e11),
            ("1 us", 1e6),
            ("1 µs", 1e6),
            ("1 ms", 1e3),
            ("1 s", 1.0),
            ("  50 MHz  ", 50e6),
            ("1e6 Hz", 1e6),
            ("2.5E-3 s", 400.0),
            ("0.5 kHz", 500.0),
            ("3 KHz", 3e3),
        ];
        for (text, hz) in cases {
            let got = parse_frequency(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!((got - hz).abs() <= 1e-12 * hz, "{text}: {got} vs {hz}");
        }
    }

    #[test]
    fn parse_frequency_errors_are_clear() {
        // One parser for seam.toml and the model (config::parse_frequency): every error names
        // the text it refused.
        let cases: [(&str, &str); 12] = [
            ("", "bad frequency"),
            ("   ", "bad frequency"),
            ("MHz", "expected e.g."),
            ("100", "expected e.g."),
            ("-5 MHz", "greater than zero"),
            ("0 Hz", "greater than zero"),
            ("0 ns", "greater than zero"),
            ("100 mHz", "millihertz"),
            ("5 furlongs", "unknown unit"),
            ("1.2.3 MHz", "expected e.g."),
            ("NaN Hz", "expected e.g."),
            ("1e400 Hz", "greater than zero"),
        ];
        for (text, needle) in cases {
            let e = parse_frequency(text).expect_err(text);
            assert!(e.contains(needle), "{text:?}: {e}");
            assert_eq!(Err(e), crate::config::parse_frequency(text));
        }
        // Out of range after scaling: 1e-300 fs → 1e315 Hz.
        assert!(parse_frequency("1e-300 fs").is_err());
        // Odd bytes and multibyte text never panic.
        for text in [
            "1 é", "é", "1\u{0}Hz", "1e", "1e+", ".", "..e5 Hz", "1 MHzz", "inf Hz",
        ] {
            assert!(parse_frequency(text).is_err(), "{text:?}");
        }
    }

    #[test]
    fn more_stages_never_lower_mtbf() {
        let mut rng = Lcg(11);
        for _ in 0..300 {
            let p = MtbfParams {
                tau_ps: rng.log_uniform(1.0, 500.0),
                setup_ps: rng.log_uniform(1.0, 500.0),
                ..MtbfParams::default()
            };
            let f_clk = rng.log_uniform(1e5, 1e10);
            let f_data = rng.log_uniform(1e-3, 1e9);
            let mut prev = synchronizer_mtbf(&p, &input(1, f_clk, f_data)).unwrap();
            for n in 2..12 {
                let r = synchronizer_mtbf(&p, &input(n, f_clk, f_data)).unwrap();
                // From N ≥ 2 on, more stages must not lower it.
                if n > 2 {
                    assert!(not_lower(&prev, &r), "N={n}: {prev:?} -> {r:?}");
                }
                prev = r;
            }
        }
    }

    #[test]
    fn slower_destination_or_fewer_transitions_never_lower_mtbf() {
        let mut rng = Lcg(13);
        for _ in 0..300 {
            let p = MtbfParams {
                tau_ps: rng.log_uniform(1.0, 500.0),
                clock_to_q_ps: rng.log_uniform(1.0, 500.0),
                ..MtbfParams::default()
            };
            let n = 1 + (rng.next_unit() * 5.0) as u32;
            let f_data = rng.log_uniform(1e-3, 1e9);
            let mut f_clk = 2e10;
            let mut prev = synchronizer_mtbf(&p, &input(n, f_clk, f_data)).unwrap();
            while f_clk > 1e3 {
                f_clk /= 1.7;
                let r = synchronizer_mtbf(&p, &input(n, f_clk, f_data)).unwrap();
                assert!(not_lower(&prev, &r), "f_clk={f_clk}: {prev:?} -> {r:?}");
                prev = r;
            }
            let f_clk = rng.log_uniform(1e5, 1e10);
            let mut rate = 1e10;
            let mut prev = synchronizer_mtbf(&p, &input(n, f_clk, rate)).unwrap();
            while rate > 1e-6 {
                rate /= 3.1;
                let r = synchronizer_mtbf(&p, &input(n, f_clk, rate)).unwrap();
                assert!(not_lower(&prev, &r), "f_data={rate}: {prev:?} -> {r:?}");
                prev = r;
            }
            let r0 = synchronizer_mtbf(&p, &input(n, f_clk, 0.0)).unwrap();
            assert!(not_lower(&prev, &r0));
        }
    }

    #[test]
    fn design_total_log_sum_exp() {
        // Single item with W bits: MTBF/W (definition, DESIGN.md section 6).
        let one = design_log10_seconds(&[(10.0, 4)], 1.0).unwrap();
        assert!((one - (10.0 - 4f64.log10())).abs() < 1e-12);
        // Two equal items halve it; units divide it.
        let two = design_log10_seconds(&[(10.0, 1), (10.0, 1)], 1.0).unwrap();
        assert!((two - (10.0 - 2f64.log10())).abs() < 1e-12);
        let fleet = design_log10_seconds(&[(10.0, 1)], 1e6).unwrap();
        assert!((fleet - 4.0).abs() < 1e-12);
        // Direct 1/Σ for moderate values.
        let items = [(3.0, 1), (5.5, 8), (4.2, 2), (7.0, 32)];
        let direct = 1.0
            / (3.0
                * items
                    .iter()
                    .map(|&(l, w)| f64::from(w) / 10f64.powf(l))
                    .sum::<f64>());
        let got = design_log10_seconds(&items, 3.0).unwrap();
        assert!(
            (got - direct.log10()).abs() < 1e-12,
            "{got} vs {}",
            direct.log10()
        );
        // Huge spread: the weak item dominates, nothing overflows.
        let spread =
            design_log10_seconds(&[(-300.0, 1), (1e300, 1), (f64::MAX, 1000)], 1.0).unwrap();
        assert!((spread + 300.0).abs() < 1e-9);
        let all_huge = design_log10_seconds(&[(f64::MAX, 1), (f64::MAX, 1)], 1e300).unwrap();
        assert!(all_huge.is_finite());
        let all_tiny = design_log10_seconds(&[(f64::MIN, u32::MAX)], 1e300).unwrap();
        assert!(all_tiny.is_finite());
        // Nothing to add up, or bad input.
        assert_eq!(design_log10_seconds(&[], 1.0), None);
        assert_eq!(design_log10_seconds(&[(5.0, 0)], 1.0), None);
        assert_eq!(design_log10_seconds(&[(f64::INFINITY, 3)], 1.0), None);
        assert_eq!(design_log10_seconds(&[(5.0, 1), (f64::NAN, 1)], 1.0), None);
        assert_eq!(design_log10_seconds(&[(5.0, 1)], 0.0), None);
        assert_eq!(design_log10_seconds(&[(5.0, 1)], f64::NAN), None);
        // Infinite items are ignored, not poisoning the sum.
        let mixed = design_log10_seconds(&[(6.0, 1), (f64::INFINITY, 1)], 1.0).unwrap();
        assert!((mixed - 6.0).abs() < 1e-12);
        // The total never exceeds its weakest member.
        let mut rng = Lcg(17);
        for _ in 0..200 {
            let items: Vec<(f64, u32)> = (0..8)
                .map(|_| {
                    (
                        rng.next_unit() * 400.0 - 100.0,
                        1 + (rng.next_unit() * 64.0) as u32,
                    )
                })
                .collect();
            let total = design_log10_seconds(&items, 1.0).unwrap();
            for &(l, w) in &items {
                assert!(total <= crossing_log10_seconds(l, w, 1.0).unwrap() + 1e-9);
            }
        }
    }

    #[test]
    fn min_stages_is_minimal() {
        let p = MtbfParams::default();
        let mut rng = Lcg(19);
        for _ in 0..200 {
            let s = SyncInput {
                bits: 1 + (rng.next_unit() * 32.0) as u32,
                ..input(2, rng.log_uniform(1e7, 3e9), rng.log_uniform(1.0, 1e9))
            };
            let meets = |n: u32| {
                let t = SyncInput { stages: n, ..s };
                match synchronizer_mtbf(&p, &t).unwrap() {
                    MtbfResult::Seconds { log10_s, .. } => meets_target(
                        crossing_log10_seconds(log10_s, t.bits, p.units).unwrap(),
                        &p,
                    ),
                    MtbfResult::Infinite => true,
                    MtbfResult::NoSettlingSlack => false,
                }
            };
            match min_stages(&p, &s) {
                Some(n) => {
                    assert!(meets(n));
                    assert!((1..n).all(|m| !meets(m)));
                }
                None => assert!((1..=DEFAULT_MAX_STAGES).all(|m| !meets(m))),
            }
        }
        // No slack at 10 GHz with 150 ps overhead: no stage count helps.
        assert_eq!(min_stages(&p, &input(2, 10e9, 1e6)), None);
    }

    #[test]
    fn max_frequency_is_the_boundary() {
        let mut rng = Lcg(23);
        for i in 0..200 {
            let p = MtbfParams {
                tau_ps: rng.log_uniform(5.0, 200.0),
                target_years: rng.log_uniform(1e-3, 1e6),
                units: rng.log_uniform(1.0, 1e6),
                ..MtbfParams::default()
            };
            let half = i % 3 == 0;
            let f0 = 1e8;
            let fraction = 0.5 / f0 * f0; // the ratio the solver keeps fixed
            let s = SyncInput {
                stage_time_s: if half { Some(0.5 / f0) } else { None },
                bits: 1 + (rng.next_unit() * 16.0) as u32,
                ..input(
                    2 + (rng.next_unit() * 3.0) as u32,
                    f0,
                    rng.log_uniform(1.0, 1e8),
                )
            };
            let at = |f: f64| {
                let t = SyncInput {
                    dest_clock_hz: f,
                    stage_time_s: s.stage_time_s.map(|_| fraction / f),
                    ..s
                };
                match synchronizer_mtbf(&p, &t).unwrap() {
                    MtbfResult::Seconds { log10_s, .. } => meets_target(
                        crossing_log10_seconds(log10_s, t.bits, p.units).unwrap(),
                        &p,
                    ),
                    MtbfResult::Infinite => true,
                    MtbfResult::NoSettlingSlack => false,
                }
            };
            let f = max_dest_frequency_hz(&p, &s).expect("a limit exists");
            assert!(at(f), "{p:?} {s:?} f={f}");
            assert!(!at(f * (1.0 + 1e-9)), "{p:?} {s:?} f={f}");
            // Half-period stages can only lower the limit.
            if half {
                let full = max_dest_frequency_hz(
                    &p,
                    &SyncInput {
                        stage_time_s: None,
                        ..s
                    },
                )
                .unwrap();
                assert!(f <= full * (1.0 + 1e-12));
            }
        }
    }

    #[test]
    fn target_uses_the_julian_year() {
        // Julian year = 365.25 days × 86 400 s = 31 557 600 s (IAU definition; from memory).
        let p = MtbfParams::default(); // 1000 years
        let target_s: f64 = 1000.0 * 365.25 * 86_400.0;
        assert!(meets_target((target_s * 1.000_001).log10(), &p));
        assert!(!meets_target((target_s * 0.999_999).log10(), &p));
        let y = (365.25f64 * 86_400.0).log10();
        assert_eq!(format_years(y), "1.00e+00 years");
    }

    #[test]
    fn transition_rate_precedence() {
        // Precedence from DESIGN.md section 6: toggle, then data_rate × f_source, then async_toggle.
        let p = MtbfParams::default();
        assert_eq!(transition_rate_hz(&p, Some(10.0), Some(1e8)), 10.0);
        assert_eq!(transition_rate_hz(&p, None, Some(1e8)), 0.5e8);
        assert_eq!(transition_rate_hz(&p, None, None), 1e6);
    }

    #[test]
    fn describe_shows_inputs_and_caution() {
        let p = MtbfParams::default();
        let s = SyncInput {
            bits: 4,
            ..input(2, 100e6, 1e6)
        };
        let text = describe(&p, &s);
        for needle in [
            "MTBF per bit",
            "N = 2",
            "f_clk = 100 MHz",
            "τ = 25 ps",
            "not silicon data",
            "placeholder",
            "4 bits",
        ] {
            assert!(text.contains(needle), "{needle}: {text}");
        }
        let slack = describe(&p, &input(2, 10e9, 1e6));
        assert!(slack.contains("no settling slack"), "{slack}");
        assert_eq!(format_frequency(61.44e6), "61.44 MHz");
        // rounded down to 4 significant digits (never above the solver's limit)
        assert_eq!(format_frequency_limit(976_303_252.0), "976.3 MHz");
        assert_eq!(format_frequency_limit(1_572_560_000.0), "1.572 GHz");
        assert_eq!(format_frequency_limit(99_999.0), "99.99 kHz");
        assert_eq!(format_frequency_limit(f64::INFINITY), "unknown");
        assert_eq!(format_time(8e-9), "8 ns");
        assert_eq!(format_time(0.0), "0 s");
    }
}
