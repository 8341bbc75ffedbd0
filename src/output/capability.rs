//! The capability result as a table, CSV and JSON.

use super::table::{Cell, Table};
use super::{csv_field, csv_num, num, ppm, Render};
use crate::intake::Audit;
use crate::study::{Comparison, FeatureResult};
use serde::Serialize;

#[derive(Debug, Serialize)]
pub struct CapabilityReport {
    pub features: Vec<FeatureResult>,
    /// Between-group tests, one per feature, under `--by`.
    pub comparisons: Vec<Comparison>,
    pub audit: Audit,
    pub confidence: f64,
}

impl CapabilityReport {
    /// The report, with the between-group tests when the features were studied by groups.
    pub fn new(features: Vec<FeatureResult>, audit: Audit, confidence: f64, alpha: f64) -> Self {
        Self {
            comparisons: crate::study::compare_groups(&features, alpha),
            features,
            audit,
            confidence,
        }
    }
}

/// The CSV columns, in order; stable names for pipelines.
const CSV_COLUMNS: &[&str] = &[
    "feature",
    "group",
    "n",
    "missing",
    "unit",
    "nominal",
    "lsl",
    "usl",
    "mean",
    "sd_overall",
    "sd_within",
    "sigma_within_method",
    "min",
    "max",
    "skewness",
    "kurtosis",
    "cp",
    "cpl",
    "cpu",
    "cpk",
    "pp",
    "ppl",
    "ppu",
    "ppk",
    "cpm",
    "cp_lower",
    "cpk_lower",
    "pp_lower",
    "ppk_lower",
    "ppm_observed",
    "ppm_expected_within",
    "ppm_expected_overall",
    "ad_a2",
    "ad_a2_adjusted",
    "ad_p",
    "sw_w",
    "sw_p",
    "flags",
    "model",
    "model_ppk",
    "model_ppm",
    "stable",
    "signals",
];

fn group_text(f: &FeatureResult) -> String {
    f.group
        .as_ref()
        .map(|g| {
            g.iter()
                .map(|(k, v)| format!("{k}={v}"))
                .collect::<Vec<_>>()
                .join(";")
        })
        .unwrap_or_default()
}

impl Render for CapabilityReport {
    fn table(&self, colour: bool) -> String {
        let grouped = self.features.iter().any(|f| f.group.is_some());
        let mut headers = vec!["feature"];
        if grouped {
            headers.push("group");
        }
        let lower = format!("Cpk{:.0}%lo", self.confidence * 100.0);
        let plower = format!("Ppk{:.0}%lo", self.confidence * 100.0);
        headers.extend([
            "n",
            "LSL",
            "USL",
            "mean",
            "sd within",
            "sd overall",
            "Cp",
            "Cpk",
            &lower,
            "Pp",
            "Ppk",
            &plower,
            "ppm exp",
            "AD p",
            "SW p",
            "model",
            "Ppk model",
            "signals",
            "stable",
        ]);
        let mut t = Table::new(&headers);
        if grouped {
            t.left.push(1);
        }
        t.left.push(headers.len() - 4);
        let mut previous: Option<&str> = None;
        for f in &self.features {
            let c = &f.capability;
            let cpk_bad = f.flags.iter().any(|x| x == "cpk");
            let normal_bad = f.flags.iter().any(|x| x == "normality");
            // Under --by, one block per feature: its name on the block's first row only.
            let name = if grouped && previous == Some(f.feature.as_str()) {
                String::new()
            } else {
                f.feature.clone()
            };
            previous = Some(&f.feature);
            let mut row: Vec<Cell> = vec![Cell::flagged(
                name,
                f.flags.iter().any(|x| x == "resolution"),
            )];
            if grouped {
                row.push(group_text(f).into());
            }
            row.extend([
                c.n.to_string().into(),
                num(f.lsl, 6).into(),
                num(f.usl, 6).into(),
                num(c.mean, 6).into(),
                num(c.sd_within, 3).into(),
                num(c.sd_overall, 3).into(),
                num(c.cp, 3).into(),
                Cell::flagged(num(c.cpk, 3), cpk_bad),
                num(c.cpk_lower, 3).into(),
                num(c.pp, 3).into(),
                num(c.ppk, 3).into(),
                num(c.ppk_lower, 3).into(),
                ppm(c.ppm_expected_overall).into(),
                Cell::flagged(num(c.anderson_darling.map(|a| a.p), 2), normal_bad),
                Cell::flagged(num(c.shapiro_wilk.map(|s| s.p), 2), normal_bad),
                f.model.as_ref().map_or("-", |m| m.name).into(),
                num(f.model.as_ref().and_then(|m| m.capability.ppk), 3).into(),
                match &f.stability {
                    Some(s) => Cell::flagged(
                        format!("{}/{:.1}", s.signal_count, s.expected_by_chance),
                        !s.signals.is_empty(),
                    ),
                    None => "-".into(),
                },
                match &f.stability {
                    Some(s) => Cell::flagged(if s.stable { "yes" } else { "no" }, !s.stable),
                    None => "-".into(),
                },
            ]);
            t.push(row);
        }
        let mut out = t.render(colour);
        let label = |f: &FeatureResult| match &f.group {
            Some(_) => format!("{} [{}]", f.feature, group_text(f)),
            None => f.feature.clone(),
        };
        for f in &self.features {
            if let Some(m) = f.model.as_ref().filter(|m| m.name != "normal") {
                out.push_str(&format!(
                    "model {}: {} ({}); Ppk {} and {} ppm expected, against {} ppm under the normal model\n",
                    label(f),
                    m.name,
                    m.reason,
                    num(m.capability.ppk, 3),
                    ppm(m.capability.ppm.total),
                    ppm(f.capability.ppm_expected_overall),
                ));
            }
        }
        for f in &self.features {
            if let Some(s) = f.stability.as_ref().filter(|s| !s.signals.is_empty()) {
                out.push_str(&format!("stability {}: {}\n", label(f), s.summary()));
            }
        }
        for c in &self.comparisons {
            out.push_str(&format!(
                "groups {} by {}: {}\n",
                c.feature, c.by, c.summary
            ));
        }
        let a = &self.audit;
        out.push_str(&format!(
            "\n{} rows read, {} used, {} rejected; {} values used, {} not used (see --format json for the list)\n",
            a.rows_read, a.rows_used, a.rows_rejected, a.values_used, a.unused.len()
        ));
        for w in &a.warnings {
            out.push_str(&format!("note: {}\n", w.describe()));
        }
        if self.features.iter().any(|f| !f.flags.is_empty()) {
            out.push_str("! marks a Cpk below the minimum, a rejected normality test, a chart that signals (signals/expected by chance; stable: no when more than chance), or a gauge too coarse for the tolerance\n");
        }
        out
    }

    fn csv(&self) -> String {
        let mut out = CSV_COLUMNS.join(",");
        out.push('\n');
        for f in &self.features {
            let c = &f.capability;
            let fields = [
                csv_field(&f.feature),
                csv_field(&group_text(f)),
                c.n.to_string(),
                f.missing.to_string(),
                csv_field(f.unit.as_deref().unwrap_or("")),
                csv_num(f.nominal),
                csv_num(f.lsl),
                csv_num(f.usl),
                csv_num(c.mean),
                csv_num(c.sd_overall),
                csv_num(c.sd_within),
                c.sigma_within_method.name().to_string(),
                csv_num(c.min),
                csv_num(c.max),
                csv_num(c.skewness),
                csv_num(c.kurtosis),
                csv_num(c.cp),
                csv_num(c.cpl),
                csv_num(c.cpu),
                csv_num(c.cpk),
                csv_num(c.pp),
                csv_num(c.ppl),
                csv_num(c.ppu),
                csv_num(c.ppk),
                csv_num(c.cpm),
                csv_num(c.cp_lower),
                csv_num(c.cpk_lower),
                csv_num(c.pp_lower),
                csv_num(c.ppk_lower),
                csv_num(c.ppm_observed),
                csv_num(c.ppm_expected_within),
                csv_num(c.ppm_expected_overall),
                csv_num(c.anderson_darling.map(|a| a.a2)),
                csv_num(c.anderson_darling.map(|a| a.a2_adjusted)),
                csv_num(c.anderson_darling.map(|a| a.p)),
                csv_num(c.shapiro_wilk.map(|s| s.w)),
                csv_num(c.shapiro_wilk.map(|s| s.p)),
                csv_field(&f.flags.join(";")),
                f.model
                    .as_ref()
                    .map_or(String::new(), |m| m.name.to_string()),
                csv_num(f.model.as_ref().and_then(|m| m.capability.ppk)),
                csv_num(f.model.as_ref().and_then(|m| m.capability.ppm.total)),
                f.stability
                    .as_ref()
                    .map_or(String::new(), |s| s.stable.to_string()),
                f.stability
                    .as_ref()
                    .map_or(String::new(), |s| s.signal_count.to_string()),
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
