//! `candor data add`: appends a dataset entry to a manifest, creating a
//! small commented manifest when there is none yet, so adding an in-house
//! dataset is one command.

use super::manifest::{check_class_counts, parse, ManifestSource};
use crate::common::checksum::hex_sha256;
use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::data::csv::CsvFormat;
use crate::data::table::Table;
use std::path::{Component, Path, PathBuf};

/// The dataset entry to add, as the user described it.
pub struct NewDataset<'a> {
    pub file: &'a Path,
    /// The entry's name [default: from the file name].
    pub name: Option<&'a str>,
    pub target: &'a str,
    pub positive: Option<&'a str>,
    pub format: &'a CsvFormat,
    pub exclude: &'a [String],
}

/// A new manifest's text: the dataset entry is appended below it. Two
/// families and three methods make it a useful first comparison; the
/// comments say how to grow it.
fn starter(name: &str) -> String {
    format!(
        "# Written by `candor data add`. Add datasets with more `candor data add`\n# commands, families and methods below (`candor list families`,\n# `candor list methods`), then run it with `candor run` on this file.\nname = {}\nseed = 0\ncalibrators = [\"platt\", \"isotonic\", \"beta\"]\n\n[[family]]\nname = \"logistic\"\n\n[[family]]\nname = \"gradient_boosting\"\n",
        toml::Value::String(name.to_string())
    )
}

/// The path from folder `from` to `to`, both absolute: `..` steps up to
/// their common ancestor, then down, so the manifest can move with its data.
fn relative(from: &Path, to: &Path) -> PathBuf {
    let a: Vec<Component> = from.components().collect();
    let b: Vec<Component> = to.components().collect();
    let common = a.iter().zip(&b).take_while(|(x, y)| x == y).count();
    if common == 0 {
        return to.to_path_buf();
    }
    let mut out = PathBuf::new();
    for _ in common..a.len() {
        out.push("..");
    }
    for c in &b[common..] {
        out.push(c.as_os_str());
    }
    out
}

/// A manifest-safe name from a file name.
fn name_from(file: &Path) -> String {
    let stem = file
        .file_name()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_default();
    let stem = stem
        .trim_end_matches(".gz")
        .trim_end_matches(".csv")
        .trim_end_matches(".tsv")
        .trim_end_matches(".parquet")
        .trim_end_matches(".toml");
    let clean: String = stem
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' || c == '-' {
                c
            } else {
                '_'
            }
        })
        .take(64)
        .collect();
    if clean.is_empty() {
        "dataset".to_string()
    } else {
        clean
    }
}

/// Appends a `[[dataset]]` entry for a CSV to a manifest, keeping the
/// file's text (comments, layout) as it is, after checking that the data
/// meet the manifest's fold counts and that the result still parses. A
/// missing manifest is created. The path is written relative to the
/// manifest's folder. Returns the entry's name.
pub fn append_dataset(manifest: &Path, new: &NewDataset<'_>, table: &Table) -> Result<String> {
    let old = if manifest.exists() {
        std::fs::read_to_string(manifest).map_err(|e| {
            Error::Manifest(format!(
                "{}: cannot read the manifest: {e}; check the path",
                manifest.display()
            ))
        })?
    } else {
        starter(&name_from(manifest))
    };
    let name = new.name.map_or_else(|| name_from(new.file), str::to_string);
    // Names already used, from a light reading: the manifest may not
    // list any dataset yet, which a full check would refuse.
    let used: Vec<String> = toml::from_str::<toml::Value>(&old)
        .ok()
        .and_then(|v| v.get("dataset").and_then(|d| d.as_array()).cloned())
        .unwrap_or_default()
        .iter()
        .filter_map(|d| d.get("name").and_then(|n| n.as_str()).map(str::to_string))
        .collect();
    if used.contains(&name) {
        return Err(Error::Manifest(format!(
            "{}: a dataset named `{name}` is already listed; choose another name with --name",
            manifest.display()
        )));
    }
    let abs = |p: &Path| std::fs::canonicalize(p).map_err(|e| Error::io(p, "find", &e));
    let data = abs(new.file)?;
    let dir = match manifest.parent() {
        Some(d) if !d.as_os_str().is_empty() => {
            std::fs::create_dir_all(d).map_err(|e| Error::io(d, "create the folder", &e))?;
            abs(d)?
        }
        _ => abs(Path::new("."))?,
    };
    let shown = relative(&dir, &data);
    let q = |s: &str| toml::Value::String(s.to_string()).to_string();
    let mut block = format!(
        "\n[[dataset]]\nname = {}\npath = {}\ntarget = {}\n",
        q(&name),
        q(&shown.to_string_lossy()),
        q(new.target)
    );
    if let Some(p) = new.positive {
        block.push_str(&format!("positive = {}\n", q(p)));
    }
    if !new.exclude.is_empty() {
        let names: Vec<String> = new.exclude.iter().map(|c| q(c)).collect();
        block.push_str(&format!("exclude = [{}]\n", names.join(", ")));
    }
    if new.format.delimiter != b',' {
        let d = if new.format.delimiter == b'\t' {
            "tab".to_string()
        } else {
            char::from(new.format.delimiter).to_string()
        };
        block.push_str(&format!("delimiter = {}\n", q(&d)));
    }
    if new.format.decimal_comma {
        block.push_str("decimal = \",\"\n");
    }
    let mut text = old;
    if !text.ends_with('\n') && !text.is_empty() {
        text.push('\n');
    }
    text.push_str(&block);
    let exp = parse(ManifestSource {
        path: manifest.to_path_buf(),
        sha256: hex_sha256(text.as_bytes()),
        text: text.clone(),
    })?;
    let mut checked = table.clone();
    checked.name = name.clone();
    checked
        .exclude(new.exclude)
        .map_err(|m| Error::Manifest(format!("--exclude: {m}")))?;
    check_class_counts(&checked, &exp.evaluation)?;
    write_atomic(manifest, text.as_bytes())?;
    Ok(name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_step_up_to_the_common_folder() {
        assert_eq!(
            relative(Path::new("/w/p/experiments"), Path::new("/w/p/parcels.csv")),
            PathBuf::from("../parcels.csv")
        );
        assert_eq!(
            relative(Path::new("/w/p"), Path::new("/w/p/data/a.csv")),
            PathBuf::from("data/a.csv")
        );
    }
}
