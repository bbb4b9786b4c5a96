//! The experiment manifest: a TOML file naming the datasets, model families,
//! calibration methods, metrics and evaluation protocol.
//!
//! Parsing is strict: unknown keys, wrong types, duplicate names, unknown
//! families, methods or metrics and out-of-range settings are rejected with
//! `file:line:column: message`, where the message says what is allowed.
//! See the README's manifest reference for every key.

use crate::common::checksum::hex_sha256;
use crate::common::defaults;
use crate::common::error::{Error, Result};
use crate::common::params::{self, Params};
use crate::data::csv::CsvFormat;
use crate::data::folds::class_fits_folds;
use crate::data::source::{DataSource, DatasetSpec};
use crate::data::table::{LevelCap, Table};
use crate::learner::program::{self, ModelFile, ProgramSpec};
use crate::learner::Build;
use crate::{calibrate, learner, metrics};
use serde::{Deserialize, Serialize};
use std::cell::RefCell;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use toml::Spanned;

/// A checked experiment, ready to run. It is recorded in `run.json`, and
/// read back from there by the report, so a results folder describes itself.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Experiment {
    /// Names the results folder and every report.
    pub name: String,
    /// The experiment seed; every fold split and model seed derives from it.
    pub seed: u64,
    pub evaluation: Evaluation,
    pub datasets: Vec<DatasetSpec>,
    pub families: Vec<FamilySpec>,
    /// Calibration methods, always starting with `none` (the raw row).
    pub methods: Vec<String>,
    /// Settings of the calibration methods.
    pub calibration: crate::calibrate::Settings,
    pub metrics: Vec<String>,
    /// The file this came from, its text and hash.
    #[serde(skip)]
    pub source: ManifestSource,
}

/// The manifest file as read, kept so every output can record it.
#[derive(Debug, Clone, Default)]
pub struct ManifestSource {
    pub path: PathBuf,
    pub text: String,
    /// SHA-256 of the file's bytes, hex.
    pub sha256: String,
}

impl ManifestSource {
    /// The folder relative paths in the manifest are resolved against.
    pub fn dir(&self) -> &Path {
        self.path.parent().unwrap_or(Path::new("."))
    }
}

/// The evaluation protocol.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Evaluation {
    /// K in the outer stratified K-fold.
    pub outer_folds: usize,
    /// R, how many times the outer K-fold is repeated with new shuffles.
    pub repeats: usize,
    /// M, the stratified folds used to cross-fit out-of-fold calibration
    /// scores inside each outer training split.
    pub inner_folds: usize,
    /// Bins for binned metrics such as ECE.
    pub bins: usize,
    /// Groups for the Hosmer-Lemeshow test.
    pub hl_groups: usize,
    /// Bootstrap resamples per test fold for the ECE and Brier intervals;
    /// 0 turns the intervals off.
    pub bootstrap: usize,
    /// Seeds the bootstrap resamples (with each cell's identity).
    pub bootstrap_seed: u64,
}

/// One model family entry.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct FamilySpec {
    /// The label used in tables and result paths.
    pub name: String,
    /// The registry kind, e.g. `logistic`.
    pub kind: String,
    /// Checked parameters with defaults filled in. Not read back from
    /// `run.json`: JSON cannot tell an integer parameter from a float one.
    #[serde(skip_deserializing)]
    pub params: Params,
    /// The program a `command` family runs; `None` for candor's own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub program: Option<ProgramSpec>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawManifest {
    name: Spanned<String>,
    seed: Option<Spanned<u64>>,
    calibrators: Option<Vec<Spanned<String>>>,
    metrics: Option<Vec<Spanned<String>>>,
    evaluation: Option<RawEvaluation>,
    calibration: Option<RawCalibration>,
    #[serde(default, rename = "dataset")]
    datasets: Vec<RawDataset>,
    #[serde(default, rename = "family")]
    families: Vec<RawFamily>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEvaluation {
    outer_folds: Option<Spanned<usize>>,
    repeats: Option<Spanned<usize>>,
    inner_folds: Option<Spanned<usize>>,
    bins: Option<Spanned<usize>>,
    hl_groups: Option<Spanned<usize>>,
    bootstrap: Option<Spanned<usize>>,
    bootstrap_seed: Option<Spanned<u64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCalibration {
    histogram_bins: Option<Spanned<usize>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDataset {
    name: Spanned<String>,
    bundled: Option<Spanned<String>>,
    path: Option<Spanned<String>>,
    target: Option<Spanned<String>>,
    positive: Option<Spanned<toml::Value>>,
    delimiter: Option<Spanned<String>>,
    decimal: Option<Spanned<String>>,
    exclude: Option<Vec<Spanned<String>>>,
    group: Option<Spanned<String>>,
    time: Option<Spanned<String>>,
    max_levels: Option<Spanned<usize>>,
    min_level_rows: Option<Spanned<usize>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFamily {
    name: Spanned<String>,
    kind: Option<Spanned<String>>,
    params: Option<BTreeMap<Spanned<String>, Spanned<toml::Value>>>,
    command: Option<Spanned<String>>,
    files: Option<Vec<Spanned<String>>>,
    env: Option<Spanned<BTreeMap<String, String>>>,
}

/// The default protocol (see [`defaults`]), with the bootstrap seeded by
/// the experiment seed.
pub fn default_evaluation(seed: u64) -> Evaluation {
    Evaluation {
        outer_folds: defaults::OUTER_FOLDS,
        repeats: defaults::REPEATS,
        inner_folds: defaults::INNER_FOLDS,
        bins: defaults::BINS,
        hl_groups: defaults::HL_GROUPS,
        bootstrap: defaults::BOOTSTRAP,
        bootstrap_seed: seed,
    }
}

/// Checks that every class has enough rows for the evaluation's fold
/// counts, before any training, so the run stops with the class named.
pub fn check_class_counts(table: &Table, eval: &Evaluation) -> Result<()> {
    let k = eval.outer_folds;
    let m = eval.inner_folds;
    if table.order.is_some() && eval.repeats > 1 {
        return Err(Error::Data(format!(
            "{}: dataset `{}` is time-ordered, so its folds are the same on every repeat; set `repeats = 1` in [evaluation]",
            table.source, table.name
        )));
    }
    if let Some(groups) = &table.groups {
        let mut distinct = groups.clone();
        distinct.sort_unstable();
        distinct.dedup();
        if distinct.len() < k {
            return Err(Error::Data(format!(
                "{}: dataset `{}` has {} groups, fewer than the {k} outer folds, and each group stays whole in one fold; lower `outer_folds` in [evaluation]",
                table.source,
                table.name,
                distinct.len()
            )));
        }
    }
    let enough = |c: usize| class_fits_folds(c, k, m);
    for (class, &count) in table.classes.iter().zip(&table.class_counts()) {
        if !enough(count) {
            let needed = (1..).find(|&c| enough(c)).unwrap_or(k.max(m));
            return Err(Error::Data(format!(
                "{}: class `{class}` of dataset `{}` has {count} rows, too few for {k} outer and {m} inner folds (needs at least {needed}); lower `outer_folds` or `inner_folds` in [evaluation], or merge or drop the class",
                table.source, table.name
            )));
        }
    }
    Ok(())
}

/// Reads and checks a manifest file.
pub fn load(path: &Path) -> Result<Experiment> {
    let bytes = std::fs::read(path).map_err(|e| {
        Error::Manifest(format!(
            "{}: cannot read the manifest: {e}; check the path",
            path.display()
        ))
    })?;
    let text = String::from_utf8(bytes.clone()).map_err(|_| {
        Error::Manifest(format!(
            "{}: the manifest is not UTF-8 text; save it as UTF-8",
            path.display()
        ))
    })?;
    let source = ManifestSource {
        path: path.to_path_buf(),
        sha256: hex_sha256(&bytes),
        text,
    };
    parse(source)
}

/// Checks a manifest's text; `source.path` is used in messages and to
/// resolve relative paths.
///
/// Like a compiler, it reports every problem it can find in one pass, one
/// `file:line:column: message` line each. TOML syntax, unknown keys and
/// wrong types stop at the first, because what follows them cannot be
/// read reliably; every later check (names, kinds, parameters, ranges)
/// runs on all entries and all of its findings are returned together.
pub fn parse(source: ManifestSource) -> Result<Experiment> {
    let at = Locator {
        file: source.path.display().to_string(),
        text: &source.text,
        problems: RefCell::new(Vec::new()),
    };
    let raw: RawManifest = toml::from_str(&source.text).map_err(|e| {
        let msg = e.message().trim().replace('\n', " ");
        match e.span() {
            Some(span) => Error::Manifest(format!("{}: {msg}", at.position(span.start))),
            None => Error::Manifest(format!("{}: {msg}", at.file)),
        }
    })?;

    let name = raw.name.get_ref().clone();
    check_label(&at, &raw.name, "experiment name");

    let seed = raw.seed.map_or(defaults::SEED, |s| s.into_inner());
    let evaluation = evaluation(&at, raw.evaluation, seed);
    let methods = methods(&at, raw.calibrators);
    let calibration = calibration_settings(&at, raw.calibration);
    let metrics = metric_names(&at, raw.metrics);

    if raw.datasets.is_empty() {
        at.report_file("no datasets; add a [[dataset]] table with `name` and `bundled` or `path`");
    }
    if raw.families.is_empty() {
        at.report_file(&format!(
            "no model families; add a [[family]] table with `name` and `kind` (known kinds: {})",
            learner::known_kinds()
        ));
    }
    let datasets = datasets(&at, raw.datasets);
    let families = families(&at, raw.families, source.dir());
    at.finish()?;
    Ok(Experiment {
        name,
        seed,
        evaluation,
        datasets,
        families,
        methods,
        calibration,
        metrics,
        source,
    })
}

/// The dataset entries that pass their checks; problems go to `at`.
fn datasets(at: &Locator, raw: Vec<RawDataset>) -> Vec<DatasetSpec> {
    let mut datasets: Vec<DatasetSpec> = Vec::new();
    for d in raw {
        check_label(at, &d.name, "dataset name");
        if let Some(prev) = datasets.iter().find(|p| p.name == *d.name.get_ref()) {
            at.report(
                d.name.span().start,
                &format!(
                    "duplicate dataset name `{}` (first used at {}); give each dataset a unique name",
                    d.name.get_ref(),
                    prev.origin
                ),
            );
            continue;
        }
        let source = match (&d.bundled, &d.path) {
            (Some(b), None) => DataSource::Bundled(b.get_ref().clone()),
            (None, Some(p)) => DataSource::Path(PathBuf::from(p.get_ref())),
            (Some(b), Some(_)) => {
                at.report(
                    b.span().start,
                    "a dataset takes either `bundled` or `path`, not both; keep one",
                );
                continue;
            }
            (None, None) => {
                at.report(
                    d.name.span().start,
                    &format!(
                        "dataset `{}` needs `bundled = \"<catalog id>\"` or `path = \"<file.csv>\"`",
                        d.name.get_ref()
                    ),
                );
                continue;
            }
        };
        if let (DataSource::Path(_), None) = (&source, &d.target) {
            at.report(
                d.name.span().start,
                &format!(
                    "dataset `{}` reads a file, so it needs `target = \"<column>\"`",
                    d.name.get_ref()
                ),
            );
        }
        let positive = match &d.positive {
            None => None,
            Some(v) => match v.get_ref() {
                toml::Value::String(s) => Some(s.clone()),
                toml::Value::Integer(i) => Some(i.to_string()),
                toml::Value::Boolean(b) => Some(b.to_string()),
                other => {
                    at.report(
                        v.span().start,
                        &format!(
                            "`positive` must be a label (string, integer or boolean), found {}",
                            other.type_str()
                        ),
                    );
                    None
                }
            },
        };
        let format = csv_format(at, &d);
        if let (DataSource::Bundled(_), false) = (&source, format.is_default()) {
            at.report(
                d.name.span().start,
                "bundled datasets are plain comma-separated files; `delimiter` and `decimal` apply to `path` datasets",
            );
        }
        datasets.push(DatasetSpec {
            name: d.name.get_ref().clone(),
            source,
            target: d.target.as_ref().map(|t| t.get_ref().clone()),
            positive,
            format,
            origin: at.position(d.name.span().start),
            segment_of: None,
            exclude: exclusions(at, &d),
            group: d.group.as_ref().map(|g| g.get_ref().clone()),
            time: d.time.as_ref().map(|t| t.get_ref().clone()),
            levels: level_cap(at, &d),
        });
    }
    datasets
}

/// A dataset's `exclude` list; repeats go to `at`. Whether each name is a
/// column is checked when the data are read.
fn exclusions(at: &Locator, d: &RawDataset) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for name in d.exclude.iter().flatten() {
        if out.contains(name.get_ref()) {
            at.report(
                name.span().start,
                &format!("`exclude` lists `{}` twice; list each once", name.get_ref()),
            );
        } else {
            out.push(name.get_ref().clone());
        }
    }
    out
}

/// A dataset's cap on categorical encodings; problems go to `at`.
fn level_cap(at: &Locator, d: &RawDataset) -> LevelCap {
    let mut cap = LevelCap::default();
    if let Some(v) = at.in_range(d.max_levels.as_ref(), "max_levels", 1, 100_000) {
        cap.max_levels = v;
    }
    if let Some(v) = at.in_range(d.min_level_rows.as_ref(), "min_level_rows", 1, 1_000_000) {
        cap.min_rows = v;
    }
    cap
}

/// A dataset's `delimiter` and `decimal`; problems go to `at`.
fn csv_format(at: &Locator, d: &RawDataset) -> CsvFormat {
    let mut format = CsvFormat::default();
    if let Some(dl) = &d.delimiter {
        match dl.get_ref().as_str() {
            "tab" | "\t" => format.delimiter = b'\t',
            one if one.len() == 1 && one != "\"" && one != "\n" => {
                format.delimiter = one.as_bytes()[0];
            }
            other => at.report(
                dl.span().start,
                &format!("`delimiter = \"{other}\"` must be one ASCII character such as \",\", \";\" or \"|\", or \"tab\""),
            ),
        }
    }
    if let Some(dec) = &d.decimal {
        match dec.get_ref().as_str() {
            "." => {}
            "," if format.delimiter == b',' => at.report(
                dec.span().start,
                "`decimal = \",\"` needs another field delimiter; set `delimiter = \";\"` (or the file's own)",
            ),
            "," => format.decimal_comma = true,
            other => at.report(
                dec.span().start,
                &format!("`decimal = \"{other}\"` must be \".\" or \",\""),
            ),
        }
    }
    format
}

/// The family entries that pass their checks; problems go to `at`.
fn families(at: &Locator, raw: Vec<RawFamily>, dir: &Path) -> Vec<FamilySpec> {
    let mut families: Vec<FamilySpec> = Vec::new();
    let mut origins: Vec<String> = Vec::new();
    for f in raw {
        check_label(at, &f.name, "family name");
        if let Some(i) = families.iter().position(|p| p.name == *f.name.get_ref()) {
            at.report(
                f.name.span().start,
                &format!(
                    "duplicate family name `{}` (first used at {}); give each family a unique name",
                    f.name.get_ref(),
                    origins[i]
                ),
            );
            continue;
        }
        let (kind, kind_at) = match &f.kind {
            Some(k) => (k.get_ref().clone(), k.span().start),
            None => (f.name.get_ref().clone(), f.name.span().start),
        };
        let Some(family) = learner::find(&kind) else {
            match learner::renamed(learner::RENAMED_KINDS, &kind) {
                Some(new) => at.report(
                    kind_at,
                    &format!("family kind `{kind}` is now called `{new}`; rename it"),
                ),
                None => at.report(
                    kind_at,
                    &format!(
                        "unknown family kind `{kind}`; known kinds: {} (`candor list families` describes them)",
                        learner::known_kinds()
                    ),
                ),
            }
            continue;
        };
        let mut values = Params::defaults(family.params);
        for (key, value) in f.params.iter().flatten() {
            let Some(spec) = family.params.iter().find(|s| s.name == key.get_ref()) else {
                let allowed: Vec<&str> = family.params.iter().map(|s| s.name).collect();
                match learner::renamed(learner::RENAMED_PARAMS, key.get_ref())
                    .filter(|new| allowed.contains(new))
                {
                    Some(new) => at.report(
                        key.span().start,
                        &format!(
                            "parameter `{}` is now called `{new}`; rename it",
                            key.get_ref()
                        ),
                    ),
                    None => at.report(
                        key.span().start,
                        &format!(
                            "unknown parameter `{}` for family kind `{kind}`; allowed: {}",
                            key.get_ref(),
                            allowed.join(", ")
                        ),
                    ),
                }
                continue;
            };
            match params::check(spec, value.get_ref()) {
                Ok(checked) => {
                    values.0.insert(spec.name.to_string(), checked);
                }
                Err(msg) => at.report(value.span().start, &msg),
            }
        }
        let program = program_spec(at, &f, matches!(family.build, Build::Program), dir);
        origins.push(at.position(f.name.span().start));
        families.push(FamilySpec {
            name: f.name.get_ref().clone(),
            kind,
            params: values,
            program,
        });
    }
    families
}

/// A `command` family's program: its command checked, its model files
/// hashed (relative to the manifest's folder `dir`); the program keys on
/// any other family are reported.
fn program_spec(
    at: &Locator,
    f: &RawFamily,
    runs_program: bool,
    dir: &Path,
) -> Option<ProgramSpec> {
    if !runs_program {
        let keys = [
            ("command", f.command.as_ref().map(|c| c.span().start)),
            (
                "files",
                f.files
                    .as_ref()
                    .and_then(|v| v.first())
                    .map(|p| p.span().start),
            ),
            ("env", f.env.as_ref().map(|e| e.span().start)),
        ];
        for (key, start) in keys {
            if let Some(start) = start {
                at.report(
                    start,
                    &format!("`{key}` applies only to families of kind `command`; remove it or set `kind = \"command\"`"),
                );
            }
        }
        return None;
    }
    let Some(command) = &f.command else {
        at.report(
            f.name.span().start,
            &format!(
                "family `{}` runs a program, so it needs `command = \"<program> {{train}} {{score}} {{output}}\"`",
                f.name.get_ref()
            ),
        );
        return None;
    };
    if let Err(msg) = program::parse_command(command.get_ref()) {
        at.report(command.span().start, &msg);
    }
    let mut files: Vec<ModelFile> = Vec::new();
    for path in f.files.iter().flatten() {
        let name = path.get_ref();
        if files.iter().any(|m| m.path == *name) {
            at.report(
                path.span().start,
                &format!("`files` lists `{name}` twice; list each once"),
            );
            continue;
        }
        match std::fs::read(dir.join(name)) {
            Ok(bytes) => files.push(ModelFile {
                path: name.clone(),
                sha256: hex_sha256(&bytes),
            }),
            Err(e) => at.report(
                path.span().start,
                &format!(
                    "cannot read the model file `{name}` ({}): {e}; `files` are relative to the manifest's folder",
                    dir.join(name).display()
                ),
            ),
        }
    }
    let env = f
        .env
        .as_ref()
        .map(|e| e.get_ref().clone())
        .unwrap_or_default();
    for name in env.keys() {
        if name.is_empty() || name.contains(['=', '\0']) {
            at.report(
                f.env.as_ref().map_or(0, |e| e.span().start),
                &format!(
                    "`env` has the variable name `{name}`; names must be non-empty, without `=`"
                ),
            );
        }
    }
    Some(ProgramSpec {
        command: command.get_ref().clone(),
        files,
        env,
    })
}

fn evaluation(at: &Locator, raw: Option<RawEvaluation>, seed: u64) -> Evaluation {
    let d = default_evaluation(seed);
    let Some(raw) = raw else { return d };
    let get = |v: Option<Spanned<usize>>, default: usize, min: usize, max: usize, key: &str| {
        at.in_range(v.as_ref(), key, min, max).unwrap_or(default)
    };
    Evaluation {
        outer_folds: get(raw.outer_folds, d.outer_folds, 2, 100, "outer_folds"),
        repeats: get(raw.repeats, d.repeats, 1, 100, "repeats"),
        inner_folds: get(raw.inner_folds, d.inner_folds, 2, 100, "inner_folds"),
        bins: get(raw.bins, d.bins, 1, 1000, "bins"),
        hl_groups: get(raw.hl_groups, d.hl_groups, 3, 100, "hl_groups"),
        bootstrap: get(raw.bootstrap, d.bootstrap, 0, 100_000, "bootstrap"),
        bootstrap_seed: raw
            .bootstrap_seed
            .map_or(d.bootstrap_seed, |s| s.into_inner()),
    }
}

fn calibration_settings(at: &Locator, raw: Option<RawCalibration>) -> crate::calibrate::Settings {
    let mut s = crate::calibrate::Settings::default();
    let bins = raw.and_then(|r| r.histogram_bins);
    if let Some(v) = at.in_range(bins.as_ref(), "histogram_bins", 2, 1000) {
        s.histogram_bins = v;
    }
    s
}

/// The known, distinct names of a list; unknown and repeated entries are
/// reported to `at`.
fn checked_names(
    at: &Locator,
    list: Vec<Spanned<String>>,
    what: &str,
    known: impl Fn(&str) -> bool,
    known_list: &str,
) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for item in list {
        let name = item.get_ref();
        if !known(name) {
            at.report(
                item.span().start,
                &format!("unknown {what} `{name}`; known: {known_list}"),
            );
        } else if out.contains(name) {
            at.report(
                item.span().start,
                &format!("{what} `{name}` is listed twice; list each once"),
            );
        } else {
            out.push(name.clone());
        }
    }
    out
}

fn methods(at: &Locator, raw: Option<Vec<Spanned<String>>>) -> Vec<String> {
    let Some(list) = raw else {
        return calibrate::METHODS
            .iter()
            .map(|m| m.name.to_string())
            .collect();
    };
    let mut names = checked_names(
        at,
        list,
        "calibration method",
        |n| calibrate::find(n).is_some(),
        &calibrate::known_methods(),
    );
    // The raw row is what every method is compared against, so it is always
    // computed and always first.
    names.retain(|n| n != calibrate::NONE);
    names.insert(0, calibrate::NONE.to_string());
    names
}

fn metric_names(at: &Locator, raw: Option<Vec<Spanned<String>>>) -> Vec<String> {
    let Some(list) = raw else {
        return metrics::METRICS
            .iter()
            .map(|m| m.name.to_string())
            .collect();
    };
    if list.is_empty() {
        at.report_file(&format!(
            "`metrics` is empty; list at least one of: {}",
            metrics::known_metrics()
        ));
    }
    checked_names(
        at,
        list,
        "metric",
        |n| metrics::find(n).is_some(),
        &metrics::known_metrics(),
    )
}

/// Names become folder names and table keys, so keep them portable.
fn check_label(at: &Locator, name: &Spanned<String>, what: &str) {
    let s = name.get_ref();
    let ok = !s.is_empty()
        && s.len() <= 64
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-' || c == '.')
        && !s.starts_with('.');
    if !ok {
        at.report(
            name.span().start,
            &format!(
                "{what} `{s}` is not allowed; use 1 to 64 letters, digits, `_`, `-` or `.`, not starting with `.`"
            ),
        );
    }
}

/// Turns byte offsets into `file:line:column` and gathers the problems
/// found, so that one pass reports them all.
struct Locator<'a> {
    file: String,
    text: &'a str,
    /// Byte offset (none for the whole file) and line of each problem.
    problems: RefCell<Vec<(Option<usize>, String)>>,
}

impl Locator<'_> {
    fn position(&self, offset: usize) -> String {
        let before = &self.text[..offset.min(self.text.len())];
        let line = before.matches('\n').count() + 1;
        let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        format!("{}:{line}:{col}", self.file)
    }

    /// Records a problem at a byte offset.
    fn report(&self, offset: usize, msg: &str) {
        let line = format!("{}: {msg}", self.position(offset));
        self.problems.borrow_mut().push((Some(offset), line));
    }

    /// An integer setting within `[min, max]`, or `None` (with the problem
    /// recorded when the setting is given but out of range).
    fn in_range(
        &self,
        v: Option<&Spanned<usize>>,
        key: &str,
        min: usize,
        max: usize,
    ) -> Option<usize> {
        let v = v?;
        if (min..=max).contains(v.get_ref()) {
            return Some(*v.get_ref());
        }
        self.report(
            v.span().start,
            &format!(
                "`{key}` = {} is out of range; use an integer from {min} to {max}",
                v.get_ref()
            ),
        );
        None
    }

    /// Records a problem of the whole file.
    fn report_file(&self, msg: &str) {
        let line = format!("{}: {msg}", self.file);
        self.problems.borrow_mut().push((None, line));
    }

    /// Every problem found, one per line in file order (problems of the
    /// whole file last), as one error.
    fn finish(&self) -> Result<()> {
        let mut problems = self.problems.borrow().clone();
        if problems.is_empty() {
            return Ok(());
        }
        // Stable: problems at one place keep the order they were found in.
        problems.sort_by_key(|(offset, _)| offset.unwrap_or(usize::MAX));
        let lines: Vec<String> = problems.into_iter().map(|(_, line)| line).collect();
        Err(Error::Manifest(lines.join("\n")))
    }
}
