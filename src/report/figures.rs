//! Figures, drawn with plotters in pure Rust (SVG, and PNG through the
//! bitmap backend with an embedded DejaVu Sans, so no system font library
//! is needed): a reliability diagram per (dataset, family), a grid of them,
//! and a critical-difference diagram for the ranking.
//!
//! Every SVG carries a `<metadata>` element with the plotted numbers as
//! JSON, so a reader (or a test) can check the picture against the tables.

use super::style::{self, Marker, MethodStyle};
use super::{Figure, Ranking, Results};
use crate::common::error::{Error, Result};
use crate::experiment::summary::{fold_values, method_result};
use crate::metrics::reliability::{wilson, Z95};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::element::{ComposedElement, DashedPathElement};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
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
    /// Fold means of ECE and the Brier score, as in the metrics table
    /// (NaN if undefined).
    ece: f64,
    brier: f64,
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
            let mean = |metric: &str| {
                let v = fold_values(&cells, m, metric);
                if v.is_empty() {
                    f64::NAN
                } else {
                    v.iter().sum::<f64>() / v.len() as f64
                }
            };
            Curve {
                method: m.clone(),
                ece: mean("ece"),
                brier: mean("brier"),
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
type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// Tint below the diagonal (forecasts above observed frequencies).
const TINT_HIGH: RGBColor = RGBColor(253, 240, 228);
/// Tint above the diagonal (forecasts below observed frequencies).
const TINT_LOW: RGBColor = RGBColor(232, 241, 252);
const INK: RGBColor = RGBColor(60, 60, 60);

/// The dotted diagonal's dash and gap, in pixels.
const DIAGONAL: (u32, u32) = (2, 4);

/// How dashed lines are drawn. Plotters draws a dashed line as one short
/// path per dash, which would triple an SVG's size; so for SVG a dashed
/// line is drawn once, solid, with an opacity just below 1 that encodes
/// its pattern, and [`native_dashes`] then turns that into a
/// `stroke-dasharray`. Bitmaps draw each dash.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Dashes {
    Tagged,
    Drawn,
}

/// Opacities above this (and below 1) are dash tags; every real opacity a
/// figure uses is at most 0.9.
const TAG_FLOOR: f64 = 1.0 - 4096.0 / 65536.0;

/// The opacity that tags a dash pattern: 1 - n/65536 is a short binary
/// fraction, so it prints exactly and reads back exactly.
fn dash_tag((dash, gap): (u32, u32)) -> f64 {
    1.0 - f64::from(dash * 64 + gap + 1) / 65536.0
}

/// The pattern an opacity tags, if it is a tag.
fn tagged_dash(opacity: f64) -> Option<(u32, u32)> {
    if !(opacity > TAG_FLOOR && opacity < 1.0) {
        return None;
    }
    let n = ((1.0 - opacity) * 65536.0).round() as u32 - 1;
    Some((n / 64, n % 64))
}

/// Rewrites tagged polylines of an SVG as fully opaque dashed lines.
fn native_dashes(svg: &str) -> String {
    const KEY: &str = "opacity=\"";
    let mut out = String::with_capacity(svg.len());
    let mut rest = svg;
    while let Some(i) = rest.find(KEY) {
        let (head, tail) = rest.split_at(i + KEY.len());
        out.push_str(head);
        let end = tail.find('"').unwrap_or(tail.len());
        let value = &tail[..end];
        match value.parse::<f64>().ok().and_then(tagged_dash) {
            Some((dash, gap)) => {
                out.push_str(&format!("1\" stroke-dasharray=\"{dash} {gap}"));
            }
            None => out.push_str(value),
        }
        rest = &tail[end..];
    }
    out.push_str(rest);
    out
}

/// A line in chart coordinates, solid or dashed.
fn chart_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: Vec<(f64, f64)>,
    pattern: Option<(u32, u32)>,
    stroke: (RGBColor, u32),
    dashes: Dashes,
) -> Drawn<DB> {
    let (colour, width) = stroke;
    match (pattern, dashes) {
        (None, _) => chart.draw_series(std::iter::once(PathElement::new(
            pts,
            colour.stroke_width(width),
        )))?,
        (Some(p), Dashes::Tagged) => chart.draw_series(std::iter::once(PathElement::new(
            pts,
            colour.mix(dash_tag(p)).stroke_width(width),
        )))?,
        (Some((dash, gap)), Dashes::Drawn) => chart.draw_series(std::iter::once(
            DashedPathElement::new(pts, dash, gap, colour.stroke_width(width)),
        ))?,
    };
    Ok(())
}

/// The two half-planes of a reliability chart, tinted, and the diagonal
/// of perfect calibration, dotted.
fn backdrop<DB: DrawingBackend>(chart: &mut Chart<'_, DB>, dashes: Dashes) -> Drawn<DB> {
    chart.draw_series([
        Polygon::new(vec![(0.0, 0.0), (1.0, 0.0), (1.0, 1.0)], TINT_HIGH.filled()),
        Polygon::new(vec![(0.0, 0.0), (0.0, 1.0), (1.0, 1.0)], TINT_LOW.filled()),
    ])?;
    chart_line(
        chart,
        vec![(0.0, 0.0), (1.0, 1.0)],
        Some(DIAGONAL),
        (RGBColor(120, 120, 120), 1),
        dashes,
    )
}

/// Sizes of a reliability chart's parts, in pixels.
struct ChartSizes {
    caption: u32,
    margin: u32,
    x_labels: u32,
    y_labels: u32,
    label_font: u32,
}

const FULL: ChartSizes = ChartSizes {
    caption: 18,
    margin: 10,
    x_labels: 38,
    y_labels: 52,
    label_font: 12,
};

const SMALL: ChartSizes = ChartSizes {
    caption: 13,
    margin: 6,
    x_labels: 18,
    y_labels: 28,
    label_font: 9,
};

/// A reliability chart's frame: the unit square with its tinted halves,
/// the diagonal and a light grid; with `forecast`, the axis titles of the
/// full figure, without, three labels per axis for a grid panel.
fn reliability_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    title: &str,
    sizes: &ChartSizes,
    forecast: Option<&str>,
    dashes: Dashes,
) -> std::result::Result<Chart<'a, DB>, DrawingAreaErrorKind<DB::ErrorType>> {
    let mut builder = ChartBuilder::on(area);
    builder
        .caption(title, (FONT, sizes.caption))
        .margin(sizes.margin)
        .x_label_area_size(sizes.x_labels)
        .y_label_area_size(sizes.y_labels);
    if forecast.is_some() {
        builder.margin_bottom(0);
    }
    let mut chart = builder.build_cartesian_2d(0f64..1f64, 0f64..1f64)?;
    backdrop(&mut chart, dashes)?;
    let mut mesh = chart.configure_mesh();
    mesh.light_line_style(TRANSPARENT)
        .bold_line_style(WHITE.mix(0.9))
        .label_style((FONT, sizes.label_font));
    match forecast {
        Some(f) => {
            mesh.x_desc(format!("mean forecast ({f})"))
                .y_desc("observed frequency");
        }
        None => {
            mesh.x_labels(3).y_labels(3);
        }
    }
    mesh.draw()?;
    Ok(chart)
}

/// A marker's outline around its centre, in pixels (y down).
fn marker_outline(shape: Marker, r: i32) -> Vec<(i32, i32)> {
    let h = r * 7 / 10;
    // Arms of a plus or a cross are about a third of the marker wide.
    let t = (r / 3).max(1);
    match shape {
        Marker::Circle => (0..16)
            .map(|k| {
                let a = f64::from(k) * std::f64::consts::PI / 8.0;
                let r = f64::from(r);
                ((r * a.cos()).round() as i32, (r * a.sin()).round() as i32)
            })
            .collect(),
        Marker::Square => vec![(-h, -h), (h, -h), (h, h), (-h, h)],
        Marker::TriangleUp => vec![(0, -r), (r, h), (-r, h)],
        Marker::TriangleDown => vec![(0, r), (r, -h), (-r, -h)],
        Marker::Diamond => vec![(0, -r), (r, 0), (0, r), (-r, 0)],
        Marker::Plus => vec![
            (-t, -r),
            (t, -r),
            (t, -t),
            (r, -t),
            (r, t),
            (t, t),
            (t, r),
            (-t, r),
            (-t, t),
            (-r, t),
            (-r, -t),
            (-t, -t),
        ],
        Marker::Cross => {
            // The plus turned by 45 degrees.
            let s = std::f64::consts::FRAC_1_SQRT_2;
            marker_outline(Marker::Plus, r)
                .into_iter()
                .map(|(x, y)| {
                    let (x, y) = (f64::from(x), f64::from(y));
                    (((x - y) * s).round() as i32, ((x + y) * s).round() as i32)
                })
                .collect()
        }
    }
}

type MarkerElement<C, DB> = ComposedElement<C, DB, Polygon<(i32, i32)>, PathElement<(i32, i32)>>;

/// A marker of radius `r` pixels centred on `at`, in the method's shape:
/// a translucent fill under a solid outline, so overlapping markers show.
fn marker<C, DB: DrawingBackend>(at: C, s: &MethodStyle, r: i32) -> MarkerElement<C, DB> {
    let outline = marker_outline(s.marker, r);
    let mut closed = outline.clone();
    closed.push(outline[0]);
    EmptyElement::at(at)
        + Polygon::new(outline, s.colour.mix(0.3).filled())
        + PathElement::new(closed, s.colour.stroke_width(1))
}

/// A short stretch of a method's line with its marker, as in a key.
fn key_sample<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x, y): (i32, i32),
    s: &MethodStyle,
    dashes: Dashes,
) -> Drawn<DB> {
    let pts = vec![(x, y), (x + 30, y)];
    match (s.dash, dashes) {
        (None, _) => area.draw(&PathElement::new(pts, s.colour.stroke_width(2)))?,
        (Some(p), Dashes::Tagged) => area.draw(&PathElement::new(
            pts,
            s.colour.mix(dash_tag(p)).stroke_width(2),
        ))?,
        (Some((dash, gap)), Dashes::Drawn) => area.draw(&DashedPathElement::new(
            pts,
            dash,
            gap,
            s.colour.stroke_width(2),
        ))?,
    }
    area.draw(&marker((x + 15, y), s, 5))
}

/// Marker radius in pixels for a bin of `count` rows: the marker's area,
/// not its width, grows with the count.
fn radius(count: usize, largest: usize) -> i32 {
    let share = count as f64 / largest.max(1) as f64;
    (2.5 + 7.5 * share.sqrt()).round() as i32
}

fn number(v: f64) -> String {
    if v.is_finite() {
        format!("{v:.4}")
    } else {
        "–".to_string()
    }
}

/// The full reliability figure: the chart on the left with a strip of raw
/// row counts per bin beneath it, and on the right a key that doubles as a
/// table of each method's ECE and Brier score.
fn draw_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    dashes: Dashes,
) -> Drawn<DB> {
    let (w, h) = area.dim_in_pixel();
    let (left, right) = area.split_horizontally(w - 270);
    let (top, strip) = left.split_vertically(h - 46);
    let title = format!("{} / {}", p.dataset, p.family);
    let mut chart = reliability_chart(&top, &title, &FULL, Some(p.forecast), dashes)?;
    let (high, low) = if p.forecast.starts_with("top-label") {
        ("over-confident", "under-confident")
    } else {
        ("forecasts too high", "forecasts too low")
    };
    let note = (FONT, 12).into_font().color(&INK);
    chart.draw_series([
        Text::new(
            high,
            (0.97, 0.03),
            note.pos(Pos::new(HPos::Right, VPos::Bottom)),
        ),
        Text::new(low, (0.03, 0.97), note.pos(Pos::new(HPos::Left, VPos::Top))),
    ])?;
    let largest = p
        .curves
        .iter()
        .flat_map(|c| &c.points)
        .map(|q| q.count)
        .max()
        .unwrap_or(1);
    for c in &p.curves {
        let s = style::of(&c.method);
        let pts: Vec<(f64, f64)> = c
            .points
            .iter()
            .map(|q| (q.mean_forecast, q.observed))
            .collect();
        let width = if c.method == "none" { 2 } else { 1 };
        chart_line(&mut chart, pts.clone(), s.dash, (s.colour, width), dashes)?;
        let whisker = s.colour.mix(0.55).stroke_width(1);
        chart.draw_series(c.points.iter().map(|q| {
            let x = q.mean_forecast;
            PathElement::new(vec![(x, q.wilson_low), (x, q.wilson_high)], whisker)
        }))?;
        // Caps, in pixels, at both ends of each interval.
        chart.draw_series(c.points.iter().flat_map(|q| {
            [q.wilson_low, q.wilson_high].map(|y| {
                EmptyElement::at((q.mean_forecast, y))
                    + PathElement::new(vec![(-3, 0), (3, 0)], whisker)
            })
        }))?;
        chart.draw_series(
            c.points
                .iter()
                .map(|q| marker((q.mean_forecast, q.observed), &s, radius(q.count, largest))),
        )?;
    }
    draw_strip(&strip, p)?;
    draw_key(&right, p, dashes)
}

/// Raw rows per bin as a strip of cells under the chart's x axis, each
/// shaded by its count and, where they fit, labelled with it.
fn draw_strip<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, p: &Panel) -> Drawn<DB> {
    let bins = p.bins.max(1);
    let mut counts = vec![0usize; bins];
    if let Some(raw) = p.curves.first() {
        for q in &raw.points {
            counts[q.bin] = q.count;
        }
    }
    let top = counts.iter().copied().max().unwrap_or(0).max(1) as f64;
    let mut strip = ChartBuilder::on(area)
        .margin(10)
        .margin_top(4)
        .margin_bottom(8)
        .y_label_area_size(52)
        .build_cartesian_2d(0f64..1f64, 0f64..1f64)?;
    let width = 1.0 / bins as f64;
    strip.draw_series(counts.iter().enumerate().map(|(b, &c)| {
        let shade = 240 - (150.0 * (c as f64 / top).sqrt()).round() as u8;
        Rectangle::new(
            [(b as f64 * width, 0.0), ((b + 1) as f64 * width, 1.0)],
            RGBColor(shade, shade, shade).filled(),
        )
    }))?;
    if bins <= 20 {
        let centre = Pos::new(HPos::Center, VPos::Center);
        let dark = (FONT, 9).into_font().color(&BLACK).pos(centre);
        let light = (FONT, 9).into_font().color(&WHITE).pos(centre);
        strip.draw_series(
            counts
                .iter()
                .enumerate()
                .filter(|(_, &c)| c > 0)
                .map(|(b, &c)| {
                    // White on the darker half of the shades.
                    let style = if c as f64 / top > 0.25 { &light } else { &dark };
                    Text::new(
                        c.to_string(),
                        ((b as f64 + 0.5) * width, 0.5),
                        style.clone(),
                    )
                }),
        )?;
    }
    area.draw(&Text::new(
        "raw rows",
        (6, 10),
        (FONT, 10).into_font().color(&INK),
    ))
}

/// The key beside the chart: each method's line and marker with its ECE
/// and Brier score, then how to read the marks.
fn draw_key<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    dashes: Dashes,
) -> Drawn<DB> {
    let head = (FONT, 12).into_font().color(&INK);
    let cell = (FONT, 12).into_font().color(&BLACK);
    let row_y = |i: usize| 70 + 24 * i as i32;
    area.draw(&Text::new(
        "method",
        (50, 48),
        head.pos(Pos::new(HPos::Left, VPos::Center)),
    ))?;
    area.draw(&Text::new(
        "ECE",
        (196, 48),
        head.pos(Pos::new(HPos::Right, VPos::Center)),
    ))?;
    area.draw(&Text::new(
        "Brier",
        (256, 48),
        head.pos(Pos::new(HPos::Right, VPos::Center)),
    ))?;
    area.draw(&PathElement::new(
        vec![(8, 58), (258, 58)],
        INK.stroke_width(1),
    ))?;
    for (i, c) in p.curves.iter().enumerate() {
        let y = row_y(i);
        key_sample(area, (10, y), &style::of(&c.method), dashes)?;
        area.draw(&Text::new(
            c.method.clone(),
            (50, y),
            cell.pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        area.draw(&Text::new(
            number(c.ece),
            (196, y),
            cell.pos(Pos::new(HPos::Right, VPos::Center)),
        ))?;
        area.draw(&Text::new(
            number(c.brier),
            (256, y),
            cell.pos(Pos::new(HPos::Right, VPos::Center)),
        ))?;
    }
    let small = (FONT, 11).into_font().color(&INK);
    let mut y = row_y(p.curves.len()) + 10;
    for line in [
        "ECE and Brier: means over the outer",
        "folds, as in the metrics table.",
        "",
        "Marker area: rows in the bin.",
        "Whiskers: 95% Wilson intervals.",
        "Strip: raw rows per bin.",
        "Dotted diagonal: perfect calibration;",
        "warm below it, cool above it.",
    ] {
        area.draw(&Text::new(
            line,
            (10, y),
            small.pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        y += 16;
    }
    Ok(())
}

/// A small panel of the grid: the same marks without intervals or counts.
fn draw_small_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    title: &str,
    dashes: Dashes,
) -> Drawn<DB> {
    let mut chart = reliability_chart(area, title, &SMALL, None, dashes)?;
    for c in &p.curves {
        let s = style::of(&c.method);
        let pts: Vec<(f64, f64)> = c
            .points
            .iter()
            .map(|q| (q.mean_forecast, q.observed))
            .collect();
        let width = if c.method == "none" { 2 } else { 1 };
        chart_line(&mut chart, pts.clone(), s.dash, (s.colour, width), dashes)?;
        chart.draw_series(pts.iter().map(|&at| marker(at, &s, 2)))?;
    }
    Ok(())
}

/// Side of one grid panel, in pixels.
const CELL: u32 = 240;
/// Width of one key entry in the grid's key, in pixels.
const KEY_ENTRY: u32 = 150;

/// How the grid lays out: datasets as columns and families as rows when
/// there are several datasets; with one dataset, the families wrap into a
/// near-square block so the figure is not a one-panel-wide strip.
#[derive(Debug)]
struct GridLayout {
    columns: usize,
    rows: usize,
    width: u32,
    key_lines: usize,
}

impl GridLayout {
    fn new(datasets: usize, families: usize, methods: usize) -> GridLayout {
        let panels = datasets * families;
        let columns = if datasets > 1 {
            datasets
        } else {
            (families as f64).sqrt().ceil().max(1.0) as usize
        };
        let rows = panels.div_ceil(columns.max(1));
        // Wide enough for a legible key even with a single panel.
        let width = (CELL * columns as u32).max(2 * KEY_ENTRY + 20);
        let per_line = ((width - 20) / KEY_ENTRY).max(1) as usize;
        GridLayout {
            columns,
            rows,
            width,
            key_lines: methods.div_ceil(per_line),
        }
    }

    fn key_height(&self) -> u32 {
        12 + 22 * self.key_lines as u32
    }

    fn size(&self) -> (u32, u32) {
        (self.width, self.key_height() + CELL * self.rows as u32)
    }
}

/// The grid: a key on top that wraps to the figure's width, then one small
/// panel per (dataset, family).
fn draw_grid<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    panels: &[Panel],
    methods: &[String],
    layout: &GridLayout,
    single_dataset: bool,
    dashes: Dashes,
) -> Drawn<DB> {
    let (key, body) = area.split_vertically(layout.key_height());
    let per_line = ((layout.width - 20) / KEY_ENTRY).max(1) as usize;
    for (i, m) in methods.iter().enumerate() {
        let x = 10 + (KEY_ENTRY * (i % per_line) as u32) as i32;
        let y = 16 + 22 * (i / per_line) as i32;
        key_sample(&key, (x, y), &style::of(m), dashes)?;
        key.draw(&Text::new(
            m.clone(),
            (x + 38, y),
            (FONT, 12)
                .into_font()
                .color(&BLACK)
                .pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
    }
    let used = CELL * layout.columns as u32;
    let body = if used < layout.width {
        body.split_horizontally(used).0
    } else {
        body
    };
    let cells = body.split_evenly((layout.rows, layout.columns.max(1)));
    for (cell, p) in cells.iter().zip(panels) {
        let title = if single_dataset {
            p.family.clone()
        } else {
            format!("{} / {}", p.dataset, p.family)
        };
        draw_small_panel(cell, p, &title, dashes)?;
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
    Ok(native_dashes(&s))
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
        let size = (860, 620);
        let q = p.clone();
        let svg = svg_of(size, |a| {
            draw_panel(a, p, Dashes::Tagged).map_err(|e| e.to_string())
        })?;
        out.push(Figure {
            path: format!("figures/reliability/{}--{}.svg", slug(&p.dataset), slug(&p.family)),
            caption: format!(
                "Reliability of {} on {}: {} against observed frequency in {bins} equal-width bins, pooled over the outer folds. Each method has its own colour, dash pattern and marker (the raw model solid near-black); marker area grows with the rows in the bin, whiskers are 95% Wilson intervals, and the strip beneath counts the raw forecasts per bin. The table beside the chart gives each method's ECE and Brier score as fold means, as in the metrics table.",
                p.family, p.dataset, p.forecast
            ),
            svg: with_metadata(svg, p),
            png: Box::new(move |path| png_of(path, size, &|a| draw_panel(a, &q, Dashes::Drawn).map_err(|e| e.to_string()))),
        });
    }
    let methods = results.exp.methods.clone();
    let single = results.exp.datasets.len() == 1;
    let layout = GridLayout::new(
        results.exp.datasets.len(),
        results.exp.families.len(),
        methods.len(),
    );
    let size = layout.size();
    // Panels in reading order: with several datasets, datasets across and
    // families down.
    let grid_svg = svg_of(size, |a| {
        draw_grid(a, &panels, &methods, &layout, single, Dashes::Tagged).map_err(|e| e.to_string())
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
            "All reliability curves: {}, {bins} equal-width bins; each method keeps its colour, dash pattern and marker.{}",
            if single {
                "one panel per family"
            } else {
                "datasets as columns, families as rows"
            },
            if mixed {
                " Binary panels plot P(positive class), multiclass panels the top-label confidence."
            } else {
                ""
            }
        ),
        svg: with_metadata(grid_svg, &panels),
        png: Box::new(move |path| {
            png_of(path, size, &|a| draw_grid(a, &grid_panels, &methods, &layout, single, Dashes::Drawn).map_err(|e| e.to_string()))
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
    fn the_grid_lays_out_one_dataset_as_well_as_many() {
        for (datasets, families, methods) in [(1, 1, 7), (1, 10, 7), (1, 3, 2), (24, 10, 7)] {
            let g = GridLayout::new(datasets, families, methods);
            let (w, h) = g.size();
            // Every panel has a square cell, and every key entry a place.
            assert!(g.columns * g.rows >= datasets * families);
            assert!(g.rows * CELL as usize + g.key_height() as usize == h as usize);
            let per_line = ((w - 20) / KEY_ENTRY) as usize;
            assert!(per_line * g.key_lines >= methods, "{datasets} {families}");
            assert!(w >= 2 * KEY_ENTRY + 20);
            if datasets == 1 {
                // A near-square block, never a one-panel strip.
                assert!(g.columns.abs_diff(g.rows) <= 1, "{families}: {g:?}");
            } else {
                assert_eq!((g.columns, g.rows), (datasets, families));
            }
        }
    }

    #[test]
    fn dash_tags_become_native_dash_arrays() {
        let mut patterns = vec![DIAGONAL];
        patterns.extend(
            crate::calibrate::METHODS
                .iter()
                .filter_map(|m| style::of(m.name).dash),
        );
        for p in patterns {
            let tag = dash_tag(p);
            assert!(tag > TAG_FLOOR && tag < 1.0);
            // The SVG backend writes the opacity with `{}`.
            let svg = format!("<polyline fill=\"none\" opacity=\"{tag}\" stroke=\"#FF8800\"/>");
            assert_eq!(
                native_dashes(&svg),
                format!(
                    "<polyline fill=\"none\" opacity=\"1\" stroke-dasharray=\"{} {}\" stroke=\"#FF8800\"/>",
                    p.0, p.1
                )
            );
        }
        // Real opacities pass through untouched.
        for o in ["1", "0.9", "0.3", "0.55"] {
            let svg = format!("<rect opacity=\"{o}\"/>");
            assert_eq!(native_dashes(&svg), svg);
        }
    }

    #[test]
    fn cliques_join_pairs_within_the_difference() {
        assert_eq!(
            cliques(&[1.0, 1.5, 2.2, 4.0, 4.4], 1.25),
            vec![(0, 2), (3, 4)]
        );
        assert!(cliques(&[1.0, 3.0], 1.0).is_empty());
    }
}
