//! `capstack plan`: what each contributor would need for a target reject rate.

use super::Outcome;
use crate::cli::PlanArgs;
use crate::error::InputError;
use crate::measure::{build_model, load_stack_data};
use crate::output::plan::PlanReport;
use crate::output::{render, Sink};
use crate::stack::analytic::safety_factor_table;
use crate::stack::file::read_stack;
use crate::stack::plan::plan;

pub fn run(args: &PlanArgs) -> anyhow::Result<Outcome> {
    if !(args.target_ppm > 0.0 && args.target_ppm < 1e6) {
        return Err(InputError::new(format!(
            "--target-ppm {} must lie between 0 and 1000000",
            args.target_ppm
        ))
        .into());
    }
    if !(args.confidence > 0.5 && args.confidence < 1.0) {
        return Err(InputError::new(format!(
            "--confidence {} must lie between 0.5 and 1",
            args.confidence
        ))
        .into());
    }
    if !(args.demonstrate_cpk > 0.0 && args.demonstrate_cpk.is_finite()) {
        return Err(InputError::new("--demonstrate-cpk must be a positive number").into());
    }
    let mut sink = Sink::open(args.out.output.as_deref())?;
    let stack = read_stack(&args.stack)?;
    let data = load_stack_data(&stack)?;
    let model = build_model(&stack, &data)?;
    let report = PlanReport {
        plan: plan(
            &model,
            args.target_ppm,
            args.demonstrate_cpk,
            args.confidence,
        ),
        safety_factors: safety_factor_table(),
    };
    render(&report, args.out.format, &mut sink)?;
    Ok(Outcome::Done)
}
