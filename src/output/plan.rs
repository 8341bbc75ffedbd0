//! The plan as a table, CSV and JSON.

use super::table::{Cell, Table};
use super::{csv_field, csv_num, num, ppm, Render};
use crate::stack::analytic::SafetyRow;
use crate::stack::plan::Plan;
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct PlanReport {
    #[serde(flatten)]
    pub plan: Plan,
    pub safety_factors: Vec<SafetyRow>,
}

impl PlanReport {
    /// One contributor at a time: measured σ, the σ that alone would meet the target (marked
    /// where none would), and the Ppk and centred Cpk that σ means.
    pub fn contributor_rows(&self) -> Vec<Vec<Cell>> {
        self.plan
            .per_contributor
            .iter()
            .map(|c| {
                vec![
                    c.name.clone().into(),
                    num(Some(c.measured_sd), 3).into(),
                    Cell::flagged(
                        if c.reachable {
                            num(c.required_sd, 3)
                        } else {
                            "not alone".into()
                        },
                        !c.reachable,
                    ),
                    num(c.required_ppk, 3).into(),
                    num(c.required_cpk_centred, 3).into(),
                ]
            })
            .collect()
    }
}

impl Render for PlanReport {
    fn table(&self, colour: bool) -> String {
        let p = &self.plan;
        let mut out = format!(
            "target {} ppm; the measured parts forecast {} ppm\n\n",
            ppm(Some(p.target_ppm)),
            ppm(Some(p.current_ppm))
        );
        out.push_str("One contributor at a time (the others as measured):\n");
        let mut t = Table::new(&[
            "contributor",
            "measured sd",
            "required sd",
            "required Ppk",
            "if centred",
        ]);
        for row in self.contributor_rows() {
            t.push(row);
        }
        out.push_str(&t.render(colour));
        match p.allocation.sd_factor {
            Some(f) => {
                out.push_str(&format!("\nAll together: every sd × {:.3}\n", f));
                let mut a = Table::new(&["contributor", "required sd", "required Ppk"]);
                for c in &p.allocation.contributors {
                    a.push(vec![c.name.clone().into(), num(Some(c.required_sd), 3).into(), num(c.required_ppk, 3).into()]);
                }
                out.push_str(&a.render(colour));
            }
            None => out.push_str("\nAll together: no common reduction of the sds meets the target (the mean is off).\n"),
        }
        let m = &p.mean_correction;
        out.push_str(&match (m.reachable, m.shift) {
            (true, Some(s)) => format!("\nMean correction alone: move the assembly mean by {} to {} (best reachable {} ppm).\n", num(Some(s), 3), num(m.target_mean, 6), ppm(Some(m.best_ppm))),
            _ => format!("\nMean correction alone cannot meet the target: centred, the measured spread still gives {} ppm.\n", ppm(Some(m.best_ppm))),
        });
        out.push_str(&format!(
            "\nParts to measure to show Cpk ≥ {} at {:.0} % confidence (Bissell bound):\n",
            p.demonstrate_cpk,
            100.0 * p.confidence
        ));
        let mut s = Table::new(&["Cpk of", "observed Cpk", "parts"]);
        for r in &p.sample_sizes {
            s.push(vec![
                r.contributor.as_deref().unwrap_or("(reference)").into(),
                num(Some(r.observed_cpk), 3).into(),
                r.parts
                    .map_or("not possible".into(), |n| n.to_string())
                    .into(),
            ]);
        }
        out.push_str(&s.render(colour));
        out.push_str("\nSafety factor on the RSS half-width against the fraction outside ±3kσ:\n");
        let mut f = Table::new(&["k", "±σ", "ppm outside"]);
        for r in &self.safety_factors {
            f.push(vec![
                format!("{:.3}", r.factor).into(),
                format!("{:.2}", r.sigmas).into(),
                ppm(Some(r.ppm_outside)).into(),
            ]);
        }
        out.push_str(&f.render(colour));
        out
    }

    fn csv(&self) -> String {
        let mut out = String::from("contributor,measured_sd,required_sd,required_ppk,required_cpk_centred,allocated_sd,allocated_ppk\n");
        for (i, c) in self.plan.per_contributor.iter().enumerate() {
            let alloc = self.plan.allocation.contributors.get(i);
            out.push_str(
                &[
                    csv_field(&c.name),
                    format!("{}", c.measured_sd),
                    csv_num(c.required_sd),
                    csv_num(c.required_ppk),
                    csv_num(c.required_cpk_centred),
                    csv_num(alloc.map(|a| a.required_sd)),
                    csv_num(alloc.and_then(|a| a.required_ppk)),
                ]
                .join(","),
            );
            out.push('\n');
        }
        out
    }

    fn json(&self) -> serde_json::Result<String> {
        super::json_text(self)
    }
}
