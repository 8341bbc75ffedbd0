//! Rendering: the same result structs become terminal tables, JSON and CSV.

pub mod capability;
pub mod chart;
pub mod figures;
pub mod html;
pub mod plan;
pub mod report;
pub mod stack;
pub mod table;

use crate::cli::Format;
use crate::error::InputError;
use std::io::{IsTerminal, Write};
use std::path::Path;

/// Where the data go: a file opened before the work starts (so a bad path fails at once),
/// or standard output.
pub struct Sink {
    writer: Box<dyn Write>,
    pub colour: bool,
}

impl Sink {
    pub fn open(path: Option<&Path>) -> Result<Self, InputError> {
        match path {
            Some(p) => {
                let f = std::fs::File::create(p).map_err(|e| {
                    InputError::new(format!(
                        "{}: cannot write the output file: {e}",
                        p.display()
                    ))
                })?;
                Ok(Self {
                    writer: Box::new(std::io::BufWriter::new(f)),
                    colour: false,
                })
            }
            None => {
                let colour =
                    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none();
                Ok(Self {
                    writer: Box::new(std::io::BufWriter::new(std::io::stdout())),
                    colour,
                })
            }
        }
    }

    pub fn write_str(&mut self, s: &str) -> std::io::Result<()> {
        self.writer.write_all(s.as_bytes())?;
        self.writer.flush()
    }
}

/// Renders a result in the chosen format.
pub trait Render {
    fn table(&self, colour: bool) -> String;
    fn csv(&self) -> String;
    /// The JSON document, pretty-printed, with a final newline.
    fn json(&self) -> serde_json::Result<String>;
}

/// Pretty JSON written straight from the result, with no tree of values built in between (a
/// capability run lists up to a thousand signals per feature: tens of megabytes).
pub fn json_text(value: &impl serde::Serialize) -> serde_json::Result<String> {
    let mut s = serde_json::to_string_pretty(value)?;
    s.push('\n');
    Ok(s)
}

pub fn render(result: &dyn Render, format: Format, sink: &mut Sink) -> anyhow::Result<()> {
    let text = match format {
        Format::Table => result.table(sink.colour),
        Format::Csv => result.csv(),
        Format::Json => result.json()?,
    };
    sink.write_str(&text)?;
    Ok(())
}

/// A closed pipe (`| head`) ends the program quietly.
pub fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

/// A number for people: `digits` significant digits, no exponent for ordinary magnitudes,
/// `-` when undefined.
pub fn num(v: Option<f64>, digits: usize) -> String {
    match v {
        None => "-".to_string(),
        Some(x) if !x.is_finite() => "-".to_string(),
        Some(0.0) => "0".to_string(),
        Some(x) => {
            let mag = x.abs().log10().floor() as i32;
            if !(-5..=9).contains(&mag) {
                return format!("{:.*e}", digits.saturating_sub(1), x);
            }
            let decimals = (digits as i32 - 1 - mag).max(0) as usize;
            format!("{x:.decimals$}")
        }
    }
}

/// Parts per million for people: whole numbers above 100, more digits below.
pub fn ppm(v: Option<f64>) -> String {
    match v {
        None => "-".into(),
        Some(x) if x >= 100.0 => format!("{x:.0}"),
        Some(x) if x >= 1.0 => format!("{x:.1}"),
        Some(0.0) => "0".into(),
        Some(x) => num(Some(x), 2),
    }
}

/// One CSV field, quoted where needed.
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A CSV cell for an optional number: full precision, blank when undefined.
pub fn csv_num(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map(|x| format!("{x}"))
        .unwrap_or_default()
}
