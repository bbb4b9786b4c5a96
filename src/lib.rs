//! candor: choose a model family and a post-hoc calibration method for a
//! probability-estimation problem, and show repeatably how well calibrated
//! each choice is.
//!
//! The library holds everything; the `candor` binary is a thin command line
//! over [`experiment::manifest::load`] and [`experiment::runner::run`]. Extension points are small
//! registries: [`learner::FAMILIES`], [`calibrate::METHODS`],
//! [`metrics::METRICS`] and the [`export::Exporter`] implementations.

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

pub use common::error::{Error, Result};

/// The version recorded in every output, so results can be traced to code.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
