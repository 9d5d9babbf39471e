//! `seam explain RULE-ID`: print a rule's documentation page (docs/rules/<id>.md).
//!
//! The pages are embedded at build time (server/build.rs generates the list), so an installed
//! binary can explain rules without the source tree. A rule whose page is not written yet gets
//! its one-line summary and a note that the page is missing. The summaries also feed the SARIF
//! rule descriptors and the HTML report.

use std::process::ExitCode;

use clap::Args;
use seam_analysis::config::RULES;

mod pages {
    include!(concat!(env!("OUT_DIR"), "/rule_docs.rs"));
}

#[derive(Args)]
pub struct ExplainArgs {
    /// Rule id, e.g. `unsynchronized-crossing` (without one: list every rule).
    pub rule: Option<String>,
}

/// One line per rule: what a finding of it means (DESIGN.md section 4).
pub const SUMMARIES: &[(&str, &str)] = &[
    ("unsynchronized-crossing", "A register (or memory write port, or clock-gate enable) in one clock domain samples a signal from another domain, or an asynchronous input, with no synchronizer chain and no safe multi-bit scheme."),
    ("logic-before-synchronizer", "The first synchronizer stage samples combinational logic of source-domain signals instead of exactly one register bit, so glitches can be captured."),
    ("multibit-crossing", "Bits of one source vector (or several related bits) cross through separate chains with no safe scheme, so they can arrive in different destination cycles."),
    ("reconvergence", "Separately synchronized signals from one source domain meet again in destination logic, where their relative timing is not preserved."),
    ("synchronizer-stage-fanout", "A synchronizer stage before the minimum stage count is read by something other than the next stage."),
    ("derived-clock", "A register output (directly or through buffers) is used as a clock; consider a clock-enable strobe on the parent clock."),
    ("gated-clock", "Plain logic other than a buffer or inverter sits in a clock path; use a clock enable or a declared clock-gate cell."),
    ("clock-as-data", "A clock net is used as data: sampled by a register or used in logic other than a declared clock cell or a recognized gate."),
    ("async-reset-release", "A register's asynchronous reset is released asynchronously to its clock: it comes from a top-level input or another domain without a reset synchronizer for that domain."),
    ("pulse-loss", "A one-cycle pulse crosses from a faster to a slower domain through a level synchronizer and can vanish; use a toggle/pulse synchronizer or a handshake."),
    ("low-mtbf", "The estimated MTBF of a synchronizer, or of the whole design, is below the [mtbf] target_years."),
    ("syntax-error", "The file could not be parsed; its modules are treated as black boxes and the rest of the design is still analysed."),
    ("unresolved-module", "An instantiated module has no definition and no [cells] entry; it is treated as a black box."),
    ("unconstrained-input", "A top-level data input has no domain in [inputs]; its crossings are not checked."),
    ("unused-waiver", "A waiver (inline comment or [[waive]] entry) matches no finding."),
];

/// The one-line summary of a rule ("" for an unknown id).
pub fn summary(rule: &str) -> &'static str {
    SUMMARIES
        .iter()
        .find(|(id, _)| *id == rule)
        .map(|(_, s)| *s)
        .unwrap_or("")
}

/// The embedded page docs/rules/<id>.md, when it existed at build time.
pub fn page(rule: &str) -> Option<&'static str> {
    pages::RULE_DOCS
        .iter()
        .find(|(id, _)| *id == rule)
        .map(|(_, t)| *t)
}

fn known(rule: &str) -> bool {
    RULES.iter().any(|(id, _)| *id == rule)
}

pub fn run(a: ExplainArgs) -> ExitCode {
    let Some(rule) = a.rule else {
        for (id, sev) in RULES {
            println!("{id:<28} {:<8} {}", sev.as_str(), summary(id));
        }
        return ExitCode::SUCCESS;
    };
    let rule = rule.trim();
    if !known(rule) {
        let ids: Vec<&str> = RULES.iter().map(|(id, _)| *id).collect();
        return super::usage_error(format!(
            "unknown rule \"{rule}\"; rules: {}",
            ids.join(", ")
        ));
    }
    match page(rule) {
        Some(text) => {
            print!("{text}");
            if !text.ends_with('\n') {
                println!();
            }
        }
        None => {
            println!("{rule}: {}", summary(rule));
            println!();
            println!("(The rule page docs/rules/{rule}.md is not written yet.)");
        }
    }
    ExitCode::SUCCESS
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_rule_has_a_summary_and_no_summary_is_orphaned() {
        for (id, _) in RULES {
            assert!(!summary(id).is_empty(), "{id} has no summary");
        }
        for (id, _) in SUMMARIES {
            assert!(known(id), "summary for unknown rule {id}");
        }
    }
}
