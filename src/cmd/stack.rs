//! `capstack stack`: the assembly forecast from measured parts against the design assumption.

use super::Outcome;
use crate::cli::StackArgs;
use crate::measure::{build_model, load_stack_data};
use crate::output::stack::StackReport;
use crate::output::{render, Sink};
use crate::stack::file::read_stack;

pub fn run(args: &StackArgs) -> anyhow::Result<Outcome> {
    if args.samples.is_some() || args.seed.is_some() {
        anyhow::bail!(crate::error::InputError::new("--samples/--seed: the simulation is not available in this version; the measured normal forecast is reported"));
    }
    let mut sink = Sink::open(args.out.output.as_deref())?;
    let stack = read_stack(&args.stack)?;
    let data = load_stack_data(&stack)?;
    let model = build_model(&stack, &data)?;
    let report = StackReport::new(&model);
    render(&report, args.out.format, &mut sink)?;
    Ok(if args.gate && !report.verdict.supports_assumption {
        Outcome::GateFailed
    } else {
        Outcome::Done
    })
}
