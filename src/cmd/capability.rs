//! `capstack capability`: per-feature capability with bounds, reject rates and normality.

use super::Outcome;
use crate::cli::{CapabilityArgs, StudyArgs, WithinArg};
use crate::error::InputError;
use crate::output::capability::CapabilityReport;
use crate::output::{render, Sink};
use crate::stats::capability::CapabilityOptions;
use crate::stats::fit;
use crate::stats::within::WithinMethod;
use crate::study::{study, ModelRequest, StudySettings, Subgrouping};

pub fn run(args: &CapabilityArgs) -> anyhow::Result<Outcome> {
    let settings = StudySettings {
        // Nothing is drawn here.
        keep_points: false,
        ..settings(&args.study)?
    };
    let mut sink = Sink::open(args.out.output.as_deref())?;
    let (data, specs) = super::load(&args.data)?;
    let features = study(&data, &specs, &settings)?;
    let report = CapabilityReport::new(
        features,
        data.audit,
        settings.options.confidence,
        settings.alpha,
    );
    render(&report, args.out.format, &mut sink)?;
    let flagged = report.features.iter().any(|f| !f.flags.is_empty());
    Ok(if args.gate && flagged {
        Outcome::GateFailed
    } else {
        Outcome::Done
    })
}

/// Validates the flags once, before any file is read.
pub fn settings(args: &StudyArgs) -> Result<StudySettings, InputError> {
    if !(args.confidence > 0.5 && args.confidence < 1.0) {
        return Err(InputError::new(format!(
            "--confidence {} must lie between 0.5 and 1 (0.95 is usual)",
            args.confidence
        )));
    }
    if !(args.alpha > 0.0 && args.alpha < 1.0) {
        return Err(InputError::new(format!(
            "--alpha {} must lie between 0 and 1",
            args.alpha
        )));
    }
    if !args.min_cpk.is_finite() {
        return Err(InputError::new("--min-cpk must be a number"));
    }
    let subgroups = match (&args.subgroup_size, &args.subgroup) {
        (Some(n), _) if *n < 2 => {
            return Err(InputError::new(format!(
                "--subgroup-size {n} must be at least 2"
            )))
        }
        (Some(n), _) => Subgrouping::Size(*n),
        (None, Some(col)) => Subgrouping::Column(col.clone()),
        (None, None) => Subgrouping::Individuals,
    };
    let within = match args.within {
        WithinArg::Range => WithinMethod::Range,
        WithinArg::Sd => WithinMethod::Sd,
        WithinArg::Pooled => WithinMethod::Pooled,
    };
    Ok(StudySettings {
        by: args.by.clone(),
        order: args.order.clone(),
        subgroups,
        options: CapabilityOptions {
            within,
            confidence: args.confidence,
        },
        min_cpk: args.min_cpk,
        alpha: args.alpha,
        model: model_request(&args.model)?,
        rules: parse_rules(&args.rules)?,
        keep_points: true,
    })
}

fn model_request(text: &str) -> Result<ModelRequest, InputError> {
    if text == "auto" {
        return Ok(ModelRequest::Auto);
    }
    fit::canonical(text)
        .map(ModelRequest::Named)
        .ok_or_else(|| {
            InputError::new(format!(
                "--model '{text}' is not one of auto, {}",
                fit::MODEL_NAMES.join(", ")
            ))
        })
}

/// `1,2,5`, `all` or `none`.
pub fn parse_rules(text: &str) -> Result<Vec<u8>, InputError> {
    match text.trim() {
        "all" => return Ok((1..=8).collect()),
        "none" => return Ok(Vec::new()),
        _ => {}
    }
    let mut rules = Vec::new();
    for part in text.split(',') {
        let r: u8 = part
            .trim()
            .parse()
            .ok()
            .filter(|r| (1..=8).contains(r))
            .ok_or_else(|| {
                InputError::new(format!(
                    "--rules '{text}': '{}' is not a test number 1-8 (or use all / none)",
                    part.trim()
                ))
            })?;
        if !rules.contains(&r) {
            rules.push(r);
        }
    }
    rules.sort();
    Ok(rules)
}
