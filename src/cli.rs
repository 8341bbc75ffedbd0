//! Command-line definitions only; the work is in `cmd/`.

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

#[derive(Parser, Debug)]
#[command(
    name = "capstack",
    version,
    about = "Measured capability and tolerance-stack forecasts from inspection data"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Capability of each feature: mean, sigmas, Cp/Cpk/Pp/Ppk with bounds, reject rates, normality.
    Capability(Box<CapabilityArgs>),
    /// Forecast the assembly reject rate from measured parts and set it against the design assumption.
    Stack(StackArgs),
    /// What each contributor would need to reach a target reject rate, and how many parts to measure.
    Plan(PlanArgs),
    /// A self-contained HTML report with charts: the answer, the assembly, each feature, the audit.
    Report(Box<ReportArgs>),
    /// The whole job on the shipped sample scenario.
    Demo(DemoArgs),
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Format {
    #[default]
    Table,
    Json,
    Csv,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum LayoutArg {
    Auto,
    Wide,
    Long,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum WithinArg {
    Range,
    Sd,
    Pooled,
}

#[derive(Args, Debug, Clone)]
pub struct OutputArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Write to this file instead of standard output.
    #[arg(long, short = 'o')]
    pub output: Option<PathBuf>,
}

#[derive(Args, Debug, Clone)]
pub struct DataArgs {
    /// Inspection data files (CSV, semicolon or tab delimited, or Parquet).
    #[arg(required = true, value_name = "DATA")]
    pub data: Vec<String>,
    /// Spec sheet(s): feature, nominal, lsl, usl (or tol, or lower_dev/upper_dev), unit.
    #[arg(long)]
    pub specs: Vec<String>,
    /// Layout of the data files.
    #[arg(long, value_enum, default_value_t = LayoutArg::Auto)]
    pub layout: LayoutArg,
    /// Part-id column of wide files (default: part, part_id, serial or id).
    #[arg(long, value_name = "COL")]
    pub id: Option<String>,
    /// Part column of long files.
    #[arg(long, default_value = "part", value_name = "COL")]
    pub part_col: String,
    /// Feature column of long files.
    #[arg(long, default_value = "feature", value_name = "COL")]
    pub feature_col: String,
    /// Value column of long files.
    #[arg(long, default_value = "value", value_name = "COL")]
    pub value_col: String,
    /// Treat this numeric-looking column as text (a lot number); repeatable.
    #[arg(long, value_name = "COL")]
    pub text: Vec<String>,
    /// Only these features (comma-separated).
    #[arg(long, value_delimiter = ',', value_name = "A,B")]
    pub features: Option<Vec<String>>,
}

#[derive(Args, Debug, Clone)]
pub struct CapabilityArgs {
    #[command(flatten)]
    pub data: DataArgs,
    #[command(flatten)]
    pub study: StudyArgs,
    /// Exit with code 1 when any feature is flagged.
    #[arg(long)]
    pub gate: bool,
    #[command(flatten)]
    pub out: OutputArgs,
}

/// How the capability study orders, groups and judges the values (shared by `capability` and
/// `report`).
#[derive(Args, Debug, Clone)]
pub struct StudyArgs {
    /// Capability per group of this column (lot, cavity, supplier, source_file, …).
    #[arg(long, value_name = "COL")]
    pub by: Option<String>,
    /// Process order for the within sigma (default: file order).
    #[arg(long, value_name = "COL")]
    pub order: Option<String>,
    /// Consecutive subgroups of this size for the within sigma.
    #[arg(long, value_name = "N", conflicts_with = "subgroup")]
    pub subgroup_size: Option<usize>,
    /// Rows with the same value in this column form a subgroup.
    #[arg(long, value_name = "COL")]
    pub subgroup: Option<String>,
    /// Within-subgroup sigma estimator when subgroups are given.
    #[arg(long, value_enum, default_value_t = WithinArg::Range)]
    pub within: WithinArg,
    /// Confidence of the lower bounds.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
    /// Flag features whose Cpk is below this (1.33 is common practice).
    #[arg(long, default_value_t = 1.33)]
    pub min_cpk: f64,
    /// Flag features whose normality test rejects at this level.
    #[arg(long, default_value_t = 0.05)]
    pub alpha: f64,
    /// Distribution model for the percentile indices: auto (normal unless rejected, else the
    /// lowest AIC), normal, lognormal, weibull, gamma, lognormal_3p, weibull_3p, gamma_3p, boxcox.
    #[arg(long, default_value = "auto", value_name = "MODEL")]
    pub model: String,
    /// Nelson tests for special causes to apply: a list such as 1,2,5, `all` or `none`.
    #[arg(long, default_value = "1,2,3,4", value_name = "LIST")]
    pub rules: String,
}

#[derive(Args, Debug, Clone)]
pub struct ReportArgs {
    #[command(flatten)]
    pub data: DataArgs,
    #[command(flatten)]
    pub study: StudyArgs,
    /// A stack file (TOML): adds the assembly forecast, the contributors and the plan.
    #[arg(long, value_name = "FILE.toml")]
    pub stack: Option<PathBuf>,
    /// The HTML file to write.
    #[arg(long, short = 'o', value_name = "FILE.html")]
    pub output: PathBuf,
    /// Also write every chart as SVG and PNG into this directory (for slides).
    #[arg(long, value_name = "DIR")]
    pub charts: Option<PathBuf>,
    /// Title of the report (default: from the stack's requirement or the data files).
    #[arg(long)]
    pub title: Option<String>,
    /// Draws of the stack simulation shown on the assembly chart (0: none).
    #[arg(long, value_name = "N", default_value_t = 1_000_000)]
    pub samples: u64,
    /// Seed of the simulation and of the forecast's bootstrap.
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Target assembly reject rate for the plan (ppm).
    #[arg(long, default_value_t = 100.0, value_name = "PPM")]
    pub target_ppm: f64,
    /// What is printed about the written files.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

#[derive(Args, Debug, Clone)]
pub struct StackArgs {
    /// The stack file (TOML).
    pub stack: PathBuf,
    /// Also simulate the assembly with this many draws.
    #[arg(long, value_name = "N")]
    pub samples: Option<u64>,
    /// Seed of the simulation and of the forecast's bootstrap (a fixed default otherwise).
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Keep simulating until the 95 % interval is this tight relative to the estimate
    /// (`10%` or `0.1`); starts from --samples (default 1,000,000).
    #[arg(long, value_name = "P", value_parser = parse_fraction)]
    pub precision: Option<f64>,
    /// Most draws --precision may take.
    #[arg(long, value_name = "N", default_value_t = 1_000_000_000)]
    pub max_samples: u64,
    /// Bootstrap replicates for the forecast's own uncertainty (0 to skip).
    #[arg(long, value_name = "N", default_value_t = crate::stack::uncertainty::DEFAULT_REPLICATES)]
    pub replicates: usize,
    /// Exit with code 1 when the measured parts do not support the design assumption.
    #[arg(long)]
    pub gate: bool,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Args, Debug, Clone)]
pub struct PlanArgs {
    /// The stack file (TOML).
    pub stack: PathBuf,
    /// Target assembly reject rate in ppm.
    #[arg(long, default_value_t = 100.0, value_name = "PPM")]
    pub target_ppm: f64,
    /// Cpk a supplier must demonstrate (for the sample-size table).
    #[arg(long, default_value_t = 1.33)]
    pub demonstrate_cpk: f64,
    /// Confidence of that demonstration.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Args, Debug, Clone)]
pub struct DemoArgs {
    /// Where to write the demo outputs.
    #[arg(long, default_value = "capstack-demo")]
    pub out: PathBuf,
}

/// `10%`, `10 %` or `0.1`.
fn parse_fraction(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let value = match t.strip_suffix('%') {
        Some(p) => p.trim().parse::<f64>().map(|v| v / 100.0),
        None => t.parse::<f64>(),
    }
    .map_err(|_| format!("'{text}' is not a fraction (10% or 0.1)"))?;
    if value > 0.0 && value < 1.0 {
        Ok(value)
    } else {
        Err(format!("'{text}' must lie between 0 and 100 %"))
    }
}
