//! One file per rule. Each `check` reads the shared classification and adds its findings.

pub mod async_reset_release;
pub mod clock_as_data;
pub mod derived_clock;
pub mod gated_clock;
pub mod logic_before_synchronizer;
pub mod low_mtbf;
pub mod multibit_crossing;
pub mod pulse_loss;
pub mod reconvergence;
pub mod synchronizer_stage_fanout;
pub mod unsynchronized_crossing;
