//! Pure numerics: no files, terminals or clocks. Each function names its formula and source.

pub mod capability;
pub mod constants;
pub mod control;
pub mod distribution;
pub mod fit;
pub mod groups;
pub mod integrate;
pub mod moments;
pub mod normal;
pub mod normality;
pub mod within;
