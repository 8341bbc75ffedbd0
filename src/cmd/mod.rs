//! One file per subcommand, each a short `run`.

pub mod capability;
pub mod demo;
pub mod plan;
pub mod report;
pub mod stack;

use crate::cli::{Command, DataArgs, LayoutArg};
use crate::error::InputError;
use crate::intake::{self, Dataset, Layout, ReadOptions, SpecSet};

/// How a run ended when it did not fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Done,
    /// A gate the user asked for (`--gate`) failed: exit code 1.
    GateFailed,
}

impl Outcome {
    pub fn code(self) -> u8 {
        match self {
            Outcome::Done => 0,
            Outcome::GateFailed => 1,
        }
    }
}

pub fn run(command: Command) -> anyhow::Result<Outcome> {
    match command {
        Command::Capability(a) => capability::run(&a),
        Command::Stack(a) => stack::run(&a),
        Command::Plan(a) => plan::run(&a),
        Command::Report(a) => report::run(&a),
        Command::Demo(a) => demo::run(&a),
    }
}

/// Reads the spec sheets and the data files named on the command line.
pub fn load(args: &DataArgs) -> Result<(Dataset, SpecSet), InputError> {
    let sheet = intake::read_spec_sheets(&args.specs)?;
    let options = ReadOptions {
        layout: match args.layout {
            LayoutArg::Auto => Layout::Auto,
            LayoutArg::Wide => Layout::Wide,
            LayoutArg::Long => Layout::Long,
        },
        id_col: args.id.clone(),
        part_col: args.part_col.clone(),
        feature_col: args.feature_col.clone(),
        value_col: args.value_col.clone(),
        text_cols: args.text.clone(),
        features: args.features.clone(),
    };
    let data = intake::read_files(&args.data, &options, &sheet)?;
    let specs = intake::merge_specs(&sheet, &data.embedded_specs)?;
    Ok((data, specs))
}
