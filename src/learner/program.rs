//! An outside program as a model family (`kind = "command"`), so a team can
//! put the model it deploys through the same cross-fitted protocol as
//! candor's own families, fold for fold.
//!
//! For every fit (each inner fold, then the whole training split) candor
//! writes the rows to train on and the rows to score as CSV files into a
//! private temporary folder, runs the user's command with those paths in
//! place of its placeholders, and reads one probability per class back,
//! with an optional native score that calibrators then use as they do a
//! built-in family's log-odds. The folder is removed whatever happens.
//! The file formats are described in the README ("Comparing your own
//! model").

use super::Family;
use crate::common::error::{Error, Result};
use crate::common::params::{ParamKind, ParamSpec, ParamValue, Params};
use crate::common::scores::Scores;
use crate::data::preprocess::Preprocessor;
use crate::data::table::{ColumnData, Table, MISSING_CODE};
use ndarray::Array2;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::os::unix::process::CommandExt;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

/// The registry entry: its parameters are what candor needs to know about
/// the exchange; the command itself is given by the family's own keys.
pub const FAMILY: Family = Family {
    kind: "command",
    about: "an outside program, run on CSV files for every fit (keys `command`, `files`, `env`)",
    params: &[
        ParamSpec {
            name: "input",
            kind: ParamKind::Choice(&["raw", "encoded"]),
            default: ParamValue::Choice("raw"),
            about: "what the program reads: the dataset's columns as read (\"raw\"), or candor's encoded, standardised matrix (\"encoded\")",
        },
        ParamSpec {
            name: "timeout",
            kind: ParamKind::Float {
                min: 0.1,
                max: 1e6,
            },
            default: ParamValue::Float(3600.0),
            about: "seconds one fit may take; a slower fit is stopped and fails its cell",
        },
    ],
    build: super::Build::Program,
    revision: 0,
    cost: super::Cost::Linear(1e-6),
};

/// The placeholders a command may use, each replaced for every fit.
pub const PLACEHOLDERS: &[(&str, &str)] = &[
    ("train", "the CSV of rows to train on, class index first"),
    (
        "score",
        "the CSV of rows to score, same columns without the class",
    ),
    ("output", "where the program writes its probabilities"),
    ("seed", "the fit's derived seed, an unsigned 64-bit integer"),
    ("classes", "the number of classes"),
];

/// The program a `command` family runs, as the manifest gives it. Part of
/// the family's entry in `run.json` and of every cell's fingerprint, so a
/// changed command, environment or model file recomputes its cells.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProgramSpec {
    /// The command line, with placeholders such as `{train}`.
    pub command: String,
    /// Files that belong to the model (its script, a config), with their
    /// SHA-256, so that editing one invalidates the stored cells.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub files: Vec<ModelFile>,
    /// Extra environment variables for the program, such as a thread cap.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub env: BTreeMap<String, String>,
}

/// One file the manifest lists as part of the model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelFile {
    /// As written in the manifest.
    pub path: String,
    pub sha256: String,
}

/// Splits a command into words as a POSIX shell would (quotes and
/// backslashes), without running a shell, and checks its placeholders: an
/// unknown one, or a missing `{train}`, `{score}` or `{output}`, is an error
/// saying what is allowed.
pub fn parse_command(command: &str) -> std::result::Result<Vec<String>, String> {
    let words = shlex::split(command)
        .ok_or("`command` has an unclosed quote or a trailing backslash; close it")?;
    if words.is_empty() {
        return Err("`command` is empty; give the program and its arguments".into());
    }
    let mut seen = Vec::new();
    for word in &words {
        for name in placeholders_in(word) {
            if !PLACEHOLDERS.iter().any(|(p, _)| *p == name) {
                return Err(format!(
                    "`command` uses the unknown placeholder `{{{name}}}`; known: {}",
                    known_placeholders()
                ));
            }
            seen.push(name);
        }
    }
    for needed in ["train", "score", "output"] {
        if !seen.contains(&needed) {
            return Err(format!(
                "`command` never uses `{{{needed}}}`, so the program cannot find its files; placeholders: {}",
                known_placeholders()
            ));
        }
    }
    Ok(words)
}

fn known_placeholders() -> String {
    PLACEHOLDERS
        .iter()
        .map(|(p, _)| format!("{{{p}}}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The names inside `{...}` in a word.
fn placeholders_in(word: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let mut rest = word;
    while let Some(open) = rest.find('{') {
        let Some(close) = rest[open..].find('}') else {
            break;
        };
        out.push(&rest[open + 1..open + close]);
        rest = &rest[open + close + 1..];
    }
    out
}

/// How the program reads its rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Input {
    Raw,
    Encoded,
}

/// A `command` family ready to run: the checked command and its settings.
pub struct Program {
    words: Vec<String>,
    env: BTreeMap<String, String>,
    /// The folder the program runs in (the manifest's), so relative paths
    /// in the command mean what they do in the manifest.
    dir: PathBuf,
    input: Input,
    timeout: Duration,
}

/// The rows of one fit.
pub struct Fit<'a> {
    pub table: &'a Table,
    pub train: &'a [usize],
    pub score: &'a [usize],
    pub n_classes: usize,
    pub seed: u64,
}

impl Program {
    /// Builds a program from its checked spec and parameters; `dir` is the
    /// manifest's folder.
    pub fn new(spec: &ProgramSpec, params: &Params, dir: &Path) -> Result<Program> {
        let words = parse_command(&spec.command).map_err(Error::Manifest)?;
        Ok(Program {
            words,
            env: spec.env.clone(),
            dir: if dir.as_os_str().is_empty() {
                PathBuf::from(".")
            } else {
                dir.to_path_buf()
            },
            input: match params.choice("input") {
                "encoded" => Input::Encoded,
                _ => Input::Raw,
            },
            timeout: Duration::from_secs_f64(params.float("timeout")),
        })
    }

    /// Trains on `fit.train` and scores `fit.score` with one run of the
    /// program. Every problem is an error that names it and ends with the
    /// last lines of the program's standard error.
    pub fn fit_and_score(&self, fit: &Fit<'_>) -> Result<Scores> {
        let folder = tempfile::Builder::new()
            .prefix("candor-fit-")
            .tempdir()
            .map_err(|e| {
                Error::Io(format!(
                    "cannot create a temporary folder for the program's files: {e}; set TMPDIR to a writable folder"
                ))
            })?;
        let paths = Paths::in_folder(folder.path());
        self.write_inputs(fit, &paths)?;
        let status = self.execute(fit, &paths)?;
        let tail = stderr_tail(&paths.stderr);
        if !status.success() {
            let how = match status.code() {
                Some(code) => format!("exited with status {code}"),
                None => "was stopped by a signal".to_string(),
            };
            return Err(program_error(&format!("the program {how}"), &tail));
        }
        read_output(&paths.output, fit.score.len(), fit.n_classes)
            .map_err(|what| program_error(&what, &tail))
        // `folder` is dropped here, which removes every file of this fit.
    }

    fn write_inputs(&self, fit: &Fit<'_>, paths: &Paths) -> Result<()> {
        let write = |path: &Path, rows: &[usize], with_class: bool| {
            write_rows(path, fit.table, rows, with_class).map_err(|e| {
                Error::Io(format!(
                    "{}: cannot write the program's input: {e}; check the free space in the temporary folder",
                    path.display()
                ))
            })
        };
        match self.input {
            Input::Raw => {
                write(&paths.train, fit.train, true)?;
                write(&paths.score, fit.score, false)?;
            }
            Input::Encoded => {
                let prep = Preprocessor::fit(fit.table, fit.train, true);
                let header = prep.names(fit.table);
                let x_train = prep.transform(fit.table, fit.train);
                let x_score = prep.transform(fit.table, fit.score);
                write_matrix(&paths.train, &header, &x_train, Some((fit.table, fit.train)))
                    .and_then(|_| write_matrix(&paths.score, &header, &x_score, None))
                    .map_err(|e| {
                        Error::Io(format!(
                            "cannot write the program's input: {e}; check the free space in the temporary folder"
                        ))
                    })?;
            }
        }
        Ok(())
    }

    /// Runs the command and waits for it, stopping it (and anything it
    /// started) when it overruns the timeout.
    fn execute(&self, fit: &Fit<'_>, paths: &Paths) -> Result<ExitStatus> {
        let fill = |word: &str| {
            word.replace("{train}", &paths.train.to_string_lossy())
                .replace("{score}", &paths.score.to_string_lossy())
                .replace("{output}", &paths.output.to_string_lossy())
                .replace("{seed}", &fit.seed.to_string())
                .replace("{classes}", &fit.n_classes.to_string())
        };
        let words: Vec<String> = self.words.iter().map(|w| fill(w)).collect();
        let log = |path: &Path| {
            File::create(path).map_err(|e| {
                Error::Io(format!(
                    "{}: cannot create the program's log: {e}; check the temporary folder",
                    path.display()
                ))
            })
        };
        let mut child = Command::new(&words[0])
            .args(&words[1..])
            .current_dir(&self.dir)
            .envs(&self.env)
            .stdin(Stdio::null())
            .stdout(log(&paths.stdout)?)
            .stderr(log(&paths.stderr)?)
            // Its own process group, so a timeout stops its children too.
            .process_group(0)
            .spawn()
            .map_err(|e| {
                Error::Fit(format!(
                    "cannot start the program `{}` (in {}): {e}; check `command` in the family's entry",
                    words[0],
                    self.dir.display()
                ))
            })?;
        let started = Instant::now();
        let mut pause = Duration::from_micros(200);
        loop {
            match child.try_wait() {
                Ok(Some(status)) => return Ok(status),
                Ok(None) if started.elapsed() > self.timeout => {
                    stop(&mut child);
                    return Err(program_error(
                        &format!(
                            "the program did not finish within {} s and was stopped; raise `timeout` in the family's params or make the fit faster",
                            self.timeout.as_secs_f64()
                        ),
                        &stderr_tail(&paths.stderr),
                    ));
                }
                Ok(None) => {
                    std::thread::sleep(pause);
                    pause = (pause * 2).min(Duration::from_millis(20));
                }
                Err(e) => {
                    stop(&mut child);
                    return Err(Error::Fit(format!("cannot wait for the program: {e}")));
                }
            }
        }
    }
}

/// Kills the program's whole process group and reaps it.
fn stop(child: &mut Child) {
    if let Ok(pid) = i32::try_from(child.id()) {
        // SAFETY: `kill` only sends a signal; a negative pid names the
        // process group the child leads (set by `process_group(0)`).
        unsafe {
            libc::kill(-pid, libc::SIGKILL);
        }
    }
    let _ = child.kill();
    let _ = child.wait();
}

/// The files of one fit inside its temporary folder.
struct Paths {
    train: PathBuf,
    score: PathBuf,
    output: PathBuf,
    stdout: PathBuf,
    stderr: PathBuf,
}

impl Paths {
    fn in_folder(dir: &Path) -> Paths {
        Paths {
            train: dir.join("train.csv"),
            score: dir.join("score.csv"),
            output: dir.join("output.csv"),
            stdout: dir.join("stdout.txt"),
            stderr: dir.join("stderr.txt"),
        }
    }
}

/// How many of the program's last standard-error lines a message quotes.
const TAIL_LINES: usize = 5;

/// The last non-empty lines of the program's standard error.
fn stderr_tail(path: &Path) -> Vec<String> {
    let text = std::fs::read(path).unwrap_or_default();
    let text = String::from_utf8_lossy(&text);
    let lines: Vec<&str> = text.lines().filter(|l| !l.trim().is_empty()).collect();
    lines[lines.len().saturating_sub(TAIL_LINES)..]
        .iter()
        .map(|l| l.trim_end().to_string())
        .collect()
}

/// One line: what went wrong, then the program's last words, if any.
fn program_error(what: &str, tail: &[String]) -> Error {
    if tail.is_empty() {
        Error::Fit(format!("{what} (its standard error was empty)"))
    } else {
        Error::Fit(format!(
            "{what}; the last lines of its standard error: {}",
            tail.join(" | ")
        ))
    }
}

/// Writes the raw columns of `rows`: numbers in their shortest exact
/// form, categories as their labels, missing values as empty fields; with
/// `with_class`, the class index comes first, as column `class`.
fn write_rows(path: &Path, table: &Table, rows: &[usize], with_class: bool) -> std::io::Result<()> {
    let mut w = csv::Writer::from_writer(BufWriter::new(File::create(path)?));
    let mut header: Vec<&str> = Vec::with_capacity(table.columns.len() + 1);
    if with_class {
        header.push("class");
    }
    header.extend(table.columns.iter().map(|c| c.name.as_str()));
    w.write_record(&header)?;
    let mut record: Vec<String> = Vec::with_capacity(header.len());
    for &r in rows {
        record.clear();
        if with_class {
            record.push(table.labels[r].to_string());
        }
        for c in &table.columns {
            record.push(match &c.data {
                ColumnData::Numeric(v) if v[r].is_nan() => String::new(),
                ColumnData::Numeric(v) => v[r].to_string(),
                ColumnData::Categorical { codes, .. } if codes[r] == MISSING_CODE => String::new(),
                ColumnData::Categorical { codes, levels } => levels[codes[r] as usize].clone(),
            });
        }
        w.write_record(&record)?;
    }
    w.into_inner().map_err(|e| e.into_error())?.flush()
}

/// Writes an encoded matrix under `header`; with `classes`, the class
/// index of each row comes first, as column `class`.
fn write_matrix(
    path: &Path,
    header: &[String],
    x: &Array2<f64>,
    classes: Option<(&Table, &[usize])>,
) -> std::io::Result<()> {
    let mut w = csv::Writer::from_writer(BufWriter::new(File::create(path)?));
    let class_column = classes.map(|_| "class");
    w.write_record(
        class_column
            .into_iter()
            .chain(header.iter().map(String::as_str)),
    )?;
    let mut record: Vec<String> = Vec::with_capacity(header.len() + 1);
    for (i, row) in x.rows().into_iter().enumerate() {
        record.clear();
        if let Some((table, rows)) = classes {
            record.push(table.labels[rows[i]].to_string());
        }
        record.extend(row.iter().map(f64::to_string));
        w.write_record(&record)?;
    }
    w.into_inner().map_err(|e| e.into_error())?.flush()
}

/// How far a row's probabilities may sum from 1 before the output is
/// refused; within it, rows are rescaled to sum to 1 exactly. Wide enough
/// for a program that prints six decimals per class.
const SUM_TOLERANCE: f64 = 1e-4;

/// Reads the program's output: a header naming `p0` … `p{k-1}` and,
/// optionally, the native score (`score` for two classes, `score0` …
/// `score{k-1}` otherwise), then one row per scored row.
fn read_output(path: &Path, rows: usize, k: usize) -> std::result::Result<Scores, String> {
    let file = File::open(path).map_err(|_| {
        "the program wrote no output file at `{output}`; it must write one probability per class for every row of `{score}`".to_string()
    })?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .from_reader(std::io::BufReader::new(file));
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| format!("the output file cannot be read as CSV: {e}"))?
        .iter()
        .map(str::to_string)
        .collect();
    let layout = Layout::from_header(&header, k)?;
    let mut proba = Array2::zeros((rows, k));
    let mut native = layout
        .native
        .as_ref()
        .map(|cols| Array2::zeros((rows, cols.len())));
    let mut seen = 0;
    for (i, record) in reader.records().enumerate() {
        let line = i + 2;
        let record = record.map_err(|e| format!("output line {line} is not valid CSV: {e}"))?;
        if record.len() != header.len() {
            return Err(format!(
                "output line {line} has {} fields where the header has {}",
                record.len(),
                header.len()
            ));
        }
        if i >= rows {
            return Err(format!(
                "the output has more rows than the {rows} rows to score; write exactly one per row of `{{score}}`"
            ));
        }
        let number = |col: usize| -> std::result::Result<f64, String> {
            let text = &record[col];
            let v: f64 = text.parse().map_err(|_| {
                format!(
                    "output line {line}, column `{}`: `{text}` is not a number",
                    header[col]
                )
            })?;
            if v.is_nan() {
                return Err(format!(
                    "output line {line}, column `{}` is NaN; every value must be a number",
                    header[col]
                ));
            }
            Ok(v)
        };
        let mut sum = 0.0;
        for (c, &col) in layout.proba.iter().enumerate() {
            let p = number(col)?;
            if !(0.0..=1.0).contains(&p) {
                return Err(format!(
                    "output line {line}, column `{}` = {p} is not a probability in [0, 1]",
                    header[col]
                ));
            }
            proba[[i, c]] = p;
            sum += p;
        }
        if (sum - 1.0).abs() > SUM_TOLERANCE {
            return Err(format!(
                "output line {line}: the probabilities sum to {sum}, not 1 (tolerance {SUM_TOLERANCE})"
            ));
        }
        proba.row_mut(i).mapv_inplace(|p| p / sum);
        if let (Some(cols), Some(out)) = (&layout.native, native.as_mut()) {
            for (c, &col) in cols.iter().enumerate() {
                let s = number(col)?;
                if s == f64::INFINITY {
                    return Err(format!(
                        "output line {line}, column `{}` is +infinity; native scores may be -inf but not +inf",
                        header[col]
                    ));
                }
                out[[i, c]] = s;
            }
        }
        seen += 1;
    }
    if seen < rows {
        return Err(format!(
            "the output has {seen} rows for the {rows} rows to score; write exactly one per row of `{{score}}`"
        ));
    }
    Ok(Scores { proba, native })
}

/// Where the probabilities and native scores sit in the output.
struct Layout {
    proba: Vec<usize>,
    native: Option<Vec<usize>>,
}

impl Layout {
    fn from_header(header: &[String], k: usize) -> std::result::Result<Layout, String> {
        let find = |name: &str| header.iter().position(|h| h == name);
        let expected = (0..k)
            .map(|c| format!("p{c}"))
            .collect::<Vec<_>>()
            .join(",");
        let proba: Vec<usize> = (0..k)
            .map(|c| {
                find(&format!("p{c}")).ok_or_else(|| {
                    format!(
                        "the output's header is `{}`, which lacks `p{c}`; the header must name {expected} (and may add the native score)",
                        header.join(",")
                    )
                })
            })
            .collect::<std::result::Result<_, _>>()?;
        let native_names: Vec<String> = if k == 2 {
            vec!["score".to_string()]
        } else {
            (0..k).map(|c| format!("score{c}")).collect()
        };
        let native: Vec<Option<usize>> = native_names.iter().map(|n| find(n)).collect();
        let native = if native.iter().all(Option::is_none) {
            None
        } else if native.iter().all(Option::is_some) {
            Some(native.into_iter().flatten().collect())
        } else {
            return Err(format!(
                "the output names some native scores but not all; write all of {} or none",
                native_names.join(",")
            ));
        };
        let known = proba.len() + native.as_ref().map_or(0, Vec::len);
        if known != header.len() {
            let extra: Vec<&str> = header
                .iter()
                .filter(|h| !(0..k).any(|c| **h == format!("p{c}")) && !native_names.contains(h))
                .map(String::as_str)
                .collect();
            return Err(format!(
                "the output's header has columns candor does not read ({}); for {k} classes write {expected}{}",
                extra.join(", "),
                if k == 2 {
                    " and optionally score"
                } else {
                    " and optionally score0.."
                }
            ));
        }
        Ok(Layout { proba, native })
    }
}
