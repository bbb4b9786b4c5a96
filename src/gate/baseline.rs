//! The baseline file: `[[rule]]` tables a team writes, then what `--update`
//! accepted: an `[accepted]` table (the run's seed and fold counts, and
//! every row it had) and one `[[value]]` per row and change-rule metric,
//! with the per-fold values that let a later run on the same seed be
//! compared fold by fold. `--update` rewrites everything after the rules in
//! place, so accepting a change is one command and a reviewable diff.

use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::experiment::manifest::Experiment;
use crate::experiment::summary::fold_values;
use crate::metrics;
use crate::report::{intervals, Interval, Results};
use serde::Deserialize;
use std::path::Path;

/// The format name and version `--update` writes into `[accepted]`.
pub const FORMAT: &str = "candor-gate-baseline";
pub const VERSION: u32 = 2;

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
    /// A change rule: a row regresses when the 95% interval of its change
    /// from the accepted value lies wholly on the worse side, beyond this.
    pub tolerance: Option<f64>,
    /// A change rule: a row regresses when its mean change is worse than
    /// this, interval or not.
    pub max_change: Option<f64>,
}

impl Rule {
    /// Whether the rule compares with accepted values.
    pub fn is_change(&self) -> bool {
        self.tolerance.is_some() || self.max_change.is_some()
    }
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
    /// Per-fold values in (repeat, fold) order.
    #[serde(default)]
    pub folds: Vec<f64>,
}

/// The accepted run: what makes a later run's folds the same folds, and
/// every row it had.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AcceptedRun {
    pub format: String,
    pub version: u32,
    pub seed: u64,
    pub outer_folds: usize,
    pub repeats: usize,
    /// `dataset / family / method` of every accepted row.
    pub rows: Vec<String>,
}

/// What the gate does with rows the baseline never accepted.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum NewRows {
    /// List them; they pass.
    #[default]
    Report,
    /// Fail the gate until they are accepted with `--update`.
    Fail,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct BaselineFile {
    #[serde(default)]
    pub(super) new_rows: NewRows,
    #[serde(default)]
    pub(super) rule: Vec<Rule>,
    pub(super) accepted: Option<AcceptedRun>,
    #[serde(default)]
    pub(super) value: Vec<Accepted>,
}

/// The names a baseline's rules may refer to.
pub struct Names {
    pub metrics: Vec<String>,
    pub datasets: Vec<String>,
    pub families: Vec<String>,
    pub methods: Vec<String>,
}

impl Names {
    /// The names of an experiment, before or after it runs.
    pub fn of(exp: &Experiment) -> Names {
        Names {
            metrics: exp.metrics.clone(),
            datasets: exp.datasets.iter().map(|d| d.name.clone()).collect(),
            families: exp.families.iter().map(|f| f.name.clone()).collect(),
            methods: exp.methods.clone(),
        }
    }
}

/// One row's key as the baseline writes it.
pub(super) fn row_key(d: &str, f: &str, m: &str) -> String {
    format!("{d} / {f} / {m}")
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
    let what = if r.is_change() {
        let mut parts = Vec::new();
        if let Some(t) = r.tolerance {
            parts.push(format!(
                "change from the accepted value not wholly worse than {t}"
            ));
        }
        if let Some(c) = r.max_change {
            parts.push(format!("mean change no worse than {c}"));
        }
        parts.join(" and ")
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

/// Reads a baseline file; only its form is checked here.
pub(super) fn parse(path: &Path) -> Result<(BaselineFile, String)> {
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
    match &file.accepted {
        None if !file.value.is_empty() => {
            return Err(Error::Manifest(format!(
                "{}: written by an earlier candor, whose accepted values have no per-fold values, so changes cannot be compared fold by fold; rewrite it with `candor gate RESULTS --baseline {} --update` and review the diff",
                path.display(),
                path.display()
            )))
        }
        Some(a) if a.format != FORMAT || a.version > VERSION => {
            return Err(Error::Manifest(format!(
                "{}: [accepted] is `{}` version {}, which this candor (format version {VERSION}) cannot read; use the candor that wrote it, or rewrite it with --update",
                path.display(),
                a.format,
                a.version
            )))
        }
        _ => {}
    }
    Ok((file, text))
}

/// Checks the rules against the names they may use: an unknown metric,
/// dataset, family or method is an error naming the rule.
pub(super) fn validate(path: &Path, file: &BaselineFile, names: &Names) -> Result<()> {
    for (i, r) in file.rule.iter().enumerate() {
        let at = format!("{}: rule {}", path.display(), i + 1);
        let Some(m) = metrics::find(&r.metric) else {
            return Err(Error::Manifest(format!(
                "{at}: unknown metric `{}`; choose one of: {}",
                r.metric,
                metrics::known_metrics()
            )));
        };
        if !names.metrics.contains(&r.metric) {
            return Err(Error::Manifest(format!(
                "{at}: the manifest's `metrics` do not include `{}`; add it there, or drop the rule",
                r.metric
            )));
        }
        let known = |v: &Option<String>, list: &[String], what: &str| -> Result<()> {
            match v {
                Some(v) if !list.contains(v) => Err(Error::Manifest(format!(
                    "{at}: no {what} `{v}` in these results; they have: {}",
                    list.join(", ")
                ))),
                _ => Ok(()),
            }
        };
        known(&r.dataset, &names.datasets, "dataset")?;
        known(&r.family, &names.families, "family")?;
        known(&r.method, &names.methods, "method")?;
        let has_limit = r.max.is_some() || r.min.is_some();
        if has_limit == r.is_change() {
            return Err(Error::Manifest(format!(
                "{at}: give either `max`/`min` (a limit) or `tolerance`/`max_change` (a change from the accepted values), not both or neither"
            )));
        }
        if r.is_change() && m.higher_is_better.is_none() {
            return Err(Error::Manifest(format!(
                "{at}: `{}` has no better direction, so a change rule cannot tell worse from better; use `max`/`min`",
                r.metric
            )));
        }
    }
    Ok(())
}

/// Checks a baseline's rules against a manifest before anything runs, as
/// `candor check --baseline` does. Returns the number of rules.
pub fn check_against(path: &Path, exp: &Experiment) -> Result<usize> {
    let (file, _) = parse(path)?;
    validate(path, &file, &Names::of(exp))?;
    Ok(file.rule.len())
}

pub(super) fn matches(r: &Rule, d: &str, f: &str, m: &str) -> bool {
    r.dataset.as_deref().is_none_or(|x| x == d)
        && r.family.as_deref().is_none_or(|x| x == f)
        && r.method.as_deref().is_none_or(|x| x == m)
}

fn value_text(key: &(String, String, String, String), i: &Interval, folds: &[f64]) -> String {
    let q = |s: &str| format!("{s:?}");
    let folds: Vec<String> = folds.iter().map(|v| format!("{v:?}")).collect();
    format!(
        "[[value]]\ndataset = {}\nfamily = {}\nmethod = {}\nmetric = {}\nmean = {:?}\nlow = {:?}\nhigh = {:?}\nfolds = [{}]\n\n",
        q(&key.0),
        q(&key.1),
        q(&key.2),
        q(&key.3),
        i.mean,
        i.low,
        i.high,
        folds.join(", ")
    )
}

const TEMPLATE: &str = "# candor gate baseline. Rules first; below them, what --update accepted.\n# Accept new results with: candor gate RESULTS --baseline THIS_FILE --update\n\n# Rows that appear in the results but were never accepted are listed; set\n# new_rows = \"fail\" to fail the gate on them instead.\n# new_rows = \"report\"\n\n# A limit: post-calibration ECE of every family with Platt scaling, with\n# the whole 95% fold interval under the limit.\n# [[rule]]\n# metric = \"ece\"\n# method = \"platt\"\n# max = 0.05\n# whole_interval = true\n\n# Change rules: the Brier score and the AUC may not get worse than the\n# accepted values. On the same seed the comparison is fold by fold; add\n# `max_change = 0.002` for a plain limit on the mean change as well.\n[[rule]]\nmetric = \"brier\"\ntolerance = 0.0\n\n[[rule]]\nmetric = \"auc\"\ntolerance = 0.0\n\n";

/// The rules' text of a baseline: everything before what `--update` wrote.
fn rules_text(text: &str) -> String {
    let cut = ["[accepted]", "[[value]]"]
        .iter()
        .filter_map(|k| text.find(k))
        .min();
    match cut {
        Some(at) => text[..at].to_string(),
        None => format!("{}\n\n", text.trim_end()),
    }
}

/// Writes the baseline with the current results, keeping the rules' text.
pub fn update(results: &Results, baseline: &Path) -> Result<()> {
    let rules = if baseline.exists() {
        let text = std::fs::read_to_string(baseline).map_err(|e| {
            Error::Manifest(format!(
                "{}: cannot read the baseline: {e}",
                baseline.display()
            ))
        })?;
        rules_text(&text)
    } else {
        TEMPLATE.to_string()
    };
    let file: BaselineFile = toml::from_str(&rules)
        .map_err(|e| Error::Manifest(format!("{}: {}", baseline.display(), e.message())))?;
    validate(baseline, &file, &Names::of(&results.exp))?;
    let exp = &results.exp;
    let mut rows = Vec::new();
    for d in &exp.datasets {
        for f in &exp.families {
            for m in &exp.methods {
                rows.push(format!("{:?}", row_key(&d.name, &f.name, m)));
            }
        }
    }
    let mut out = rules;
    out.push_str(&format!(
        "[accepted]\nformat = {FORMAT:?}\nversion = {VERSION}\nseed = {}\nouter_folds = {}\nrepeats = {}\nrows = [\n  {},\n]\n\n",
        exp.seed,
        exp.evaluation.outer_folds,
        exp.evaluation.repeats,
        rows.join(",\n  ")
    ));
    for (key, i) in &intervals(results) {
        let covered = file
            .rule
            .iter()
            .any(|r| r.is_change() && r.metric == key.3 && matches(r, &key.0, &key.1, &key.2));
        if covered && i.mean.is_finite() {
            let folds = fold_values(&results.cells(&key.0, &key.1), &key.2, &key.3);
            out.push_str(&value_text(key, i, &folds));
        }
    }
    let out = format!("{}\n", out.trim_end());
    write_atomic(baseline, out.as_bytes())
}
