//! `candor gate`: checks a results folder against rules and a baseline so
//! CI fails on a real calibration regression and not on fold-to-fold noise.
//!
//! A baseline file (TOML) holds `[[rule]]` tables and the `[[value]]`s the
//! rules were last accepted at. Two kinds of rule:
//!
//! - a limit (`max` and/or `min`) on a metric's mean over folds, or, with
//!   `whole_interval = true`, on the far end of its 95% fold interval, so
//!   the limit holds with confidence rather than on average;
//! - a change rule (`tolerance`): a row regresses when its whole current
//!   95% fold interval lies beyond the baseline's interval, on the worse
//!   side, by more than `tolerance`. Comparing two intervals, not two
//!   means, is what keeps fold-to-fold noise from failing the gate.
//!
//! `--update` rewrites the values below the rules, keeping the rules'
//! text and comments, so accepting a change is one command and a diff.

use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::export::escape_xml as xml;
use crate::metrics;
use crate::report::{intervals, Interval, Results};
use serde::Deserialize;
use std::fmt::Write as _;
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
struct BaselineFile {
    #[serde(default)]
    rule: Vec<Rule>,
    #[serde(default)]
    value: Vec<Accepted>,
}

/// The outcome of one rule.
#[derive(Debug, Clone)]
pub struct Check {
    pub rule: String,
    /// Rows checked.
    pub rows: usize,
    /// One line per row that broke the rule.
    pub failures: Vec<String>,
}

/// Everything the gate found.
#[derive(Debug, Clone)]
pub struct Outcome {
    pub experiment: String,
    pub checks: Vec<Check>,
}

impl Outcome {
    pub fn passed(&self) -> bool {
        self.checks.iter().all(|c| c.failures.is_empty())
    }
}

fn describe(r: &Rule) -> String {
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
fn read(path: &Path, results: &Results) -> Result<(BaselineFile, String)> {
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

fn matches(r: &Rule, d: &str, f: &str, m: &str) -> bool {
    r.dataset.as_deref().is_none_or(|x| x == d)
        && r.family.as_deref().is_none_or(|x| x == f)
        && r.method.as_deref().is_none_or(|x| x == m)
}

fn rows(results: &Results) -> Vec<(String, String, String)> {
    let exp = &results.exp;
    let mut out = Vec::new();
    for d in &exp.datasets {
        for f in &exp.families {
            for m in &exp.methods {
                out.push((d.name.clone(), f.name.clone(), m.clone()));
            }
        }
    }
    out
}

/// Checks the results against the baseline's rules.
pub fn check(results: &Results, baseline: &Path) -> Result<Outcome> {
    let (file, _) = read(baseline, results)?;
    let iv = intervals(results);
    let mut checks = Vec::new();
    for r in &file.rule {
        let higher = metrics::find(&r.metric).and_then(|m| m.higher_is_better) == Some(true);
        let mut check = Check {
            rule: describe(r),
            rows: 0,
            failures: Vec::new(),
        };
        for (d, f, m) in rows(results).iter().filter(|(d, f, m)| matches(r, d, f, m)) {
            check.rows += 1;
            let key = (d.clone(), f.clone(), m.clone(), r.metric.clone());
            let Some(now) = iv.get(&key).copied().filter(|i| i.mean.is_finite()) else {
                check.failures.push(format!(
                    "{d} / {f} / {m}: {} is undefined (a failed fold or an undefined value)",
                    r.metric
                ));
                continue;
            };
            if let Some(t) = r.tolerance {
                let Some(was) = file.value.iter().find(|v| {
                    v.dataset == *d && v.family == *f && v.method == *m && v.metric == r.metric
                }) else {
                    return Err(Error::Manifest(format!(
                        "{}: no accepted value for {d} / {f} / {m} / {}; accept the current results with --update",
                        baseline.display(),
                        r.metric
                    )));
                };
                // Worse only when even the current interval's best end is
                // beyond the baseline interval's worst end (plus the
                // tolerance): two disjoint 95% intervals, not noise.
                let worse = if higher {
                    now.high < was.low - t
                } else {
                    now.low > was.high + t
                };
                if worse {
                    check.failures.push(format!(
                        "{d} / {f} / {m}: {} = {:.4} [{:.4}, {:.4}], worse than the baseline's {:.4} [{:.4}, {:.4}] beyond the tolerance {t}",
                        r.metric, now.mean, now.low, now.high, was.mean, was.low, was.high
                    ));
                }
                continue;
            }
            let (hi_val, lo_val) = if r.whole_interval {
                (now.high, now.low)
            } else {
                (now.mean, now.mean)
            };
            let what = if r.whole_interval {
                format!("95% interval [{:.4}, {:.4}]", now.low, now.high)
            } else {
                format!("mean {:.4}", now.mean)
            };
            if let Some(max) = r.max {
                if hi_val.is_nan() || hi_val > max {
                    check.failures.push(format!(
                        "{d} / {f} / {m}: {} {what} crosses max {max}",
                        r.metric
                    ));
                }
            }
            if let Some(min) = r.min {
                if lo_val.is_nan() || lo_val < min {
                    check.failures.push(format!(
                        "{d} / {f} / {m}: {} {what} crosses min {min}",
                        r.metric
                    ));
                }
            }
        }
        checks.push(check);
    }
    Ok(Outcome {
        experiment: results.exp.name.clone(),
        checks,
    })
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

/// A short summary for people.
pub fn human(o: &Outcome) -> String {
    let mut s = String::new();
    for c in &o.checks {
        let mark = if c.failures.is_empty() {
            "ok  "
        } else {
            "FAIL"
        };
        let _ = writeln!(s, "{mark} {} ({} rows)", c.rule, c.rows);
        for f in &c.failures {
            let _ = writeln!(s, "       {f}");
        }
    }
    let failed = o.checks.iter().filter(|c| !c.failures.is_empty()).count();
    let _ = writeln!(
        s,
        "{}: {} of {} rules hold",
        o.experiment,
        o.checks.len() - failed,
        o.checks.len()
    );
    s
}

/// Markdown for a CI job summary.
pub fn markdown(o: &Outcome) -> String {
    let mut s = format!(
        "### candor gate: {} ({})\n\n| result | rule | rows | details |\n|---|---|---|---|\n",
        o.experiment,
        if o.passed() { "passed" } else { "regression" }
    );
    for c in &o.checks {
        let details = c.failures.join("<br>").replace('|', "\\|");
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} |",
            if c.failures.is_empty() {
                "pass"
            } else {
                "fail"
            },
            c.rule.replace('|', "\\|"),
            c.rows,
            details
        );
    }
    s
}

/// JUnit XML, one test case per rule.
pub fn junit(o: &Outcome) -> String {
    let failed = o.checks.iter().filter(|c| !c.failures.is_empty()).count();
    let mut s = format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites>\n<testsuite name=\"candor gate: {}\" tests=\"{}\" failures=\"{failed}\">\n",
        xml(&o.experiment),
        o.checks.len()
    );
    for c in &o.checks {
        let _ = write!(
            s,
            "<testcase classname=\"candor.gate\" name=\"{}\"",
            xml(&c.rule)
        );
        if c.failures.is_empty() {
            s.push_str("/>\n");
        } else {
            let _ = writeln!(
                s,
                "><failure message=\"{} of {} rows broke the rule\">{}</failure></testcase>",
                c.failures.len(),
                c.rows,
                xml(&c.failures.join("\n"))
            );
        }
    }
    s.push_str("</testsuite>\n</testsuites>\n");
    s
}
