//! The catalog of bundled open datasets (`datasets/catalog.json`).
//!
//! A manifest names a bundled dataset by its `id`; the catalog supplies the
//! file, the target column, the default positive class and the SHA-256 that
//! every load verifies, so a corrupted or edited copy is never benchmarked
//! silently.

use crate::common::error::{Error, Result};
use serde::Deserialize;
use std::path::{Path, PathBuf};

/// The catalog file's name inside a datasets folder.
pub const CATALOG_FILE: &str = "catalog.json";

/// One bundled dataset. The catalog holds more provenance fields (package,
/// original source, licence notes); only those the runner needs are read.
#[derive(Debug, Clone, Deserialize)]
pub struct Entry {
    pub id: String,
    pub file: String,
    pub task: String,
    pub name: String,
    pub license: String,
    pub target: String,
    pub positive: Option<String>,
    pub rows: usize,
    pub sha256: String,
    #[serde(default)]
    pub n_features: usize,
    #[serde(default)]
    pub n_classes: usize,
    /// Share of rows in the rarest class.
    #[serde(default)]
    pub minority_share: f64,
}

/// A loaded catalog and the folder its files live in.
#[derive(Debug, Clone)]
pub struct Catalog {
    pub dir: PathBuf,
    pub entries: Vec<Entry>,
}

impl Catalog {
    /// Reads `catalog.json` from a datasets folder.
    pub fn open(dir: &Path) -> Result<Catalog> {
        let path = dir.join(CATALOG_FILE);
        let text = std::fs::read_to_string(&path).map_err(|e| Error::io(&path, "read", &e))?;
        let entries: Vec<Entry> = serde_json::from_str(&text).map_err(|e| {
            Error::Data(format!(
                "{}:{}:{}: the catalog is malformed: {e}; restore it from version control",
                path.display(),
                e.line(),
                e.column()
            ))
        })?;
        Ok(Catalog {
            dir: dir.to_path_buf(),
            entries,
        })
    }

    /// Finds the catalog for a manifest: `explicit` if given, else the first
    /// `datasets/catalog.json` found walking up from the manifest's folder,
    /// else the one in the source tree candor was built from.
    pub fn locate(explicit: Option<&Path>, manifest_dir: &Path) -> Result<Catalog> {
        if let Some(dir) = explicit {
            return Catalog::open(dir);
        }
        let start = manifest_dir
            .canonicalize()
            .unwrap_or_else(|_| manifest_dir.to_path_buf());
        for dir in start.ancestors() {
            let candidate = dir.join("datasets");
            if candidate.join(CATALOG_FILE).is_file() {
                return Catalog::open(&candidate);
            }
        }
        let built_in = Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets");
        if built_in.join(CATALOG_FILE).is_file() {
            return Catalog::open(&built_in);
        }
        Err(Error::Data(format!(
            "no datasets/{CATALOG_FILE} found above {}; pass --datasets DIR to point at the bundled datasets",
            manifest_dir.display()
        )))
    }

    /// Looks up an entry by id; the error lists the ids.
    pub fn get(&self, id: &str) -> Result<&Entry> {
        self.entries.iter().find(|e| e.id == id).ok_or_else(|| {
            let ids: Vec<&str> = self.entries.iter().map(|e| e.id.as_str()).collect();
            Error::Data(format!(
                "no bundled dataset `{id}`; bundled ids: {}",
                ids.join(", ")
            ))
        })
    }

    /// Reads an entry's file and checks its SHA-256 against the catalog.
    pub fn read_verified(&self, entry: &Entry) -> Result<Vec<u8>> {
        let path = self.dir.join(&entry.file);
        let bytes = std::fs::read(&path).map_err(|e| Error::io(&path, "read", &e))?;
        let actual = crate::common::checksum::hex_sha256(&bytes);
        if actual != entry.sha256 {
            return Err(Error::Data(format!(
                "{}: checksum mismatch (expected {}, found {actual}); the bundled file was changed or damaged, restore it with `git checkout -- {}`",
                path.display(),
                entry.sha256,
                path.display()
            )));
        }
        Ok(bytes)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bundled() -> Catalog {
        Catalog::open(&Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets")).unwrap()
    }

    #[test]
    fn every_bundled_file_matches_its_published_checksum() {
        // datasets/SHA256SUMS holds the checksums published with the open
        // datasets; the catalog must agree with that file.
        let cat = bundled();
        let sums = std::fs::read_to_string(cat.dir.join("SHA256SUMS")).unwrap();
        assert_eq!(cat.entries.len(), sums.lines().count());
        for e in &cat.entries {
            assert!(
                sums.lines()
                    .any(|l| l == format!("{}  {}", e.sha256, e.file)),
                "{} disagrees with SHA256SUMS",
                e.id
            );
            cat.read_verified(e).unwrap();
        }
    }

    #[test]
    fn a_changed_file_fails_its_checksum() {
        let dir = tempfile::tempdir().unwrap();
        let mut cat = bundled();
        let entry = cat.get("iris").unwrap().clone();
        let mut bytes = std::fs::read(cat.dir.join(&entry.file)).unwrap();
        bytes[100] ^= 1;
        std::fs::write(dir.path().join(&entry.file), bytes).unwrap();
        cat.dir = dir.path().to_path_buf();
        let err = cat.read_verified(&entry).unwrap_err().to_string();
        assert!(err.contains("checksum mismatch"), "{err}");
    }
}
