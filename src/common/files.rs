//! Atomic file writes: a results folder, a baseline or a manifest is
//! either the old file or the new one, never a partial one, even when a run
//! is killed halfway.

use crate::common::error::{Error, Result};
use std::io::Write;
use std::path::Path;

/// Writes a file so that readers see either the old content or the new,
/// never a partial one: write a temporary sibling, flush it to disk, rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path.parent().unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, "create the folder", &e))?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let write = || -> std::io::Result<()> {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    };
    write().map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::io(path, "write", &e)
    })
}
