//! The stack forecast: the stack file, worst case, RSS under the design assumption, the
//! measured forecast with covariances, and the verdict. Pure: no files here but the stack
//! file's own parser (`file`); measured data arrive through [`model::StackModel`].

pub mod analytic;
pub mod file;
pub mod model;
pub mod normal_draws;
pub mod plan;
pub mod simulate;
pub mod tail;
pub mod uncertainty;
pub mod verdict;
