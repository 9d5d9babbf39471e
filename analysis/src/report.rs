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
