//! The plan of a run: which cells an experiment implies, the outer splits
//! they share and the fingerprint that says when a stored cell is still
//! valid. Everything here is a pure function of the manifest and the data,
//! which is what makes results independent of thread count and cell order.

use crate::common::checksum::hex_sha256;
use crate::common::rng::derive_seed;
use crate::data::folds;
use crate::data::source::DatasetSpec;
use crate::data::table::Table;
use crate::experiment::manifest::{Experiment, FamilySpec};
use crate::learner;
use serde::Serialize;

/// One unit of work: a family fitted and evaluated on one outer fold of
/// one repeat of one dataset, with indices into the experiment's lists.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Cell {
    pub dataset: usize,
    pub family: usize,
    pub repeat: usize,
    pub fold: usize,
}

/// Every cell, dataset by dataset, family by family, repeat by repeat and
/// fold by fold: the order results are written in.
pub fn cells(exp: &Experiment) -> Vec<Cell> {
    let eval = exp.evaluation;
    let mut cells = Vec::new();
    for dataset in 0..exp.datasets.len() {
        for family in 0..exp.families.len() {
            for repeat in 0..eval.repeats {
                for fold in 0..eval.outer_folds {
                    cells.push(Cell {
                        dataset,
                        family,
                        repeat,
                        fold,
                    });
                }
            }
        }
    }
    cells
}

/// The outer folds of every dataset and repeat, indexed `[dataset][repeat]`.
/// They depend on the dataset and repeat only, so every family is evaluated
/// on the same splits.
pub fn outer_folds(exp: &Experiment, tables: &[Table]) -> Vec<Vec<Vec<usize>>> {
    let eval = exp.evaluation;
    tables
        .iter()
        .map(|t| {
            (0..eval.repeats)
                .map(|r| {
                    let seed = derive_seed(exp.seed, &["outer", &t.name, &r.to_string()]);
                    folds::assign(
                        &t.labels,
                        t.groups.as_deref(),
                        t.order.as_deref(),
                        t.n_classes(),
                        eval.outer_folds,
                        seed,
                    )
                })
                .collect()
        })
        .collect()
}

/// The settings that can change one (dataset, family) pair's cells. The
/// repeat count is left out: adding repeats adds cells but changes none.
#[derive(Serialize)]
struct FingerprintInput<'a> {
    candor_version: &'a str,
    seed: u64,
    outer_folds: usize,
    inner_folds: usize,
    bins: usize,
    hl_groups: usize,
    bootstrap: usize,
    bootstrap_seed: u64,
    dataset: &'a DatasetSpec,
    data_sha256: &'a str,
    family: &'a FamilySpec,
    /// Left out at zero, so cells made before revisions existed keep their
    /// fingerprints.
    #[serde(skip_serializing_if = "is_zero")]
    family_revision: u32,
    methods: &'a [String],
    /// The methods whose revision is above zero, with it (left out when
    /// none is, for the same reason as the family's).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    method_revisions: Vec<(&'a str, u32)>,
    /// The encoding's revision, left out at zero like the others.
    #[serde(skip_serializing_if = "is_zero")]
    preprocessing_revision: u32,
    calibration: &'a crate::calibrate::Settings,
    metrics: &'a [String],
}

fn is_zero(n: &u32) -> bool {
    *n == 0
}

/// The fingerprint of each (dataset, family) pair, indexed
/// `[dataset][family]`: a stored cell is reused only when it matches.
pub fn fingerprints(exp: &Experiment, tables: &[Table]) -> Vec<Vec<String>> {
    (0..tables.len())
        .map(|d| {
            (0..exp.families.len())
                .map(|f| fingerprint(exp, d, f, &tables[d]))
                .collect()
        })
        .collect()
}

fn fingerprint(exp: &Experiment, d: usize, f: usize, table: &Table) -> String {
    let input = FingerprintInput {
        candor_version: crate::VERSION,
        seed: exp.seed,
        outer_folds: exp.evaluation.outer_folds,
        inner_folds: exp.evaluation.inner_folds,
        bins: exp.evaluation.bins,
        hl_groups: exp.evaluation.hl_groups,
        bootstrap: exp.evaluation.bootstrap,
        bootstrap_seed: exp.evaluation.bootstrap_seed,
        dataset: &exp.datasets[d],
        data_sha256: &table.sha256,
        family: &exp.families[f],
        family_revision: learner::find(&exp.families[f].kind).map_or(0, |k| k.revision),
        methods: &exp.methods,
        method_revisions: exp
            .methods
            .iter()
            .filter_map(|m| {
                let revision = crate::calibrate::find(m)?.revision;
                (revision > 0).then_some((m.as_str(), revision))
            })
            .collect(),
        preprocessing_revision: crate::data::preprocess::REVISION,
        calibration: &exp.calibration,
        metrics: &exp.metrics,
    };
    let json = serde_json::to_vec(&input).unwrap_or_default();
    hex_sha256(&json)[..16].to_string()
}
