//! `candor demo`: writes the invented parcel-delivery scenario's synthetic
//! files, so the tour runs without any data of one's own.

use super::{Output, Status};
use crate::common::error::Result;
use crate::common::files::write_atomic;
use crate::data::demo;
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor demo`.
#[derive(Debug, Clone, clap::Args)]
pub struct DemoArgs {
    /// Rows to generate.
    #[arg(long, default_value_t = 5000)]
    pub rows: usize,
    /// Seed of the synthetic scenario; the same seed gives the same files.
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// The model's predictions (late, region, p_late).
    #[arg(long, default_value = "deliveries.csv")]
    pub out: PathBuf,
    /// The parcels' records (region, distance_km, rain, late), for
    /// `candor data add` and training families.
    #[arg(long, default_value = "parcels.csv")]
    pub features: PathBuf,
}

/// Writes both files and states the model's true ECE, known by design.
pub fn execute(args: DemoArgs, out: &mut Output) -> Result<Status> {
    let generated = demo::generate(args.rows, args.seed);
    write_atomic(&args.out, generated.csv().as_bytes())?;
    write_atomic(&args.features, generated.features_csv().as_bytes())?;
    let _ = writeln!(
        out.text,
        "{} parcels: the co-op model's predictions in {}, the parcels' records in {}; the model's true ECE (15 bins) is {:.4}",
        args.rows,
        args.out.display(),
        args.features.display(),
        demo::true_ece(15)
    );
    Ok(Status::Success)
}
