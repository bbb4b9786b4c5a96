//! The one-file HTML report: tables, inline SVG figures, the diagnosis, the
//! ranking, the manifest and the versions, with no scripts and no external
//! resources, so it opens offline and can be attached to a CI job.

use super::{Figure, Results};
use crate::common::table::{short, Table, Value};
use crate::export::escape_xml as esc;

/// The caution every report carries.
pub const CAUTION: &str = "Benchmark calibration is not validation of a model deployed for decisions about people (for example in credit or medicine). Results on benchmark folds do not carry over to a population, a time period or a use the data did not cover; local regulation and licensed professional judgement apply.";

fn table_html(t: &Table, keep: impl Fn(&[Value]) -> bool) -> String {
    let mut out = format!("<h3>{}</h3>\n", esc(&t.title));
    if !t.notes.is_empty() {
        out.push_str("<ul class=\"notes\">");
        for n in &t.notes {
            out.push_str(&format!("<li>{}</li>", esc(n)));
        }
        out.push_str("</ul>\n");
    }
    out.push_str(&format!("<table id=\"table-{}\"><thead><tr>", esc(&t.name)));
    for c in &t.columns {
        out.push_str(&format!("<th>{}</th>", esc(c)));
    }
    out.push_str("</tr></thead><tbody>\n");
    for row in t.rows.iter().filter(|r| keep(r)) {
        out.push_str("<tr>");
        for v in row {
            let class = if matches!(v, Value::Text(_)) {
                ""
            } else {
                " class=\"n\""
            };
            out.push_str(&format!("<td{class}>{}</td>", esc(&short(v))));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody></table>\n");
    out
}

fn figure_html(f: &Figure) -> String {
    format!(
        "<figure id=\"{}\">{}<figcaption>{}</figcaption></figure>\n",
        esc(&f.path),
        f.svg,
        esc(&f.caption)
    )
}

const STYLE: &str = "body{font-family:sans-serif;margin:2em auto;max-width:1200px;padding:0 1em;color:#222}\
table{border-collapse:collapse;margin:.5em 0 1.5em;font-size:.85em}\
th,td{border:1px solid #ccc;padding:.2em .5em}th{background:#f0f0f0}td.n{text-align:right;font-variant-numeric:tabular-nums}\
.caution{border-left:4px solid #c60;background:#fff6ec;padding:.6em 1em}\
.notes{font-size:.85em;color:#444}figure{margin:1em 0}figure svg{max-width:100%;height:auto}\
figcaption{font-size:.85em;color:#444}pre{background:#f6f6f6;padding:1em;overflow:auto;font-size:.85em}\
.scroll{overflow:auto}";

/// Renders the report.
pub fn render(results: &Results, tables: &[Table], figures: &[Figure]) -> String {
    let name = &results.exp.name;
    let info = &results.info;
    let mut out = format!(
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>candor report: {}</title><style>{STYLE}</style></head><body>\n",
        esc(name)
    );
    out.push_str(&format!("<h1>candor report: {}</h1>\n", esc(name)));
    out.push_str(&format!(
        "<p class=\"caution\" id=\"caution\"><strong>Caution.</strong> {}</p>\n",
        esc(CAUTION)
    ));
    let e = &results.exp.evaluation;
    out.push_str(&format!(
        "<p>{} datasets{}, {} families, {} methods; {} x {} outer folds, {} inner folds for the calibrators; {} cells. Every table is also in <code>report/</code> as Markdown, CSV and JSON.</p>\n",
        results.datasets().count(),
        match results.segments().count() {
            0 => String::new(),
            n => format!(" (and {n} segments of them)"),
        },
        results.exp.families.len(),
        results.exp.methods.len(),
        e.repeats,
        e.outer_folds,
        e.inner_folds,
        results.records.len()
    ));
    let find = |n: &str| tables.iter().find(|t| t.name == n);
    out.push_str("<h2>Diagnosis</h2>\n");
    if let Some(t) = find("diagnosis") {
        out.push_str(&table_html(t, |_| true));
    }
    if let Some(t) = find("segments") {
        out.push_str("<h2>Segments</h2>\n");
        out.push_str(&format!(
            "<div class=\"scroll\">{}</div>",
            table_html(t, |_| true)
        ));
    }
    out.push_str("<h2>Best choices</h2>\n");
    for n in ["datasets", "choices", "families"] {
        if let Some(t) = find(n) {
            out.push_str(&format!(
                "<div class=\"scroll\">{}</div>",
                table_html(t, |_| true)
            ));
        }
    }
    out.push_str("<h2>Ranking</h2>\n");
    match find("ranking") {
        Some(t) => out.push_str(&format!("<div class=\"scroll\">{}</div>", table_html(t, |_| true))),
        None => out.push_str("<p>No ranking: it needs at least two (family, method) pairs with values on at least two datasets.</p>\n"),
    }
    for f in figures
        .iter()
        .filter(|f| f.path.contains("critical-difference"))
    {
        out.push_str(&figure_html(f));
    }
    out.push_str("<h2>Reliability</h2>\n");
    for f in figures
        .iter()
        .filter(|f| f.path.ends_with("reliability-grid.svg"))
    {
        out.push_str(&format!("<div class=\"scroll\">{}</div>", figure_html(f)));
    }
    for f in figures
        .iter()
        .filter(|f| f.path.starts_with("figures/reliability/"))
    {
        out.push_str(&figure_html(f));
    }
    out.push_str("<h2>ECE and Brier score per dataset, family and method</h2>\n");
    if let Some(t) = find("metrics") {
        let keep =
            |r: &[Value]| matches!(r.get(4), Some(Value::Text(m)) if m == "ece" || m == "brier");
        out.push_str(&format!(
            "<p>Every other metric is in <code>report/metrics.csv</code>.</p><div class=\"scroll\">{}</div>",
            table_html(t, keep)
        ));
    }
    out.push_str("<h2>Manifest</h2>\n");
    out.push_str(&format!(
        "<p>SHA-256 <code>{}</code></p><pre>{}</pre>\n",
        esc(info["manifest_sha256"].as_str().unwrap_or_default()),
        esc(info["manifest"].as_str().unwrap_or_default())
    ));
    out.push_str("<h2>Versions and data</h2>\n<ul>");
    out.push_str(&format!(
        "<li>candor {}</li>",
        esc(info["candor_version"].as_str().unwrap_or_default())
    ));
    for d in info["datasets"].as_array().into_iter().flatten() {
        out.push_str(&format!(
            "<li>{}: {} rows, {} feature columns, SHA-256 <code>{}</code></li>",
            esc(d["name"].as_str().unwrap_or_default()),
            d["rows"],
            d["features"],
            esc(d["sha256"].as_str().unwrap_or_default())
        ));
    }
    out.push_str("</ul>\n</body></html>\n");
    out
}
