//! Assembling a sharded run: once every shard has stored its cells in the
//! shared results folder, the merge checks that every cell the manifest
//! implies is there with this manifest's fingerprint, then writes the same
//! `records.jsonl`, `summary.csv` and `run.json` a single run would have
//! written, byte for byte (the cells are read back in plan order, and a
//! cell's record is the same whichever process computed it).

use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::experiment::manifest::{self, Experiment};
use crate::experiment::outputs;
use crate::experiment::plan;
use crate::experiment::runner::{self, load_datasets, shard_costs, RunReport};
use crate::experiment::shard::{self, Shard};
use crate::experiment::store::Store;
use crate::experiment::summary::summarise;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Where and what to merge.
#[derive(Debug, Clone)]
pub struct MergeOptions {
    /// The shared results folder.
    pub out_dir: PathBuf,
    /// The manifest; by default the one the shards recorded.
    pub manifest: Option<PathBuf>,
    /// The bundled datasets folder, if not found next to the manifest.
    pub datasets_dir: Option<PathBuf>,
}

/// A cell the merge did not find, and the shard that owns it.
#[derive(Debug, Clone, PartialEq)]
pub struct Missing {
    /// `dataset/family repeat R fold F`.
    pub cell: String,
    pub shard: Option<Shard>,
}

/// What a merge found.
pub enum Merged {
    /// Every cell is in: the result files are written.
    Complete {
        experiment: Box<Experiment>,
        report: Box<RunReport>,
        shards: Vec<shard::Status>,
    },
    /// Some cells are missing; nothing was written.
    Incomplete {
        missing: Vec<Missing>,
        /// The manifest the shards ran, for the command that reruns one.
        manifest: PathBuf,
    },
}

/// Merges the shards' cells in a results folder.
pub fn merge(opts: &MergeOptions) -> Result<Merged> {
    let store = Store::open(&opts.out_dir)?;
    let shards = shard::Status::load_all(&store.dir)?;
    let exp = manifest::load(&manifest_path(opts, &shards)?)?;
    let counts: Vec<usize> = shards.iter().map(|s| s.shard.count).collect();
    if counts.windows(2).any(|w| w[0] != w[1]) {
        return Err(Error::Data(format!(
            "{}: shards of different divisions ({}) wrote here; delete `shards/` and the cells of the stale division, or merge into a fresh folder",
            store.dir.display(),
            shards.iter().map(|s| s.shard.to_string()).collect::<Vec<_>>().join(", ")
        )));
    }
    if let Some(stale) = shards
        .iter()
        .find(|s| s.manifest_sha256 != exp.source.sha256)
    {
        return Err(Error::Data(format!(
            "{}: shard {} ran another version of the manifest (SHA-256 {}…, now {}…); rerun it",
            store.dir.display(),
            stale.shard,
            &stale.manifest_sha256[..12.min(stale.manifest_sha256.len())],
            &exp.source.sha256[..12]
        )));
    }
    let tables = load_datasets(&exp, opts.datasets_dir.as_deref())?;
    let fingerprints = plan::fingerprints(&exp, &tables);
    let cells = plan::cells(&exp);
    let owner = counts
        .first()
        .map(|&n| (n, shard::assign(&shard_costs(&exp, &tables, &cells), n)));
    let mut records = Vec::with_capacity(cells.len());
    let mut missing = Vec::new();
    for (i, c) in cells.iter().enumerate() {
        let (table, family) = (&tables[c.dataset], &exp.families[c.family]);
        let path = store.cell_path(&table.name, &family.name, c.repeat, c.fold);
        match store.stored(&path, &fingerprints[c.dataset][c.family]) {
            Some(record) => records.push(record),
            None => missing.push(Missing {
                cell: format!(
                    "{}/{} repeat {} fold {}",
                    table.name, family.name, c.repeat, c.fold
                ),
                shard: owner.as_ref().map(|(n, o)| Shard {
                    index: o[i] + 1,
                    count: *n,
                }),
            }),
        }
    }
    if !missing.is_empty() {
        return Ok(Merged::Incomplete {
            missing,
            manifest: exp.source.path.clone(),
        });
    }
    let summary = summarise(&exp, &records);
    outputs::write(&exp, &store, &tables, &records, &summary)?;
    if !shards.is_empty() {
        write_atomic(
            &store.dir.join("shards").join("balance.md"),
            balance_table(&shards).as_bytes(),
        )?;
    }
    Ok(Merged::Complete {
        report: Box::new(RunReport {
            summary,
            computed: 0,
            reused: records.len(),
            failures: runner::failures(&records),
            fallbacks: runner::fallbacks(&records),
            warnings: tables.iter().flat_map(|t| t.warnings.clone()).collect(),
            shard: None,
        }),
        experiment: Box::new(exp),
        shards,
    })
}

/// The manifest to merge: given, or the one every shard recorded.
fn manifest_path(opts: &MergeOptions, shards: &[shard::Status]) -> Result<PathBuf> {
    if let Some(m) = &opts.manifest {
        return Ok(m.clone());
    }
    let Some(first) = shards.first() else {
        return Err(Error::Data(format!(
            "{}: no shard has finished here (no `shards/*.json`); run the shards first with `candor run MANIFEST --out {} --shard I/N`, or name the manifest with --manifest",
            opts.out_dir.display(),
            opts.out_dir.display()
        )));
    };
    if let Some(other) = shards.iter().find(|s| s.manifest != first.manifest) {
        return Err(Error::Data(format!(
            "{}: shards ran different manifests ({} and {}); name the one to merge with --manifest",
            opts.out_dir.display(),
            first.manifest.display(),
            other.manifest.display()
        )));
    }
    Ok(first.manifest.clone())
}

/// Each shard's estimated and measured cost, as Markdown: how well the
/// estimate divided the work.
pub fn balance_table(shards: &[shard::Status]) -> String {
    let total_estimate: f64 = shards.iter().map(|s| s.estimated_seconds).sum();
    let total_measured: f64 = shards.iter().map(|s| s.measured_seconds).sum();
    let mut out = String::from(
        "## Shards: estimated and measured cost\n\n- Estimated: the cost model that divided the cells (rows × columns × a per-family factor, plus the bootstrap), in seconds on the machine it was measured on. Measured: wall-clock seconds of each shard's last run (cells it reused cost nearly nothing).\n\n| shard | cells | estimated_s | estimated_share | measured_s | measured_share | computed | reused | failed |\n|---|---|---|---|---|---|---|---|---|\n",
    );
    let share = |v: f64, total: f64| if total > 0.0 { v / total } else { 0.0 };
    for s in shards {
        let _ = writeln!(
            out,
            "| {} | {} | {:.1} | {:.3} | {:.1} | {:.3} | {} | {} | {} |",
            s.shard,
            s.cells,
            s.estimated_seconds,
            share(s.estimated_seconds, total_estimate),
            s.measured_seconds,
            share(s.measured_seconds, total_measured),
            s.computed,
            s.reused,
            s.failed
        );
    }
    out
}
