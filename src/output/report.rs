//! The report an engineer sends: one self-contained HTML file (inline SVG and CSS, no scripts,
//! nothing fetched), in the order it is read: the answer, the assembly, each feature, what was
//! read, and how the numbers were made.

use super::capability::CapabilityReport;
use super::chart::Plot;
use super::figures::{self, feature_label};
use super::html::{esc, Html, Td};
use super::plan::PlanReport;
use super::stack::{StackReport, CAUTION};
use super::{num, ppm};
use crate::study::FeatureResult;
use serde::Serialize;
use std::collections::{BTreeMap, HashMap};

/// Values listed by name in the report's audit section (all are counted; the JSON of
/// `capstack capability` lists every one).
pub const MAX_LISTED_UNUSED: usize = 500;
/// Signals listed per feature in the report.
const MAX_LISTED_SIGNALS: usize = 12;

/// What the report is about and how it was made.
#[derive(Debug, Clone, Serialize)]
pub struct ReportMeta {
    pub title: String,
    /// The day it was made (UTC), as YYYY-MM-DD.
    pub date: String,
    pub data_files: Vec<String>,
    pub spec_files: Vec<String>,
    pub stack_file: Option<String>,
    pub confidence: f64,
    pub min_cpk: f64,
    pub alpha: f64,
    pub rules: Vec<u8>,
    /// How the within sigma was estimated, in words.
    pub within: String,
}

/// Everything the report shows.
pub struct Report<'a> {
    pub meta: ReportMeta,
    pub capability: &'a CapabilityReport,
    pub stack: Option<&'a StackReport>,
    pub plan: Option<&'a PlanReport>,
}

/// Flags as words for people.
fn flag_text(flag: &str, min_cpk: f64) -> String {
    match flag {
        "cpk" => format!("Cpk below {min_cpk}"),
        "normality" => "not normal".into(),
        "resolution" => "gauge too coarse".into(),
        "unstable" => "unstable".into(),
        other => other.into(),
    }
}

fn pct(v: f64) -> String {
    format!("{:.0} %", 100.0 * v)
}

const CSS: &str = r#"
:root { --ink:#282c34; --muted:#5f6672; --line:#d9dde3; --bad:#b3262f; --good:#2f7a4d; --warn:#a25a00; --paper:#ffffff; --band:#f4f6f8; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: var(--paper); font: 15px/1.5 system-ui, -apple-system, "Segoe UI", "DejaVu Sans", sans-serif; }
main { max-width: 1120px; margin: 0 auto; padding: 24px 28px 60px; }
header h1 { margin: 0 0 4px; font-size: 28px; }
.meta { color: var(--muted); margin: 0 0 16px; font-size: 13px; }
nav ol { margin: 0; padding-left: 20px; font-size: 14px; }
nav ol ol { display: flex; flex-wrap: wrap; gap: 0 22px; padding-left: 18px; list-style: none; }
h2 { border-bottom: 2px solid var(--ink); padding-bottom: 4px; margin-top: 40px; font-size: 22px; }
h3 { margin: 28px 0 8px; font-size: 18px; }
h4 { margin: 18px 0 6px; font-size: 15px; color: var(--muted); }
.answer { font-size: 18px; padding: 14px 18px; border-left: 6px solid var(--good); background: var(--band); }
.answer.no { border-left-color: var(--bad); }
.cards { display: flex; flex-wrap: wrap; gap: 12px; margin: 16px 0; }
.card { flex: 1 1 200px; border: 1px solid var(--line); border-radius: 6px; padding: 10px 14px; }
.card .v { font-size: 24px; font-weight: 600; }
.card .k { color: var(--muted); font-size: 13px; }
.card.bad .v { color: var(--bad); }
.caution { border: 1px solid var(--warn); border-left: 6px solid var(--warn); padding: 10px 14px; background: #fff8ee; font-size: 14px; }
.badge { display: inline-block; font-size: 12px; padding: 1px 8px; border-radius: 10px; margin-left: 6px; background: var(--band); border: 1px solid var(--line); vertical-align: middle; }
.badge.bad { background: #fbe9ea; border-color: #e7b4b8; color: var(--bad); }
.badge.good { background: #e8f4ec; border-color: #b4d8c1; color: var(--good); }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; margin: 8px 0 14px; font-size: 13px; font-variant-numeric: tabular-nums; }
th, td { padding: 3px 9px; border-bottom: 1px solid var(--line); text-align: right; white-space: nowrap; }
th { background: var(--band); font-weight: 600; }
td:first-child, th:first-child, td.l { text-align: left; }
table.wrap td:last-child { white-space: normal; text-align: left; min-width: 240px; }
td.bad { color: var(--bad); font-weight: 600; }
td.bad::after { content: " !"; }
.grid { display: grid; grid-template-columns: 1fr 1fr; gap: 10px 18px; }
figure.chart { margin: 8px 0; break-inside: avoid; page-break-inside: avoid; }
figure.chart svg { display: block; width: 100%; height: auto; border: 1px solid var(--line); border-radius: 4px; }
figcaption { font-size: 12px; color: var(--muted); margin-top: 3px; }
article.feature { border-top: 1px solid var(--line); margin-top: 26px; }
.notes li { font-size: 14px; }
.small { font-size: 13px; color: var(--muted); }
@media (max-width: 820px) { .grid { grid-template-columns: 1fr; } }
@media print {
  body { font-size: 11pt; }
  main { max-width: none; padding: 0; }
  nav { display: none; }
  h2 { break-before: page; page-break-before: always; }
  section#summary h2 { break-before: auto; page-break-before: auto; }
  article.feature { break-before: page; page-break-before: always; border-top: none; }
  section#features > h2 + article.feature { break-before: auto; page-break-before: auto; }
  .grid { grid-template-columns: 1fr 1fr; }
  table, figure, .cards, .answer, .caution { break-inside: avoid; page-break-inside: avoid; }
  h2, h3, h4 { break-after: avoid; page-break-after: avoid; }
  .scroll { overflow: visible; }
}
@page { size: A4; margin: 14mm; }
"#;

impl Report<'_> {
    /// Every chart, in the order the report shows them.
    pub fn plots(&self) -> Vec<Plot> {
        let mut plots = Vec::new();
        if let Some(s) = self.stack {
            plots.push(figures::assembly(s));
            plots.push(figures::contributions(s));
        }
        for (i, f) in self.capability.features.iter().enumerate() {
            plots.extend(figures::feature_plots(f, i));
        }
        plots
    }

    /// The document, with each chart's SVG taken from `svgs` by its slug.
    pub fn html(&self, plots: &[Plot], svgs: &HashMap<String, String>) -> String {
        let mut h = Html::default();
        let title = esc(&self.meta.title);
        h.raw(&format!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
             <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
             <meta name=\"generator\" content=\"capstack {}\">\n<title>{title}</title>\n<style>{CSS}</style>\n</head>\n<body>\n<main>\n",
            env!("CARGO_PKG_VERSION")
        ));
        h.raw(&format!("<header>\n<h1>{title}</h1>\n"));
        let mut files = self.meta.data_files.clone();
        files.extend(self.meta.spec_files.iter().cloned());
        files.extend(self.meta.stack_file.iter().cloned());
        h.raw("<p class=\"meta\">");
        h.text(&format!(
            "Made {} by capstack {} from {}",
            self.meta.date,
            env!("CARGO_PKG_VERSION"),
            files.join(", ")
        ));
        h.raw("</p>\n</header>\n");
        self.contents(&mut h);
        let chart = |slug: &str, caption: &str, h: &mut Html| {
            if let Some(svg) = svgs.get(slug) {
                figure(h, slug, svg, caption);
            }
        };
        self.summary(&mut h);
        if let Some(s) = self.stack {
            self.assembly_section(&mut h, s, &chart);
        }
        h.raw("<section id=\"features\">\n<h2>Feature by feature</h2>\n");
        let slugs: Vec<&str> = plots.iter().map(|p| p.slug.as_str()).collect();
        for (i, f) in self.capability.features.iter().enumerate() {
            self.feature_section(&mut h, f, i, &slugs, &chart);
        }
        h.raw("</section>\n");
        self.audit_section(&mut h);
        self.methods_section(&mut h);
        h.raw("</main>\n</body>\n</html>\n");
        h.out
    }

    fn contents(&self, h: &mut Html) {
        h.raw("<nav aria-label=\"contents\"><ol>\n<li><a href=\"#summary\">The answer</a></li>\n");
        if self.stack.is_some() {
            h.raw("<li><a href=\"#assembly\">The assembly</a></li>\n");
        }
        h.raw("<li><a href=\"#features\">Feature by feature</a><ol>\n");
        for (i, f) in self.capability.features.iter().enumerate() {
            h.raw(&format!(
                "<li><a href=\"#{}\">{}</a></li>\n",
                feature_anchor(f, i),
                esc(&feature_label(f))
            ));
        }
        h.raw("</ol></li>\n<li><a href=\"#audit\">What was read</a></li>\n<li><a href=\"#methods\">Methods, sources and cautions</a></li>\n</ol></nav>\n");
    }

    fn summary(&self, h: &mut Html) {
        h.raw("<section id=\"summary\">\n<h2>The answer</h2>\n");
        if let Some(s) = self.stack {
            let v = &s.verdict;
            h.raw(&format!(
                "<p class=\"answer{}\">",
                if v.supports_assumption { "" } else { " no" }
            ));
            h.text(&v.headline);
            if v.supports_assumption {
                h.text(" Every contributor supports the assumption.");
            }
            h.raw("</p>\n<div class=\"cards\">\n");
            card(
                h,
                "assumed by the design (RSS)",
                &format!("{} ppm", ppm(Some(s.rss.ppm))),
                false,
            );
            let forecast_extra = s
                .forecast_uncertainty
                .as_ref()
                .map(|u| {
                    format!(
                        "90 % interval {}–{} ppm",
                        ppm(Some(u.ppm_low)),
                        ppm(Some(u.ppm_high))
                    )
                })
                .unwrap_or_default();
            card(
                h,
                &format!("forecast from the measured parts {forecast_extra}"),
                &format!("{} ppm", ppm(Some(s.measured.ppm))),
                s.measured.ppm > s.rss.ppm,
            );
            if let Some(sim) = &s.simulation {
                card(
                    h,
                    &format!(
                        "simulated, {} draws, 95 % interval {}–{} ppm",
                        sim.samples,
                        ppm(Some(sim.ppm_low)),
                        ppm(Some(sim.ppm_high))
                    ),
                    &format!("{} ppm", ppm(Some(sim.ppm))),
                    sim.ppm > s.rss.ppm,
                );
            }
            if let Some(r) = v.ppm_ratio {
                card(h, "forecast ÷ assumed", &format!("{r:.1} ×"), r > 1.0);
            }
            h.raw("</div>\n");
            let against: Vec<String> = s
                .contributors
                .iter()
                .filter(|c| !c.supports_assumption)
                .map(|c| format!("{}: {}", c.name, c.reasons.join("; ")))
                .collect();
            if !against.is_empty() {
                h.element(
                    "p",
                    None,
                    "Contributors whose measured parts do not support the design assumption:",
                );
                h.list(&against);
            }
        }
        let features = &self.capability.features;
        let flagged: Vec<String> = features
            .iter()
            .filter(|f| !f.flags.is_empty())
            .map(|f| {
                let flags: Vec<String> = f
                    .flags
                    .iter()
                    .map(|x| flag_text(x, self.meta.min_cpk))
                    .collect();
                format!("{}: {}", feature_label(f), flags.join(", "))
            })
            .collect();
        h.element(
            "p",
            None,
            &format!(
                "{} feature result(s) studied; {} flagged (Cpk below {}, normality rejected at α = {}, a chart that signals more than chance, or a gauge too coarse for the tolerance).",
                features.len(),
                flagged.len(),
                self.meta.min_cpk,
                self.meta.alpha
            ),
        );
        h.list(&flagged);
        h.raw("<p class=\"caution\">");
        h.text(CAUTION);
        h.raw("</p>\n</section>\n");
    }

    fn assembly_section(
        &self,
        h: &mut Html,
        s: &StackReport,
        chart: &dyn Fn(&str, &str, &mut Html),
    ) {
        h.raw("<section id=\"assembly\">\n<h2>The assembly</h2>\n");
        let r = &s.requirement;
        let unit = r.unit.clone().unwrap_or_default();
        h.element(
            "p",
            None,
            &format!(
                "{}: LSL {} USL {} {unit}; nominal {}; design assumption: every contributor normal, centred, independent, σ = T/(3·{}), safety factor {}.",
                r.name,
                num(r.lsl, 6),
                num(r.usl, 6),
                num(Some(s.nominal), 6),
                s.assumptions.cp,
                s.assumptions.safety_factor
            ),
        );
        chart(
            "stack-assembly",
            "The assembly: the design assumption's normal curve (dashed), the measured parts' normal forecast, and the simulated assemblies (bars), against the requirement limits.",
            h,
        );
        let rows: Vec<Vec<Td>> = s
            .method_rows()
            .into_iter()
            .map(|r| r.into_iter().map(Td::from).collect())
            .collect();
        h.table("methods", &super::stack::METHOD_COLUMNS, &rows);
        let mut notes = vec!["Measured min and max are the mean ∓ 3 sd.".to_string()];
        if let Some(sim) = &s.simulation {
            let draws: Vec<String> = sim
                .draws
                .iter()
                .map(|d| match d.parts {
                    Some(n) => format!("{} from {n} parts", d.name),
                    None => format!("{} {}", d.name, d.draw),
                })
                .collect();
            notes.push(format!(
                "Simulation: {} draws, seed {}, {} rejects, 95 % interval ({}) {}–{} ppm; {}.",
                sim.samples,
                sim.seed,
                sim.rejects,
                sim.interval,
                ppm(Some(sim.ppm_low)),
                ppm(Some(sim.ppm_high)),
                draws.join(", ")
            ));
        }
        if let Some(u) = &s.forecast_uncertainty {
            notes.push(format!("Uncertainty: {}.", u.statement));
        }
        h.raw("<div class=\"notes\">");
        h.list(&notes);
        h.raw("</div>\n<h3>Contributors</h3>\n");
        chart(
            "stack-contributions",
            "Each contributor's share of the measured assembly variance, largest first; red where its measured parts do not support the design assumption.",
            h,
        );
        let rows: Vec<Vec<Td>> = s
            .contributors
            .iter()
            .map(|v| {
                vec![
                    v.name.clone().into(),
                    num(Some(v.sensitivity), 3).into(),
                    v.n.map_or("stated".to_string(), |n| n.to_string()).into(),
                    num(Some(v.assumed_sd), 3).into(),
                    num(Some(v.measured_sd), 3).into(),
                    Td::flagged(format!("{:.2}", v.sd_ratio), v.sd_ratio > 1.0),
                    Td::flagged(
                        format!("{:+.2}", v.mean_shift_of_tolerance),
                        v.reasons.iter().any(|r| r.starts_with("mean")),
                    ),
                    Td::flagged(num(v.ppk, 3), v.ppk.is_some_and(|p| p < s.assumptions.cp)),
                    num(v.ppk_lower, 3).into(),
                    Td::flagged(
                        num(v.normality_p, 2),
                        v.normality_p
                            .is_some_and(|p| p < crate::stack::verdict::ALPHA),
                    ),
                    v.model.unwrap_or("-").into(),
                    match v.stable {
                        Some(st) => Td::flagged(if st { "yes" } else { "no" }, !st),
                        None => "-".into(),
                    },
                    pct(v.variance_share).into(),
                    Td::flagged(
                        if v.supports_assumption { "yes" } else { "no" },
                        !v.supports_assumption,
                    ),
                ]
            })
            .collect();
        h.table(
            "contributors",
            &[
                "contributor",
                "a",
                "n",
                "assumed σ",
                "measured σ",
                "σ ratio",
                "shift / T",
                "Ppk",
                "Ppk lower",
                "AD p",
                "model",
                "stable",
                "variance share",
                "supports",
            ],
            &rows,
        );
        let why: Vec<String> = s
            .contributors
            .iter()
            .filter(|c| !c.reasons.is_empty())
            .map(|c| format!("{}: {}", c.name, c.reasons.join("; ")))
            .collect();
        h.list(&why);
        h.element(
            "p",
            Some("small"),
            "shift / T: the measured mean's distance from the middle of the tolerance zone, as a fraction of the half-tolerance T. Ppk lower: one-sided lower confidence bound (Bissell).",
        );
        if !s.verdict.causes.is_empty() {
            h.raw("<h4>Where the excess comes from</h4>\n");
            let rows: Vec<Vec<Td>> = s
                .verdict
                .causes
                .iter()
                .map(|c| {
                    vec![
                        c.contributor.clone().into(),
                        c.kind.clone().into(),
                        ppm(Some(c.ppm_effect)).into(),
                        pct(c.share).into(),
                    ]
                })
                .collect();
            h.table(
                "causes",
                &["contributor", "cause", "ppm removed if put back", "share"],
                &rows,
            );
        }
        if let Some(p) = self.plan {
            self.plan_part(h, p);
        }
        h.raw("</section>\n");
    }

    fn plan_part(&self, h: &mut Html, p: &PlanReport) {
        let plan = &p.plan;
        h.raw("<h3>What it would take</h3>\n");
        h.element(
            "p",
            None,
            &format!(
                "Target {} ppm; the measured parts forecast {} ppm. One contributor at a time, the others as measured:",
                ppm(Some(plan.target_ppm)),
                ppm(Some(plan.current_ppm))
            ),
        );
        let rows: Vec<Vec<Td>> = p
            .contributor_rows()
            .into_iter()
            .map(|r| r.into_iter().map(Td::from).collect())
            .collect();
        h.table(
            "plan",
            &[
                "contributor",
                "measured σ",
                "required σ",
                "required Ppk",
                "Cpk if centred",
            ],
            &rows,
        );
        let mut lines = Vec::new();
        match plan.allocation.sd_factor {
            Some(f) => lines.push(format!(
                "All together: every measured σ × {f:.3} meets the target ({}).",
                plan.allocation
                    .contributors
                    .iter()
                    .map(|c| format!("{} σ {}", c.name, num(Some(c.required_sd), 3)))
                    .collect::<Vec<_>>()
                    .join(", ")
            )),
            None => lines.push(
                "All together: no common reduction of the σs meets the target (the mean is off)."
                    .into(),
            ),
        }
        let m = &plan.mean_correction;
        lines.push(match (m.reachable, m.shift) {
            (true, Some(s)) => format!(
                "Centring alone: move the assembly mean by {} to {} (best reachable {} ppm).",
                num(Some(s), 3),
                num(m.target_mean, 6),
                ppm(Some(m.best_ppm))
            ),
            _ => format!(
                "Centring alone cannot meet the target: centred, the measured spread still gives {} ppm.",
                ppm(Some(m.best_ppm))
            ),
        });
        h.list(&lines);
        h.element(
            "p",
            None,
            &format!(
                "Parts to measure to show Cpk ≥ {} at {:.0} % confidence (Bissell's bound), by the Cpk the parts show:",
                plan.demonstrate_cpk,
                100.0 * plan.confidence
            ),
        );
        let rows: Vec<Vec<Td>> = plan
            .sample_sizes
            .iter()
            .map(|s| {
                vec![
                    s.contributor.as_deref().unwrap_or("(reference)").into(),
                    num(Some(s.observed_cpk), 3).into(),
                    s.parts
                        .map_or("not possible".into(), |n| n.to_string())
                        .into(),
                ]
            })
            .collect();
        h.table("sizes", &["Cpk of", "observed Cpk", "parts"], &rows);
    }

    fn feature_section(
        &self,
        h: &mut Html,
        f: &FeatureResult,
        index: usize,
        slugs: &[&str],
        chart: &dyn Fn(&str, &str, &mut Html),
    ) {
        let c = &f.capability;
        h.raw(&format!(
            "<article class=\"feature\" id=\"{}\">\n<h3>{}",
            feature_anchor(f, index),
            esc(&feature_label(f))
        ));
        if f.flags.is_empty() {
            h.raw("<span class=\"badge good\">no flags</span>");
        }
        for flag in &f.flags {
            h.raw(&format!(
                "<span class=\"badge bad\">{}</span>",
                esc(&flag_text(flag, self.meta.min_cpk))
            ));
        }
        h.raw("</h3>\n");
        let prefix = format!("f{:02}-", index + 1);
        let mine: Vec<&str> = slugs
            .iter()
            .copied()
            .filter(|s| s.starts_with(&prefix))
            .collect();
        let caption = |slug: &str| -> String {
            if slug.ends_with("-histogram") {
                "Values in bins, the spec limits, nominal, the normal density and (when chosen) the fitted model's density.".into()
            } else if slug.ends_with("-probability") {
                "Ordered values against normal scores: a normal sample lies on the dashed line."
                    .into()
            } else if slug.ends_with("-location") {
                "Control chart of location in process order; red points signal on the Nelson tests."
                    .into()
            } else {
                "Control chart of dispersion; red points lie above the upper limit.".into()
            }
        };
        h.raw("<div class=\"grid\">\n");
        for slug in &mine {
            chart(slug, &caption(slug), h);
        }
        h.raw("</div>\n");

        let spec = format!(
            "{} – {}{}",
            num(f.lsl, 6),
            num(f.usl, 6),
            f.unit
                .as_deref()
                .map(|u| format!(" {u}"))
                .unwrap_or_default()
        );
        h.table(
            "data",
            &[
                "n",
                "missing",
                "LSL – USL",
                "nominal",
                "mean",
                "min",
                "max",
                "σ within",
                "σ overall",
                "skewness",
                "kurtosis",
            ],
            &[vec![
                c.n.to_string().into(),
                f.missing.to_string().into(),
                spec.into(),
                num(f.nominal, 6).into(),
                num(c.mean, 6).into(),
                num(c.min, 6).into(),
                num(c.max, 6).into(),
                format!(
                    "{} ({})",
                    num(c.sd_within, 3),
                    c.sigma_within_method.name().replace('_', " ")
                )
                .into(),
                num(c.sd_overall, 3).into(),
                num(c.skewness, 3).into(),
                num(c.kurtosis, 3).into(),
            ]],
        );
        let conf = format!("{:.0} %", 100.0 * self.meta.confidence);
        let interval = |i: Option<crate::stats::capability::Interval>| {
            i.map_or("-".to_string(), |i| {
                format!("{} – {}", num(Some(i.low), 3), num(Some(i.high), 3))
            })
        };
        let cpk_bad = f.flags.iter().any(|x| x == "cpk");
        let rows = vec![
            vec![
                "Cp".into(),
                num(c.cp, 3).into(),
                num(c.cp_lower, 3).into(),
                interval(c.cp_interval).into(),
            ],
            vec![
                "Cpk".into(),
                Td::flagged(num(c.cpk, 3), cpk_bad),
                num(c.cpk_lower, 3).into(),
                interval(c.cpk_interval).into(),
            ],
            vec![
                "Pp".into(),
                num(c.pp, 3).into(),
                num(c.pp_lower, 3).into(),
                interval(c.pp_interval).into(),
            ],
            vec![
                "Ppk".into(),
                num(c.ppk, 3).into(),
                num(c.ppk_lower, 3).into(),
                interval(c.ppk_interval).into(),
            ],
            vec!["Cpm".into(), num(c.cpm, 3).into(), "-".into(), "-".into()],
        ];
        h.raw("<div class=\"grid\"><div>\n");
        h.table(
            "indices",
            &[
                "index",
                "value",
                &format!("{conf} lower bound"),
                &format!("{conf} interval"),
            ],
            &rows,
        );
        let split = &c.ppm_split;
        let ppm_row = |name: &str, p: &crate::stats::capability::Ppm| -> Vec<Td> {
            vec![
                name.into(),
                ppm(p.below).into(),
                ppm(p.above).into(),
                ppm(p.total).into(),
            ]
        };
        let mut ppm_rows = vec![
            ppm_row("observed", &split.observed),
            ppm_row("expected (σ within)", &split.expected_within),
            ppm_row("expected (σ overall)", &split.expected_overall),
        ];
        if let Some(m) = &f.model {
            ppm_rows.push(ppm_row(&format!("{} model", m.name), &m.capability.ppm));
        }
        h.table(
            "ppm",
            &["reject rate (ppm)", "below", "above", "total"],
            &ppm_rows,
        );
        h.raw("</div><div>\n");
        let normal_bad = f.flags.iter().any(|x| x == "normality");
        let ad = c.anderson_darling;
        let sw = c.shapiro_wilk;
        h.table(
            "normality",
            &["normality test", "statistic", "adjusted", "p"],
            &[
                vec![
                    "Anderson–Darling".into(),
                    num(ad.map(|a| a.a2), 4).into(),
                    num(ad.map(|a| a.a2_adjusted), 4).into(),
                    Td::flagged(
                        num(ad.map(|a| a.p), 3),
                        ad.is_some_and(|a| a.p < self.meta.alpha),
                    ),
                ],
                vec![
                    "Shapiro–Wilk".into(),
                    num(sw.map(|s| s.w), 4).into(),
                    "-".into(),
                    Td::flagged(
                        num(sw.map(|s| s.p), 3),
                        normal_bad && sw.is_some_and(|s| s.p < self.meta.alpha),
                    ),
                ],
            ],
        );
        if let Some(m) = &f.model {
            h.element(
                "p",
                None,
                &format!(
                    "Model: {} ({}). Percentile-method Ppk {}, Pp {}.",
                    m.name,
                    m.reason,
                    num(m.capability.ppk, 3),
                    num(m.capability.pp, 3)
                ),
            );
        }
        if !f.models.is_empty() {
            let rows: Vec<Vec<Td>> = f
                .models
                .iter()
                .map(|m| {
                    vec![
                        Td::flagged(m.name, false),
                        format!("{:.1}", m.aic).into(),
                        num(Some(m.anderson_darling), 3).into(),
                        num(m.capability.ppk, 3).into(),
                        ppm(m.capability.ppm.total).into(),
                        if m.selectable {
                            ""
                        } else {
                            "edge of its range"
                        }
                        .into(),
                    ]
                })
                .collect();
            h.table(
                "models",
                &["fitted model", "AIC", "A² to fit", "Ppk", "ppm", "note"],
                &rows,
            );
        }
        h.raw("</div></div>\n");
        if let Some(st) = &f.stability {
            h.element("p", None, &format!("Stability: {}.", st.summary()));
            if !st.signals.is_empty() {
                let rows: Vec<Vec<Td>> = st
                    .signals
                    .iter()
                    .take(MAX_LISTED_SIGNALS)
                    .map(|s| {
                        vec![
                            format!("{}", s.signal.point + 1).into(),
                            s.signal.chart.into(),
                            format!("{}", s.signal.rule).into(),
                            Td {
                                text: s.description.into(),
                                class: Some("l"),
                            },
                            num(Some(s.signal.value), 6).into(),
                            match (&s.file, s.line) {
                                (Some(file), Some(l)) => format!("{file}:{l}"),
                                _ => "-".into(),
                            }
                            .into(),
                            s.part.clone().unwrap_or_else(|| "-".into()).into(),
                        ]
                    })
                    .collect();
                h.table(
                    "signals",
                    &["point", "chart", "test", "what", "value", "where", "part"],
                    &rows,
                );
                if st.signal_count > MAX_LISTED_SIGNALS {
                    h.element(
                        "p",
                        Some("small"),
                        &format!(
                            "{} more signalling points are listed in the JSON of capstack capability.",
                            st.signal_count - MAX_LISTED_SIGNALS
                        ),
                    );
                }
            }
        }
        let notes = self.feature_notes(f);
        if !notes.is_empty() {
            h.raw("<h4>Notes</h4>\n<div class=\"notes\">");
            h.list(&notes);
            h.raw("</div>\n");
        }
        h.raw("</article>\n");
    }

    /// The capability notes, the audit's warnings for this feature and its unused values.
    fn feature_notes(&self, f: &FeatureResult) -> Vec<String> {
        let audit = &self.capability.audit;
        let mut notes: Vec<String> = f.capability.notes.clone();
        for w in audit
            .warnings
            .iter()
            .filter(|w| w.feature.as_deref() == Some(f.feature.as_str()))
        {
            notes.push(w.message.clone());
        }
        let mut reasons: BTreeMap<&str, usize> = BTreeMap::new();
        let mut first = Vec::new();
        for u in audit.unused.iter().filter(|u| u.column == f.feature) {
            *reasons.entry(u.reason.as_str()).or_default() += 1;
            if first.len() < 5 {
                first.push(format!("{}:{} '{}' ({})", u.file, u.line, u.text, u.reason));
            }
        }
        if !reasons.is_empty() {
            let counts: Vec<String> = reasons.iter().map(|(r, n)| format!("{n} {r}")).collect();
            notes.push(format!(
                "Values not used: {}; first: {}.",
                counts.join(", "),
                first.join(", ")
            ));
        }
        notes
    }

    fn audit_section(&self, h: &mut Html) {
        let a = &self.capability.audit;
        h.raw("<section id=\"audit\">\n<h2>What was read</h2>\n");
        h.element(
            "p",
            None,
            &format!(
                "{} rows read: {} used, {} rejected. {} cells read, {} values used, {} not used.",
                a.rows_read,
                a.rows_used,
                a.rows_rejected,
                a.cells_read,
                a.values_used,
                a.unused.len()
            ),
        );
        let rows: Vec<Vec<Td>> = a
            .files
            .iter()
            .map(|f| {
                vec![
                    f.file.clone().into(),
                    format!("{:?}", f.layout).to_lowercase().into(),
                    f.delimiter.clone().unwrap_or_else(|| "-".into()).into(),
                    if f.decimal_comma_used { "yes" } else { "no" }.into(),
                    f.rows_read.to_string().into(),
                    f.rows_used.to_string().into(),
                    Td::flagged(f.rows_rejected.to_string(), f.rows_rejected > 0),
                    f.values_used.to_string().into(),
                    Td {
                        text: f.features.join(", "),
                        class: Some("l"),
                    },
                    Td {
                        text: f.attributes.join(", "),
                        class: Some("l"),
                    },
                ]
            })
            .collect();
        h.table(
            "wrap files",
            &[
                "file",
                "layout",
                "delimiter",
                "decimal comma",
                "rows read",
                "rows used",
                "rows rejected",
                "values used",
                "features",
                "text columns",
            ],
            &rows,
        );
        if !a.unused.is_empty() {
            let mut by_reason: BTreeMap<&str, usize> = BTreeMap::new();
            for u in &a.unused {
                *by_reason.entry(u.reason.as_str()).or_default() += 1;
            }
            let counts: Vec<String> = by_reason.iter().map(|(r, n)| format!("{n} {r}")).collect();
            h.element(
                "h3",
                None,
                &format!("Values not used ({})", counts.join(", ")),
            );
            let rows: Vec<Vec<Td>> = a
                .unused
                .iter()
                .take(MAX_LISTED_UNUSED)
                .map(|u| {
                    vec![
                        u.file.clone().into(),
                        u.line.to_string().into(),
                        u.column.clone().into(),
                        Td {
                            text: u.text.clone(),
                            class: Some("l"),
                        },
                        Td {
                            text: u.reason.clone(),
                            class: Some("l"),
                        },
                    ]
                })
                .collect();
            h.table(
                "unused",
                &["file", "line", "column", "text", "reason"],
                &rows,
            );
            if a.unused.len() > MAX_LISTED_UNUSED {
                h.element(
                    "p",
                    Some("small"),
                    &format!(
                        "{} more are listed in the JSON of capstack capability (audit.unused).",
                        a.unused.len() - MAX_LISTED_UNUSED
                    ),
                );
            }
        }
        if !a.rejected_rows.is_empty() {
            h.element(
                "h3",
                None,
                &format!("Rows rejected ({})", a.rejected_rows.len()),
            );
            let items: Vec<String> = a
                .rejected_rows
                .iter()
                .take(MAX_LISTED_UNUSED)
                .map(|r| format!("{}:{}: {}", r.file, r.line, r.reason))
                .collect();
            h.list(&items);
        }
        if !a.warnings.is_empty() {
            h.element("h3", None, "Warnings");
            let items: Vec<String> = a.warnings.iter().map(|w| w.describe()).collect();
            h.list(&items);
        }
        h.raw("</section>\n");
    }

    fn methods_section(&self, h: &mut Html) {
        h.raw("<section id=\"methods\">\n<h2>Methods, sources and cautions</h2>\n");
        let m = &self.meta;
        let rules: Vec<String> = m.rules.iter().map(|r| r.to_string()).collect();
        let items = vec![
            format!("σ within: {}; σ overall: sample standard deviation (n − 1).", m.within),
            "Cp = (USL − LSL)/6σw, Cpk = min(USL − x̄, x̄ − LSL)/3σw; Pp and Ppk the same with σ overall; Cpm = (USL − LSL)/(6√(s² + (x̄ − T)²)). One-sided specs give only the defined side.".into(),
            format!(
                "Confidence bounds at {:.0} %: χ² for Cp and Pp, Bissell (1990) for Cpk and Ppk.",
                100.0 * m.confidence
            ),
            "d2, d3 by numerical integration and c4 from the gamma function (the definitions of ASTM MNL-7).".into(),
            "Normality: Anderson–Darling A² with the small-sample adjustment and the p-values of D'Agostino & Stephens (1986); Shapiro–Wilk by Royston's algorithm AS R94.".into(),
            format!("Distribution models by maximum likelihood, chosen by AIC when normality is rejected at α = {}; capability from a model by the percentile method of ISO 22514-2 (0.135 %, 50 %, 99.865 % quantiles).", m.alpha),
            format!("Control charts: individuals and moving range (or X̄-R / X̄-S for subgroups); Nelson (1984) tests {} on the location chart; a feature is called unstable only when its signals exceed what chance explains (Poisson tail p < 0.05, capstack's rule).", rules.join(", ")),
            "Normal probability plot positions: Blom (1958), (i − 3/8)/(n + 1/4). Histogram bins: Freedman–Diaconis (1981), kept between 5 and 60.".into(),
            "Stack: worst case Σaᵢmᵢ ∓ Σ|aᵢ|Tᵢ; RSS σ = √Σ(aᵢTᵢ/3cp)²; the measured forecast is the normal model with the measured means, σs and covariances; the simulation draws measured parts (bootstrap, one part's features together), fitted models or stated shapes (normals by the ziggurat method of Marsaglia & Tsang, 2000), with a Wilson 95 % interval; the forecast's own 90 % interval is a bootstrap over the measured parts.".into(),
            format!("Flags: Cpk below {} (common practice), normality rejected at α = {}, a gauge resolution coarser than a tenth of the tolerance (common practice), and charts that signal more than chance.", m.min_cpk, m.alpha),
        ];
        h.list(&items);
        h.raw("<p class=\"caution\">");
        h.text(&format!(
            "{CAUTION} The forecasts assume that the parts measured represent future production, that the gauges are capable and that the process stays as it was; they do not replace the customer's requirements, the applicable standards, or a qualified engineer's review of the fit."
        ));
        h.raw("</p>\n</section>\n");
    }
}

/// The id of a feature's article.
fn feature_anchor(f: &FeatureResult, index: usize) -> String {
    format!("f{:02}-{}", index + 1, figures::slug(&feature_label(f)))
}

fn card(h: &mut Html, key: &str, value: &str, bad: bool) {
    h.raw(&format!(
        "<div class=\"card{}\"><div class=\"v\">",
        if bad { " bad" } else { "" }
    ));
    h.text(value);
    h.raw("</div><div class=\"k\">");
    h.text(key);
    h.raw("</div></div>\n");
}

/// A chart in its figure; the SVG is the chart backend's output (its text escaped there).
fn figure(h: &mut Html, slug: &str, svg: &str, caption: &str) {
    let svg = match svg.find("<svg") {
        Some(i) => &svg[i..],
        None => svg,
    };
    h.raw(&format!(
        "<figure class=\"chart\" id=\"{slug}\" data-chart=\"{slug}\">\n"
    ));
    h.raw(svg.trim_end());
    h.raw("\n<figcaption>");
    h.text(caption);
    h.raw("</figcaption>\n</figure>\n");
}
