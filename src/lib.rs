//! candor: choose a model family and a post-hoc calibration method for a
//! probability-estimation problem, and show repeatably how well calibrated
//! each choice is.
//!
//! The library holds everything; the `candor` binary only parses arguments
//! and maps each [`commands`] status to an exit code. The modules are the
//! pipeline's stages, and each imports only stages below it:
//!
//! 0. [`common`]: small shared helpers and types;
//! 1. [`data`], [`metrics`], [`export`]: tables in, numbers and files out;
//! 2. [`learner`], [`calibrate`]: model families and calibration methods;
//! 3. [`experiment`]: a manifest run as cells ([`experiment::runner::run`]);
//! 4. [`report`], 5. [`gate`], 6. [`commands`].
//!
//! Extension points are small registries: [`learner::FAMILIES`],
//! [`calibrate::METHODS`], [`metrics::METRICS`] and the
//! [`export::Exporter`] implementations. ARCHITECTURE.md in the repository
//! walks a manifest through the stages.

pub mod calibrate;
pub mod commands;
pub mod common;
pub mod data;
pub mod experiment;
pub mod export;
pub mod gate;
pub mod learner;
pub mod metrics;
pub mod report;

/// The version recorded in every output, so results can be traced to code.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
