//! The baseline file: `[[rule]]` tables a team writes, and the `[[value]]`s
//! the rules were last accepted at, which `--update` rewrites in place so
//! accepting a change is one command and a reviewable diff.

use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::metrics;
use crate::report::{intervals, Interval, Results};
use serde::Deserialize;
use std::path::Path;

/// One rule as written in the baseline.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Rule {
    /// A name for reports; defaults to a description of the rule.
    pub name: Option<String>,
    pub metric: String,
    pub dataset: Option<String>,
    pub family: Option<String>,
    /// Methods the rule covers; all methods when absent.
    pub method: Option<String>,
    pub max: Option<f64>,
    pub min: Option<f64>,
    /// Compare the interval's far end, not the mean, with `max`/`min`.
    #[serde(default)]
    pub whole_interval: bool,
    /// Allowed worsening beyond the baseline's interval.
    pub tolerance: Option<f64>,
}

/// One accepted value.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Accepted {
    pub dataset: String,
    pub family: String,
    pub method: String,
    pub metric: String,
    pub mean: f64,
    pub low: f64,
    pub high: f64,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct BaselineFile {
    #[serde(default)]
    pub(super) rule: Vec<Rule>,
    #[serde(default)]
    pub(super) value: Vec<Accepted>,
}

pub(super) fn describe(r: &Rule) -> String {
    if let Some(n) = &r.name {
        return n.clone();
    }
    let mut scope = Vec::new();
    for (k, v) in [
        ("dataset", &r.dataset),
        ("family", &r.family),
        ("method", &r.method),
    ] {
        if let Some(v) = v {
            scope.push(format!("{k} {v}"));
        }
    }
    let scope = if scope.is_empty() {
        "every row".to_string()
    } else {
        scope.join(", ")
    };
    let what = if let Some(t) = r.tolerance {
        format!("interval not wholly worse than the baseline's by more than {t}")
    } else {
        let mut parts = Vec::new();
        if let Some(m) = r.max {
            parts.push(format!("<= {m}"));
        }
        if let Some(m) = r.min {
            parts.push(format!(">= {m}"));
        }
        let on = if r.whole_interval {
            "whole 95% interval"
        } else {
            "mean"
        };
        format!("{on} {}", parts.join(" and "))
    };
    format!("{}: {what} ({scope})", r.metric)
}

/// Reads and checks a baseline file against the results it will judge.
pub(super) fn read(path: &Path, results: &Results) -> Result<(BaselineFile, String)> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        Error::Manifest(format!(
            "{}: cannot read the baseline: {e}; check the path, or create one with --update",
            path.display()
        ))
    })?;
    let file: BaselineFile = toml::from_str(&text).map_err(|e| {
        let msg = e.message().lines().next().unwrap_or_default().to_string();
        let at = e.span().map_or(String::new(), |s| {
            format!(":{}", text[..s.start].matches('\n').count() + 1)
        });
        Error::Manifest(format!("{}{at}: {msg}", path.display()))
    })?;
    let exp = &results.exp;
    for (i, r) in file.rule.iter().enumerate() {
        let at = format!("{}: rule {}", path.display(), i + 1);
        let Some(m) = metrics::find(&r.metric) else {
            return Err(Error::Manifest(format!(
                "{at}: unknown metric `{}`; choose one of: {}",
                r.metric,
                metrics::known_metrics()
            )));
        };
        if !exp.metrics.contains(&r.metric) {
            return Err(Error::Manifest(format!(
                "{at}: the results do not include `{}`; add it to the manifest's metrics",
                r.metric
            )));
        }
        let known = |v: &Option<String>, list: Vec<&String>, what: &str| -> Result<()> {
            match v {
                Some(v) if !list.contains(&v) => Err(Error::Manifest(format!(
                    "{at}: no {what} `{v}` in these results; they have: {}",
                    list.iter()
                        .map(|s| s.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ))),
                _ => Ok(()),
            }
        };
        known(
            &r.dataset,
            exp.datasets.iter().map(|d| &d.name).collect(),
            "dataset",
        )?;
        known(
            &r.family,
            exp.families.iter().map(|f| &f.name).collect(),
            "family",
        )?;
        known(&r.method, exp.methods.iter().collect(), "method")?;
        let has_limit = r.max.is_some() || r.min.is_some();
        if has_limit == r.tolerance.is_some() {
            return Err(Error::Manifest(format!(
                "{at}: give either `max`/`min` (a limit) or `tolerance` (a change from the baseline), not both or neither"
            )));
        }
        if r.tolerance.is_some() && m.higher_is_better.is_none() {
            return Err(Error::Manifest(format!(
                "{at}: `{}` has no better direction, so a change rule cannot tell worse from better; use `max`/`min`",
                r.metric
            )));
        }
    }
    Ok((file, text))
}

pub(super) fn matches(r: &Rule, d: &str, f: &str, m: &str) -> bool {
    r.dataset.as_deref().is_none_or(|x| x == d)
        && r.family.as_deref().is_none_or(|x| x == f)
        && r.method.as_deref().is_none_or(|x| x == m)
}

fn value_line(key: &(String, String, String, String), i: &Interval) -> String {
    let q = |s: &str| format!("{s:?}");
    format!(
        "[[value]]\ndataset = {}\nfamily = {}\nmethod = {}\nmetric = {}\nmean = {:?}\nlow = {:?}\nhigh = {:?}\n\n",
        q(&key.0),
        q(&key.1),
        q(&key.2),
        q(&key.3),
        i.mean,
        i.low,
        i.high
    )
}

const TEMPLATE: &str = "# candor gate baseline. Rules first, then the values they were accepted at.\n# Accept new results with: candor gate RESULTS --baseline THIS_FILE --update\n\n# A limit: post-calibration ECE of every family with Platt scaling, with\n# the whole 95% fold interval under the limit.\n# [[rule]]\n# metric = \"ece\"\n# method = \"platt\"\n# max = 0.05\n# whole_interval = true\n\n# A change rule: the Brier score may not get worse than the baseline's\n# interval by more than the tolerance.\n[[rule]]\nmetric = \"brier\"\ntolerance = 0.0\n\n";

/// Writes the baseline with the current values, keeping the rules' text.
pub fn update(results: &Results, baseline: &Path) -> Result<()> {
    let rules_text = if baseline.exists() {
        let (_, text) = read(baseline, results)?;
        match text.find("[[value]]") {
            Some(at) => text[..at].to_string(),
            None => format!("{}\n\n", text.trim_end()),
        }
    } else {
        TEMPLATE.to_string()
    };
    let file: BaselineFile = toml::from_str(&rules_text)
        .map_err(|e| Error::Manifest(format!("{}: {}", baseline.display(), e.message())))?;
    let mut wanted: Vec<String> = file
        .rule
        .iter()
        .filter(|r| r.tolerance.is_some())
        .map(|r| r.metric.clone())
        .collect();
    wanted.sort();
    wanted.dedup();
    let iv = intervals(results);
    let mut out = rules_text;
    for (key, i) in &iv {
        let covered = file.rule.iter().any(|r| {
            r.tolerance.is_some() && r.metric == key.3 && matches(r, &key.0, &key.1, &key.2)
        });
        if covered && wanted.contains(&key.3) && i.mean.is_finite() {
            out.push_str(&value_line(key, i));
        }
    }
    let out = format!("{}\n", out.trim_end());
    write_atomic(baseline, out.as_bytes())
}
