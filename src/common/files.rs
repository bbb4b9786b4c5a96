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

/// Writes a value as pretty JSON with a final newline, atomically: cell
/// records, shard statuses, `run.json` and saved maps are all read back by
/// a later command, so none may be left half-written.
pub fn write_json(path: &Path, value: &impl serde::Serialize) -> Result<()> {
    let mut text = serde_json::to_string_pretty(value)
        .map_err(|e| Error::Io(format!("{}: cannot encode: {e}", path.display())))?;
    text.push('\n');
    write_atomic(path, text.as_bytes())
}

/// Checks, without creating anything that stays, that a folder could be
/// made or written at `dir`: the folder itself if it exists, else its
/// nearest existing ancestor. So `candor check` can refuse an output
/// folder in seconds, as a run would before its first cell.
pub fn check_writable_dir(dir: &Path) -> Result<()> {
    let fail = |why: String| {
        Error::Io(format!(
            "{}: cannot write results there: {why}; choose another folder with --out",
            dir.display()
        ))
    };
    let mut at = dir;
    while !at.exists() {
        match at.parent() {
            Some(p) if !p.as_os_str().is_empty() => at = p,
            _ => {
                at = Path::new(".");
                break;
            }
        }
    }
    if !at.is_dir() {
        return Err(fail(format!("{} is not a folder", at.display())));
    }
    let probe = at.join(format!(".candor-probe.{}", std::process::id()));
    std::fs::File::create(&probe)
        .map_err(|e| fail(e.to_string()))
        .map(|_| {
            let _ = std::fs::remove_file(&probe);
        })
}
