//! The data stage: from a file on disk to the rows a fold trains on.
//!
//! It owns reading CSV ([`csv`]) and Parquet ([`parquet`]) into a
//! [`table::Table`], with the target
//! encoded as class indices (`target`); the bundled [`catalog`] and a
//! dataset's [`source`]; the train-split-only [`preprocess`]ing; the
//! stratified [`folds`]; the checks of [`inspect`]; outside
//! [`predictions`] files; and the synthetic [`demo`] scenario. It may
//! import only [`crate::common`].

pub mod catalog;
pub mod csv;
pub mod demo;
pub mod folds;
pub mod inspect;
pub mod parquet;
pub mod predictions;
pub mod preprocess;
pub mod source;
pub mod table;
mod target;
