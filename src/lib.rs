//! candor: choose a model family and a post-hoc calibration method for a
//! probability-estimation problem, and show repeatably how well calibrated
//! each choice is.
//!
//! The library holds everything; the `candor` binary is a thin command line
//! over [`manifest::load`] and [`runner::run`]. Extension points are small
//! registries: [`learner::FAMILIES`], [`calibrate::METHODS`],
//! [`metrics::METRICS`] and the [`export::Exporter`] implementations.

pub mod calibrate;
pub mod common;
pub mod data;
pub mod export;
pub mod gate;
pub mod learner;
pub mod manifest;
pub mod metrics;
pub mod protocol;
pub mod report;
pub mod runner;
pub mod score;
pub mod store;
pub mod summary;

pub use common::error::{Error, Result};

/// The version recorded in every output, so results can be traced to code.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
