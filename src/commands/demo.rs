//! `candor demo`: writes the invented parcel-delivery scenario's synthetic
//! files, so the tour runs without any data of one's own.

use super::{Output, Status};
use crate::common::defaults;
use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::data::demo;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The arguments of `candor demo`.
#[derive(Debug, Clone, clap::Args)]
pub struct DemoArgs {
    /// Rows to generate.
    #[arg(short = 'n', long, default_value_t = defaults::DEMO_ROWS)]
    pub rows: usize,
    /// Seed of the synthetic scenario; the same seed gives the same files.
    #[arg(short, long, default_value_t = defaults::SEED)]
    pub seed: u64,
    /// Folder for the two files: `deliveries.csv`, the model's predictions
    /// (late, region, p_late), and `parcels.csv`, the parcels' records
    /// (region, distance_km, rain, late) for `candor data add`.
    #[arg(short, long, value_name = "DIR", default_value = ".")]
    pub out: PathBuf,
}

/// Writes both files and states the model's true ECE, known by design.
pub fn execute(args: DemoArgs, out: &mut Output) -> Result<Status> {
    let generated = demo::generate(args.rows, args.seed);
    std::fs::create_dir_all(&args.out)
        .map_err(|e| Error::io(&args.out, "create the folder", &e))?;
    // Files in the current folder are named plainly, as the tour shows them.
    let place = |name: &str| {
        if args.out == Path::new(".") {
            PathBuf::from(name)
        } else {
            args.out.join(name)
        }
    };
    let predictions = place("deliveries.csv");
    let records = place("parcels.csv");
    write_atomic(&predictions, generated.csv().as_bytes())?;
    write_atomic(&records, generated.features_csv().as_bytes())?;
    let _ = writeln!(
        out.text,
        "{} parcels: the co-op model's predictions in {}, the parcels' records in {}; the model's true ECE ({} bins) is {:.4}",
        args.rows,
        predictions.display(),
        records.display(),
        defaults::BINS,
        demo::true_ece(defaults::BINS)
    );
    Ok(Status::Success)
}
