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
//!
//! Owns the rules' semantics and the verdict. [`baseline`] reads and rewrites
//! the baseline file; [`render`] turns a verdict into text, Markdown and
//! JUnit. May import everything below it (`common`, `metrics`, `export`,
//! `report`); only `commands` imports it.

pub mod baseline;
pub mod render;

use crate::common::error::{Error, Result};
use crate::metrics;
use crate::report::{intervals, Results};
use baseline::{describe, matches, read};
use std::path::Path;

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
