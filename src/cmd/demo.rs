//! `capstack demo`: the whole job on the shipped sample scenario.

use super::Outcome;
use crate::cli::DemoArgs;
use crate::error::InputError;
use crate::intake::{self, ReadOptions};
use crate::measure::{build_model, load_stack_data};
use crate::output::capability::CapabilityReport;
use crate::output::plan::PlanReport;
use crate::output::report::{Report, ReportMeta};
use crate::output::Render;
use crate::stack::analytic::safety_factor_table;
use crate::stack::file::read_stack;
use crate::stack::simulate::{SimulationSettings, DEFAULT_SEED};
use crate::stack::uncertainty::DEFAULT_REPLICATES;

/// Draws of the demo's simulation: enough for a tight interval at the scenario's ~1000 ppm.
const DEMO_SAMPLES: u64 = 4_000_000;
use crate::study::{study, StudySettings, DEFAULT_ALPHA};
use std::path::Path;

/// The data files and spec sheets of the scenario, by supplier.
const SUPPLIERS: [(&str, &str); 4] = [
    ("northfield_housing.csv", "northfield_specs.csv"),
    ("kestrel_bearings.csv", "kestrel_specs.csv"),
    ("orrin_spacers.tsv", "orrin_specs.csv"),
    ("talvik_hubs.csv", "talvik_specs.csv"),
];

pub fn run(args: &DemoArgs) -> anyhow::Result<Outcome> {
    let data_dir = args.out.join("data");
    crate::sample::write_scenario(&data_dir).map_err(|e| {
        InputError::new(format!(
            "{}: cannot write the sample data: {e}",
            data_dir.display()
        ))
    })?;
    let mut written = Vec::new();
    let path = |name: &str| data_dir.join(name).display().to_string();
    let files: Vec<String> = SUPPLIERS.iter().map(|(d, _)| path(d)).collect();
    let sheets: Vec<String> = SUPPLIERS.iter().map(|(_, s)| path(s)).collect();
    let sheet = intake::read_spec_sheets(&sheets)?;
    let data = intake::read_files(&files, &ReadOptions::default(), &sheet)?;
    let specs = intake::merge_specs(&sheet, &data.embedded_specs)?;
    let features = study(&data, &specs, &StudySettings::default())?;
    let capability = CapabilityReport::new(features, data.audit.clone(), 0.95, DEFAULT_ALPHA);
    write(
        &args.out,
        "capability.txt",
        &capability.table(false),
        &mut written,
    )?;
    write(
        &args.out,
        "capability.json",
        &json_of(&capability)?,
        &mut written,
    )?;
    write(&args.out, "capability.csv", &capability.csv(), &mut written)?;
    let by_lot = grouped(&data, &specs, "lot")?;
    write(
        &args.out,
        "capability_by_lot.txt",
        &by_lot.table(false),
        &mut written,
    )?;

    // Two spacer suppliers side by side: which one is off-centre?
    let spacer_files = vec![path("orrin_spacers.tsv"), path("brask_spacers.csv")];
    let spacer_sheet = intake::read_spec_sheets(&[path("orrin_specs.csv")])?;
    let spacers = intake::read_files(&spacer_files, &ReadOptions::default(), &spacer_sheet)?;
    let spacer_specs = intake::merge_specs(&spacer_sheet, &spacers.embedded_specs)?;
    let suppliers = grouped(&spacers, &spacer_specs, intake::SOURCE_FILE)?;
    write(
        &args.out,
        "capability_spacer_suppliers.txt",
        &suppliers.table(false),
        &mut written,
    )?;

    let stack = read_stack(&data_dir.join("end_play.toml"))?;
    let stack_data = load_stack_data(&stack)?;
    let model = build_model(&stack, &stack_data)?;
    let simulation = SimulationSettings {
        samples: DEMO_SAMPLES,
        seed: DEFAULT_SEED,
        precision: None,
        max_samples: DEMO_SAMPLES,
    };
    let report =
        super::stack::full_report(&model, Some(&simulation), DEFAULT_REPLICATES, DEFAULT_SEED);
    write(&args.out, "stack.txt", &report.table(false), &mut written)?;
    write(&args.out, "stack.json", &json_of(&report)?, &mut written)?;
    let plan = PlanReport {
        plan: crate::stack::plan::plan(&model, 100.0, 1.33, 0.95),
        safety_factors: safety_factor_table(),
    };
    write(&args.out, "plan.txt", &plan.table(false), &mut written)?;
    write(&args.out, "plan.json", &json_of(&plan)?, &mut written)?;

    let stack_path = data_dir.join("end_play.toml").display().to_string();
    let html = Report {
        meta: ReportMeta {
            title: "Gearbox end play: measured capability and stack forecast".into(),
            date: super::report::today_utc(),
            data_files: files,
            spec_files: sheets,
            stack_file: Some(stack_path),
            confidence: 0.95,
            min_cpk: crate::study::DEFAULT_MIN_CPK,
            alpha: DEFAULT_ALPHA,
            rules: crate::stats::control::DEFAULT_RULES.to_vec(),
            within: super::report::default_within(),
        },
        capability: &capability,
        stack: Some(&report),
        plan: Some(&plan),
    };
    let html_path = args.out.join("report.html");
    let charts_dir = super::report::create_dir(&args.out.join("charts"))?;
    let done = super::report::write_report(
        &html,
        super::report::create(&html_path)?,
        &html_path,
        Some(&charts_dir),
    )?;
    written.push(done.report);
    written.push(format!(
        "{} ({} charts as SVG and PNG)",
        charts_dir.display(),
        done.charts.len() / 2
    ));

    print!(
        "{}",
        report.table(std::io::IsTerminal::is_terminal(&std::io::stdout()))
    );
    println!("\nsample data: {}", data_dir.display());
    for w in written {
        println!("wrote {w}");
    }
    Ok(Outcome::Done)
}

/// Capability per group of `by`, with the group comparisons.
fn grouped(
    data: &intake::Dataset,
    specs: &intake::SpecSet,
    by: &str,
) -> Result<CapabilityReport, InputError> {
    let settings = StudySettings {
        by: Some(by.into()),
        ..StudySettings::default()
    };
    Ok(CapabilityReport::new(
        study(data, specs, &settings)?,
        data.audit.clone(),
        0.95,
        DEFAULT_ALPHA,
    ))
}

/// A result's JSON; a failure to serialise is an error, not an empty file.
fn json_of(result: &dyn Render) -> Result<String, InputError> {
    result
        .json()
        .map_err(|e| InputError::new(format!("cannot write the JSON: {e}")))
}

fn write(dir: &Path, name: &str, text: &str, written: &mut Vec<String>) -> Result<(), InputError> {
    let p = dir.join(name);
    std::fs::write(&p, text)
        .map_err(|e| InputError::new(format!("{}: cannot write: {e}", p.display())))?;
    written.push(p.display().to_string());
    Ok(())
}
