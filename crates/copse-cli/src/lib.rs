//! copse-cli as a library: the pieces of the `copse` command (arguments, outputs,
//! reports, subcommands), so the
//! binary in `main.rs` stays a thin shell and fuzz targets and property tests can call
//! the readers and decoders directly.
#![forbid(unsafe_code)]
#![deny(missing_docs)]
// Tests may unwrap: a panic there is a failed test, not a user-facing crash.
#![cfg_attr(test, allow(clippy::unwrap_used))]

// Flattened clap groups take no doc comment of their own (it would become help text).
#[allow(missing_docs)]
pub mod args;
pub mod commands;
pub mod decision_args;
pub mod demo_data;
pub mod error;
pub mod harness;
pub mod help;
pub mod interrupt;
pub mod memory;
pub mod numbers;
pub mod output;
pub mod plots;
pub mod plots_decision;
pub mod plots_effect;
mod plots_palette;
mod plots_ranked;
pub mod plots_tune;
pub mod report;
pub mod ui;
