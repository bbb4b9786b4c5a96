//! Figures, drawn with plotters in pure Rust (SVG, and PNG through the
//! bitmap backend with an embedded DejaVu Sans, so no system font library
//! is needed): a reliability diagram per (dataset, family), a grid of them,
//! and a critical-difference diagram for the ranking.
//!
//! Every SVG carries a `<metadata>` element with the plotted numbers as
//! JSON, so a reader (or a test) can check the picture against the tables.

use super::{Figure, Ranking, Results};
use crate::common::error::{Error, Result};
use crate::experiment::summary::{fold_values, method_result};
use crate::metrics::reliability::{wilson, Z95};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Serialize;
use std::path::Path;
use std::sync::Once;

const FONT: &str = "sans-serif";

fn register_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The font is compiled in and valid; a failure would only lose text
        // in PNGs, never the SVGs.
        let _ = plotters::style::register_font(
            FONT,
            FontStyle::Normal,
            include_bytes!("../../assets/fonts/DejaVuSans.ttf"),
        );
    });
}

/// Method colours, in manifest order; the raw row is always black.
const PALETTE: &[RGBColor] = &[
    RGBColor(0, 0, 0),
    RGBColor(31, 119, 180),
    RGBColor(230, 120, 20),
    RGBColor(44, 160, 44),
    RGBColor(214, 39, 40),
    RGBColor(148, 103, 189),
    RGBColor(140, 86, 75),
    RGBColor(227, 119, 194),
    RGBColor(127, 127, 127),
    RGBColor(188, 189, 34),
];

fn colour(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

/// One pooled reliability point.
#[derive(Debug, Clone, Serialize)]
struct Point {
    bin: usize,
    count: usize,
    mean_forecast: f64,
    observed: f64,
    wilson_low: f64,
    wilson_high: f64,
}

/// One method's curve in a diagram.
#[derive(Debug, Clone, Serialize)]
struct Curve {
    method: String,
    /// Fold mean of ECE, as in the metrics table (NaN if undefined).
    ece: f64,
    points: Vec<Point>,
}

/// The data behind one reliability diagram.
#[derive(Debug, Clone, Serialize)]
struct Panel {
    dataset: String,
    family: String,
    forecast: &'static str,
    bins: usize,
    curves: Vec<Curve>,
}

/// Pools a method's reliability bins over folds: counts add, and the
/// observed frequency is the pooled one. Each row appears once per repeat,
/// so Wilson intervals use counts divided by the number of repeats.
fn panel(results: &Results, dataset: &str, family: &str) -> Panel {
    let bins = results.exp.evaluation.bins;
    let repeats = results.exp.evaluation.repeats.max(1) as f64;
    let cells = results.cells(dataset, family);
    let curves = results
        .exp
        .methods
        .iter()
        .map(|m| {
            let mut count = vec![0usize; bins];
            let mut sum_f = vec![0.0; bins];
            let mut sum_o = vec![0.0; bins];
            for c in &cells {
                if let Some(r) = method_result(c, m) {
                    for b in r.reliability.iter().filter(|b| b.bin < bins) {
                        count[b.bin] += b.count;
                        sum_f[b.bin] += b.count as f64 * b.mean_forecast;
                        // Observed frequencies are successes over counts.
                        sum_o[b.bin] += (b.count as f64 * b.observed).round();
                    }
                }
            }
            let points = (0..bins)
                .filter(|&b| count[b] > 0)
                .map(|b| {
                    let n = count[b] as f64;
                    let (lo, hi) = wilson(sum_o[b] / repeats, n / repeats, Z95);
                    Point {
                        bin: b,
                        count: count[b],
                        mean_forecast: sum_f[b] / n,
                        observed: sum_o[b] / n,
                        wilson_low: lo,
                        wilson_high: hi,
                    }
                })
                .collect();
            let ece = fold_values(&cells, m, "ece");
            let ece = if ece.is_empty() {
                f64::NAN
            } else {
                ece.iter().sum::<f64>() / ece.len() as f64
            };
            Curve {
                method: m.clone(),
                ece,
                points,
            }
        })
        .collect();
    Panel {
        dataset: dataset.to_string(),
        family: family.to_string(),
        forecast: if results.classes(dataset) > 2 {
            "top-label confidence"
        } else {
            "P(positive class)"
        },
        bins,
        curves,
    }
}

type Drawn<DB> = std::result::Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

/// Draws one diagram; `full` adds the intervals, the legend and the
/// histogram beneath.
fn draw_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    full: bool,
) -> Drawn<DB> {
    let (top, bottom) = if full {
        let (w, h) = area.dim_in_pixel();
        let _ = w;
        area.split_vertically(h * 3 / 4)
    } else {
        (area.clone(), area.clone())
    };
    let title = format!("{} / {}", p.dataset, p.family);
    let mut chart = ChartBuilder::on(&top)
        .caption(&title, (FONT, if full { 18 } else { 13 }))
        .margin(if full { 10 } else { 4 })
        .x_label_area_size(if full { 35 } else { 18 })
        .y_label_area_size(if full { 50 } else { 28 })
        .build_cartesian_2d(0f64..1f64, 0f64..1f64)?;
    let mut mesh = chart.configure_mesh();
    mesh.light_line_style(TRANSPARENT)
        .bold_line_style(RGBColor(225, 225, 225))
        .label_style((FONT, if full { 12 } else { 9 }));
    if full {
        mesh.x_desc(format!("mean forecast ({})", p.forecast))
            .y_desc("observed frequency");
    } else {
        mesh.x_labels(3).y_labels(3);
    }
    mesh.draw()?;
    chart.draw_series(LineSeries::new(
        [(0.0, 0.0), (1.0, 1.0)],
        RGBColor(170, 170, 170).stroke_width(1),
    ))?;
    for (i, c) in p.curves.iter().enumerate() {
        let col = colour(i);
        let pts: Vec<(f64, f64)> = c
            .points
            .iter()
            .map(|q| (q.mean_forecast, q.observed))
            .collect();
        let series = chart.draw_series(LineSeries::new(
            pts.clone(),
            col.stroke_width(if i == 0 { 2 } else { 1 }),
        ))?;
        if full {
            let ece = if c.ece.is_finite() {
                format!("{:.4}", c.ece)
            } else {
                "–".to_string()
            };
            series
                .label(format!("{}  ECE {ece}", c.method))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 16, y)], col.stroke_width(2))
                });
            chart.draw_series(c.points.iter().map(|q| {
                PathElement::new(
                    vec![
                        (q.mean_forecast, q.wilson_low),
                        (q.mean_forecast, q.wilson_high),
                    ],
                    col.mix(0.5).stroke_width(1),
                )
            }))?;
            chart.draw_series(
                pts.iter()
                    .map(|&(x, y)| Circle::new((x, y), 2, col.filled())),
            )?;
        }
    }
    if !full {
        return Ok(());
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .label_font((FONT, 11))
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(200, 200, 200))
        .draw()?;
    // The histogram of raw forecasts, on the same x axis.
    let bins = p.bins.max(1);
    let raw = p.curves.first();
    let mut counts = vec![0usize; bins];
    if let Some(raw) = raw {
        for q in &raw.points {
            counts[q.bin] = q.count;
        }
    }
    let top_count = counts.iter().copied().max().unwrap_or(0).max(1) as f64;
    let mut hist = ChartBuilder::on(&bottom)
        .margin(10)
        .margin_top(0)
        .x_label_area_size(20)
        .y_label_area_size(50)
        .build_cartesian_2d(0f64..1f64, 0f64..top_count * 1.05)?;
    hist.configure_mesh()
        .disable_mesh()
        .y_labels(3)
        .y_label_formatter(&|v| format!("{v:.0}"))
        .label_style((FONT, 10))
        .y_desc("raw rows")
        .draw()?;
    hist.draw_series(
        counts
            .iter()
            .enumerate()
            .filter(|(_, &c)| c > 0)
            .map(|(b, &c)| {
                let w = 1.0 / bins as f64;
                Rectangle::new(
                    [(b as f64 * w, 0.0), ((b + 1) as f64 * w, c as f64)],
                    RGBColor(150, 150, 150).filled(),
                )
            }),
    )?;
    Ok(())
}

/// The grid: datasets as columns, families as rows, a legend strip on top.
fn draw_grid<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    panels: &[Panel],
    methods: &[String],
    columns: usize,
) -> Drawn<DB> {
    let (strip, body) = area.split_vertically(30);
    for (i, m) in methods.iter().enumerate() {
        let x = 10 + 130 * i as i32;
        strip.draw(&PathElement::new(
            vec![(x, 15), (x + 20, 15)],
            colour(i).stroke_width(2),
        ))?;
        strip.draw(&Text::new(m.clone(), (x + 25, 8), (FONT, 12)))?;
    }
    let rows = panels.len().div_ceil(columns.max(1));
    let cells = body.split_evenly((rows, columns.max(1)));
    for (cell, p) in cells.iter().zip(panels) {
        draw_panel(cell, p, false)?;
    }
    Ok(())
}

/// Groups of pairs whose average ranks lie within the critical difference.
fn cliques(ranks: &[f64], cd: f64) -> Vec<(usize, usize)> {
    let mut out: Vec<(usize, usize)> = Vec::new();
    for i in 0..ranks.len() {
        let mut j = i;
        while j + 1 < ranks.len() && ranks[j + 1] - ranks[i] < cd {
            j += 1;
        }
        if j > i && out.last().is_none_or(|&(_, e)| j > e) {
            out.push((i, j));
        }
    }
    out
}

/// The pairs drawn in a critical-difference diagram (the best ones when
/// there are many).
const CD_SHOWN: usize = 20;

/// A critical-difference diagram: the rank axis, each pair's average rank,
/// the Nemenyi CD as a scale bar, and bars joining pairs that do not differ.
fn draw_cd<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, r: &Ranking) -> Drawn<DB> {
    let shown = r.pairs.len().min(CD_SHOWN);
    let ranks = &r.avg_ranks[..shown];
    let low = 1.0f64;
    let high = ranks.last().copied().unwrap_or(2.0).ceil().max(low + 1.0);
    let (x0, x1) = (260i32, 740i32);
    let px = |rank: f64| x0 + ((rank - low) / (high - low) * f64::from(x1 - x0)).round() as i32;
    let axis_y = 70;
    let grey = RGBColor(90, 90, 90);
    area.draw(&PathElement::new(
        vec![(x0, axis_y), (x1, axis_y)],
        BLACK.stroke_width(1),
    ))?;
    let step = ((high - low) / 10.0).ceil().max(1.0);
    let mut t = low;
    while t <= high + 1e-9 {
        area.draw(&PathElement::new(
            vec![(px(t), axis_y - 5), (px(t), axis_y)],
            BLACK,
        ))?;
        area.draw(&Text::new(
            format!("{t:.0}"),
            (px(t) - 4, axis_y - 20),
            (FONT, 12),
        ))?;
        t += step;
    }
    // The critical difference as a scale bar above the axis.
    let cd_end = (low + r.cd05).min(high);
    area.draw(&PathElement::new(
        vec![(px(low), 25), (px(cd_end), 25)],
        BLACK.stroke_width(2),
    ))?;
    area.draw(&Text::new(
        format!("CD = {:.3} (Nemenyi, alpha 0.05)", r.cd05),
        (px(low), 8),
        (FONT, 12),
    ))?;
    // Labels: the better half on the left, the rest on the right.
    let half = shown.div_ceil(2);
    for (i, ((f, m), &rank)) in r.pairs.iter().zip(ranks).enumerate() {
        let row = if i < half { i } else { shown - 1 - i };
        let y = axis_y + 45 + 18 * row as i32;
        let x = px(rank);
        let label = format!("{f} + {m} ({rank:.2})");
        if i < half {
            area.draw(&PathElement::new(
                vec![(x, axis_y), (x, y), (x0 - 10, y)],
                grey,
            ))?;
            area.draw(&Text::new(label, (10, y - 7), (FONT, 12)))?;
        } else {
            area.draw(&PathElement::new(
                vec![(x, axis_y), (x, y), (x1 + 10, y)],
                grey,
            ))?;
            area.draw(&Text::new(label, (x1 + 14, y - 7), (FONT, 12)))?;
        }
    }
    for (n, (a, b)) in cliques(ranks, r.cd05).into_iter().enumerate() {
        let y = axis_y + 10 + 6 * (n % 5) as i32;
        area.draw(&PathElement::new(
            vec![(px(ranks[a]) - 3, y), (px(ranks[b]) + 3, y)],
            RGBColor(200, 30, 30).stroke_width(3),
        ))?;
    }
    Ok(())
}

fn svg_of(
    size: (u32, u32),
    draw: impl Fn(&DrawingArea<SVGBackend<'_>, Shift>) -> std::result::Result<(), String>,
) -> Result<String> {
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, size).into_drawing_area();
        root.fill(&WHITE)
            .map_err(|e| Error::Io(format!("cannot draw a figure: {e}")))?;
        draw(&root).map_err(|e| Error::Io(format!("cannot draw a figure: {e}")))?;
        root.present()
            .map_err(|e| Error::Io(format!("cannot draw a figure: {e}")))?;
    }
    Ok(s)
}

type BitmapDraw<'a> =
    dyn Fn(&DrawingArea<BitMapBackend<'_>, Shift>) -> std::result::Result<(), String> + 'a;

/// Draws into a temporary PNG next to `path`, then renames it into place.
fn png_of(path: &Path, size: (u32, u32), draw: &BitmapDraw<'_>) -> Result<()> {
    register_font();
    let tmp = path.with_extension("partial.png");
    let fail = |e: String| Error::Io(format!("{}: cannot draw: {e}", path.display()));
    {
        let root = BitMapBackend::new(&tmp, size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(e.to_string()))?;
        draw(&root).map_err(fail)?;
        root.present().map_err(|e| fail(e.to_string()))?;
    }
    std::fs::rename(&tmp, path).map_err(|e| Error::io(path, "write", &e))
}

/// Puts the plotted numbers into the SVG as JSON metadata.
fn with_metadata(svg: String, data: &impl Serialize) -> String {
    let json = serde_json::to_string(data)
        .unwrap_or_default()
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;");
    match svg.find('>') {
        Some(end) if svg.starts_with("<svg") => {
            format!(
                "{}<metadata id=\"candor-data\">{json}</metadata>{}",
                &svg[..=end],
                &svg[end + 1..]
            )
        }
        _ => svg,
    }
}

fn slug(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// Every figure of the report.
pub fn all(results: &Results, ranking: Option<&Ranking>) -> Result<Vec<Figure>> {
    register_font();
    let mut out = Vec::new();
    let mut panels = Vec::new();
    for f in &results.exp.families {
        for d in &results.exp.datasets {
            panels.push(panel(results, &d.name, &f.name));
        }
    }
    let bins = results.exp.evaluation.bins;
    for p in &panels {
        let size = (560, 620);
        let q = p.clone();
        let svg = svg_of(size, |a| draw_panel(a, p, true).map_err(|e| e.to_string()))?;
        out.push(Figure {
            path: format!("figures/reliability/{}--{}.svg", slug(&p.dataset), slug(&p.family)),
            caption: format!(
                "Reliability of {} on {}: {} against observed frequency in {bins} equal-width bins, pooled over the outer folds, with 95% Wilson intervals; the raw model in black, each calibration method in colour; raw forecasts' histogram beneath. Legend ECE values are the fold means from the metrics table.",
                p.family, p.dataset, p.forecast
            ),
            svg: with_metadata(svg, p),
            png: Box::new(move |path| png_of(path, size, &|a| draw_panel(a, &q, true).map_err(|e| e.to_string()))),
        });
    }
    let columns = results.exp.datasets.len();
    let rows = results.exp.families.len();
    let size = ((230 * columns) as u32, (230 * rows + 30) as u32);
    let methods = results.exp.methods.clone();
    let grid_svg = svg_of(size, |a| {
        draw_grid(a, &panels, &methods, columns).map_err(|e| e.to_string())
    })?;
    let mixed = results
        .exp
        .datasets
        .iter()
        .any(|d| results.classes(&d.name) > 2)
        && results
            .exp
            .datasets
            .iter()
            .any(|d| results.classes(&d.name) == 2);
    let grid_panels = panels.clone();
    out.push(Figure {
        path: "figures/reliability-grid.svg".into(),
        caption: format!(
            "All reliability curves: datasets as columns, families as rows, {bins} equal-width bins.{}",
            if mixed {
                " Binary panels plot P(positive class), multiclass panels the top-label confidence."
            } else {
                ""
            }
        ),
        svg: with_metadata(grid_svg, &panels),
        png: Box::new(move |path| {
            png_of(path, size, &|a| draw_grid(a, &grid_panels, &methods, columns).map_err(|e| e.to_string()))
        }),
    });
    if let Some(r) = ranking {
        let shown = r.pairs.len().min(CD_SHOWN);
        let size = (1000, (140 + 18 * shown.div_ceil(2)) as u32);
        let svg = svg_of(size, |a| draw_cd(a, r).map_err(|e| e.to_string()))?;
        let rc = r.clone();
        let data = serde_json::json!({
            "metric": r.metric,
            "cd05": r.cd05,
            "pairs": r.pairs.iter().zip(&r.avg_ranks).take(shown)
                .map(|((f, m), rank)| serde_json::json!({"family": f, "method": m, "average_rank": rank}))
                .collect::<Vec<_>>(),
        });
        out.push(Figure {
            path: "figures/critical-difference.svg".into(),
            caption: format!(
                "Average ranks by {} ({}){}; red bars join pairs whose ranks differ by less than the Nemenyi critical difference at alpha 0.05.",
                r.metric,
                r.direction,
                if r.pairs.len() > shown {
                    format!(", the best {shown} of {} pairs shown (the test uses all)", r.pairs.len())
                } else {
                    String::new()
                }
            ),
            svg: with_metadata(svg, &data),
            png: Box::new(move |path| png_of(path, size, &|a| draw_cd(a, &rc).map_err(|e| e.to_string()))),
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cliques_join_pairs_within_the_difference() {
        assert_eq!(
            cliques(&[1.0, 1.5, 2.2, 4.0, 4.4], 1.25),
            vec![(0, 2), (3, 4)]
        );
        assert!(cliques(&[1.0, 3.0], 1.0).is_empty());
    }
}
