//! The project file, `seam.toml`.
//!
//! [`parse_config`] turns the text of a `seam.toml` into a validated [`Config`]. It does no I/O:
//! the caller reads the file and passes its text along with the path to use in messages.
//!
//! Every key is optional; an empty file gives [`Config::default`]. Anything the parser does not
//! understand is an error, never a panic and never silently ignored: an unknown key, a value of
//! the wrong type, a frequency without a unit, a rule id that does not exist, an `[inputs]` entry
//! naming a clock that `[clocks]` does not declare, a cell with a missing pin. Each error names
//! the file, the 1-based line and column, and the dotted key path, e.g.
//!
//! ```text
//! seam.toml:12:22: clocks.clk_adc.frequency: bad frequency "fast" (expected e.g. "100 MHz" or "8 ns")
//! ```
//!
//! Positions come from the spans the `toml` crate keeps for every key and value: the text is
//! first read into a small tree of spanned nodes, which this module then walks by hand, so every
//! semantic check can point at the exact key or value it rejects.
//!
//! Key paths are written the TOML way: bare segments joined with `.`, segments that are not bare
//! keys in double quotes (`clocks."u_pll.clk_out".frequency`), and `[[waive]]` entries numbered
//! from 0 (`waive[1].rule`).

use globset::{Glob, GlobBuilder, GlobMatcher, GlobSet, GlobSetBuilder};
use serde::Serialize;
use std::collections::BTreeMap;
use std::fmt;

// ---------------------------------------------------------------------------------------------
// Rules
// ---------------------------------------------------------------------------------------------

/// Every rule id with its default severity (DESIGN.md section 4).
pub const RULES: &[(&str, Severity)] = &[
    ("unsynchronized-crossing", Severity::Error),
    ("logic-before-synchronizer", Severity::Error),
    ("multibit-crossing", Severity::Error),
    ("reconvergence", Severity::Warning),
    ("synchronizer-stage-fanout", Severity::Warning),
    ("derived-clock", Severity::Warning),
    ("gated-clock", Severity::Warning),
    ("clock-as-data", Severity::Warning),
    ("async-reset-release", Severity::Warning),
    ("pulse-loss", Severity::Warning),
    ("low-mtbf", Severity::Warning),
    ("syntax-error", Severity::Error),
    ("unresolved-module", Severity::Hint),
    ("unconstrained-input", Severity::Hint),
    ("unused-waiver", Severity::Hint),
];

/// Every rule id, in the order of DESIGN.md section 4.
pub const RULE_IDS: &[&str] = &[
    "unsynchronized-crossing",
    "logic-before-synchronizer",
    "multibit-crossing",
    "reconvergence",
    "synchronizer-stage-fanout",
    "derived-clock",
    "gated-clock",
    "clock-as-data",
    "async-reset-release",
    "pulse-loss",
    "low-mtbf",
    "syntax-error",
    "unresolved-module",
    "unconstrained-input",
    "unused-waiver",
];

/// The default severity of a rule, or `None` for an unknown id.
pub fn default_severity(rule: &str) -> Option<Severity> {
    RULES.iter().find(|(id, _)| *id == rule).map(|(_, s)| *s)
}

/// How a finding is reported. `Off` drops the rule's findings altogether.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    Error,
    Warning,
    Info,
    Hint,
    Off,
}

impl Severity {
    /// All severities, as written in `seam.toml`.
    pub const NAMES: &'static [&'static str] = &["error", "warning", "info", "hint", "off"];

    pub fn parse(text: &str) -> Option<Severity> {
        match text {
            "error" => Some(Severity::Error),
            "warning" => Some(Severity::Warning),
            "info" => Some(Severity::Info),
            "hint" => Some(Severity::Hint),
            "off" => Some(Severity::Off),
            _ => None,
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Info => "info",
            Severity::Hint => "hint",
            Severity::Off => "off",
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

// ---------------------------------------------------------------------------------------------
// The configuration
// ---------------------------------------------------------------------------------------------

/// A validated `seam.toml`. Field names follow the file's sections; `[static] signals` is
/// [`Config::static_signals`] and the `[[waive]]` entries are [`Config::waivers`].
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Config {
    pub design: DesignConfig,
    /// `[clocks]`: key is a top-level clock port or a hierarchical path to a clock source.
    pub clocks: BTreeMap<String, ClockSpec>,
    /// `[cells]`: key is a module (cell) name.
    pub cells: BTreeMap<String, Cell>,
    /// `[constants]`: net → Verilog literal text (validated by [`parse_constant`]).
    pub constants: BTreeMap<String, String>,
    /// `[inputs]`: top-level data input → `"async"` or a key of `[clocks]`.
    pub inputs: BTreeMap<String, String>,
    /// `[static] signals`: quasi-static signals, stable whenever sampled.
    pub static_signals: Vec<String>,
    pub synchronizers: SynchronizerConfig,
    pub mtbf: MtbfConfig,
    /// `[rules]`: severity overrides. Use [`Config::severity`] for the effective severity.
    pub rules: BTreeMap<String, Severity>,
    /// `[[waive]]` entries, in file order.
    pub waivers: Vec<Waiver>,
    /// Position (line, column; 1-based) of every key in the file, by dotted key path, for
    /// findings that point into `seam.toml` (e.g. a `[clocks]` key that names no port).
    #[serde(skip)]
    pub key_locations: BTreeMap<String, (usize, usize)>,
}

impl Config {
    /// The effective severity of a rule: the `[rules]` override, else the default. Unknown ids
    /// (which `parse_config` never lets into `rules`) get `Off`.
    pub fn severity(&self, rule: &str) -> Severity {
        self.rules
            .get(rule)
            .copied()
            .or_else(|| default_severity(rule))
            .unwrap_or(Severity::Off)
    }

    /// Line and column (1-based) of a key, by dotted path as in error messages.
    pub fn location(&self, key_path: &str) -> Option<(usize, usize)> {
        self.key_locations.get(key_path).copied()
    }

    /// The domain name of a `[clocks]` key: its group, else the key itself.
    pub fn domain_of_clock<'a>(&'a self, clock: &'a str) -> &'a str {
        match self.clocks.get(clock).and_then(|c| c.group.as_deref()) {
            Some(group) => group,
            None => clock,
        }
    }
}

/// `[design]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignConfig {
    /// Globs relative to the workspace root. Empty: the default file set (see
    /// `filelist::default_file_set`).
    pub files: Vec<String>,
    /// A `-f` style filelist, relative to the workspace root.
    pub filelist: Option<String>,
    pub include_dirs: Vec<String>,
    /// Preprocessor defines; `""` defines a name without a value.
    pub defines: BTreeMap<String, String>,
    /// Top modules. Empty: the modules never instantiated (testbenches excluded).
    pub top: Vec<String>,
    pub unconstrained_inputs: UnconstrainedInputs,
    /// Larger files are skipped with a finding.
    pub max_file_bytes: u64,
    /// An SDC file whose clock commands are read.
    pub sdc: Option<String>,
}

impl Default for DesignConfig {
    fn default() -> Self {
        DesignConfig {
            files: Vec::new(),
            filelist: None,
            include_dirs: Vec::new(),
            defines: BTreeMap::new(),
            top: Vec::new(),
            unconstrained_inputs: UnconstrainedInputs::Ignore,
            max_file_bytes: 8_000_000,
            sdc: None,
        }
    }
}

impl DesignConfig {
    /// The `files` globs as one set (`*` stays within a folder, `**` crosses folders), or `None`
    /// when `files` is empty. The globs were validated by `parse_config`.
    pub fn file_globs(&self) -> Option<GlobSet> {
        if self.files.is_empty() {
            return None;
        }
        let mut builder = GlobSetBuilder::new();
        for pattern in &self.files {
            if let Ok(glob) = path_glob(pattern) {
                builder.add(glob);
            }
        }
        builder.build().ok()
    }
}

/// What a top-level data input without an `[inputs]` entry is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum UnconstrainedInputs {
    /// Its crossings are not checked (one `unconstrained-input` hint per port).
    Ignore,
    /// It is asynchronous to every clock.
    Async,
}

/// One `[clocks]` entry.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClockSpec {
    pub frequency_hz: Option<f64>,
    /// Clocks in one group form one domain.
    pub group: Option<String>,
}

/// One `[cells]` entry: a black-box cell and the meaning of its pins, chosen by `kind`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Cell {
    ClockBuffer {
        input: String,
        output: String,
    },
    ClockGate {
        clock: String,
        enable: String,
        output: String,
    },
    ClockMux {
        inputs: Vec<String>,
        select: String,
        output: String,
    },
    ClockSource {
        outputs: Vec<String>,
    },
    Synchronizer {
        clock: String,
        input: String,
        output: String,
        stages: u32,
    },
    Flop {
        clock: String,
        input: String,
        output: String,
        reset: Option<String>,
    },
    /// A trusted reset synchronizer: `stages` flops on `clock`, reset by `reset` (active
    /// low), shifting in 1; `output` is the synchronized reset (active low).
    ResetSynchronizer {
        clock: String,
        reset: String,
        output: String,
        stages: u32,
    },
}

impl Cell {
    pub const KINDS: &'static [&'static str] = &[
        "clock-buffer",
        "clock-gate",
        "clock-mux",
        "clock-source",
        "synchronizer",
        "flop",
        "reset-synchronizer",
    ];

    /// The `kind` as written in `seam.toml`.
    pub fn kind(&self) -> &'static str {
        match self {
            Cell::ClockBuffer { .. } => "clock-buffer",
            Cell::ClockGate { .. } => "clock-gate",
            Cell::ClockMux { .. } => "clock-mux",
            Cell::ClockSource { .. } => "clock-source",
            Cell::Synchronizer { .. } => "synchronizer",
            Cell::Flop { .. } => "flop",
            Cell::ResetSynchronizer { .. } => "reset-synchronizer",
        }
    }

    /// The cell's output pins.
    pub fn outputs(&self) -> Vec<&str> {
        match self {
            Cell::ClockBuffer { output, .. }
            | Cell::ClockGate { output, .. }
            | Cell::ClockMux { output, .. }
            | Cell::Synchronizer { output, .. }
            | Cell::Flop { output, .. }
            | Cell::ResetSynchronizer { output, .. } => vec![output.as_str()],
            Cell::ClockSource { outputs } => outputs.iter().map(String::as_str).collect(),
        }
    }
}

/// `[synchronizers]`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SynchronizerConfig {
    /// Trusted synchronizer modules (their insides are not checked, their use is).
    pub modules: Vec<String>,
    /// Chains shorter than this are not synchronizers.
    pub min_stages: u32,
}

impl Default for SynchronizerConfig {
    fn default() -> Self {
        SynchronizerConfig {
            modules: Vec::new(),
            min_stages: 2,
        }
    }
}

/// `[mtbf]`: the parameters of the metastability model (DESIGN.md section 6). The timing
/// defaults are placeholders, not characterization data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MtbfConfig {
    /// Target MTBF of the whole design in years (for `units` devices).
    pub target_years: f64,
    /// Devices in the field.
    pub units: u64,
    /// Resolution time constant τ, ps.
    pub tau_ps: f64,
    /// Metastability window T_W (T0), ps.
    pub window_ps: f64,
    pub setup_ps: f64,
    pub clock_to_q_ps: f64,
    /// Wire delay between stages, ps.
    pub routing_ps: f64,
    /// Source transitions per source clock cycle.
    pub data_rate: f64,
    /// Transitions per second assumed for asynchronous inputs (`async_toggle`).
    pub async_toggle_hz: f64,
    /// `[mtbf.toggle]`: per-signal transition rates, transitions per second.
    pub toggle: BTreeMap<String, f64>,
}

impl Default for MtbfConfig {
    fn default() -> Self {
        MtbfConfig {
            target_years: 1000.0,
            units: 1,
            tau_ps: 25.0,
            window_ps: 50.0,
            setup_ps: 50.0,
            clock_to_q_ps: 100.0,
            routing_ps: 0.0,
            data_rate: 0.5,
            async_toggle_hz: 1e6,
            toggle: BTreeMap::new(),
        }
    }
}

/// One `[[waive]]` entry.
#[derive(Debug, Clone, Serialize)]
pub struct Waiver {
    pub rule: String,
    /// Glob over hierarchical signal paths (`u_vendor_ip.*`); `*` also crosses `.`.
    pub signal: Option<String>,
    /// Glob over workspace-relative file paths; `*` stays within a folder, `**` crosses.
    pub file: Option<String>,
    /// `None` when absent or blank; a waiver without a reason is itself reported.
    pub reason: Option<String>,
    /// Position of the entry's `[[waive]]` header (or its first key) in `seam.toml`, 1-based.
    pub line: usize,
    pub column: usize,
    #[serde(skip)]
    signal_matcher: Option<GlobMatcher>,
    #[serde(skip)]
    file_matcher: Option<GlobMatcher>,
}

impl PartialEq for Waiver {
    fn eq(&self, other: &Self) -> bool {
        self.rule == other.rule
            && self.signal == other.signal
            && self.file == other.file
            && self.reason == other.reason
            && self.line == other.line
            && self.column == other.column
    }
}

impl Waiver {
    /// Builds a waiver (globs are checked here too). `parse_config` uses this.
    pub fn new(
        rule: &str,
        signal: Option<&str>,
        file: Option<&str>,
        reason: Option<&str>,
        line: usize,
        column: usize,
    ) -> Result<Waiver, String> {
        if default_severity(rule).is_none() {
            return Err(unknown_rule_message(rule));
        }
        let signal_matcher = match signal {
            Some(s) => Some(signal_glob(s)?.compile_matcher()),
            None => None,
        };
        let file_matcher = match file {
            Some(f) => Some(path_glob(f)?.compile_matcher()),
            None => None,
        };
        let reason = reason
            .map(str::trim)
            .filter(|r| !r.is_empty())
            .map(str::to_string);
        Ok(Waiver {
            rule: rule.to_string(),
            signal: signal.map(str::to_string),
            file: file.map(str::to_string),
            reason,
            line,
            column,
            signal_matcher,
            file_matcher,
        })
    }

    /// Whether this waiver covers a finding of `rule` on `signal` in `file` (workspace-relative,
    /// `/`-separated). A waiver that names a signal (file) only matches findings that have one.
    pub fn matches(&self, rule: &str, signal: Option<&str>, file: Option<&str>) -> bool {
        if rule != self.rule {
            return false;
        }
        if let Some(m) = &self.signal_matcher {
            match signal {
                Some(s) if m.is_match(s) => {}
                _ => return false,
            }
        }
        if let Some(m) = &self.file_matcher {
            match file {
                Some(f) if m.is_match(f) => {}
                _ => return false,
            }
        }
        true
    }
}

fn path_glob(pattern: &str) -> Result<Glob, String> {
    GlobBuilder::new(pattern)
        .literal_separator(true)
        .build()
        .map_err(|e| format!("bad glob \"{pattern}\": {}", e.kind()))
}

fn signal_glob(pattern: &str) -> Result<Glob, String> {
    GlobBuilder::new(pattern)
        .literal_separator(false)
        .build()
        .map_err(|e| format!("bad glob \"{pattern}\": {}", e.kind()))
}

// ---------------------------------------------------------------------------------------------
// Errors
// ---------------------------------------------------------------------------------------------

/// A problem in `seam.toml`. `line` and `column` are 1-based (column in Unicode code points).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ConfigError {
    pub file: String,
    pub line: usize,
    pub column: usize,
    /// Dotted key path, e.g. `clocks.clk_adc.frequency`; `None` for syntax errors.
    pub key: Option<String>,
    pub message: String,
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}:{}: ", self.file, self.line, self.column)?;
        if let Some(key) = &self.key {
            write!(f, "{key}: ")?;
        }
        f.write_str(&self.message)
    }
}

impl std::error::Error for ConfigError {}

// ---------------------------------------------------------------------------------------------
// Frequencies and constants
// ---------------------------------------------------------------------------------------------

/// Parses a frequency (`"100 MHz"`, `"61.44 MHz"`, `"1 kHz"`, `"2 GHz"`, `"10 Hz"`) or a period
/// (`"8 ns"`, `"10 ps"`, `"1 us"`) into hertz. The space before the unit is optional; units are
/// case-insensitive (so `"mhz"` is megahertz). Periods: `s ms us µs ns ps fs`.
pub fn parse_frequency(text: &str) -> Result<f64, String> {
    let s = text.trim();
    let unit_start = s
        .char_indices()
        .rev()
        .take_while(|(_, c)| c.is_alphabetic())
        .last()
        .map(|(i, _)| i)
        .unwrap_or(s.len());
    let number = s[..unit_start].trim();
    let unit = &s[unit_start..];
    let shape_error =
        || format!("bad frequency \"{text}\" (expected e.g. \"100 MHz\" or \"8 ns\")");
    if number.is_empty() || unit.is_empty() {
        return Err(shape_error());
    }
    if !number
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | 'e' | 'E' | '+' | '-' | '_'))
    {
        return Err(shape_error());
    }
    let value: f64 = number.replace('_', "").parse().map_err(|_| shape_error())?;
    // units are case-insensitive, except the one spelling that means millihertz in SI
    if unit == "mHz" {
        return Err(format!(
            "bad frequency \"{text}\" (\"mHz\" would be millihertz; write \"MHz\" for megahertz)"
        ));
    }
    let lower = unit.to_lowercase();
    let hz = match lower.as_str() {
        "hz" => value,
        "khz" => value * 1e3,
        "mhz" => value * 1e6,
        "ghz" => value * 1e9,
        "thz" => value * 1e12,
        _ => {
            let seconds = match lower.as_str() {
                "s" => 1.0,
                "ms" => 1e-3,
                "us" | "µs" | "μs" => 1e-6,
                "ns" => 1e-9,
                "ps" => 1e-12,
                "fs" => 1e-15,
                _ => {
                    return Err(format!(
                        "bad frequency \"{text}\" (unknown unit \"{unit}\"; use Hz, kHz, MHz, \
                         GHz, or a period in s, ms, us, ns, ps)"
                    ))
                }
            };
            if value <= 0.0 || !value.is_finite() {
                return Err(format!(
                    "bad frequency \"{text}\" (the period must be greater than zero)"
                ));
            }
            1.0 / (value * seconds)
        }
    };
    if !hz.is_finite() || hz <= 0.0 {
        return Err(format!(
            "bad frequency \"{text}\" (must be greater than zero)"
        ));
    }
    Ok(hz)
}

/// Formats hertz for people: `61.44 MHz`, `1 kHz`, `2.5 GHz`.
pub fn format_frequency(hz: f64) -> String {
    if !hz.is_finite() {
        return "unknown".to_string(); // never print inf or NaN
    }
    let (scale, unit) = if hz >= 1e9 {
        (1e9, "GHz")
    } else if hz >= 1e6 {
        (1e6, "MHz")
    } else if hz >= 1e3 {
        (1e3, "kHz")
    } else {
        (1.0, "Hz")
    };
    let mut digits = format!("{:.6}", hz / scale);
    while digits.ends_with('0') {
        digits.pop();
    }
    if digits.ends_with('.') {
        digits.pop();
    }
    format!("{digits} {unit}")
}

/// The value of a `[constants]` literal.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum ConstValue {
    /// A number, with its width when sized (`1'b0` → width 1, value 0; `5` → no width).
    Number { width: Option<u32>, value: u128 },
    /// An unsized fill literal: `'0` (false) or `'1` (true).
    Fill(bool),
}

/// Parses a Verilog literal of known bits: `5`, `1'b0`, `4'hA`, `8'd255`, `'1`, `'0`.
/// Literals with `x`, `z` or `?` digits are refused: a pinned net needs a known value.
pub fn parse_constant(text: &str) -> Result<ConstValue, String> {
    let s = text.trim();
    let bad = || {
        format!("bad constant \"{text}\" (expected a Verilog literal of known bits, e.g. \"1'b0\", \"4'hA\" or \"5\")")
    };
    let Some(tick) = s.find('\'') else {
        let value = parse_digits(s, 10).ok_or_else(bad)?;
        return Ok(ConstValue::Number { width: None, value });
    };
    let (size, rest) = (s[..tick].trim(), s[tick + 1..].trim_start());
    if size.is_empty() && (rest == "0" || rest == "1") {
        return Ok(ConstValue::Fill(rest == "1"));
    }
    let width = if size.is_empty() {
        None
    } else {
        let w = parse_digits(size, 10).ok_or_else(bad)?;
        if w == 0 || w > 128 {
            return Err(format!(
                "bad constant \"{text}\" (the width must be 1 to 128 bits)"
            ));
        }
        Some(w as u32)
    };
    let rest = rest.strip_prefix(['s', 'S']).unwrap_or(rest);
    let mut chars = rest.chars();
    let radix = match chars.next().map(|c| c.to_ascii_lowercase()) {
        Some('b') => 2,
        Some('o') => 8,
        Some('d') => 10,
        Some('h') => 16,
        _ => return Err(bad()),
    };
    let digits = chars.as_str().trim();
    if digits
        .chars()
        .any(|c| matches!(c.to_ascii_lowercase(), 'x' | 'z' | '?'))
    {
        return Err(format!(
            "bad constant \"{text}\" (x, z and ? bits have no known value)"
        ));
    }
    let value = parse_digits(digits, radix).ok_or_else(bad)?;
    if let Some(w) = width {
        if w < 128 && value >> w != 0 {
            return Err(format!(
                "bad constant \"{text}\" (the value does not fit in {w} bits)"
            ));
        }
    }
    Ok(ConstValue::Number { width, value })
}

fn parse_digits(text: &str, radix: u32) -> Option<u128> {
    if text.is_empty() || text.starts_with('_') {
        return None;
    }
    let mut value: u128 = 0;
    for c in text.chars() {
        if c == '_' {
            continue;
        }
        let d = c.to_digit(radix)?;
        value = value.checked_mul(radix as u128)?.checked_add(d as u128)?;
    }
    Some(value)
}

// ---------------------------------------------------------------------------------------------
// A spanned tree of the TOML text
// ---------------------------------------------------------------------------------------------

mod raw {
    //! The TOML text as a tree whose keys and values keep their byte spans. The `toml` crate
    //! hands out spans through its `Spanned` protocol (a struct with reserved name and fields);
    //! these visitors speak that protocol and fall back gracefully where a node has no span
    //! (for example a table created implicitly by a dotted key).

    use std::fmt;
    use std::ops::Range;

    use serde::de::{self, Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};

    const SPANNED_NAME: &str = "$__serde_spanned_private_Spanned";
    const SPANNED_START: &str = "$__serde_spanned_private_start";
    const SPANNED_END: &str = "$__serde_spanned_private_end";
    const SPANNED_VALUE: &str = "$__serde_spanned_private_value";
    const SPANNED_FIELDS: &[&str] = &[SPANNED_START, SPANNED_END, SPANNED_VALUE];
    const DATETIME_FIELD: &str = "$__toml_private_datetime";

    #[derive(Debug)]
    pub struct Key {
        pub name: String,
        pub span: Option<Range<usize>>,
    }

    #[derive(Debug)]
    pub enum Value {
        Str(String),
        Int(i64),
        Float(f64),
        Bool(bool),
        Datetime,
        Array(Vec<Node>),
        Table(Vec<(Key, Node)>),
    }

    #[derive(Debug)]
    pub struct Node {
        pub span: Option<Range<usize>>,
        pub value: Value,
    }

    /// A node read without asking for its span (the inside of a spanned wrapper).
    pub struct Bare(pub Node);

    impl<'de> Deserialize<'de> for Node {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_struct(SPANNED_NAME, SPANNED_FIELDS, NodeVisitor)
        }
    }

    impl<'de> Deserialize<'de> for Bare {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_any(NodeVisitor).map(Bare)
        }
    }

    impl<'de> Deserialize<'de> for Key {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_struct(SPANNED_NAME, SPANNED_FIELDS, KeyVisitor)
        }
    }

    fn plain(value: Value) -> Node {
        Node { span: None, value }
    }

    struct NodeVisitor;

    impl<'de> Visitor<'de> for NodeVisitor {
        type Value = Node;

        fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            f.write_str("a TOML value")
        }
        fn visit_bool<E: de::Error>(self, v: bool) -> Result<Node, E> {
            Ok(plain(Value::Bool(v)))
        }
        fn visit_i64<E: de::Error>(self, v: i64) -> Result<Node, E> {
            Ok(plain(Value::Int(v)))
        }
        fn visit_u64<E: de::Error>(self, v: u64) -> Result<Node, E> {
            i64::try_from(v)
                .map(|v| plain(Value::Int(v)))
                .map_err(|_| E::custom("integer out of range"))
        }
        fn visit_f64<E: de::Error>(self, v: f64) -> Result<Node, E> {
            Ok(plain(Value::Float(v)))
        }
        fn visit_str<E: de::Error>(self, v: &str) -> Result<Node, E> {
            Ok(plain(Value::Str(v.to_string())))
        }
        fn visit_string<E: de::Error>(self, v: String) -> Result<Node, E> {
            Ok(plain(Value::Str(v)))
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Node, A::Error> {
            let mut items = Vec::new();
            while let Some(item) = seq.next_element::<Node>()? {
                items.push(item);
            }
            Ok(plain(Value::Array(items)))
        }
        fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Node, A::Error> {
            let Some(first) = map.next_key::<Key>()? else {
                return Ok(plain(Value::Table(Vec::new())));
            };
            if first.span.is_none() && first.name == SPANNED_START {
                let start: usize = map.next_value()?;
                expect_key(&mut map, SPANNED_END)?;
                let end: usize = map.next_value()?;
                expect_key(&mut map, SPANNED_VALUE)?;
                let Bare(inner) = map.next_value()?;
                return Ok(Node {
                    span: Some(start..end),
                    value: inner.value,
                });
            }
            if first.span.is_none() && first.name == DATETIME_FIELD {
                let _text: String = map.next_value()?;
                return Ok(plain(Value::Datetime));
            }
            let mut entries = Vec::new();
            let value: Node = map.next_value()?;
            entries.push((first, value));
            while let Some(key) = map.next_key::<Key>()? {
                let value: Node = map.next_value()?;
                entries.push((key, value));
            }
            Ok(plain(Value::Table(entries)))
        }
    }

    fn expect_key<'de, A: MapAccess<'de>>(map: &mut A, name: &str) -> Result<(), A::Error> {
        match map.next_key::<Key>()? {
            Some(k) if k.name == name => Ok(()),
            _ => Err(de::Error::custom("malformed spanned value")),
        }
    }

    struct KeyVisitor;

    impl<'de> Visitor<'de> for KeyVisitor {
        type Value = Key;

        fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            f.write_str("a TOML key")
        }
        fn visit_str<E: de::Error>(self, v: &str) -> Result<Key, E> {
            Ok(Key {
                name: v.to_string(),
                span: None,
            })
        }
        fn visit_string<E: de::Error>(self, v: String) -> Result<Key, E> {
            Ok(Key {
                name: v,
                span: None,
            })
        }
        fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Key, A::Error> {
            let mut start = None;
            let mut end = None;
            let mut name = None;
            while let Some(field) = map.next_key::<String>()? {
                match field.as_str() {
                    SPANNED_START => start = Some(map.next_value::<usize>()?),
                    SPANNED_END => end = Some(map.next_value::<usize>()?),
                    SPANNED_VALUE => name = Some(map.next_value::<String>()?),
                    _ => return Err(de::Error::custom("malformed spanned key")),
                }
            }
            match (start, end, name) {
                (Some(s), Some(e), Some(n)) => Ok(Key {
                    name: n,
                    span: Some(s..e),
                }),
                _ => Err(de::Error::custom("malformed spanned key")),
            }
        }
    }
}

use raw::{Node, Value};

// ---------------------------------------------------------------------------------------------
// Parsing
// ---------------------------------------------------------------------------------------------

/// Parses and validates a `seam.toml`. `path_for_messages` is only used in errors. On failure,
/// returns the first error in file order (see [`parse_config_all`] for all of them).
pub fn parse_config(path_for_messages: &str, text: &str) -> Result<Config, ConfigError> {
    parse_config_all(path_for_messages, text).map_err(|mut errors| errors.remove(0))
}

/// Like [`parse_config`], but reports every error found (sorted by position, never empty).
/// A syntax error stops the parse, so it is reported alone.
pub fn parse_config_all(path_for_messages: &str, text: &str) -> Result<Config, Vec<ConfigError>> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut ctx = Ctx {
        file: path_for_messages,
        text,
        errors: Vec::new(),
    };
    let root = match toml::from_str::<raw::Bare>(text) {
        Ok(raw::Bare(node)) => node,
        Err(e) => {
            let offset = e.span().map(|s| s.start).unwrap_or(0);
            let message = e.message().trim().replace('\n', "; ");
            ctx.error(offset, None, message);
            return Err(ctx.errors);
        }
    };
    let mut config = Config::default();
    collect_locations(&ctx, &root, "", &mut config.key_locations);
    match &root.value {
        Value::Table(entries) => {
            let mut top = Table::new("", 0, entries);
            read_top(&mut ctx, &mut top, &mut config);
            top.finish(&mut ctx, "seam.toml (top level)");
        }
        _ => ctx.error(0, None, "expected a table".to_string()),
    }
    if ctx.errors.is_empty() {
        Ok(config)
    } else {
        let mut errors = ctx.errors;
        errors.sort_by_key(|e| (e.line, e.column));
        Err(errors)
    }
}

struct Ctx<'t> {
    file: &'t str,
    text: &'t str,
    errors: Vec<ConfigError>,
}

impl Ctx<'_> {
    fn position(&self, offset: usize) -> (usize, usize) {
        let mut offset = offset.min(self.text.len());
        while !self.text.is_char_boundary(offset) {
            offset -= 1;
        }
        let before = &self.text[..offset];
        let line_start = before.rfind('\n').map(|i| i + 1).unwrap_or(0);
        let line = before.matches('\n').count() + 1;
        let column = before[line_start..].chars().count() + 1;
        (line, column)
    }

    fn error(&mut self, offset: usize, key: Option<&str>, message: String) {
        let (line, column) = self.position(offset);
        self.errors.push(ConfigError {
            file: self.file.to_string(),
            line,
            column,
            key: key.map(str::to_string),
            message,
        });
    }
}

fn collect_locations(
    ctx: &Ctx<'_>,
    node: &Node,
    path: &str,
    out: &mut BTreeMap<String, (usize, usize)>,
) {
    match &node.value {
        Value::Table(entries) => {
            for (key, value) in entries {
                let child = join(path, &key.name);
                if let Some(span) = key.span.as_ref().or(value.span.as_ref()) {
                    out.insert(child.clone(), ctx.position(span.start));
                }
                collect_locations(ctx, value, &child, out);
            }
        }
        Value::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                let child = format!("{path}[{i}]");
                if let Some(span) = &item.span {
                    out.insert(child.clone(), ctx.position(span.start));
                }
                collect_locations(ctx, item, &child, out);
            }
        }
        _ => {}
    }
}

fn is_bare_key(name: &str) -> bool {
    !name.is_empty()
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
}

fn join(parent: &str, name: &str) -> String {
    let segment = if is_bare_key(name) {
        name.to_string()
    } else {
        format!("\"{}\"", name.replace('\\', "\\\\").replace('"', "\\\""))
    };
    if parent.is_empty() {
        segment
    } else {
        format!("{parent}.{segment}")
    }
}

/// One key of a table, with its path and the offsets to point errors at.
struct Entry<'a> {
    path: String,
    name: &'a str,
    node: &'a Node,
    /// Start of the key.
    key_at: usize,
    /// Start of the value (the key when the value has no span).
    value_at: usize,
}

/// A table being read: keys are taken one by one; whatever is left is unknown.
struct Table<'a> {
    path: String,
    at: usize,
    entries: Vec<(Entry<'a>, bool)>,
}

impl<'a> Table<'a> {
    fn new(path: &str, at: usize, entries: &'a [(raw::Key, Node)]) -> Table<'a> {
        let entries = entries
            .iter()
            .map(|(key, node)| {
                let key_at = key
                    .span
                    .as_ref()
                    .or(node.span.as_ref())
                    .map(|s| s.start)
                    .unwrap_or(at);
                let value_at = node.span.as_ref().map(|s| s.start).unwrap_or(key_at);
                (
                    Entry {
                        path: join(path, &key.name),
                        name: &key.name,
                        node,
                        key_at,
                        value_at,
                    },
                    false,
                )
            })
            .collect();
        Table {
            path: path.to_string(),
            at,
            entries,
        }
    }

    fn take(&mut self, name: &str) -> Option<&Entry<'a>> {
        let (entry, used) = self.entries.iter_mut().find(|(e, _)| e.name == name)?;
        *used = true;
        Some(entry)
    }

    /// All entries not taken yet (for tables that are maps), marking them taken.
    fn rest(&mut self) -> Vec<&Entry<'a>> {
        self.entries
            .iter_mut()
            .filter(|(_, used)| !*used)
            .map(|(e, used)| {
                *used = true;
                &*e
            })
            .collect()
    }

    /// Reports every key not taken as unknown. `allowed` lists the keys this table has.
    fn finish_with(self, ctx: &mut Ctx<'_>, what: &str, allowed: &[&str]) {
        for (entry, used) in &self.entries {
            if *used {
                continue;
            }
            let mut message = format!("unknown key `{}` in {what}", entry.name);
            if let Some(near) = closest(entry.name, allowed) {
                message.push_str(&format!("; did you mean `{near}`?"));
            } else if !allowed.is_empty() {
                message.push_str(&format!(" (expected one of: {})", allowed.join(", ")));
            }
            ctx.error(entry.key_at, Some(&entry.path), message);
        }
    }

    fn finish(self, ctx: &mut Ctx<'_>, what: &str) {
        let allowed: Vec<&'static str> = known_keys(&self.path).to_vec();
        self.finish_with(ctx, what, &allowed)
    }

    fn missing(&self, ctx: &mut Ctx<'_>, name: &str, why: &str) {
        ctx.error(
            self.at,
            Some(&join(&self.path, name)),
            format!("missing key `{name}` ({why})"),
        );
    }
}

fn known_keys(path: &str) -> &'static [&'static str] {
    match path {
        "" => &[
            "design",
            "clocks",
            "cells",
            "constants",
            "inputs",
            "static",
            "synchronizers",
            "mtbf",
            "rules",
            "waive",
        ],
        "design" => &[
            "files",
            "filelist",
            "include_dirs",
            "defines",
            "top",
            "unconstrained_inputs",
            "max_file_bytes",
            "sdc",
        ],
        "static" => &["signals"],
        "synchronizers" => &["modules", "min_stages"],
        "mtbf" => &[
            "target_years",
            "units",
            "tau_ps",
            "window_ps",
            "setup_ps",
            "clock_to_q_ps",
            "routing_ps",
            "data_rate",
            "async_toggle",
            "toggle",
        ],
        _ => &[],
    }
}

/// The allowed key closest to `name` by edit distance, if it is plausibly a typo.
fn closest<'k>(name: &str, allowed: &[&'k str]) -> Option<&'k str> {
    let (best, distance) = allowed
        .iter()
        .map(|k| (*k, edit_distance(name, k)))
        .min_by_key(|(_, d)| *d)?;
    let limit = (name.chars().count().max(best.len()) / 3).max(1);
    (distance <= limit).then_some(best)
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut diagonal = row[0];
        row[0] = i;
        for j in 1..=b.len() {
            let above = row[j];
            let cost = usize::from(a[i - 1] != b[j - 1]);
            row[j] = (row[j] + 1).min(row[j - 1] + 1).min(diagonal + cost);
            diagonal = above;
        }
    }
    row[b.len()]
}

fn type_name(value: &Value) -> &'static str {
    match value {
        Value::Str(_) => "a string",
        Value::Int(_) => "an integer",
        Value::Float(_) => "a float",
        Value::Bool(_) => "a boolean",
        Value::Datetime => "a date-time",
        Value::Array(_) => "an array",
        Value::Table(_) => "a table",
    }
}

fn wrong_type(ctx: &mut Ctx<'_>, entry: &Entry<'_>, expected: &str) {
    ctx.error(
        entry.value_at,
        Some(&entry.path),
        format!(
            "expected {expected}, found {}",
            type_name(&entry.node.value)
        ),
    );
}

fn unknown_rule_message(rule: &str) -> String {
    let mut message = format!("unknown rule `{rule}`");
    match closest(rule, RULE_IDS) {
        Some(near) => message.push_str(&format!("; did you mean `{near}`?")),
        None => message.push_str(&format!(" (known rules: {})", RULE_IDS.join(", "))),
    }
    message
}

// Typed readers. Each reports its own error and returns None on failure.

fn read_table<'a>(ctx: &mut Ctx<'_>, entry: &Entry<'a>) -> Option<Table<'a>> {
    match &entry.node.value {
        Value::Table(entries) => Some(Table::new(&entry.path, entry.key_at, entries)),
        _ => {
            wrong_type(ctx, entry, "a table");
            None
        }
    }
}

fn read_string(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<String> {
    match &entry.node.value {
        Value::Str(s) => Some(s.clone()),
        _ => {
            wrong_type(ctx, entry, "a string");
            None
        }
    }
}

/// A string that must not be empty or blank (names, pins, paths).
fn read_name(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<String> {
    let s = read_string(ctx, entry)?;
    if s.trim().is_empty() {
        ctx.error(
            entry.value_at,
            Some(&entry.path),
            "must not be empty".to_string(),
        );
        return None;
    }
    Some(s)
}

/// An array of non-empty strings, each with the offset of its value.
fn read_string_list(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<Vec<(String, usize)>> {
    let Value::Array(items) = &entry.node.value else {
        wrong_type(ctx, entry, "an array of strings");
        return None;
    };
    let mut out = Vec::new();
    let mut ok = true;
    for (i, item) in items.iter().enumerate() {
        let at = item
            .span
            .as_ref()
            .map(|s| s.start)
            .unwrap_or(entry.value_at);
        let path = format!("{}[{i}]", entry.path);
        match &item.value {
            Value::Str(s) if !s.trim().is_empty() => out.push((s.clone(), at)),
            Value::Str(_) => {
                ctx.error(at, Some(&path), "must not be empty".to_string());
                ok = false;
            }
            other => {
                ctx.error(
                    at,
                    Some(&path),
                    format!("expected a string, found {}", type_name(other)),
                );
                ok = false;
            }
        }
    }
    ok.then_some(out)
}

fn read_f64(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<f64> {
    match &entry.node.value {
        Value::Float(f) if f.is_finite() => Some(*f),
        Value::Float(_) => {
            ctx.error(
                entry.value_at,
                Some(&entry.path),
                "must be a finite number".to_string(),
            );
            None
        }
        Value::Int(i) => Some(*i as f64),
        _ => {
            wrong_type(ctx, entry, "a number");
            None
        }
    }
}

/// A number checked against a lower bound (`min_inclusive` or strictly above `min`).
fn read_number(ctx: &mut Ctx<'_>, entry: &Entry<'_>, min: f64, allow_equal: bool) -> Option<f64> {
    let v = read_f64(ctx, entry)?;
    if v < min || (!allow_equal && v == min) {
        let bound = if allow_equal {
            "at least"
        } else {
            "greater than"
        };
        ctx.error(
            entry.value_at,
            Some(&entry.path),
            format!("must be {bound} {min}, found {v}"),
        );
        return None;
    }
    Some(v)
}

/// A whole number of at least `min`.
fn read_count(ctx: &mut Ctx<'_>, entry: &Entry<'_>, min: u64) -> Option<u64> {
    let v = match &entry.node.value {
        Value::Int(i) => *i as f64,
        Value::Float(f) if f.fract() == 0.0 && f.is_finite() => *f,
        Value::Float(_) => {
            ctx.error(
                entry.value_at,
                Some(&entry.path),
                "must be a whole number".to_string(),
            );
            return None;
        }
        _ => {
            wrong_type(ctx, entry, "an integer");
            return None;
        }
    };
    if v < min as f64 || v > u64::MAX as f64 {
        ctx.error(
            entry.value_at,
            Some(&entry.path),
            format!("must be a whole number of at least {min}"),
        );
        return None;
    }
    Some(v as u64)
}

/// A frequency or rate: a string with a unit, or a plain number of hertz.
fn read_frequency(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<f64> {
    match &entry.node.value {
        Value::Str(s) => match parse_frequency(s) {
            Ok(hz) => Some(hz),
            Err(message) => {
                ctx.error(entry.value_at, Some(&entry.path), message);
                None
            }
        },
        Value::Int(_) | Value::Float(_) => read_number(ctx, entry, 0.0, false),
        _ => {
            wrong_type(ctx, entry, "a frequency string such as \"100 MHz\"");
            None
        }
    }
}

fn is_identifier(name: &str) -> bool {
    let mut chars = name.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '$')
}

// Sections.

fn read_top(ctx: &mut Ctx<'_>, top: &mut Table<'_>, config: &mut Config) {
    if let Some(entry) = top.take("design") {
        if let Some(mut t) = read_table(ctx, entry) {
            read_design(ctx, &mut t, &mut config.design);
            t.finish(ctx, "[design]");
        }
    }
    if let Some(entry) = top.take("clocks") {
        if let Some(mut t) = read_table(ctx, entry) {
            read_clocks(ctx, &mut t, &mut config.clocks);
        }
    }
    if let Some(entry) = top.take("cells") {
        if let Some(mut t) = read_table(ctx, entry) {
            for cell in t.rest() {
                if let Some(c) = read_cell(ctx, cell) {
                    config.cells.insert(cell.name.to_string(), c);
                }
            }
        }
    }
    if let Some(entry) = top.take("constants") {
        if let Some(mut t) = read_table(ctx, entry) {
            read_constants(ctx, &mut t, &mut config.constants);
        }
    }
    if let Some(entry) = top.take("static") {
        if let Some(mut t) = read_table(ctx, entry) {
            if let Some(e) = t.take("signals") {
                if let Some(list) = read_string_list(ctx, e) {
                    config.static_signals = list.into_iter().map(|(s, _)| s).collect();
                }
            }
            t.finish(ctx, "[static]");
        }
    }
    if let Some(entry) = top.take("synchronizers") {
        if let Some(mut t) = read_table(ctx, entry) {
            if let Some(e) = t.take("modules") {
                if let Some(list) = read_string_list(ctx, e) {
                    config.synchronizers.modules = list.into_iter().map(|(s, _)| s).collect();
                }
            }
            if let Some(e) = t.take("min_stages") {
                if let Some(n) = read_count(ctx, e, 1) {
                    config.synchronizers.min_stages = n.min(u32::MAX as u64) as u32;
                }
            }
            t.finish(ctx, "[synchronizers]");
        }
    }
    if let Some(entry) = top.take("mtbf") {
        if let Some(mut t) = read_table(ctx, entry) {
            read_mtbf(ctx, &mut t, &mut config.mtbf);
            t.finish(ctx, "[mtbf]");
        }
    }
    if let Some(entry) = top.take("rules") {
        if let Some(mut t) = read_table(ctx, entry) {
            for rule in t.rest() {
                if default_severity(rule.name).is_none() {
                    ctx.error(
                        rule.key_at,
                        Some(&rule.path),
                        unknown_rule_message(rule.name),
                    );
                    continue;
                }
                let Some(text) = read_string(ctx, rule) else {
                    continue;
                };
                match Severity::parse(&text) {
                    Some(s) => {
                        config.rules.insert(rule.name.to_string(), s);
                    }
                    None => ctx.error(
                        rule.value_at,
                        Some(&rule.path),
                        format!(
                            "unknown severity \"{text}\" (expected one of: {})",
                            Severity::NAMES.join(", ")
                        ),
                    ),
                }
            }
        }
    }
    if let Some(entry) = top.take("waive") {
        read_waivers(ctx, entry, &mut config.waivers);
    }
    // [inputs] last: its values may name any clock of [clocks].
    if let Some(entry) = top.take("inputs") {
        if let Some(mut t) = read_table(ctx, entry) {
            for input in t.rest() {
                let Some(value) = read_name(ctx, input) else {
                    continue;
                };
                if config.clocks.contains_key(input.name) {
                    ctx.error(
                        input.key_at,
                        Some(&input.path),
                        format!("`{}` is a clock in [clocks], not a data input", input.name),
                    );
                } else if value != "async" && !config.clocks.contains_key(&value) {
                    ctx.error(
                        input.value_at,
                        Some(&input.path),
                        format!(
                            "unknown clock \"{value}\" (expected \"async\" or a key of [clocks]; \
                             declare the clock there, e.g. {} = {{}})",
                            join("", &value)
                        ),
                    );
                } else {
                    config.inputs.insert(input.name.to_string(), value);
                }
            }
        }
    }
}

fn read_design(ctx: &mut Ctx<'_>, t: &mut Table<'_>, design: &mut DesignConfig) {
    if let Some(e) = t.take("files") {
        if let Some(list) = read_string_list(ctx, e) {
            let mut ok = true;
            for (i, (pattern, at)) in list.iter().enumerate() {
                if let Err(message) = path_glob(pattern) {
                    ctx.error(*at, Some(&format!("{}[{i}]", e.path)), message);
                    ok = false;
                }
            }
            if ok {
                design.files = list.into_iter().map(|(s, _)| s).collect();
            }
        }
    }
    if let Some(e) = t.take("filelist") {
        design.filelist = read_name(ctx, e);
    }
    if let Some(e) = t.take("include_dirs") {
        if let Some(list) = read_string_list(ctx, e) {
            design.include_dirs = list.into_iter().map(|(s, _)| s).collect();
        }
    }
    if let Some(e) = t.take("defines") {
        if let Some(mut defines) = read_table(ctx, e) {
            for d in defines.rest() {
                if !is_identifier(d.name) {
                    ctx.error(
                        d.key_at,
                        Some(&d.path),
                        format!("`{}` is not a valid macro name", d.name),
                    );
                    continue;
                }
                let value = match &d.node.value {
                    Value::Str(s) => s.clone(),
                    Value::Int(i) => i.to_string(),
                    _ => {
                        wrong_type(ctx, d, "a string (use \"\" for a define without a value)");
                        continue;
                    }
                };
                design.defines.insert(d.name.to_string(), value);
            }
        }
    }
    if let Some(e) = t.take("top") {
        if let Some(list) = read_string_list(ctx, e) {
            let mut ok = true;
            for (i, (name, at)) in list.iter().enumerate() {
                if !is_identifier(name) {
                    ctx.error(
                        *at,
                        Some(&format!("{}[{i}]", e.path)),
                        format!("`{name}` is not a module name"),
                    );
                    ok = false;
                }
            }
            if ok {
                design.top = list.into_iter().map(|(s, _)| s).collect();
            }
        }
    }
    if let Some(e) = t.take("unconstrained_inputs") {
        if let Some(s) = read_string(ctx, e) {
            match s.as_str() {
                "ignore" => design.unconstrained_inputs = UnconstrainedInputs::Ignore,
                "async" => design.unconstrained_inputs = UnconstrainedInputs::Async,
                _ => ctx.error(
                    e.value_at,
                    Some(&e.path),
                    format!("unknown value \"{s}\" (expected \"ignore\" or \"async\")"),
                ),
            }
        }
    }
    if let Some(e) = t.take("max_file_bytes") {
        if let Some(n) = read_count(ctx, e, 1) {
            design.max_file_bytes = n;
        }
    }
    if let Some(e) = t.take("sdc") {
        design.sdc = read_name(ctx, e);
    }
}

fn read_clocks(ctx: &mut Ctx<'_>, t: &mut Table<'_>, clocks: &mut BTreeMap<String, ClockSpec>) {
    for clock in t.rest() {
        let Value::Table(entries) = &clock.node.value else {
            ctx.error(
                clock.value_at,
                Some(&clock.path),
                format!(
                    "expected a table such as {{ frequency = \"100 MHz\" }}, found {}",
                    type_name(&clock.node.value)
                ),
            );
            continue;
        };
        if clock.name.trim().is_empty() {
            ctx.error(
                clock.key_at,
                Some(&clock.path),
                "a clock name must not be empty".to_string(),
            );
            continue;
        }
        let mut spec_table = Table::new(&clock.path, clock.key_at, entries);
        let mut spec = ClockSpec {
            frequency_hz: None,
            group: None,
        };
        if let Some(e) = spec_table.take("frequency") {
            spec.frequency_hz = read_frequency(ctx, e);
        }
        if let Some(e) = spec_table.take("group") {
            spec.group = read_name(ctx, e);
        }
        spec_table.finish_with(ctx, "a [clocks] entry", &["frequency", "group"]);
        clocks.insert(clock.name.to_string(), spec);
    }
}

fn read_cell(ctx: &mut Ctx<'_>, entry: &Entry<'_>) -> Option<Cell> {
    let Value::Table(entries) = &entry.node.value else {
        wrong_type(
            ctx,
            entry,
            "a table such as { kind = \"clock-buffer\", input = \"i\", output = \"o\" }",
        );
        return None;
    };
    let mut t = Table::new(&entry.path, entry.key_at, entries);
    let Some(kind_entry) = t.take("kind") else {
        t.missing(ctx, "kind", &format!("one of: {}", Cell::KINDS.join(", ")));
        return None;
    };
    let kind = read_string(ctx, kind_entry)?;
    let pins: &[&str] = match kind.as_str() {
        "clock-buffer" => &["input", "output"],
        "clock-gate" => &["clock", "enable", "output"],
        "clock-mux" => &["inputs", "select", "output"],
        "clock-source" => &["outputs"],
        "synchronizer" => &["clock", "input", "output", "stages"],
        "flop" => &["clock", "input", "output"],
        "reset-synchronizer" => &["clock", "reset", "output", "stages"],
        _ => {
            ctx.error(
                kind_entry.value_at,
                Some(&kind_entry.path),
                format!(
                    "unknown cell kind \"{kind}\" (expected one of: {})",
                    Cell::KINDS.join(", ")
                ),
            );
            return None;
        }
    };
    let optional: &[&str] = if kind == "flop" { &["reset"] } else { &[] };
    let why = format!("a {kind} cell needs {}", pins.join(", "));

    let mut ok = true;
    let mut strings: BTreeMap<&str, String> = BTreeMap::new();
    let mut lists: BTreeMap<&str, Vec<String>> = BTreeMap::new();
    let mut stages = 0u32;
    // (pin name, offset, path) of every pin, to find a pin used twice.
    let mut used: Vec<(String, usize, String)> = Vec::new();
    for &name in pins.iter().chain(optional) {
        let Some(e) = t.take(name) else {
            if pins.contains(&name) {
                t.missing(ctx, name, &why);
                ok = false;
            }
            continue;
        };
        match name {
            "inputs" | "outputs" => match read_string_list(ctx, e) {
                Some(list) => {
                    let need = if name == "inputs" { 2 } else { 1 };
                    if list.len() < need {
                        let what = if name == "inputs" {
                            "a clock mux needs at least two inputs"
                        } else {
                            "a clock source needs at least one output"
                        };
                        ctx.error(e.value_at, Some(&e.path), what.to_string());
                        ok = false;
                    }
                    for (i, (pin, at)) in list.iter().enumerate() {
                        used.push((pin.clone(), *at, format!("{}[{i}]", e.path)));
                    }
                    lists.insert(name, list.into_iter().map(|(s, _)| s).collect());
                }
                None => ok = false,
            },
            "stages" => match read_count(ctx, e, 1) {
                Some(n) if n <= 64 => stages = n as u32,
                Some(_) => {
                    ctx.error(e.value_at, Some(&e.path), "must be at most 64".to_string());
                    ok = false;
                }
                None => ok = false,
            },
            _ => match read_name(ctx, e) {
                Some(pin) => {
                    used.push((pin.clone(), e.value_at, e.path.clone()));
                    strings.insert(name, pin);
                }
                None => ok = false,
            },
        }
    }
    let mut allowed: Vec<&str> = vec!["kind"];
    allowed.extend(pins);
    allowed.extend(optional);
    let what = format!("a {kind} cell");
    t.finish_with(ctx, &what, &allowed);
    for (i, (pin, at, path)) in used.iter().enumerate() {
        if used[..i].iter().any(|(p, _, _)| p == pin) {
            ctx.error(
                *at,
                Some(path),
                format!("pin `{pin}` is used twice in this cell"),
            );
            ok = false;
        }
    }
    if !ok {
        return None;
    }
    let reset = strings.remove("reset");
    if kind == "reset-synchronizer" {
        return Some(Cell::ResetSynchronizer {
            clock: strings.remove("clock").unwrap_or_default(),
            reset: reset.unwrap_or_default(),
            output: strings.remove("output").unwrap_or_default(),
            stages,
        });
    }
    let mut take = |name: &str| strings.remove(name).unwrap_or_default();
    Some(match kind.as_str() {
        "clock-buffer" => Cell::ClockBuffer {
            input: take("input"),
            output: take("output"),
        },
        "clock-gate" => Cell::ClockGate {
            clock: take("clock"),
            enable: take("enable"),
            output: take("output"),
        },
        "clock-mux" => Cell::ClockMux {
            inputs: lists.remove("inputs").unwrap_or_default(),
            select: take("select"),
            output: take("output"),
        },
        "clock-source" => Cell::ClockSource {
            outputs: lists.remove("outputs").unwrap_or_default(),
        },
        "synchronizer" => Cell::Synchronizer {
            clock: take("clock"),
            input: take("input"),
            output: take("output"),
            stages,
        },
        _ => Cell::Flop {
            clock: take("clock"),
            input: take("input"),
            output: take("output"),
            reset,
        },
    })
}

fn read_constants(ctx: &mut Ctx<'_>, t: &mut Table<'_>, constants: &mut BTreeMap<String, String>) {
    for c in t.rest() {
        let text = match &c.node.value {
            Value::Str(s) => s.clone(),
            Value::Int(i) if *i >= 0 => i.to_string(),
            Value::Bool(b) => if *b { "1'b1" } else { "1'b0" }.to_string(),
            _ => {
                wrong_type(ctx, c, "a Verilog literal such as \"1'b0\"");
                continue;
            }
        };
        match parse_constant(&text) {
            Ok(_) => {
                constants.insert(c.name.to_string(), text);
            }
            Err(message) => ctx.error(c.value_at, Some(&c.path), message),
        }
    }
}

fn read_mtbf(ctx: &mut Ctx<'_>, t: &mut Table<'_>, mtbf: &mut MtbfConfig) {
    let positive: [(&str, &mut f64); 4] = [
        ("target_years", &mut mtbf.target_years),
        ("tau_ps", &mut mtbf.tau_ps),
        ("window_ps", &mut mtbf.window_ps),
        ("data_rate", &mut mtbf.data_rate),
    ];
    for (name, slot) in positive {
        if let Some(e) = t.take(name) {
            if let Some(v) = read_number(ctx, e, 0.0, false) {
                *slot = v;
            }
        }
    }
    let non_negative: [(&str, &mut f64); 3] = [
        ("setup_ps", &mut mtbf.setup_ps),
        ("clock_to_q_ps", &mut mtbf.clock_to_q_ps),
        ("routing_ps", &mut mtbf.routing_ps),
    ];
    for (name, slot) in non_negative {
        if let Some(e) = t.take(name) {
            if let Some(v) = read_number(ctx, e, 0.0, true) {
                *slot = v;
            }
        }
    }
    if let Some(e) = t.take("units") {
        if let Some(n) = read_count(ctx, e, 1) {
            mtbf.units = n;
        }
    }
    if let Some(e) = t.take("async_toggle") {
        if let Some(hz) = read_frequency(ctx, e) {
            mtbf.async_toggle_hz = hz;
        }
    }
    if let Some(e) = t.take("toggle") {
        if let Some(mut rates) = read_table(ctx, e) {
            for r in rates.rest() {
                if let Some(hz) = read_frequency(ctx, r) {
                    mtbf.toggle.insert(r.name.to_string(), hz);
                }
            }
        }
    }
}

fn read_waivers(ctx: &mut Ctx<'_>, entry: &Entry<'_>, waivers: &mut Vec<Waiver>) {
    let Value::Array(items) = &entry.node.value else {
        wrong_type(
            ctx,
            entry,
            "an array of tables (write each entry as [[waive]])",
        );
        return;
    };
    for (i, item) in items.iter().enumerate() {
        let path = format!("{}[{i}]", entry.path);
        let at = item
            .span
            .as_ref()
            .map(|s| s.start)
            .unwrap_or(entry.value_at);
        let Value::Table(fields) = &item.value else {
            ctx.error(
                at,
                Some(&path),
                format!("expected a table, found {}", type_name(&item.value)),
            );
            continue;
        };
        let mut t = Table::new(&path, at, fields);
        let mut ok = true;
        let rule = match t.take("rule") {
            Some(e) => match read_string(ctx, e) {
                Some(r) if default_severity(&r).is_some() => Some(r),
                Some(r) => {
                    ctx.error(e.value_at, Some(&e.path), unknown_rule_message(&r));
                    None
                }
                None => None,
            },
            None => {
                t.missing(ctx, "rule", "a waiver names the rule it waives");
                None
            }
        };
        let mut glob =
            |t: &mut Table<'_>, ctx: &mut Ctx<'_>, name: &str, signal: bool| -> Option<String> {
                let e = t.take(name)?;
                let s = read_name(ctx, e);
                let Some(s) = s else {
                    ok = false;
                    return None;
                };
                let checked = if signal {
                    signal_glob(&s)
                } else {
                    path_glob(&s)
                };
                match checked {
                    Ok(_) => Some(s),
                    Err(message) => {
                        ctx.error(e.value_at, Some(&e.path), message);
                        ok = false;
                        None
                    }
                }
            };
        let signal = glob(&mut t, ctx, "signal", true);
        let file = glob(&mut t, ctx, "file", false);
        let reason = match t.take("reason") {
            Some(e) => {
                let r = read_string(ctx, e);
                if r.is_none() {
                    ok = false;
                }
                r
            }
            None => None,
        };
        t.finish_with(
            ctx,
            "a [[waive]] entry",
            &["rule", "signal", "file", "reason"],
        );
        let (Some(rule), true) = (rule, ok) else {
            continue;
        };
        let (line, column) = ctx.position(at);
        match Waiver::new(
            &rule,
            signal.as_deref(),
            file.as_deref(),
            reason.as_deref(),
            line,
            column,
        ) {
            Ok(w) => waivers.push(w),
            Err(message) => ctx.error(at, Some(&path), message),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------------------------

#[cfg(test)]
mod tests {
    use super::*;

    /// The example `seam.toml` of DESIGN.md section 5, verbatim.
    const DESIGN_EXAMPLE: &str = r#"[design]
files = ["rtl/**/*.sv", "rtl/**/*.v"]   # default: .v/.sv under the root, minus tb/ sim/ dv/ test/ folders
filelist = "rtl/files.f"                # -f style: one path a line, +incdir+DIR, +define+N=V, nested -f
include_dirs = ["rtl/include"]          # .vh/.svh are headers: included, never compiled alone
defines = { SYNTHESIS = "" }
top = ["pump_top"]                      # default: modules never instantiated (testbenches excluded)
unconstrained_inputs = "ignore"         # or "async"
max_file_bytes = 8_000_000              # larger files are skipped with a finding

[clocks]                                # key: top-level clock port, or hierarchical path to a clock source
clk_sys = { frequency = "100 MHz", group = "main" }
clk_half = { frequency = "50 MHz", group = "main" }
clk_adc = { frequency = "61.44 MHz" }   # no group: its own asynchronous domain
"u_pll.clk_out" = { frequency = "200 MHz" }

[cells]                                 # black-box cells and what their pins are
pump_clkbuf = { kind = "clock-buffer", input = "i", output = "o" }
pump_clkgate = { kind = "clock-gate", clock = "clk_i", enable = "en_i", output = "clk_o" }
pump_clkmux = { kind = "clock-mux", inputs = ["a", "b"], select = "s", output = "o" }
pump_pll = { kind = "clock-source", outputs = ["clk_out"] }
pump_sync = { kind = "synchronizer", clock = "clk", input = "d", output = "q", stages = 2 }
pump_dff = { kind = "flop", clock = "ck", input = "d", output = "q" }   # a library flip-flop

[constants]
test_mode = "1'b0"                      # pins a net (e.g. a clock-mux select) for the analysis

[inputs]                                # domain of top-level data inputs: "async" or a clock key
estop_n = "async"
flow_ovr = "clk_adc"

[static]
signals = ["u_cfg.speed_sel"]           # quasi-static: stable whenever sampled

[synchronizers]
modules = ["pump_sync2"]
min_stages = 2

[mtbf]
target_years = 1000.0  # for the whole design (times `units`)
units = 1              # devices in the field
tau_ps = 25.0          # resolution time constant τ (placeholder: use vendor data)
window_ps = 50.0       # metastability window T_W (T0) (placeholder)
setup_ps = 50.0
clock_to_q_ps = 100.0
routing_ps = 0.0       # wire delay between stages
data_rate = 0.5        # source transitions per source clock cycle
async_toggle = "1 MHz" # transitions per second assumed for async inputs
[mtbf.toggle]          # per-signal transition rates
"u_cfg.speed_sel" = "10 Hz"

[rules]
reconvergence = "warning"

[[waive]]
rule = "unsynchronized-crossing"
signal = "u_vendor_ip.*"
reason = "vendor IP, synchronized inside the hard macro"
"#;

    fn s(x: &str) -> String {
        x.to_string()
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-9 * b.abs().max(1.0)
    }

    /// Parses `text`, expecting exactly one error; returns it.
    fn one_error(text: &str) -> ConfigError {
        match parse_config_all("seam.toml", text) {
            Ok(c) => panic!("expected an error, got {c:?}"),
            Err(errors) => {
                assert_eq!(errors.len(), 1, "expected one error, got {errors:#?}");
                errors.into_iter().next().unwrap()
            }
        }
    }

    // Reference: DESIGN.md section 5 (the example file and its comments give the values).
    #[test]
    fn design_example_parses_with_expected_values() {
        let c = parse_config("seam.toml", DESIGN_EXAMPLE).expect("the DESIGN.md example parses");

        assert_eq!(c.design.files, vec![s("rtl/**/*.sv"), s("rtl/**/*.v")]);
        assert_eq!(c.design.filelist.as_deref(), Some("rtl/files.f"));
        assert_eq!(c.design.include_dirs, vec![s("rtl/include")]);
        assert_eq!(
            c.design.defines.get("SYNTHESIS").map(String::as_str),
            Some("")
        );
        assert_eq!(c.design.top, vec![s("pump_top")]);
        assert_eq!(c.design.unconstrained_inputs, UnconstrainedInputs::Ignore);
        assert_eq!(c.design.max_file_bytes, 8_000_000);
        assert_eq!(c.design.sdc, None);

        assert_eq!(c.clocks.len(), 4);
        assert!(close(c.clocks["clk_sys"].frequency_hz.unwrap(), 100e6));
        assert_eq!(c.clocks["clk_sys"].group.as_deref(), Some("main"));
        assert!(close(c.clocks["clk_half"].frequency_hz.unwrap(), 50e6));
        assert_eq!(c.clocks["clk_half"].group.as_deref(), Some("main"));
        assert!(close(c.clocks["clk_adc"].frequency_hz.unwrap(), 61.44e6));
        assert_eq!(c.clocks["clk_adc"].group, None);
        assert!(close(
            c.clocks["u_pll.clk_out"].frequency_hz.unwrap(),
            200e6
        ));
        assert_eq!(c.domain_of_clock("clk_half"), "main");
        assert_eq!(c.domain_of_clock("clk_adc"), "clk_adc");

        assert_eq!(c.cells.len(), 6);
        assert_eq!(
            c.cells["pump_clkbuf"],
            Cell::ClockBuffer {
                input: s("i"),
                output: s("o")
            }
        );
        assert_eq!(
            c.cells["pump_clkgate"],
            Cell::ClockGate {
                clock: s("clk_i"),
                enable: s("en_i"),
                output: s("clk_o")
            }
        );
        assert_eq!(
            c.cells["pump_clkmux"],
            Cell::ClockMux {
                inputs: vec![s("a"), s("b")],
                select: s("s"),
                output: s("o")
            }
        );
        assert_eq!(
            c.cells["pump_pll"],
            Cell::ClockSource {
                outputs: vec![s("clk_out")]
            }
        );
        assert_eq!(
            c.cells["pump_sync"],
            Cell::Synchronizer {
                clock: s("clk"),
                input: s("d"),
                output: s("q"),
                stages: 2
            }
        );
        assert_eq!(
            c.cells["pump_dff"],
            Cell::Flop {
                clock: s("ck"),
                input: s("d"),
                output: s("q"),
                reset: None
            }
        );

        assert_eq!(
            c.constants.get("test_mode").map(String::as_str),
            Some("1'b0")
        );
        assert_eq!(c.inputs.get("estop_n").map(String::as_str), Some("async"));
        assert_eq!(
            c.inputs.get("flow_ovr").map(String::as_str),
            Some("clk_adc")
        );
        assert_eq!(c.static_signals, vec![s("u_cfg.speed_sel")]);
        assert_eq!(c.synchronizers.modules, vec![s("pump_sync2")]);
        assert_eq!(c.synchronizers.min_stages, 2);

        let m = &c.mtbf;
        assert_eq!(
            (m.target_years, m.units, m.tau_ps, m.window_ps, m.setup_ps),
            (1000.0, 1, 25.0, 50.0, 50.0)
        );
        assert_eq!(
            (m.clock_to_q_ps, m.routing_ps, m.data_rate),
            (100.0, 0.0, 0.5)
        );
        assert!(close(m.async_toggle_hz, 1e6));
        assert!(close(m.toggle["u_cfg.speed_sel"], 10.0));

        assert_eq!(c.rules.get("reconvergence"), Some(&Severity::Warning));
        assert_eq!(c.severity("reconvergence"), Severity::Warning);
        assert_eq!(c.severity("unsynchronized-crossing"), Severity::Error);

        assert_eq!(c.waivers.len(), 1);
        let w = &c.waivers[0];
        assert_eq!(w.rule, "unsynchronized-crossing");
        assert_eq!(w.signal.as_deref(), Some("u_vendor_ip.*"));
        assert_eq!(w.file, None);
        assert_eq!(
            w.reason.as_deref(),
            Some("vendor IP, synchronized inside the hard macro")
        );
        let header_line = DESIGN_EXAMPLE
            .lines()
            .position(|l| l == "[[waive]]")
            .unwrap()
            + 1;
        assert_eq!(w.line, header_line);

        // Key locations point at the key's own line in the example.
        let adc_line = DESIGN_EXAMPLE
            .lines()
            .position(|l| l.starts_with("clk_adc ="))
            .unwrap()
            + 1;
        assert_eq!(c.location("clocks.clk_adc"), Some((adc_line, 1)));
        assert!(c.location("clocks.\"u_pll.clk_out\"").is_some());
    }

    // Reference: DESIGN.md section 5 ("every key optional") and the defaults it lists.
    #[test]
    fn empty_text_gives_defaults() {
        for text in ["", "\n\n", "# only a comment\n", "\u{feff}"] {
            let c = parse_config("seam.toml", text).unwrap();
            assert_eq!(c, Config::default());
        }
        let d = Config::default();
        assert!(d.design.files.is_empty());
        assert_eq!(d.design.unconstrained_inputs, UnconstrainedInputs::Ignore);
        assert_eq!(d.design.max_file_bytes, 8_000_000);
        assert_eq!(d.synchronizers.min_stages, 2);
        assert_eq!(d.mtbf.target_years, 1000.0);
        assert_eq!(d.mtbf.units, 1);
        assert_eq!(d.mtbf.tau_ps, 25.0);
        assert_eq!(d.mtbf.window_ps, 50.0);
        assert_eq!(d.mtbf.setup_ps, 50.0);
        assert_eq!(d.mtbf.clock_to_q_ps, 100.0);
        assert_eq!(d.mtbf.routing_ps, 0.0);
        assert_eq!(d.mtbf.data_rate, 0.5);
        assert_eq!(d.mtbf.async_toggle_hz, 1e6);
        assert_eq!(d.severity("unused-waiver"), Severity::Hint);
        assert!(d.waivers.is_empty());
    }

    // Reference: DESIGN.md section 4 table (ids and defaults).
    #[test]
    fn rule_table_matches_design_section_4() {
        assert_eq!(RULE_IDS.len(), 15);
        assert_eq!(RULES.len(), RULE_IDS.len());
        for (id, (rid, _)) in RULE_IDS.iter().zip(RULES) {
            assert_eq!(id, rid);
        }
        assert_eq!(default_severity("reconvergence"), Some(Severity::Warning));
        assert_eq!(default_severity("syntax-error"), Some(Severity::Error));
        assert_eq!(default_severity("unresolved-module"), Some(Severity::Hint));
        assert_eq!(default_severity("no-such-rule"), None);
    }

    #[test]
    fn error_display_format() {
        let text = "[clocks]\nclk_adc = { frequency = \"fast\" }\n";
        let e = one_error(text);
        assert_eq!(
            e.to_string(),
            "seam.toml:2:25: clocks.clk_adc.frequency: bad frequency \"fast\" (expected e.g. \"100 MHz\" or \"8 ns\")"
        );
    }

    // Each bad input: the error's line, column and key, and a message naming the problem.
    #[test]
    fn bad_frequency_points_at_value() {
        let e = one_error("[clocks]\nclk_sys = { frequency = \"100 MHz\" }\n\nclk_adc = { frequency = \"fast\" }\n");
        assert_eq!((e.line, e.column), (4, 25));
        assert_eq!(e.key.as_deref(), Some("clocks.clk_adc.frequency"));
        // In a header table too.
        let e = one_error("[clocks.clk_adc]\nfrequency = \"12 furlongs\"\n");
        assert_eq!((e.line, e.column), (2, 13));
        assert_eq!(e.key.as_deref(), Some("clocks.clk_adc.frequency"));
        assert!(
            e.message.contains("unknown unit \"furlongs\""),
            "{}",
            e.message
        );
    }

    #[test]
    fn unknown_section_and_key_are_errors() {
        let e = one_error("[design]\ntop = [\"pump_top\"]\n\n[clock]\nclk = {}\n");
        assert_eq!((e.line, e.column, e.key.as_deref()), (4, 2, Some("clock")));
        assert!(
            e.message.contains("did you mean `clocks`?"),
            "{}",
            e.message
        );

        let e = one_error("[design]\ntop = [\"pump_top\"]\nfile = [\"a.v\"]\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (3, 1, Some("design.file"))
        );
        assert!(e.message.contains("unknown key `file`"), "{}", e.message);

        let e = one_error("[clocks]\nclk_sys = { frequency = \"100 MHz\", domain = \"x\" }\n");
        assert_eq!((e.line, e.column), (2, 36));
        assert_eq!(e.key.as_deref(), Some("clocks.clk_sys.domain"));

        let e = one_error("[mtbf]\ntau_ps = 25.0\n[mtbf.toggles]\n\"a\" = \"1 Hz\"\n");
        assert_eq!((e.line, e.key.as_deref()), (3, Some("mtbf.toggles")));
        assert!(
            e.message.contains("did you mean `toggle`?"),
            "{}",
            e.message
        );
    }

    #[test]
    fn dotted_keys_at_top_level_are_checked_too() {
        let c = parse_config(
            "seam.toml",
            "design.top = [\"pump_top\"]\nmtbf.toggle.\"u_a.b\" = 5\n",
        )
        .unwrap();
        assert_eq!(c.design.top, vec![s("pump_top")]);
        assert_eq!(c.mtbf.toggle["u_a.b"], 5.0);
        let e = one_error("design.tops = [\"pump_top\"]\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (1, 8, Some("design.tops"))
        );
    }

    #[test]
    fn inputs_naming_unknown_clock() {
        let e = one_error(
            "[inputs]\nestop_n = \"async\"\nflow_ovr = \"clk_adc\"\n\n[clocks]\nclk_sys = {}\n",
        );
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (3, 12, Some("inputs.flow_ovr"))
        );
        assert!(
            e.message.contains("unknown clock \"clk_adc\""),
            "{}",
            e.message
        );
        // A clock declared with no frequency is enough.
        let c = parse_config(
            "seam.toml",
            "[inputs]\nflow_ovr = \"clk_adc\"\n[clocks]\nclk_adc = {}\n",
        )
        .unwrap();
        assert_eq!(c.inputs["flow_ovr"], "clk_adc");
        assert_eq!(c.clocks["clk_adc"].frequency_hz, None);
        // A clock is not a data input.
        let e = one_error("[clocks]\nclk_sys = {}\n[inputs]\nclk_sys = \"async\"\n");
        assert_eq!((e.line, e.key.as_deref()), (4, Some("inputs.clk_sys")));
    }

    #[test]
    fn unknown_rule_and_severity() {
        let e = one_error("[rules]\nreconvergence = \"warning\"\nreconvergense = \"off\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (3, 1, Some("rules.reconvergense"))
        );
        assert!(
            e.message.contains("did you mean `reconvergence`?"),
            "{}",
            e.message
        );

        let e = one_error("[rules]\npulse-loss = \"fatal\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 14, Some("rules.pulse-loss"))
        );
        assert!(
            e.message.contains("unknown severity \"fatal\""),
            "{}",
            e.message
        );
    }

    #[test]
    fn waiver_errors() {
        // Unknown rule in the second entry.
        let text =
            "[[waive]]\nrule = \"low-mtbf\"\nreason = \"ok\"\n\n[[waive]]\nrule = \"crossing\"\n";
        let e = one_error(text);
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (6, 8, Some("waive[1].rule"))
        );
        assert!(
            e.message.starts_with("unknown rule `crossing`"),
            "{}",
            e.message
        );

        // Unknown field.
        let e = one_error("[[waive]]\nrule = \"low-mtbf\"\nsignals = \"u_a.*\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (3, 1, Some("waive[0].signals"))
        );
        assert!(
            e.message.contains("did you mean `signal`?"),
            "{}",
            e.message
        );

        // Missing rule: points at the [[waive]] header.
        let e = one_error("\n[[waive]]\nsignal = \"u_a.*\"\n");
        assert_eq!((e.line, e.key.as_deref()), (2, Some("waive[0].rule")));

        // Bad glob.
        let e = one_error("[[waive]]\nrule = \"low-mtbf\"\nfile = \"rtl/[a.v\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (3, 8, Some("waive[0].file"))
        );
        assert!(e.message.starts_with("bad glob"), "{}", e.message);

        // `[waive]` instead of `[[waive]]`.
        let e = one_error("[waive]\nrule = \"low-mtbf\"\n");
        assert_eq!((e.line, e.key.as_deref()), (1, Some("waive")));
        assert!(e.message.contains("[[waive]]"), "{}", e.message);
    }

    #[test]
    fn incomplete_or_wrong_cells() {
        let e =
            one_error("[cells]\npump_dff = { kind = \"flop\", clock = \"ck\", input = \"d\" }\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 1, Some("cells.pump_dff.output"))
        );
        assert!(e.message.contains("missing key `output`"), "{}", e.message);

        let e = one_error("[cells.pump_sync]\nkind = \"synchronizer\"\nclock = \"clk\"\ninput = \"d\"\noutput = \"q\"\n");
        assert_eq!(
            (e.line, e.key.as_deref()),
            (1, Some("cells.pump_sync.stages"))
        );

        let e = one_error("[cells]\npump_pll = { kind = \"pll\", outputs = [\"o\"] }\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 21, Some("cells.pump_pll.kind"))
        );
        assert!(
            e.message.contains("unknown cell kind \"pll\""),
            "{}",
            e.message
        );

        let e = one_error("[cells]\npump_dff = { kind = \"flop\", clock = \"ck\", input = \"d\", output = \"q\", stages = 2 }\n");
        assert_eq!(e.key.as_deref(), Some("cells.pump_dff.stages"));
        assert!(e.message.contains("in a flop cell"), "{}", e.message);

        let e = one_error("[cells]\nm = { kind = \"clock-mux\", inputs = [\"a\"], select = \"s\", output = \"o\" }\n");
        assert_eq!(e.key.as_deref(), Some("cells.m.inputs"));

        let e =
            one_error("[cells]\nb = { kind = \"clock-buffer\", input = \"i\", output = \"i\" }\n");
        assert_eq!(e.key.as_deref(), Some("cells.b.output"));
        assert!(e.message.contains("used twice"), "{}", e.message);

        let e =
            one_error("[cells]\nb = { kind = \"clock-buffer\", input = \"i\", output = \"\" }\n");
        assert_eq!(e.key.as_deref(), Some("cells.b.output"));

        let c = parse_config(
            "seam.toml",
            "[cells]\npump_dffr = { kind = \"flop\", clock = \"ck\", input = \"d\", output = \"q\", reset = \"rn\" }\n",
        )
        .unwrap();
        assert_eq!(
            c.cells["pump_dffr"],
            Cell::Flop {
                clock: s("ck"),
                input: s("d"),
                output: s("q"),
                reset: Some(s("rn"))
            }
        );
        assert_eq!(c.cells["pump_dffr"].kind(), "flop");
    }

    #[test]
    fn wrong_types() {
        let e = one_error("[design]\nfiles = \"rtl/*.sv\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 9, Some("design.files"))
        );
        assert_eq!(e.message, "expected an array of strings, found a string");

        let e = one_error("[design]\ntop = [\"pump_top\", 3]\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 20, Some("design.top[1]"))
        );

        let e = one_error("[mtbf]\nunits = 2.5\n");
        assert_eq!((e.line, e.key.as_deref()), (2, Some("mtbf.units")));

        let e = one_error("[mtbf]\ntau_ps = -1\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 10, Some("mtbf.tau_ps"))
        );

        let e = one_error("[synchronizers]\nmin_stages = 0\n");
        assert_eq!(e.key.as_deref(), Some("synchronizers.min_stages"));

        let e = one_error("[design]\nunconstrained_inputs = \"asynch\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 24, Some("design.unconstrained_inputs"))
        );

        let e = one_error("design = 3\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (1, 10, Some("design"))
        );

        let e = one_error("[design]\nmax_file_bytes = 1979-05-27\n");
        assert_eq!(e.key.as_deref(), Some("design.max_file_bytes"));
        assert!(e.message.contains("found a date-time"), "{}", e.message);
    }

    #[test]
    fn bad_constants_and_defines() {
        let e = one_error("[constants]\ntest_mode = \"1'bx\"\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 13, Some("constants.test_mode"))
        );
        assert!(e.message.contains("x, z and ? bits"), "{}", e.message);

        let e = one_error("[design.defines]\n\"9BAD\" = \"1\"\n");
        assert_eq!((e.line, e.key.as_deref()), (2, Some("design.defines.9BAD")));

        let c = parse_config(
            "seam.toml",
            "[constants]\na = 0\nb = true\n[design.defines]\nW = 8\n",
        )
        .unwrap();
        assert_eq!(c.constants["a"], "0");
        assert_eq!(c.constants["b"], "1'b1");
        assert_eq!(c.design.defines["W"], "8");
    }

    #[test]
    fn syntax_errors_have_positions() {
        let e = one_error("[design]\ntop = [\"pump_top\"\n\n[clocks]\n");
        assert_eq!(e.key, None);
        assert!(e.line >= 2, "{e}");
        assert!(!e.message.contains('\n'));

        let e = one_error("[design]\ntop = []\ntop = []\n");
        assert_eq!(e.line, 3, "{e}");
        assert!(e.message.contains("duplicate"), "{}", e.message);

        let e = one_error("[design\n");
        assert_eq!(e.line, 1);
    }

    #[test]
    fn several_errors_are_all_reported_in_order() {
        let text =
            "[rules]\nbogus = \"off\"\n[clocks]\na = { frequency = \"x\" }\n[design]\ntopp = []\n";
        let errors = parse_config_all("p/seam.toml", text).unwrap_err();
        let lines: Vec<usize> = errors.iter().map(|e| e.line).collect();
        assert_eq!(lines, vec![2, 4, 6]);
        assert!(errors.iter().all(|e| e.file == "p/seam.toml"));
        // parse_config gives the first.
        assert_eq!(parse_config("p/seam.toml", text).unwrap_err(), errors[0]);
    }

    #[test]
    fn columns_count_code_points() {
        // "τ" is two bytes in UTF-8 but one column.
        let e = one_error("[mtbf.toggle]\n\"u_τ.x\" = \"fast\"\n");
        assert_eq!((e.line, e.column), (2, 11));
        assert_eq!(e.key.as_deref(), Some("mtbf.toggle.\"u_τ.x\""));
    }

    // Reference: SI prefixes (k = 1e3, M = 1e6, G = 1e9; n = 1e-9, p = 1e-12, µ = 1e-6) and
    // f = 1/T.
    #[test]
    fn frequencies_and_periods() {
        let cases = [
            ("100 MHz", 100e6),
            ("61.44 MHz", 61.44e6),
            ("1 kHz", 1e3),
            ("2 GHz", 2e9),
            ("10 Hz", 10.0),
            ("100MHz", 100e6),
            ("  33.333 mhz ", 33.333e6),
            ("8 ns", 125e6),
            ("10 ps", 100e9),
            ("1 us", 1e6),
            ("1 µs", 1e6),
            ("2.5 ms", 400.0),
            ("1e3 Hz", 1e3),
        ];
        for (text, hz) in cases {
            let got = parse_frequency(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(close(got, hz), "{text}: {got} != {hz}");
        }
        for bad in [
            "fast", "", "100", "MHz", "0 MHz", "-5 MHz", "0 ns", "inf Hz", "1e999 Hz", "5 MHZz",
            "1,5 MHz",
        ] {
            assert!(parse_frequency(bad).is_err(), "{bad:?} should be refused");
        }
        assert_eq!(
            parse_frequency("fast").unwrap_err(),
            "bad frequency \"fast\" (expected e.g. \"100 MHz\" or \"8 ns\")"
        );
    }

    #[test]
    fn numbers_are_hertz_where_a_frequency_is_expected() {
        let c = parse_config(
            "seam.toml",
            "[clocks]\nclk = { frequency = 25e6 }\n[mtbf]\nasync_toggle = 1000\n",
        )
        .unwrap();
        assert_eq!(c.clocks["clk"].frequency_hz, Some(25e6));
        assert_eq!(c.mtbf.async_toggle_hz, 1000.0);
        let e = one_error("[clocks]\nclk = { frequency = 0 }\n");
        assert_eq!(e.key.as_deref(), Some("clocks.clk.frequency"));
    }

    #[test]
    fn frequency_formatting_round_trips() {
        for (hz, text) in [
            (61.44e6, "61.44 MHz"),
            (1e3, "1 kHz"),
            (2.5e9, "2.5 GHz"),
            (10.0, "10 Hz"),
            (100e6, "100 MHz"),
        ] {
            assert_eq!(format_frequency(hz), text);
            assert!(close(parse_frequency(text).unwrap(), hz));
        }
    }

    // Reference: IEEE 1800-2017 section 5.7.1 (integer literal constants).
    #[test]
    fn constant_literals() {
        assert_eq!(
            parse_constant("1'b0"),
            Ok(ConstValue::Number {
                width: Some(1),
                value: 0
            })
        );
        assert_eq!(
            parse_constant("4'hA"),
            Ok(ConstValue::Number {
                width: Some(4),
                value: 10
            })
        );
        assert_eq!(
            parse_constant("8'd255"),
            Ok(ConstValue::Number {
                width: Some(8),
                value: 255
            })
        );
        assert_eq!(
            parse_constant("3'o7"),
            Ok(ConstValue::Number {
                width: Some(3),
                value: 7
            })
        );
        assert_eq!(
            parse_constant("8'sb1010_0101"),
            Ok(ConstValue::Number {
                width: Some(8),
                value: 0xA5
            })
        );
        assert_eq!(
            parse_constant("'hFF"),
            Ok(ConstValue::Number {
                width: None,
                value: 255
            })
        );
        assert_eq!(
            parse_constant("42"),
            Ok(ConstValue::Number {
                width: None,
                value: 42
            })
        );
        assert_eq!(parse_constant("'1"), Ok(ConstValue::Fill(true)));
        assert_eq!(parse_constant("'0"), Ok(ConstValue::Fill(false)));
        for bad in [
            "", "x", "1'bz", "4'b1x01", "2'b111", "0'b0", "1'q0", "1'b", "'x", "1'b2",
        ] {
            assert!(parse_constant(bad).is_err(), "{bad:?} should be refused");
        }
    }

    // Reference: DESIGN.md section 4 (waivers: rule, signal path glob, file glob, reason).
    #[test]
    fn waiver_matching() {
        let text = "[[waive]]\nrule = \"unsynchronized-crossing\"\nsignal = \"u_vendor_ip.*\"\nreason = \"  \"\n\
                    [[waive]]\nrule = \"gated-clock\"\nfile = \"rtl/vendor/*.v\"\nreason = \"hard macro\"\n";
        let c = parse_config("seam.toml", text).unwrap();
        let (a, b) = (&c.waivers[0], &c.waivers[1]);
        assert_eq!(a.reason, None, "a blank reason counts as none");
        assert_eq!((a.line, b.line), (1, 5));
        assert!(a.matches(
            "unsynchronized-crossing",
            Some("u_vendor_ip.u_core.rdy_q"),
            None
        ));
        assert!(!a.matches("unsynchronized-crossing", Some("u_pump.rdy_q"), None));
        assert!(!a.matches("multibit-crossing", Some("u_vendor_ip.x"), None));
        assert!(!a.matches("unsynchronized-crossing", None, Some("rtl/a.v")));
        assert!(b.matches("gated-clock", None, Some("rtl/vendor/pll.v")));
        assert!(
            !b.matches("gated-clock", None, Some("rtl/vendor/deep/pll.v")),
            "* stays in a folder"
        );
        assert!(!b.matches("gated-clock", None, None));
    }

    #[test]
    fn file_globs() {
        let c = parse_config("seam.toml", "[design]\nfiles = [\"rtl/**/*.sv\"]\n").unwrap();
        let set = c.design.file_globs().unwrap();
        assert!(set.is_match("rtl/pump/ctrl.sv"));
        assert!(set.is_match("rtl/ctrl.sv"));
        assert!(!set.is_match("tb/ctrl.sv"));
        assert!(Config::default().design.file_globs().is_none());
        let e = one_error("[design]\nfiles = [\"rtl/**/*.sv\", \"rtl/{a\"]\n");
        assert_eq!(
            (e.line, e.column, e.key.as_deref()),
            (2, 25, Some("design.files[1]"))
        );
    }

    // Reference: docs/configuration.md: every TOML example in the user docs is valid.
    #[test]
    fn documentation_examples_parse() {
        let docs = include_str!("../../docs/configuration.md");
        let mut blocks = 0;
        for block in docs.split("```toml\n").skip(1) {
            let text = block.split("```").next().unwrap();
            if let Err(e) = parse_config("docs/configuration.md", text) {
                panic!("example {blocks} does not parse: {e}\n{text}");
            }
            blocks += 1;
        }
        assert!(blocks >= 10, "found only {blocks} examples");
    }

    #[test]
    fn hostile_input_never_panics() {
        let inputs = [
            "[[[",
            "a = \"\\u{zzzz}\"",
            "[clocks]\n\"\" = { frequency = \"1 Hz\" }\n",
            "[design]\nmax_file_bytes = 99999999999999999999\n",
            "[mtbf]\nunits = -3\n",
            "[mtbf]\ntarget_years = nan\n",
            "[mtbf]\ntau_ps = inf\n",
            "[cells]\nx = 3\n",
            "[cells.x]\n",
            "[cells]\nx = { kind = 7 }\n",
            "[[cells]]\nkind = \"flop\"\n",
            "[rules]\nlow-mtbf = { x = 1 }\n",
            "[[waive]]\n[[waive]]\nrule = 3\nsignal = [\"a\"]\nreason = 4\n",
            "waive = [1, 2]\n",
            "[inputs]\na = \"\"\n",
            "[cells]\np = { kind = \"synchronizer\", clock = \"c\", input = \"d\", output = \"q\", stages = 1000 }\n",
            &"[a]\n".repeat(1000),
            &format!("x = {}1{}\n", "[".repeat(500), "]".repeat(500)),
        ];
        for text in inputs {
            let result = parse_config_all("seam.toml", text);
            let errors = result.expect_err(text);
            assert!(!errors.is_empty());
            for e in errors {
                assert!(e.line >= 1 && e.column >= 1, "{e}");
            }
        }
    }
}
