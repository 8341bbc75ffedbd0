//! `capstack stack`: the assembly forecast from measured parts against the design assumption.

use super::Outcome;
use crate::cli::StackArgs;
use crate::measure::{build_model, load_stack_data};
use crate::output::stack::StackReport;
use crate::output::{render, Sink};
use crate::stack::file::read_stack;
use crate::stack::model::StackModel;
use crate::stack::simulate::{simulate, SimulationSettings, DEFAULT_SEED};
use crate::stack::uncertainty::forecast_uncertainty;
use std::io::IsTerminal;
use std::time::{Duration, Instant};

/// Draws to start from when only --precision is given.
const PRECISION_START: u64 = 1_000_000;

pub fn run(args: &StackArgs) -> anyhow::Result<Outcome> {
    let mut sink = Sink::open(args.out.output.as_deref())?;
    let stack = read_stack(&args.stack)?;
    let data = load_stack_data(&stack)?;
    let model = build_model(&stack, &data)?;
    let seed = args.seed.unwrap_or(DEFAULT_SEED);
    let simulation =
        (args.samples.is_some() || args.precision.is_some()).then(|| SimulationSettings {
            samples: args.samples.unwrap_or(PRECISION_START),
            seed,
            precision: args.precision,
            max_samples: args.max_samples,
        });
    let report = full_report(&model, simulation.as_ref(), args.replicates, seed);
    render(&report, args.out.format, &mut sink)?;
    Ok(if args.gate && !report.verdict.supports_assumption {
        Outcome::GateFailed
    } else {
        Outcome::Done
    })
}

/// The stack report with the forecast's bootstrap interval and, when asked, the simulation.
pub fn full_report(
    model: &StackModel,
    simulation: Option<&SimulationSettings>,
    replicates: usize,
    seed: u64,
) -> StackReport {
    let mut report = StackReport::new(model);
    report.forecast_uncertainty = forecast_uncertainty(model, replicates, seed);
    if let Some(settings) = simulation {
        let mut bar = ProgressOnTerminal::new();
        report.simulation = Some(simulate(model, settings, &mut |done, planned| {
            bar.update(done, planned)
        }));
        bar.finish();
    }
    report
}

/// A progress bar on stderr, shown only on a terminal and only once a run has taken a second.
struct ProgressOnTerminal {
    started: Instant,
    terminal: bool,
    bar: Option<indicatif::ProgressBar>,
}

impl ProgressOnTerminal {
    fn new() -> Self {
        Self {
            started: Instant::now(),
            terminal: std::io::stderr().is_terminal(),
            bar: None,
        }
    }

    fn update(&mut self, done: u64, planned: u64) {
        if !self.terminal || self.started.elapsed() < Duration::from_secs(1) {
            return;
        }
        let bar = self.bar.get_or_insert_with(|| {
            let b = indicatif::ProgressBar::new(planned);
            b.set_style(
                indicatif::ProgressStyle::with_template(
                    "simulating {bar:40} {human_pos}/{human_len} draws, {eta} left",
                )
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
            );
            b
        });
        bar.set_length(planned);
        bar.set_position(done);
    }

    fn finish(&mut self) {
        if let Some(b) = self.bar.take() {
            b.finish_and_clear();
        }
    }
}
