//! Drawing a chart: one plain description ([`Plot`]) drawn by plotters on any backend, so the
//! SVG inlined in the report and the PNG written for slides come from the same code.
//!
//! What goes on each chart is decided in [`super::figures`]; this file only draws.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::FontStyle;
use std::path::Path;
use std::sync::Once;

/// An RGB colour of the report's palette.
pub type Colour = (u8, u8, u8);

/// The report's palette (capstack's own choice).
pub mod palette {
    use super::Colour;
    pub const INK: Colour = (40, 44, 52);
    pub const GRID: Colour = (226, 229, 234);
    pub const DATA: Colour = (70, 120, 170);
    pub const DATA_LIGHT: Colour = (164, 194, 222);
    pub const MODEL: Colour = (214, 120, 40);
    pub const ASSUMED: Colour = (120, 90, 170);
    pub const LIMIT: Colour = (190, 40, 50);
    pub const NOMINAL: Colour = (60, 140, 90);
    pub const CONTROL: Colour = (110, 110, 110);
    pub const SIGNAL: Colour = (200, 30, 40);
    pub const GOOD: Colour = (90, 150, 110);
}

/// Something drawn on a chart, in data coordinates.
#[derive(Debug, Clone, PartialEq)]
pub enum Layer {
    /// Filled rectangles [x0, y0, x1, y1] (histogram bars, horizontal bars).
    Rects {
        rects: Vec<[f64; 4]>,
        colour: Colour,
        label: Option<String>,
    },
    Line {
        points: Vec<(f64, f64)>,
        colour: Colour,
        width: u32,
        dashed: bool,
        label: Option<String>,
    },
    Dots {
        points: Vec<(f64, f64)>,
        colour: Colour,
        radius: u32,
        label: Option<String>,
    },
    /// A vertical (`vertical`) or horizontal line across the whole chart, labelled at its end.
    Rule {
        vertical: bool,
        at: f64,
        colour: Colour,
        dashed: bool,
        label: String,
    },
    /// Text whose left end sits at a data point.
    Text {
        at: (f64, f64),
        text: String,
        colour: Colour,
    },
}

/// A corner of the plotting area.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Corner {
    UpperLeft,
    UpperRight,
    LowerRight,
}

/// A chart: its name, axes and layers.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    /// File stem for `--charts DIR` and the HTML anchor: ASCII letters, digits and `-` only.
    pub slug: String,
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub x_range: (f64, f64),
    pub y_range: (f64, f64),
    /// False for charts whose y axis is categories drawn as text (no y tick labels).
    pub y_ticks: bool,
    /// Where the legend goes: the corner the data leave empty.
    pub legend: Corner,
    pub layers: Vec<Layer>,
    pub size: (u32, u32),
}

/// Size of a full-width chart in pixels (the SVG scales to the page).
pub const SIZE: (u32, u32) = (760, 380);
/// Size of a chart shown two to a row (feature sections), so its text stays legible.
pub const HALF_SIZE: (u32, u32) = (540, 330);

fn rgb(c: Colour) -> RGBColor {
    RGBColor(c.0, c.1, c.2)
}

/// Registers the embedded DejaVu Sans as "sans-serif" once: plotters measures (and, for PNG,
/// draws) text with it, so charts look the same on any machine, with or without system fonts.
fn register_fonts() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The embedded font is valid; if registration ever failed, text would be left out of
        // the PNG charts and the SVG would still carry it.
        let _ = plotters::style::register_font(
            "sans-serif",
            FontStyle::Normal,
            dejavu::sans::regular(),
        );
        let _ = plotters::style::register_font("sans-serif", FontStyle::Bold, dejavu::sans::bold());
    });
}

/// A tick label: few digits, no exponent for ordinary magnitudes.
fn tick(v: f64, span: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return "0".into();
    }
    let step = span.abs().max(f64::MIN_POSITIVE) / 8.0;
    let decimals = (-step.log10().floor()).clamp(0.0, 9.0) as usize + 1;
    let text = format!("{v:.decimals$}");
    // 0.0100 → 0.01, 12.50 → 12.5
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

type DrawResult = Result<(), String>;

/// Draws `plot` on `root`; `k` scales fonts, margins, strokes and dots (2 for the PNG files).
fn draw<DB: DrawingBackend>(plot: &Plot, root: &DrawingArea<DB, Shift>, k: u32) -> DrawResult {
    let px = |v: u32| v * k;
    let err = |e: DrawingAreaErrorKind<DB::ErrorType>| e.to_string();
    root.fill(&WHITE).map_err(err)?;
    let (x0, x1) = plot.x_range;
    let (y0, y1) = plot.y_range;
    let mut chart = ChartBuilder::on(root)
        .caption(
            &plot.title,
            ("sans-serif", px(17)).into_font().color(&rgb(palette::INK)),
        )
        .margin(px(12))
        .x_label_area_size(px(40))
        .y_label_area_size(px(if plot.y_ticks { 64 } else { 8 }))
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    let x_fmt = |v: &f64| tick(*v, x1 - x0);
    let y_fmt = |v: &f64| {
        if plot.y_ticks {
            tick(*v, y1 - y0)
        } else {
            String::new()
        }
    };
    chart
        .configure_mesh()
        .x_desc(plot.x_label.as_str())
        .y_desc(plot.y_label.as_str())
        .x_labels(8)
        .y_labels(if plot.y_ticks { 6 } else { 0 })
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .light_line_style(rgb(palette::GRID).mix(0.5))
        .bold_line_style(rgb(palette::GRID))
        .axis_style(rgb(palette::INK))
        .label_style(("sans-serif", px(12)).into_font().color(&rgb(palette::INK)))
        .axis_desc_style(("sans-serif", px(13)).into_font().color(&rgb(palette::INK)))
        .draw()
        .map_err(err)?;

    // Legend keys, in pixels.
    let (key_w, key_h) = (px(14) as i32, px(5) as i32);
    let mut legend = false;
    for layer in &plot.layers {
        match layer {
            Layer::Rects {
                rects,
                colour,
                label,
            } => {
                let style = rgb(*colour).filled();
                let series = chart
                    .draw_series(
                        rects
                            .iter()
                            .map(|r| Rectangle::new([(r[0], r[1]), (r[2], r[3])], style)),
                    )
                    .map_err(err)?;
                if let Some(l) = label {
                    legend = true;
                    series.label(l.as_str()).legend(move |(x, y)| {
                        Rectangle::new([(x, y - key_h), (x + key_w, y + key_h)], style)
                    });
                }
            }
            Layer::Line {
                points,
                colour,
                width,
                dashed,
                label,
            } => {
                let style = rgb(*colour).stroke_width(px(*width));
                let series = if *dashed {
                    chart
                        .draw_series(DashedLineSeries::new(
                            points.iter().copied(),
                            px(6),
                            px(4),
                            style,
                        ))
                        .map_err(err)?
                } else {
                    chart
                        .draw_series(LineSeries::new(points.iter().copied(), style))
                        .map_err(err)?
                };
                if let Some(l) = label {
                    legend = true;
                    series.label(l.as_str()).legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + key_w, y)], style)
                    });
                }
            }
            Layer::Dots {
                points,
                colour,
                radius,
                label,
            } => {
                let style = rgb(*colour).filled();
                let r = px(*radius);
                let series = chart
                    .draw_series(points.iter().map(|&p| Circle::new(p, r, style)))
                    .map_err(err)?;
                if let Some(l) = label {
                    legend = true;
                    series
                        .label(l.as_str())
                        .legend(move |(x, y)| Circle::new((x + key_w / 2, y), r, style));
                }
            }
            Layer::Rule {
                vertical,
                at,
                colour,
                dashed,
                label,
            } => {
                let style = rgb(*colour).stroke_width(px(if *dashed { 1 } else { 2 }));
                let ends = if *vertical {
                    [(*at, y0), (*at, y1)]
                } else {
                    [(x0, *at), (x1, *at)]
                };
                if *dashed {
                    chart
                        .draw_series(DashedLineSeries::new(ends, px(5), px(4), style))
                        .map_err(err)?;
                } else {
                    chart
                        .draw_series(LineSeries::new(ends, style))
                        .map_err(err)?;
                }
                // Vertical rules are labelled at the foot, just right of the line (where the
                // tails leave room and the legend is not); horizontal ones at the right end.
                let (pos, anchor) = if *vertical {
                    (
                        (*at + (x1 - x0) * 0.006, y0 + (y1 - y0) * 0.03),
                        Pos::new(HPos::Left, VPos::Bottom),
                    )
                } else {
                    ((x1, *at), Pos::new(HPos::Right, VPos::Bottom))
                };
                let font = ("sans-serif", px(11))
                    .into_font()
                    .color(&rgb(*colour))
                    .pos(anchor);
                chart
                    .draw_series(std::iter::once(Text::new(label.clone(), pos, font)))
                    .map_err(err)?;
            }
            Layer::Text { at, text, colour } => {
                let font = ("sans-serif", px(12))
                    .into_font()
                    .color(&rgb(*colour))
                    .pos(Pos::new(HPos::Left, VPos::Center));
                chart
                    .draw_series(std::iter::once(Text::new(text.clone(), *at, font)))
                    .map_err(err)?;
            }
        }
    }
    if legend {
        chart
            .configure_series_labels()
            .position(match plot.legend {
                Corner::UpperLeft => SeriesLabelPosition::UpperLeft,
                Corner::UpperRight => SeriesLabelPosition::UpperRight,
                Corner::LowerRight => SeriesLabelPosition::LowerRight,
            })
            .background_style(WHITE.mix(0.85))
            .border_style(rgb(palette::GRID))
            .label_font(("sans-serif", px(12)).into_font().color(&rgb(palette::INK)))
            .draw()
            .map_err(err)?;
    }
    root.present().map_err(err)?;
    Ok(())
}

/// The chart as an SVG document (text as `<text>`, escaped by the SVG backend).
pub fn svg(plot: &Plot) -> Result<String, String> {
    register_fonts();
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, plot.size).into_drawing_area();
        draw(plot, &root, 1)?;
    }
    Ok(out)
}

/// The chart as a PNG file, at twice the size for sharp slides.
pub fn png(plot: &Plot, path: &Path) -> Result<(), String> {
    register_fonts();
    let size = (plot.size.0 * 2, plot.size.1 * 2);
    let root = BitMapBackend::new(path, size).into_drawing_area();
    draw(plot, &root, 2)
}
