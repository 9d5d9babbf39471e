//! What one analysis run reports: findings plus the clock, register and crossing tables that
//! the CLI (`seam domains`, the HTML report) and the server (hover, inlay hints, code lens)
//! read. Plain data, serializable.

use serde::{Deserialize, Serialize};

use crate::finding::Finding;
use crate::model::{Edge, Span};

#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct Analysis {
    pub findings: Vec<Finding>,
    pub clocks: Vec<ClockInfo>,
    /// Every register (flop or latch) per instance.
    pub registers: Vec<RegisterInfo>,
    /// Every signal per instance that hover can describe (registers, nets, ports).
    pub signals: Vec<SignalInfo>,
    /// Every domain crossing found, safe or not.
    pub crossings: Vec<Crossing>,
    /// MTBF estimates of every synchronizer and of the design (`cdc::mtbf_table`).
    #[serde(default)]
    pub mtbf: MtbfReport,
    pub files: usize,
    pub modules: usize,
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct ClockInfo {
    /// The root clock's name (its seam.toml key or top-level port name).
    pub name: String,
    pub frequency_hz: Option<f64>,
    pub group: Option<String>,
    /// Hierarchical path of the root (a top port, a cell output, a black-box output).
    pub root: String,
    /// Domain name: the group if any, else the clock name.
    pub domain: String,
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct RegisterInfo {
    /// Hierarchical instance path, e.g. `tg_top.u_log`.
    pub instance: String,
    pub module: String,
    pub signal: String,
    pub span: Span,
    /// Root clock name; `None` when the clock could not be traced.
    pub clock: Option<String>,
    pub edge: Edge,
    pub domain: Option<String>,
    /// Set when the register is clocked by a flop-derived clock (the divider register).
    pub derived_from: Option<String>,
    /// Description of the async reset source, when the flop has one.
    pub reset: Option<String>,
    /// Synchronizer stage `(k, n, source domain)` when the register is a stage.
    pub stage: Option<(u32, u32, String)>,
    /// Where the async reset comes from, structured (the reset tree of this instance).
    #[serde(default)]
    pub reset_source: Option<ResetSource>,
}

/// The reset tree of one register's asynchronous reset (or set), per instance.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct ResetSource {
    /// The control as the process names it (`rst_n`).
    pub signal: String,
    pub active_high: bool,
    /// Logic other than inverters sits between the leaves and the flop.
    pub through_logic: bool,
    /// Where the tree ends: inputs, registers, reset synchronizers, undriven nets.
    pub leaves: Vec<ResetLeafInfo>,
    /// Every leaf is released in step with the register's own clock.
    pub synchronized: bool,
    /// The register is itself a stage of a reset synchronizer (its raw reset is intended).
    pub synchronizer_stage: bool,
    /// Stage `(k, n)` when this register is a reset synchronizer stage (of a chain of n).
    #[serde(default)]
    pub own_stage: Option<(u32, u32)>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ResetLeafKind {
    TopInput,
    Register,
    ResetSynchronizer,
    Undriven,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ResetLeafInfo {
    /// Hierarchical name without the top (`u_rst.sync_q[1]`).
    pub name: String,
    pub kind: ResetLeafKind,
    pub domain: Option<String>,
    /// For a reset synchronizer: which stage is used.
    pub stages: Option<u32>,
}

impl ResetSource {
    /// One line: where the reset comes from and its polarity, e.g.
    /// `top-level input rst_n (active low)`.
    pub fn text(&self) -> String {
        let leaf = |l: &ResetLeafInfo| -> String {
            let dom = l
                .domain
                .as_deref()
                .map(|d| format!(" of {d}"))
                .unwrap_or_default();
            match l.kind {
                ResetLeafKind::TopInput => format!("top-level input {}", l.name),
                ResetLeafKind::Register => format!("register {}{dom}", l.name),
                ResetLeafKind::ResetSynchronizer => format!(
                    "reset synchronizer {}{dom} (stage {})",
                    l.name,
                    l.stages.unwrap_or(1)
                ),
                ResetLeafKind::Undriven => format!("undriven net {} (a black box?)", l.name),
            }
        };
        let parts: Vec<String> = self.leaves.iter().map(leaf).collect();
        let src = match (parts.as_slice(), self.through_logic) {
            ([], _) => "a constant".to_string(),
            ([one], false) => one.clone(),
            (_, _) => format!("logic of {}", parts.join(", ")),
        };
        format!(
            "{src} (active {})",
            if self.active_high { "high" } else { "low" }
        )
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SignalKind {
    Register,
    Combinational,
    Input,
    Clock,
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct SignalInfo {
    pub instance: String,
    pub module: String,
    pub name: String,
    /// Declaration (or port) span in its file.
    pub span: Span,
    pub kind: SignalKind,
    /// Domains of the signal (a register has one; a net the set of its fan-in).
    pub domains: Vec<String>,
    /// Free text lines for hover (clock details, stage, reset, fan-in...).
    pub notes: Vec<String>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CrossingStatus {
    Synchronized,
    Unsafe,
    Waived,
}

#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Crossing {
    pub source_domain: String,
    pub destination_domain: String,
    /// Hierarchical name of the source register or input.
    pub source: String,
    /// Hierarchical name of the destination register.
    pub destination: String,
    pub status: CrossingStatus,
    /// How it is made safe: "2-flop chain", "gray code", "handshake", "tg_sync2 instance"...
    pub scheme: Option<String>,
    pub stages: Option<u32>,
    pub bits: u32,
    pub span: Span,
}

/// MTBF estimates (DESIGN.md section 6), computed once per analysis by `cdc::mtbf_table` and
/// read by `low-mtbf`, `seam mtbf`, the HTML report, hover and code lens. Figures are
/// estimates from the published formula and the `[mtbf]` parameters, not silicon data.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct MtbfReport {
    /// Every recognized synchronizer chain (one entry per first-stage register).
    pub synchronizers: Vec<SyncMtbf>,
    /// log10 seconds of the design MTBF across `units` devices, over the synchronizers with a
    /// figure; `None` when none has one (or every one is unbounded).
    pub design_log10_s: Option<f64>,
    /// Synchronizers without a figure (unknown frequency, no settling slack): not in the total.
    pub uncounted: usize,
    /// Index into `synchronizers` of the one with the highest failure rate.
    pub weakest: Option<usize>,
    /// Top modules of the design (for the code lens on the top).
    pub tops: Vec<String>,
    /// The `[mtbf]` parameters used, for display beside the figures.
    pub target_years: f64,
    pub units: u64,
    pub tau_ps: f64,
    pub window_ps: f64,
    pub setup_ps: f64,
    pub clock_to_q_ps: f64,
    pub routing_ps: f64,
    /// τ and T_W are still the placeholder defaults.
    pub placeholder: bool,
}

/// The estimate of one synchronizer (all its bits).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SyncEstimate {
    /// A figure, in log10 seconds: one bit (the weakest), all bits on one device, and all bits
    /// across `units` devices (the figure compared with the target).
    Figure {
        per_bit_log10_s: f64,
        log10_s: f64,
        fleet_log10_s: f64,
    },
    /// N ≥ 2 and a stage step leaves no time to resolve (T_stage − t_setup − t_clk→q −
    /// t_routing ≤ 0); `slack_s` is that difference.
    NoSettlingSlack { slack_s: f64 },
    /// The source never changes (its transition rate is 0).
    Unbounded,
    /// A frequency is not known: the seam.toml settings that would give one.
    Unknown { missing: Vec<String> },
}

/// One synchronizer chain and its MTBF estimate.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct SyncMtbf {
    /// Source register or input (hierarchical name without the top).
    pub source: String,
    pub source_domain: String,
    /// First stage register (hierarchical name without the top).
    pub destination: String,
    pub destination_domain: String,
    /// Every stage register, full hierarchical names (`top.u_sync.q1`), stage 1 first.
    pub stage_registers: Vec<String>,
    /// Chain length N (the shortest over the bits).
    pub stages: u32,
    /// Bits W: each has its own chain and counts once in the design total.
    pub bits: u32,
    pub dest_clock: String,
    pub dest_clock_hz: Option<f64>,
    /// The source's clock, when it has one (not for asynchronous inputs).
    pub source_clock: Option<String>,
    /// Transitions per second of the (weakest) source bit, and where the figure comes from.
    pub f_data_hz: Option<f64>,
    pub f_data_from: String,
    /// Time between consecutive stages' capturing edges (the mean over the steps).
    pub stage_time_s: Option<f64>,
    /// Steps where the next stage captures on the other edge (half a period).
    pub half_period_steps: u32,
    /// Resolution time t_r of the weakest bit.
    pub t_r_s: Option<f64>,
    pub estimate: SyncEstimate,
    /// Whether the fleet figure meets `target_years`; `None` when there is no figure.
    pub meets_target: Option<bool>,
    /// Fewest stages that meet the target (1 to 10), same clock and edges.
    pub min_stages: Option<u32>,
    /// Highest destination clock frequency that meets the target with these stages.
    pub max_dest_hz: Option<f64>,
    /// The stage-1 assignment that samples the source.
    pub span: Span,
}
