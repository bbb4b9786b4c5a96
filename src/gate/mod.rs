//! `candor gate`: checks a results folder against rules and a baseline so
//! CI fails on a real calibration regression and not on fold-to-fold noise.
//!
//! A baseline file (TOML) holds `[[rule]]` tables, then what `--update`
//! accepted: the run's seed, fold counts and rows, and the values with
//! their per-fold numbers. Three kinds of check:
//!
//! - **Rows.** Every row (dataset, family, method) the baseline accepted
//!   must be in the results: a dropped family, dataset or method fails the
//!   gate until the removal is accepted with `--update`. Rows never
//!   accepted are listed, and fail only with `new_rows = "fail"`.
//! - **Limits** (`max` and/or `min`) on a metric's mean over folds, or,
//!   with `whole_interval = true`, on the far end of its 95% fold interval.
//! - **Changes** from the accepted values. With the accepted seed and fold
//!   counts, the results share the accepted run's outer folds, so each
//!   row's change is paired fold by fold: the per-fold differences get the
//!   corrected resampled t interval of Nadeau & Bengio (2003), as in the
//!   report, and the row regresses when that interval lies wholly on the
//!   worse side beyond `tolerance`. With another seed the folds differ;
//!   the gate says so and falls back to comparing the two runs' intervals,
//!   which regress only when they are disjoint beyond `tolerance`, so noise
//!   from a new split never fails. `max_change` adds a plain limit on the
//!   mean change.
//!
//! Owns the rules' semantics and the verdict. [`baseline`] reads and rewrites
//! the baseline file; [`render`] turns a verdict into text, Markdown and
//! JUnit. May import everything below it (`common`, `metrics`, `export`,
//! `experiment`, `report`); only `commands` imports it.

pub mod baseline;
pub mod render;

use crate::common::error::Result;
use crate::common::stats::fold_interval;
use crate::experiment::summary::fold_values;
use crate::metrics;
use crate::report::{intervals, test_over_train, Interval, Results};
use baseline::{describe, matches, parse, row_key, validate, Accepted, Names, NewRows};
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
    /// What the reader should know about how the rules were applied.
    pub notes: Vec<String>,
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

/// How a change is judged: paired fold by fold on shared folds, or by two
/// intervals when the folds differ.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Comparison {
    Paired,
    Unpaired,
}

/// A change rule on one row: the failure line, if the row regressed.
fn judge_change(
    rule: &baseline::Rule,
    was: &Accepted,
    now: &Interval,
    now_folds: &[f64],
    ratio: f64,
    comparison: Comparison,
) -> Option<String> {
    let higher = metrics::find(&rule.metric).and_then(|m| m.higher_is_better) == Some(true);
    // Changes on the worse-is-positive scale.
    let sign = if higher { -1.0 } else { 1.0 };
    let mut why = Vec::new();
    let paired = comparison == Comparison::Paired
        && was.folds.len() == now_folds.len()
        && was.folds.len() >= 2
        && was.folds.iter().chain(now_folds).all(|v| v.is_finite());
    if let Some(t) = rule.tolerance {
        if paired {
            let d: Vec<f64> = now_folds
                .iter()
                .zip(&was.folds)
                .map(|(a, b)| sign * (a - b))
                .collect();
            let (mean, low, high) = fold_interval(&d, ratio);
            if low > t {
                why.push(format!(
                    "worse by {mean:.4} [{low:.4}, {high:.4}] fold by fold, beyond the tolerance {t}"
                ));
            }
        } else {
            let worse = if higher {
                now.high < was.low - t
            } else {
                now.low > was.high + t
            };
            if worse {
                why.push(format!(
                    "its interval [{:.4}, {:.4}] lies wholly worse than the accepted [{:.4}, {:.4}] beyond the tolerance {t}",
                    now.low, now.high, was.low, was.high
                ));
            }
        }
    }
    if let Some(c) = rule.max_change {
        let change = sign * (now.mean - was.mean);
        if change > c {
            why.push(format!(
                "the mean got worse by {change:.4}, more than max_change {c}"
            ));
        }
    }
    (!why.is_empty()).then(|| {
        format!(
            "{} = {:.4} (accepted {:.4}): {}",
            rule.metric,
            now.mean,
            was.mean,
            why.join("; ")
        )
    })
}

/// One line per missing part: a family, dataset or method whose accepted
/// rows are all gone is named once, other rows one by one.
fn missing_rows(accepted: &[String], current: &[String]) -> Vec<String> {
    let split = |k: &String| -> Option<[String; 3]> {
        let p: Vec<&str> = k.split(" / ").collect();
        (p.len() == 3).then(|| [p[0].to_string(), p[1].to_string(), p[2].to_string()])
    };
    let missing: Vec<[String; 3]> = accepted
        .iter()
        .filter(|k| !current.contains(k))
        .filter_map(split)
        .collect();
    let mut left = missing.clone();
    let all: Vec<[String; 3]> = accepted.iter().filter_map(split).collect();
    let hint = "if it was dropped on purpose, accept the removal with --update";
    let mut out = Vec::new();
    for (part, what) in [(1, "family"), (0, "dataset"), (2, "method")] {
        let mut names: Vec<String> = left.iter().map(|r| r[part].clone()).collect();
        names.sort();
        names.dedup();
        for name in names {
            let of_it = all.iter().filter(|r| r[part] == name).count();
            let gone = missing.iter().filter(|r| r[part] == name).count();
            if gone == of_it && gone > 1 {
                out.push(format!(
                    "{what} {name}: all {gone} of its accepted rows are missing; {hint}"
                ));
                left.retain(|r| r[part] != name);
            }
        }
    }
    out.extend(
        left.iter()
            .map(|r| format!("{} / {} / {}: missing; {hint}", r[0], r[1], r[2])),
    );
    out
}

/// Checks the results against the baseline's rules.
pub fn check(results: &Results, baseline: &Path) -> Result<Outcome> {
    let (file, _) = parse(baseline)?;
    let current = rows(results);
    let current_keys: Vec<String> = current.iter().map(|(d, f, m)| row_key(d, f, m)).collect();
    let accepted_rows: &[String] = file.accepted.as_ref().map_or(&[], |a| &a.rows);
    // Rules may name what the baseline accepted, even if it is gone now:
    // that is a missing row, not a typo.
    let mut names = Names::of(&results.exp);
    for key in accepted_rows {
        let parts: Vec<&str> = key.split(" / ").collect();
        if let [d, f, m] = parts[..] {
            for (list, v) in [
                (&mut names.datasets, d),
                (&mut names.families, f),
                (&mut names.methods, m),
            ] {
                if !list.iter().any(|x| x == v) {
                    list.push(v.to_string());
                }
            }
        }
    }
    validate(baseline, &file, &names)?;
    let mut notes = Vec::new();
    let mut checks = Vec::new();

    let mut rows_check = Check {
        rule: "every accepted row is still in the results".into(),
        rows: accepted_rows.len(),
        failures: missing_rows(accepted_rows, &current_keys),
    };
    let new: Vec<&String> = current_keys
        .iter()
        .filter(|k| file.accepted.is_some() && !accepted_rows.contains(k))
        .collect();
    if !new.is_empty() {
        match file.new_rows {
            NewRows::Fail => rows_check.failures.extend(new.iter().map(|k| {
                format!("{k}: new, with no accepted value; accept it with --update")
            })),
            NewRows::Report => notes.push(format!(
                "{} new row(s) with no accepted value, not judged by change rules: {}; accept them with --update",
                new.len(),
                new.iter().map(|k| k.as_str()).collect::<Vec<_>>().join(", ")
            )),
        }
    }
    if file.accepted.is_some() {
        checks.push(rows_check);
    }

    let comparison = match &file.accepted {
        Some(a)
            if a.seed == results.exp.seed
                && a.outer_folds == results.exp.evaluation.outer_folds
                && a.repeats == results.exp.evaluation.repeats =>
        {
            Comparison::Paired
        }
        Some(a) => {
            notes.push(format!(
                "the baseline was accepted with seed {} and {} x {} folds, these results have seed {} and {} x {}: the folds are not shared, so change rules compare the two runs' 95% intervals (a row regresses only when they are disjoint); rerun with the accepted seed for the fold-by-fold comparison",
                a.seed,
                a.repeats,
                a.outer_folds,
                results.exp.seed,
                results.exp.evaluation.repeats,
                results.exp.evaluation.outer_folds
            ));
            Comparison::Unpaired
        }
        None => Comparison::Unpaired,
    };
    if file.accepted.is_none() && file.rule.iter().any(|r| r.is_change()) {
        return Err(crate::common::error::Error::Manifest(format!(
            "{}: no accepted values for its change rules; accept the current results with --update",
            baseline.display()
        )));
    }

    let iv = intervals(results);
    for r in &file.rule {
        let mut check = Check {
            rule: describe(r),
            rows: 0,
            failures: Vec::new(),
        };
        for (d, f, m) in current.iter().filter(|(d, f, m)| matches(r, d, f, m)) {
            let key = (d.clone(), f.clone(), m.clone(), r.metric.clone());
            let row = row_key(d, f, m);
            if r.is_change() && !accepted_rows.contains(&row) {
                // A new row: listed in the notes, not judged.
                continue;
            }
            check.rows += 1;
            let Some(now) = iv.get(&key).copied().filter(|i| i.mean.is_finite()) else {
                check.failures.push(format!(
                    "{row}: {} is undefined (a failed fold or an undefined value)",
                    r.metric
                ));
                continue;
            };
            if r.is_change() {
                let was = file.value.iter().find(|v| {
                    v.dataset == *d && v.family == *f && v.method == *m && v.metric == r.metric
                });
                let Some(was) = was else {
                    check.failures.push(format!(
                        "{row}: no accepted {} value although the row was accepted; accept the current results with --update",
                        r.metric
                    ));
                    continue;
                };
                let cells = results.cells(d, f);
                let folds = fold_values(&cells, m, &r.metric);
                if let Some(why) =
                    judge_change(r, was, &now, &folds, test_over_train(&cells), comparison)
                {
                    check.failures.push(format!("{row}: {why}"));
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
                    check
                        .failures
                        .push(format!("{row}: {} {what} crosses max {max}", r.metric));
                }
            }
            if let Some(min) = r.min {
                if lo_val.is_nan() || lo_val < min {
                    check
                        .failures
                        .push(format!("{row}: {} {what} crosses min {min}", r.metric));
                }
            }
        }
        checks.push(check);
    }
    Ok(Outcome {
        experiment: results.exp.name.clone(),
        notes,
        checks,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rule(tolerance: Option<f64>, max_change: Option<f64>, metric: &str) -> baseline::Rule {
        baseline::Rule {
            name: None,
            metric: metric.into(),
            dataset: None,
            family: None,
            method: None,
            max: None,
            min: None,
            whole_interval: false,
            tolerance,
            max_change,
        }
    }

    fn accepted(folds: &[f64]) -> Accepted {
        let mean = folds.iter().sum::<f64>() / folds.len() as f64;
        Accepted {
            dataset: "d".into(),
            family: "f".into(),
            method: "m".into(),
            metric: "brier".into(),
            mean,
            low: mean - 0.05,
            high: mean + 0.05,
            folds: folds.to_vec(),
        }
    }

    fn now(folds: &[f64]) -> Interval {
        let mean = folds.iter().sum::<f64>() / folds.len() as f64;
        Interval {
            mean,
            low: mean - 0.05,
            high: mean + 0.05,
            change: 0.0,
            change_low: 0.0,
            change_high: 0.0,
        }
    }

    #[test]
    fn a_small_steady_loss_fails_paired_but_not_unpaired() {
        // Every fold 0.01 worse, folds varying by 0.05: the intervals of the
        // two runs overlap, the per-fold differences do not reach 0.
        let was = [0.10, 0.15, 0.20, 0.12, 0.18];
        let is: Vec<f64> = was.iter().map(|v| v + 0.01).collect();
        let r = rule(Some(0.0), None, "brier");
        let paired = judge_change(
            &r,
            &accepted(&was),
            &now(&is),
            &is,
            0.25,
            Comparison::Paired,
        );
        assert!(paired.is_some_and(|w| w.contains("fold by fold")));
        let unpaired = judge_change(
            &r,
            &accepted(&was),
            &now(&is),
            &is,
            0.25,
            Comparison::Unpaired,
        );
        assert!(unpaired.is_none());
    }

    #[test]
    fn max_change_limits_the_mean_change_in_the_worse_direction() {
        let was = [0.10, 0.15, 0.20];
        let worse: Vec<f64> = was.iter().map(|v| v + 0.01).collect();
        let better: Vec<f64> = was.iter().map(|v| v - 0.05).collect();
        let tight = rule(None, Some(0.005), "brier");
        let loose = rule(None, Some(0.02), "brier");
        let judge = |r: &baseline::Rule, f: &[f64]| {
            judge_change(r, &accepted(&was), &now(f), f, 0.5, Comparison::Paired)
        };
        assert!(judge(&tight, &worse).is_some_and(|w| w.contains("max_change 0.005")));
        assert!(judge(&loose, &worse).is_none());
        assert!(judge(&tight, &better).is_none());
        // For AUC, higher is better: a fall is the worse direction.
        let auc = rule(None, Some(0.005), "auc");
        let mut a = accepted(&[0.90, 0.91, 0.92]);
        a.metric = "auc".into();
        let fell = [0.88, 0.89, 0.90];
        assert!(judge_change(&auc, &a, &now(&fell), &fell, 0.5, Comparison::Paired).is_some());
    }
}
