//! `capstack report`: the self-contained HTML report, and its charts as SVG and PNG files.

use super::Outcome;
use crate::cli::ReportArgs;
use crate::error::InputError;
use crate::measure::{build_model, load_stack_data};
use crate::output::capability::CapabilityReport;
use crate::output::chart::{self, Plot};
use crate::output::plan::PlanReport;
use crate::output::report::{Report, ReportMeta};
use crate::output::stack::StackReport;
use crate::output::{csv_field, render, Render, Sink};
use crate::stack::analytic::safety_factor_table;
use crate::stack::file::read_stack;
use crate::stack::simulate::{SimulationSettings, DEFAULT_SEED};
use crate::stack::uncertainty::DEFAULT_REPLICATES;
use crate::study::{study, StudySettings, Subgrouping};
use rayon::prelude::*;
use serde::Serialize;
use std::collections::HashMap;
use std::path::{Path, PathBuf};

/// The Cpk a supplier must demonstrate, and the confidence, in the report's plan.
const DEMONSTRATE_CPK: f64 = 1.33;
const DEMONSTRATE_CONFIDENCE: f64 = 0.95;

pub fn run(args: &ReportArgs) -> anyhow::Result<Outcome> {
    let settings = super::capability::settings(&args.study)?;
    if !(args.target_ppm > 0.0 && args.target_ppm < 1e6) {
        return Err(InputError::new(format!(
            "--target-ppm {} must lie between 0 and 1000000",
            args.target_ppm
        ))
        .into());
    }
    // Fail on an unwritable destination before the work, not after it.
    let file = create(&args.output)?;
    if let Some(dir) = &args.charts {
        create_dir(dir)?;
    }
    let (data, specs) = super::load(&args.data)?;
    let features = study(&data, &specs, &settings)?;
    let capability = CapabilityReport::new(
        features,
        data.audit,
        settings.options.confidence,
        settings.alpha,
    );
    let seed = args.seed.unwrap_or(DEFAULT_SEED);
    let mut stack = None;
    let mut plan = None;
    if let Some(path) = &args.stack {
        let file = read_stack(path)?;
        let model = build_model(&file, &load_stack_data(&file)?)?;
        let simulation = (args.samples > 0).then_some(SimulationSettings {
            samples: args.samples,
            seed,
            precision: None,
            max_samples: args.samples,
        });
        stack = Some(super::stack::full_report(
            &model,
            simulation.as_ref(),
            DEFAULT_REPLICATES,
            seed,
        ));
        plan = Some(PlanReport {
            plan: crate::stack::plan::plan(
                &model,
                args.target_ppm,
                DEMONSTRATE_CPK,
                DEMONSTRATE_CONFIDENCE,
            ),
            safety_factors: safety_factor_table(),
        });
    }
    let title = args.title.clone().unwrap_or_else(|| match &stack {
        Some(s) => format!(
            "{}: measured capability and stack forecast",
            s.requirement.name
        ),
        None => "Measured capability".to_string(),
    });
    let meta = ReportMeta {
        title,
        date: today_utc(),
        data_files: args.data.data.clone(),
        spec_files: args.data.specs.clone(),
        stack_file: args.stack.as_ref().map(|p| p.display().to_string()),
        confidence: settings.options.confidence,
        min_cpk: settings.min_cpk,
        alpha: settings.alpha,
        rules: settings.rules.clone(),
        within: within_words(&settings),
    };
    let report = Report {
        meta,
        capability: &capability,
        stack: stack.as_ref(),
        plan: plan.as_ref(),
    };
    let written = write_report(&report, file, &args.output, args.charts.as_deref())?;
    let mut sink = Sink::open(None)?;
    render(&written, args.format, &mut sink)?;
    Ok(Outcome::Done)
}

/// What the report command wrote.
#[derive(Debug, Clone, Serialize)]
pub struct Written {
    pub report: String,
    /// Charts drawn into the report.
    pub inline_charts: usize,
    /// Chart files written with `--charts` (an SVG and a PNG each).
    pub charts: Vec<String>,
    pub features: usize,
    /// The verdict on the design assumption, when a stack was given.
    pub supports_assumption: Option<bool>,
}

impl Render for Written {
    fn table(&self, _colour: bool) -> String {
        let mut out = format!(
            "wrote {} ({} feature result(s), {} chart(s) inline)\n",
            self.report, self.features, self.inline_charts
        );
        for c in &self.charts {
            out.push_str(&format!("wrote {c}\n"));
        }
        out
    }

    fn csv(&self) -> String {
        let mut out = String::from("kind,path\n");
        out.push_str(&format!("report,{}\n", csv_field(&self.report)));
        for c in &self.charts {
            out.push_str(&format!("chart,{}\n", csv_field(c)));
        }
        out
    }

    fn json(&self) -> serde_json::Result<String> {
        crate::output::json_text(self)
    }
}

/// Draws the charts (in parallel), writes the HTML into `file`, and with `charts` every chart
/// as `<slug>.svg` and `<slug>.png` in that directory.
pub fn write_report(
    report: &Report,
    file: std::fs::File,
    path: &Path,
    charts: Option<&Path>,
) -> anyhow::Result<Written> {
    let plots = report.plots();
    let svgs: HashMap<String, String> = plots
        .par_iter()
        .map(|p| {
            chart::svg(p)
                .map(|s| (p.slug.clone(), s))
                .map_err(|e| anyhow::anyhow!("chart {}: {e}", p.slug))
        })
        .collect::<anyhow::Result<_>>()?;
    let html = report.html(&plots, &svgs);
    let mut sink = std::io::BufWriter::new(file);
    std::io::Write::write_all(&mut sink, html.as_bytes())
        .and_then(|()| std::io::Write::flush(&mut sink))
        .map_err(|e| InputError::new(format!("{}: cannot write: {e}", path.display())))?;
    let mut written = Vec::new();
    if let Some(dir) = charts {
        written = write_charts(&plots, &svgs, dir)?;
    }
    Ok(Written {
        report: path.display().to_string(),
        inline_charts: plots.len(),
        charts: written,
        features: report.capability.features.len(),
        supports_assumption: report
            .stack
            .map(|s: &StackReport| s.verdict.supports_assumption),
    })
}

fn write_charts(
    plots: &[Plot],
    svgs: &HashMap<String, String>,
    dir: &Path,
) -> anyhow::Result<Vec<String>> {
    let files: Vec<Vec<String>> = plots
        .par_iter()
        .map(|p| -> anyhow::Result<Vec<String>> {
            let svg_path = dir.join(format!("{}.svg", p.slug));
            std::fs::write(&svg_path, &svgs[&p.slug]).map_err(|e| {
                InputError::new(format!("{}: cannot write: {e}", svg_path.display()))
            })?;
            let png_path = dir.join(format!("{}.png", p.slug));
            chart::png(p, &png_path)
                .map_err(|e| InputError::new(format!("{}: {e}", png_path.display())))?;
            Ok(vec![
                svg_path.display().to_string(),
                png_path.display().to_string(),
            ])
        })
        .collect::<anyhow::Result<_>>()?;
    Ok(files.into_iter().flatten().collect())
}

pub fn create(path: &Path) -> Result<std::fs::File, InputError> {
    std::fs::File::create(path)
        .map_err(|e| InputError::new(format!("{}: cannot write the report: {e}", path.display())))
}

pub fn create_dir(dir: &Path) -> Result<PathBuf, InputError> {
    std::fs::create_dir_all(dir).map_err(|e| {
        InputError::new(format!(
            "{}: cannot create the charts directory: {e}",
            dir.display()
        ))
    })?;
    Ok(dir.to_path_buf())
}

/// How the within sigma was estimated, in words.
pub fn within_words(s: &StudySettings) -> String {
    let order = s
        .order
        .as_ref()
        .map_or("file order".to_string(), |c| format!("the order of '{c}'"));
    let estimator = match s.options.within {
        crate::stats::within::WithinMethod::Range => "R̄/d2",
        crate::stats::within::WithinMethod::Sd => "S̄/c4",
        _ => "the pooled standard deviation",
    };
    match &s.subgroups {
        Subgrouping::Individuals => format!("average moving range / d2(2) in {order}"),
        Subgrouping::Size(n) => {
            format!("{estimator} of consecutive subgroups of {n} in {order}")
        }
        Subgrouping::Column(c) => format!("{estimator} of the subgroups given by '{c}'"),
    }
}

/// Today's date (UTC) as YYYY-MM-DD, from the system clock (days to civil date: H. Hinnant,
/// "chrono-Compatible Low-Level Date Algorithms").
pub fn today_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64);
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    format!("{y:04}-{m:02}-{d:02}")
}

pub fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

/// The default demo/report settings as words (used where no flags were given).
pub fn default_within() -> String {
    within_words(&StudySettings::default())
}

#[cfg(test)]
mod tests {
    use super::civil_from_days;

    #[test]
    fn days_since_the_epoch_become_civil_dates() {
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(19_723), (2024, 1, 1));
        // 2000-02-29 is day 11 016 (a leap day in a century leap year).
        assert_eq!(civil_from_days(11_016), (2000, 2, 29));
    }
}
