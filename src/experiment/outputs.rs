//! The result files a finished run leaves beside its cells: every record
//! stamped with the manifest's checksum (`records.jsonl`), the summary
//! table (`summary.csv`) and what was run on what (`run.json`). Each is
//! written atomically, so a reader never sees half a file.

use crate::common::error::{Error, Result};
use crate::common::files::{write_atomic, write_json};
use crate::data::source::DataSource;
use crate::data::table::Table;
use crate::experiment::manifest::Experiment;
use crate::experiment::store::{CellRecord, Store};
use crate::experiment::summary::Summary;
use crate::export::{Csv, Exporter};
use serde::Serialize;

#[derive(Serialize)]
struct StampedRecord<'a> {
    #[serde(flatten)]
    record: &'a CellRecord,
    manifest_sha256: &'a str,
    candor_version: &'a str,
}

#[derive(Serialize)]
struct DatasetInfo<'a> {
    name: &'a str,
    source: &'a DataSource,
    sha256: &'a str,
    rows: usize,
    features: usize,
    classes: &'a [String],
    class_counts: Vec<usize>,
}

#[derive(Serialize)]
struct RunInfo<'a> {
    experiment: &'a str,
    candor_version: &'a str,
    manifest_sha256: &'a str,
    manifest: &'a str,
    settings: &'a Experiment,
    datasets: Vec<DatasetInfo<'a>>,
    cells: usize,
    failed_cells: usize,
}

/// Writes the three result files into the store's folder.
pub fn write(
    exp: &Experiment,
    store: &Store,
    tables: &[Table],
    records: &[CellRecord],
    summary: &Summary,
) -> Result<()> {
    let encode = |e: serde_json::Error| Error::Io(format!("cannot encode results: {e}"));
    let mut jsonl = String::new();
    for record in records {
        let line = serde_json::to_string(&StampedRecord {
            record,
            manifest_sha256: &exp.source.sha256,
            candor_version: crate::VERSION,
        })
        .map_err(encode)?;
        jsonl.push_str(&line);
        jsonl.push('\n');
    }
    write_atomic(&store.dir.join("records.jsonl"), jsonl.as_bytes())?;
    write_atomic(
        &store.dir.join("summary.csv"),
        Csv.render(&summary.table()).as_bytes(),
    )?;
    let info = RunInfo {
        experiment: &exp.name,
        candor_version: crate::VERSION,
        manifest_sha256: &exp.source.sha256,
        manifest: &exp.source.text,
        settings: exp,
        datasets: tables
            .iter()
            .zip(&exp.datasets)
            .map(|(t, spec)| DatasetInfo {
                name: &t.name,
                source: &spec.source,
                sha256: &t.sha256,
                rows: t.rows(),
                features: t.columns.len(),
                classes: &t.classes,
                class_counts: t.class_counts(),
            })
            .collect(),
        cells: records.len(),
        failed_cells: records.iter().filter(|r| r.error.is_some()).count(),
    };
    write_json(&store.dir.join("run.json"), &info)
}
