//! The experiment stage: what turns a manifest into stored, summarised cells.
//!
//! A manifest ([`manifest`]) names datasets, families, methods and metrics;
//! the runner ([`runner`]) plans one cell per dataset × family × outer fold,
//! runs each cell's cross-fitted protocol ([`protocol`]) in parallel, keeps
//! finished cells in the store ([`store`]) and tabulates them ([`summary`]).
//! [`score`] applies the same bookkeeping to predictions made elsewhere;
//! [`add`] appends an in-house dataset to a manifest.
//!
//! May import `common`, `data`, `learner`, `calibrate`, `metrics` and
//! `export`; never `report`, `gate` or `commands`, which build on it.

pub mod add;
pub mod manifest;
pub mod merge;
pub mod outputs;
pub mod plan;
pub mod protocol;
pub mod runner;
pub mod score;
pub mod shard;
pub mod store;
pub mod summary;
