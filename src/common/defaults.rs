//! The defaults every command and the manifest share, in one place, so that
//! `candor score` on a file and a manifest run of the same data use the same
//! seed, folds, bins and bootstrap unless told otherwise.

/// The experiment seed: fold splits, model seeds and bootstrap resamples all
/// derive from it.
pub const SEED: u64 = 0;
/// K in the outer stratified K-fold (the folds results are measured on).
pub const OUTER_FOLDS: usize = 5;
/// M, the folds that cross-fit the calibration scores inside each outer
/// training split.
pub const INNER_FOLDS: usize = 5;
/// How many times the outer K-fold is repeated with new shuffles.
pub const REPEATS: usize = 1;
/// Equal-width bins for ECE and the reliability diagrams.
pub const BINS: usize = 15;
/// Groups for the Hosmer-Lemeshow test.
pub const HL_GROUPS: usize = 10;
/// Bootstrap resamples per test fold for the ECE and Brier intervals.
pub const BOOTSTRAP: usize = 1000;
/// Rows of the demo scenario.
pub const DEMO_ROWS: usize = 5000;
