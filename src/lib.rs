//! capstack: from inspection data to measured capability and a stack forecast.
//!
//! Data flows one way: **files → intake → statistics → stack forecast → output**.
//!
//! - [`intake`] reads CSV and Parquet inspection data and spec sheets into a [`intake::Dataset`],
//!   with an audit of every row and cell.
//! - [`stats`] holds the pure numerics: moments, control-chart constants, capability indices
//!   and their bounds, normality tests.
//! - [`stack`] reads the stack file and computes worst case, RSS under the design assumption,
//!   the measured forecast and the verdict.
//! - [`output`] renders the same result structs as tables, JSON and CSV.
//! - [`cmd`] has one file per subcommand, each a short `run`.

pub mod cli;
pub mod cmd;
pub mod error;
pub mod intake;
pub mod measure;
pub mod output;
pub mod sample;
pub mod stack;
pub mod stats;
pub mod study;
