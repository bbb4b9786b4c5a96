//! Splitting a run's cells over several processes or machines, so a
//! cluster scheduler's job array can share the work of one manifest and a
//! merge can assemble what a single run would have written.
//!
//! Every shard computes the same plan and the same estimates, so each finds
//! its own cells without talking to the others. Cells go to shards by
//! estimated cost, greedily, the most expensive first, each to the shard
//! with the least work so far (Graham's longest-processing-time rule, within
//! 4/3 of the best possible split). Ties go to the lower cell and shard,
//! so the division depends on nothing but the manifest and the data.

use crate::common::error::{Error, Result};
use crate::common::files::write_json;
use crate::data::table::Table;
use crate::experiment::manifest::Experiment;
use crate::experiment::plan::Cell;
use crate::learner;
use crate::metrics::bootstrap::EXACT_ROWS;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// One shard of a run: `index` counts from 1 to `count`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// The environment variables `--shard auto` reads.
pub const SLURM_ID: &str = "SLURM_ARRAY_TASK_ID";
pub const SLURM_COUNT: &str = "SLURM_ARRAY_TASK_COUNT";
pub const SLURM_MIN: &str = "SLURM_ARRAY_TASK_MIN";
pub const SLURM_MAX: &str = "SLURM_ARRAY_TASK_MAX";
pub const K8S_INDEX: &str = "JOB_COMPLETION_INDEX";
/// The shard count for schedulers that give only an index (Kubernetes
/// Indexed Jobs), when `--shard auto/N` does not give it.
pub const COUNT_VAR: &str = "CANDOR_SHARD_COUNT";

impl Shard {
    /// Reads `I/N`, `auto` or `auto/N`; `env` looks up environment
    /// variables (a parameter, so tests need not set the process's own).
    pub fn parse(spec: &str, env: impl Fn(&str) -> Option<String>) -> Result<Shard> {
        let bad = |why: &str| {
            Error::Manifest(format!(
                "--shard {spec}: {why}; write I/N (shard I of N, counting from 1), or `auto` inside a Slurm job array or Kubernetes Indexed Job"
            ))
        };
        let number = |text: &str, what: &str| -> Result<usize> {
            text.trim()
                .parse::<usize>()
                .map_err(|_| bad(&format!("{what} `{text}` is not a whole number")))
        };
        let (first, given_count) = match spec.split_once('/') {
            Some((i, n)) => (i, Some(number(n, "the shard count")?)),
            None => (spec, None),
        };
        let shard = if first == "auto" {
            from_environment(given_count, &env).map_err(|why| bad(&why))?
        } else {
            let count = given_count.ok_or_else(|| bad("the shard count is missing"))?;
            Shard {
                index: number(first, "the shard number")?,
                count,
            }
        };
        if shard.count == 0 || shard.index == 0 || shard.index > shard.count {
            return Err(bad(&format!(
                "shard {} of {} does not exist; shards count from 1 to N",
                shard.index, shard.count
            )));
        }
        Ok(shard)
    }

    /// The file a shard leaves in the results folder.
    pub fn status_path(&self, dir: &Path) -> PathBuf {
        dir.join("shards")
            .join(format!("shard-{}-of-{}.json", self.index, self.count))
    }
}

/// The shard a Slurm array task or a Kubernetes Indexed Job pod is.
fn from_environment(
    given_count: Option<usize>,
    env: &impl Fn(&str) -> Option<String>,
) -> std::result::Result<Shard, String> {
    let read = |name: &str| -> std::result::Result<Option<usize>, String> {
        env(name)
            .map(|v| {
                v.trim()
                    .parse::<usize>()
                    .map_err(|_| format!("{name}=`{v}` is not a whole number"))
            })
            .transpose()
    };
    if let Some(id) = read(SLURM_ID)? {
        let min = read(SLURM_MIN)?.unwrap_or(0);
        let count = match (read(SLURM_COUNT)?, read(SLURM_MAX)?) {
            (Some(c), _) => c,
            (None, Some(max)) => max + 1 - min.min(max),
            (None, None) => given_count.ok_or_else(|| {
                format!("{SLURM_ID} is set but neither {SLURM_COUNT} nor {SLURM_MAX}; give the count as auto/N")
            })?,
        };
        if let Some(n) = given_count.filter(|&n| n != count) {
            return Err(format!("the job array has {count} tasks, not {n}"));
        }
        if id < min {
            return Err(format!("{SLURM_ID}={id} is below {SLURM_MIN}={min}"));
        }
        return Ok(Shard {
            index: id - min + 1,
            count,
        });
    }
    if let Some(index) = read(K8S_INDEX)? {
        let count = match (given_count, read(COUNT_VAR)?) {
            (Some(n), _) | (None, Some(n)) => n,
            (None, None) => {
                return Err(format!(
                "{K8S_INDEX} is set but not the number of shards; write auto/N or set {COUNT_VAR}"
            ))
            }
        };
        return Ok(Shard {
            index: index + 1,
            count,
        });
    }
    Err(format!(
        "neither {SLURM_ID} (a Slurm job array) nor {K8S_INDEX} (a Kubernetes Indexed Job) is set"
    ))
}

/// Seconds per test row, bootstrap resample and method, for the metrics'
/// intervals (`cargo bench --bench metrics`: 1,000 resamples of 20,000
/// rows in 0.067 s on this project's 2-core machine). Beyond
/// [`EXACT_ROWS`] test rows the resamples come from the normal limit, whose
/// cost no longer grows with the resamples and is small beside the metrics.
const BOOTSTRAP_SECONDS: f64 = 3.4e-9;
/// Seconds per test row and method for the metrics themselves (the
/// calibration slope and intercept fit a small logistic regression each).
const METRIC_SECONDS: f64 = 2e-6;
/// Seconds per training row and method to fit a calibration map (`cargo
/// bench --bench calibrators`: the slowest, Platt scaling and Venn-Abers,
/// take about 0.24 s on 1,000,000 rows).
const CALIBRATE_SECONDS: f64 = 2.4e-7;

/// A cell's estimated seconds: the family's M inner fits and final fit
/// (from its [`learner::Cost`]), then fitting, applying and measuring every
/// method, bootstrap included. Rough (within a factor of two or so of the
/// measured time), but it orders cells by cost, which is what the division
/// into shards needs.
pub fn estimate(exp: &Experiment, table: &Table, cell: &Cell) -> f64 {
    let eval = exp.evaluation;
    let (k, m) = (eval.outer_folds as f64, eval.inner_folds as f64);
    let rows = table.rows() as f64;
    let train = rows * (k - 1.0) / k;
    let test = rows / k;
    let columns = table.columns.len();
    let cost = learner::find(&exp.families[cell.family].kind)
        .map_or(learner::Cost::Linear(1e-6), |f| f.cost);
    let inner_train = (train * (m - 1.0) / m) as usize;
    let inner = m * cost.seconds(inner_train, (train / m) as usize, columns);
    let last = cost.seconds(train as usize, test as usize, columns);
    let methods = exp.methods.len() as f64;
    let per_method = CALIBRATE_SECONDS * train
        + METRIC_SECONDS * test
        + BOOTSTRAP_SECONDS * test.min(EXACT_ROWS as f64) * eval.bootstrap as f64;
    // Multiclass tasks fit and calibrate about one model per class.
    let classes = (table.n_classes() as f64 - 1.0).max(1.0);
    classes * (inner + last + methods * per_method)
}

/// Estimated hours above which a family whose time grows faster than its
/// rows is worth a warning before the run starts.
const SLOW_HOURS: f64 = 1.0;

/// One line for each family whose time grows with the square of the rows
/// (`list families` says which) and that the cost model expects to take
/// more than an hour on a dataset, with the estimate for `threads` cores.
pub fn slow_family_warnings(exp: &Experiment, tables: &[Table], threads: usize) -> Vec<String> {
    let threads = threads.max(1) as f64;
    let cells = crate::experiment::plan::cells(exp);
    let mut out = Vec::new();
    for (f, family) in exp.families.iter().enumerate() {
        let superlinear = learner::find(&family.kind).is_some_and(|k| k.cost.is_superlinear());
        if !superlinear {
            continue;
        }
        for (d, table) in tables.iter().enumerate() {
            let of_pair: Vec<&Cell> = cells
                .iter()
                .filter(|c| c.family == f && c.dataset == d)
                .collect();
            let seconds: f64 = of_pair.iter().map(|c| estimate(exp, table, c)).sum();
            let hours = seconds / threads / 3600.0;
            if hours > SLOW_HOURS {
                out.push(format!(
                    "family `{}` ({}) on dataset `{}` ({} rows): its time grows with the square of the rows, and candor's cost model expects about {hours:.0} hours for its {} cells on {} threads; sample the rows, or leave the family out for this dataset",
                    family.name,
                    family.kind,
                    table.name,
                    table.rows(),
                    of_pair.len(),
                    threads
                ));
            }
        }
    }
    out
}

/// The shard (counting from 0) of each cell, by the longest-processing-
/// time rule on `costs`.
pub fn assign(costs: &[f64], count: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..costs.len()).collect();
    order.sort_by(|&a, &b| costs[b].total_cmp(&costs[a]).then(a.cmp(&b)));
    let mut load = vec![0.0_f64; count.max(1)];
    let mut owner = vec![0; costs.len()];
    for i in order {
        let lightest = (0..load.len())
            .min_by(|&a, &b| load[a].total_cmp(&load[b]).then(a.cmp(&b)))
            .unwrap_or(0);
        owner[i] = lightest;
        load[lightest] += costs[i];
    }
    owner
}

/// What a shard leaves in `shards/` for the merge: which run it belonged
/// to and what it cost.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Status {
    pub shard: Shard,
    /// The manifest, as an absolute path, so the merge can find it.
    pub manifest: PathBuf,
    pub manifest_sha256: String,
    /// The shard's cells.
    pub cells: usize,
    /// Their estimated seconds, by the same model every shard uses.
    pub estimated_seconds: f64,
    /// Wall-clock seconds of the shard's last run, reused cells costing
    /// nearly nothing.
    pub measured_seconds: f64,
    pub computed: usize,
    pub reused: usize,
    pub failed: usize,
}

impl Status {
    /// Writes the status atomically.
    pub fn save(&self, dir: &Path) -> Result<()> {
        write_json(&self.shard.status_path(dir), self)
    }

    /// Every shard status in a results folder, in shard order; unreadable
    /// files are errors naming them.
    pub fn load_all(dir: &Path) -> Result<Vec<Status>> {
        let folder = dir.join("shards");
        let Ok(entries) = std::fs::read_dir(&folder) else {
            return Ok(Vec::new());
        };
        let mut all = Vec::new();
        for entry in entries.flatten() {
            let path = entry.path();
            if path.extension().is_none_or(|e| e != "json") {
                continue;
            }
            let text = std::fs::read_to_string(&path).map_err(|e| Error::io(&path, "read", &e))?;
            let status: Status = serde_json::from_str(&text).map_err(|e| {
                Error::Data(format!(
                    "{}: not a shard status ({e}); delete it and rerun that shard",
                    path.display()
                ))
            })?;
            all.push(status);
        }
        all.sort_by_key(|s| (s.shard.count, s.shard.index));
        Ok(all)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn env(pairs: &'static [(&'static str, &'static str)]) -> impl Fn(&str) -> Option<String> {
        move |name| {
            pairs
                .iter()
                .find(|(k, _)| *k == name)
                .map(|(_, v)| v.to_string())
        }
    }

    #[test]
    fn shards_come_from_the_command_line_or_the_scheduler() {
        let none = env(&[]);
        assert_eq!(
            Shard::parse("2/3", &none).unwrap(),
            Shard { index: 2, count: 3 }
        );
        for bad in ["0/3", "4/3", "2", "a/3", "2/0", "auto"] {
            assert!(Shard::parse(bad, &none).is_err(), "{bad}");
        }
        // Slurm numbers array tasks from --array's first value.
        let slurm = env(&[(SLURM_ID, "5"), (SLURM_MIN, "4"), (SLURM_COUNT, "3")]);
        assert_eq!(
            Shard::parse("auto", &slurm).unwrap(),
            Shard { index: 2, count: 3 }
        );
        let slurm_max = env(&[(SLURM_ID, "0"), (SLURM_MIN, "0"), (SLURM_MAX, "3")]);
        assert_eq!(
            Shard::parse("auto", &slurm_max).unwrap(),
            Shard { index: 1, count: 4 }
        );
        assert!(Shard::parse("auto/5", &slurm).is_err());
        // Kubernetes gives a 0-based index and the count comes from us.
        let k8s = env(&[(K8S_INDEX, "0")]);
        assert_eq!(
            Shard::parse("auto/4", &k8s).unwrap(),
            Shard { index: 1, count: 4 }
        );
        assert!(Shard::parse("auto", &k8s).is_err());
        let k8s_counted = env(&[(K8S_INDEX, "3"), (COUNT_VAR, "4")]);
        assert_eq!(
            Shard::parse("auto", &k8s_counted).unwrap(),
            Shard { index: 4, count: 4 }
        );
    }

    #[test]
    fn longest_first_balances_and_is_deterministic() {
        let costs = [5.0, 4.0, 3.0, 3.0, 3.0, 2.0, 2.0, 1.0];
        let owner = assign(&costs, 3);
        let mut load = [0.0; 3];
        for (i, &s) in owner.iter().enumerate() {
            load[s] += costs[i];
        }
        // 23 in all: the best split is 8, 8, 7; the rule finds 8, 8, 7 here.
        let mut sorted = load;
        sorted.sort_by(f64::total_cmp);
        assert_eq!(sorted, [7.0, 8.0, 8.0]);
        assert_eq!(owner, assign(&costs, 3));
        assert!(assign(&costs, 1).iter().all(|&s| s == 0));
    }
}
