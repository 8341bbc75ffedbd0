//! The stack forecast as a table, CSV and JSON.

use super::table::{Cell, Table};
use super::{csv_field, csv_num, num, ppm, Render};
use crate::stack::analytic::{
    measured, rss, safety_factor_table, worst_case, Measured, Range, Rss, SafetyRow,
};
use crate::stack::file::{Assumptions, Requirement};
use crate::stack::model::StackModel;
use crate::stack::simulate::Simulation;
use crate::stack::tail::{tail_forecast, TailForecast};
use crate::stack::uncertainty::ForecastUncertainty;
use crate::stack::verdict::{contributor_verdicts, verdict, ContributorVerdict, Verdict};
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct StackReport {
    pub requirement: Requirement,
    pub assumptions: Assumptions,
    pub nominal: f64,
    pub worst_case: Range,
    pub rss: Rss,
    pub measured: Measured,
    /// Present only when a simulation was run.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub simulation: Option<Simulation>,
    /// Reject rates from the stated shapes without sampling noise.
    pub exact_tail: TailForecast,
    /// The bootstrap interval of the measured forecast (n parts measured); present only
    /// when it was computed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub forecast_uncertainty: Option<ForecastUncertainty>,
    pub contributors: Vec<ContributorVerdict>,
    /// The contributors by share of the assembly variance, largest first: where to act.
    pub contributions: Vec<Contribution>,
    pub verdict: Verdict,
    pub safety_factors: Vec<SafetyRow>,
    pub cautions: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct Contribution {
    pub name: String,
    pub variance_share: f64,
    pub mean_shift_share: f64,
    /// aᵢ(μᵢ − mᵢ): what it moves the assembly mean, in the assembly's unit.
    pub mean_shift: f64,
}

/// Printed with every forecast: the numbers are estimates, not approvals.
pub const CAUTION: &str = "Forecasts are statistical estimates from the parts measured; customer requirements, industry standards and qualified engineering review come first, above all for safety-relevant fits.";

impl StackReport {
    pub fn new(model: &StackModel) -> Self {
        let rss = rss(model);
        let measured = measured(model);
        let contributors = contributor_verdicts(model);
        let verdict = verdict(model, &rss, &measured, &contributors);
        let mut contributions: Vec<Contribution> = contributors
            .iter()
            .map(|c| Contribution {
                name: c.name.clone(),
                variance_share: c.variance_share,
                mean_shift_share: c.mean_shift_share,
                mean_shift: c.sensitivity * c.mean_shift,
            })
            .collect();
        contributions.sort_by(|a, b| b.variance_share.total_cmp(&a.variance_share));
        Self {
            requirement: model.requirement.clone(),
            assumptions: model.assumptions,
            nominal: model
                .contributors
                .iter()
                .map(|c| c.sensitivity * c.nominal)
                .sum(),
            worst_case: worst_case(model),
            rss,
            measured,
            simulation: None,
            exact_tail: tail_forecast(model),
            forecast_uncertainty: None,
            contributors,
            contributions,
            verdict,
            safety_factors: safety_factor_table(),
            cautions: CAUTION,
        }
    }
}

/// Columns of the table of methods (worst case, RSS, measured, …).
pub const METHOD_COLUMNS: [&str; 8] = [
    "method",
    "mean",
    "sd",
    "min",
    "max",
    "ppm below",
    "ppm above",
    "ppm total",
];

impl StackReport {
    /// The table of methods, for the terminal and the HTML report alike: worst case, RSS under
    /// the assumption, the measured forecast, the stated shapes' exact tail and the simulation
    /// where there are; a rate above the assumed one is marked.
    pub fn method_rows(&self) -> Vec<Vec<Cell>> {
        let wc = &self.worst_case;
        let s = &self.rss;
        let m = &self.measured;
        let mut rows = vec![
            vec![
                "worst case".into(),
                num(Some((wc.min + wc.max) / 2.0), 6).into(),
                "-".into(),
                num(Some(wc.min), 6).into(),
                num(Some(wc.max), 6).into(),
                "-".into(),
                "-".into(),
                "-".into(),
            ],
            vec![
                "RSS (assumed)".into(),
                num(Some(s.mean), 6).into(),
                num(Some(s.sd), 3).into(),
                num(Some(s.min), 6).into(),
                num(Some(s.max), 6).into(),
                ppm(s.ppm_below).into(),
                ppm(s.ppm_above).into(),
                ppm(Some(s.ppm)).into(),
            ],
            vec![
                "measured".into(),
                num(Some(m.mean), 6).into(),
                num(Some(m.sd), 3).into(),
                num(Some(m.mean - 3.0 * m.sd), 6).into(),
                num(Some(m.mean + 3.0 * m.sd), 6).into(),
                ppm(m.ppm_below).into(),
                ppm(m.ppm_above).into(),
                Cell::flagged(ppm(Some(m.ppm)), m.ppm > s.ppm),
            ],
        ];
        // Rates without a mean or sd of their own.
        let rates = |name: &str, below, above, total: f64| -> Vec<Cell> {
            vec![
                name.into(),
                "".into(),
                "".into(),
                "".into(),
                "".into(),
                ppm(below).into(),
                ppm(above).into(),
                Cell::flagged(ppm(Some(total)), total > s.ppm),
            ]
        };
        let e = &self.exact_tail;
        if e.method != "normal_closed_form" {
            rows.push(rates(
                "stated shapes",
                e.rates.ppm_below,
                e.rates.ppm_above,
                e.rates.ppm,
            ));
        }
        if let Some(sim) = &self.simulation {
            rows.push(rates("simulated", sim.ppm_below, sim.ppm_above, sim.ppm));
        }
        rows
    }
}

impl Render for StackReport {
    fn table(&self, colour: bool) -> String {
        let r = &self.requirement;
        let unit = r
            .unit
            .as_deref()
            .map(|u| format!(" {u}"))
            .unwrap_or_default();
        let mut out = format!(
            "{}: LSL {}  USL {}{unit}   nominal {}   assumption: cp {}, safety factor {}\n\n",
            r.name,
            num(r.lsl, 6),
            num(r.usl, 6),
            num(Some(self.nominal), 6),
            self.assumptions.cp,
            self.assumptions.safety_factor
        );
        let mut t = Table::new(&METHOD_COLUMNS);
        for row in self.method_rows() {
            t.push(row);
        }
        let e = &self.exact_tail;
        out.push_str(&t.render(colour));
        out.push_str("(measured min/max: mean ∓ 3 sd)\n");
        if e.method != "normal_closed_form" {
            out.push_str(&format!(
                "stated shapes: {} not normal, by convolution (grid error {} ppm); saddlepoint {} ppm\n",
                e.non_normal.join(", "),
                ppm(Some(e.grid_error_ppm)),
                ppm(e.saddlepoint.map(|s| s.ppm)),
            ));
        }
        if let Some(sim) = &self.simulation {
            let parts: Vec<String> = sim
                .draws
                .iter()
                .map(|d| match d.parts {
                    Some(n) => format!("{} from {n} parts", d.name),
                    None => format!("{} {}", d.name, d.draw),
                })
                .collect();
            out.push_str(&format!(
                "simulated: {} draws, seed {}, {} rejects, 95 % interval ({}) {}-{} ppm; {}\n",
                sim.samples,
                sim.seed,
                sim.rejects,
                sim.interval,
                ppm(Some(sim.ppm_low)),
                ppm(Some(sim.ppm_high)),
                parts.join(", ")
            ));
            if let Some(p) = &sim.precision {
                if !p.reached {
                    out.push_str(&format!(
                        "  precision {:.0} % not reached within {} draws (achieved {})\n",
                        100.0 * p.target,
                        p.max_samples,
                        p.achieved
                            .map_or("none: no rejects".to_string(), |a| format!(
                                "{:.0} %",
                                100.0 * a
                            ))
                    ));
                }
            }
        }
        if let Some(u) = &self.forecast_uncertainty {
            out.push_str(&format!("uncertainty: {}\n", u.statement));
        }
        out.push('\n');
        let mut c = Table::new(&[
            "contributor",
            "a",
            "n",
            "assumed sd",
            "measured sd",
            "ratio",
            "shift/T",
            "Ppk",
            "Ppk lo",
            "AD p",
            "var share",
            "supports",
        ]);
        for v in &self.contributors {
            c.push(vec![
                v.name.clone().into(),
                num(Some(v.sensitivity), 3).into(),
                v.n.map_or("stated".to_string(), |n| n.to_string()).into(),
                num(Some(v.assumed_sd), 3).into(),
                num(Some(v.measured_sd), 3).into(),
                Cell::flagged(format!("{:.2}", v.sd_ratio), v.sd_ratio > 1.0),
                Cell::flagged(
                    format!("{:+.2}", v.mean_shift_of_tolerance),
                    v.reasons.iter().any(|r| r.starts_with("mean")),
                ),
                Cell::flagged(
                    num(v.ppk, 3),
                    v.ppk.is_some_and(|p| p < self.assumptions.cp),
                ),
                num(v.ppk_lower, 3).into(),
                Cell::flagged(
                    num(v.normality_p, 2),
                    v.normality_p
                        .is_some_and(|p| p < crate::stack::verdict::ALPHA),
                ),
                format!("{:.0} %", 100.0 * v.variance_share).into(),
                Cell::flagged(
                    if v.supports_assumption { "yes" } else { "no" },
                    !v.supports_assumption,
                ),
            ]);
        }
        out.push_str(&c.render(colour));
        for v in self.contributors.iter().filter(|v| !v.supports_assumption) {
            out.push_str(&format!("  {}: {}\n", v.name, v.reasons.join("; ")));
        }
        let largest: Vec<String> = self
            .contributions
            .iter()
            .take(3)
            .map(|c| format!("{} {:.0} %", c.name, 100.0 * c.variance_share))
            .collect();
        out.push_str(&format!(
            "\nlargest shares of the assembly variance: {}\n",
            largest.join(", ")
        ));
        out.push_str(&format!("\nverdict: {}\n", self.verdict.summary));
        out.push_str(&format!("\n{CAUTION}\n"));
        out
    }

    fn csv(&self) -> String {
        let mut out = String::from("contributor,sensitivity,n,nominal,lower_limit,upper_limit,assumed_sd,measured_mean,measured_sd,sd_ratio,mean_shift,mean_shift_of_tolerance,ppk,ppk_lower,normality_p,variance_share,supports_assumption,reasons\n");
        for v in &self.contributors {
            let fields = [
                csv_field(&v.name),
                format!("{}", v.sensitivity),
                v.n.map(|n| n.to_string()).unwrap_or_default(),
                format!("{}", v.nominal),
                format!("{}", v.lower_limit),
                format!("{}", v.upper_limit),
                format!("{}", v.assumed_sd),
                format!("{}", v.measured_mean),
                format!("{}", v.measured_sd),
                format!("{}", v.sd_ratio),
                format!("{}", v.mean_shift),
                format!("{}", v.mean_shift_of_tolerance),
                csv_num(v.ppk),
                csv_num(v.ppk_lower),
                csv_num(v.normality_p),
                format!("{}", v.variance_share),
                v.supports_assumption.to_string(),
                csv_field(&v.reasons.join("; ")),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        out
    }

    fn json(&self) -> serde_json::Result<String> {
        super::json_text(self)
    }
}
