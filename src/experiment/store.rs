//! The results folder: per-cell records written atomically as they finish,
//! so a killed run loses nothing and a rerun picks up where it stopped.
//!
//! Layout under the results folder:
//! - `cells/<dataset>/<family>/r<repeat>-f<fold>.json`: one record per cell,
//!   each written to a temporary file and renamed into place;
//! - `records.jsonl`, `summary.csv` and `run.json`: written (atomically)
//!   once every cell is done.

use crate::common::error::{Error, Result};
use crate::common::files::write_json;
use crate::experiment::protocol::MethodResult;
use crate::experiment::shard::Shard;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

fn cannot_write(dir: &Path, e: std::io::Error) -> Error {
    Error::Io(format!(
        "{}: cannot write results there: {e}; choose another folder with --out",
        dir.display()
    ))
}

/// Creates the folder, checks that it can be written, and opens its lock.
fn open_writable(dir: &Path) -> Result<std::fs::File> {
    std::fs::create_dir_all(dir).map_err(|e| cannot_write(dir, e))?;
    let probe = dir.join(format!(".write-probe.{}", std::process::id()));
    std::fs::write(&probe, b"").map_err(|e| cannot_write(dir, e))?;
    std::fs::remove_file(&probe).map_err(|e| cannot_write(dir, e))?;
    lock_file(dir, ".candor.lock")
}

fn lock_file(dir: &Path, name: &str) -> Result<std::fs::File> {
    std::fs::OpenOptions::new()
        .create(true)
        .truncate(false)
        .write(true)
        .open(dir.join(name))
        .map_err(|e| cannot_write(dir, e))
}

/// The outcome of trying a lock on `dir`: `busy` says what holds it and
/// what to do.
fn hold(
    dir: &Path,
    attempt: std::result::Result<(), std::fs::TryLockError>,
    busy: &str,
) -> Result<()> {
    match attempt {
        Ok(()) => Ok(()),
        Err(std::fs::TryLockError::WouldBlock) => {
            Err(Error::Io(format!("{}: {busy}", dir.display())))
        }
        Err(std::fs::TryLockError::Error(e)) => Err(cannot_write(dir, e)),
    }
}

/// Everything known about one finished cell.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CellRecord {
    pub dataset: String,
    pub family: String,
    pub repeat: usize,
    pub fold: usize,
    /// Hash of every setting that can change this cell's numbers; a stored
    /// record is reused only while it matches.
    pub fingerprint: String,
    pub n_train: usize,
    pub n_test: usize,
    pub n_classes: usize,
    /// One result per calibration method, in manifest order.
    #[serde(default)]
    pub results: Vec<MethodResult>,
    /// Why the family could not be trained in this cell, if it could not.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

/// The results folder of one experiment.
pub struct Store {
    pub dir: PathBuf,
    /// Held for the life of the run so a second run on the same folder is
    /// refused instead of interleaving its writes. OS file locks, so a
    /// killed run leaves nothing stale behind and a rerun can resume: the
    /// folder's lock, exclusive for a whole run or a merge and shared by
    /// shards, and a shard's own lock, so each shard runs once at a time.
    _locks: Vec<std::fs::File>,
}

impl Store {
    /// Opens (creating if needed) a results folder for a whole run or a
    /// merge, and checks that it can be written, before any work is done.
    pub fn open(dir: &Path) -> Result<Store> {
        let folder = open_writable(dir)?;
        hold(
            dir,
            folder.try_lock(),
            "another candor run, shard or merge is writing to this results folder; wait for it to finish, or choose another folder with --out",
        )?;
        Ok(Store {
            dir: dir.to_path_buf(),
            _locks: vec![folder],
        })
    }

    /// Opens a results folder for one shard: other shards may write their
    /// own cells beside it, but not the same shard twice, nor a whole run
    /// or a merge.
    pub fn open_shard(dir: &Path, shard: Shard) -> Result<Store> {
        let folder = open_writable(dir)?;
        hold(
            dir,
            folder.try_lock_shared(),
            "a whole candor run or a merge is using this results folder; wait for it to finish before starting shards",
        )?;
        let own = lock_file(
            dir,
            &format!(".candor.shard-{}-of-{}.lock", shard.index, shard.count),
        )?;
        hold(
            dir,
            own.try_lock(),
            &format!(
                "shard {shard} is already running on this results folder; each shard runs once at a time"
            ),
        )?;
        Ok(Store {
            dir: dir.to_path_buf(),
            _locks: vec![folder, own],
        })
    }

    /// Where a cell's record lives.
    pub fn cell_path(&self, dataset: &str, family: &str, repeat: usize, fold: usize) -> PathBuf {
        self.dir
            .join("cells")
            .join(dataset)
            .join(family)
            .join(format!("r{repeat}-f{fold}.json"))
    }

    /// A stored record that can be reused: present, readable, matching the
    /// fingerprint and successful. Failed cells are retried.
    pub fn reusable(&self, path: &Path, fingerprint: &str) -> Option<CellRecord> {
        self.stored(path, fingerprint)
            .filter(|record| record.error.is_none())
    }

    /// A stored record with this fingerprint, failed or not: what a merge
    /// takes, since a whole run writes its failed cells too.
    pub fn stored(&self, path: &Path, fingerprint: &str) -> Option<CellRecord> {
        let text = std::fs::read_to_string(path).ok()?;
        let record: CellRecord = serde_json::from_str(&text).ok()?;
        (record.fingerprint == fingerprint).then_some(record)
    }

    /// Stores a finished cell.
    pub fn save(&self, path: &Path, record: &CellRecord) -> Result<()> {
        write_json(path, record)
    }
}
