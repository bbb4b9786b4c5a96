//! Small helpers every stage may use: the error type, seeds, numerics,
//! declared parameters, the result table, checksums, atomic file writes and
//! the scores a model emits.
//!
//! This is the bottom of the pipeline: nothing here imports any other part
//! of candor, so every stage above can depend on it without a cycle.

pub mod checksum;
pub mod defaults;
pub mod error;
pub mod files;
pub mod glm;
pub mod math;
pub mod params;
pub mod rng;
pub mod scores;
pub mod stats;
pub mod table;
