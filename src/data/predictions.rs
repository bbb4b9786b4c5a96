//! Predictions made elsewhere (another language, another service), read
//! from a CSV of true labels and predicted probabilities, for `candor
//! score` and `candor apply`.
//!
//! Default mapping: every column other than the label (and group) column
//! holds probabilities. One column means a binary task and holds
//! P(positive), where the positive label is `1` or `true` unless named.
//! Several columns map to classes by name: the label itself, or the label
//! after a prefix every column shares (such as `p_`). Rows with a value
//! outside [0, 1], or whose columns do not sum to 1 within the tolerance,
//! are errors listed by line.
//!
//! With `--scores log-odds` or `--scores margin` the columns hold scores
//! instead: a binary task's one column is the positive class's log-odds or
//! margin, several columns are per-class logits or margins. Calibrators get
//! these scores as the native score, exactly as a built-in family's; the
//! probabilities are their sigmoid (softmax for several columns), which is
//! the forecast itself for log-odds and only a monotone squash for margins.

use crate::common::error::{Error, Result};
use crate::common::scores::{binary_from_log_odds, softmax_rows, Scores};
use ndarray::Array2;
use std::path::Path;

/// How to read a predictions file.
#[derive(Debug, Clone)]
pub struct Layout {
    /// The label column; `None` for files without labels (`candor apply`).
    pub label: Option<String>,
    pub group: Option<String>,
    /// The positive label of a binary task.
    pub positive: Option<String>,
    /// Probability columns, overriding "every other column".
    pub columns: Option<Vec<String>>,
    /// Largest allowed |row sum - 1| for several probability columns.
    pub tolerance: f64,
    /// What the columns hold.
    pub scores: ScoreScale,
}

/// What a predictions file's columns hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ScoreScale {
    /// Probabilities in [0, 1].
    #[default]
    Probability,
    /// Log-odds (binary) or logits (several columns): a probability on
    /// another scale.
    LogOdds,
    /// Unbounded scores without a probability meaning, such as an SVM's
    /// margin or a ranking score.
    Margin,
}

impl ScoreScale {
    /// Every scale, in the order help texts list them.
    pub const ALL: [ScoreScale; 3] = [
        ScoreScale::Probability,
        ScoreScale::LogOdds,
        ScoreScale::Margin,
    ];

    /// The scale a name stands for.
    pub fn from_name(name: &str) -> Option<ScoreScale> {
        Self::ALL.into_iter().find(|s| s.name() == name)
    }

    /// The name used on the command line and in saved maps.
    pub fn name(self) -> &'static str {
        match self {
            ScoreScale::Probability => "probability",
            ScoreScale::LogOdds => "log-odds",
            ScoreScale::Margin => "margin",
        }
    }
}

/// Predictions read and checked.
#[derive(Debug, Clone)]
pub struct Predictions {
    /// Class names; a binary task's positive class is the second.
    pub classes: Vec<String>,
    /// Class index per row (empty without a label column).
    pub labels: Vec<usize>,
    /// Probabilities, one column per class, rows summing to 1.
    pub proba: Array2<f64>,
    /// The scores as given, when the columns hold log-odds or margins: one
    /// column (the positive class's) for a binary task, else one per class.
    pub native: Option<Array2<f64>>,
    /// What the columns held.
    pub scale: ScoreScale,
    /// Group value per row, with a group column.
    pub groups: Option<Vec<String>>,
    /// The header and the raw rows, for writing them back out.
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

/// Probabilities are clipped here before a logarithm is taken.
pub const CLIP: f64 = 1e-15;

impl Predictions {
    /// The scores calibrators see: the probabilities, and as the native
    /// score their log-odds (binary) or logarithms (multiclass), so that
    /// Platt scaling and temperature scaling work on the logit scale.
    /// Given log-odds or margins are passed on unchanged.
    pub fn scores(&self, rows: &[usize]) -> Scores {
        let k = self.proba.ncols();
        let proba = Array2::from_shape_fn((rows.len(), k), |(i, j)| self.proba[[rows[i], j]]);
        let native = if let Some(given) = &self.native {
            given.select(ndarray::Axis(0), rows)
        } else if k == 2 {
            Array2::from_shape_fn((rows.len(), 1), |(i, _)| {
                let p = proba[[i, 1]].clamp(CLIP, 1.0 - CLIP);
                (p / (1.0 - p)).ln()
            })
        } else {
            proba.mapv(|p| p.clamp(CLIP, 1.0).ln())
        };
        Scores {
            proba,
            native: Some(native),
        }
    }

    /// The labels of some rows.
    pub fn labels_of(&self, rows: &[usize]) -> Vec<usize> {
        rows.iter().map(|&r| self.labels[r]).collect()
    }
}

/// Reads a predictions file. `classes` fixes the class names and order
/// (from a calibration file) instead of taking them from the labels.
pub fn read(path: &Path, layout: &Layout, classes: Option<&[String]>) -> Result<Predictions> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, "read", &e))?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .from_reader(bytes.as_slice());
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| Error::Data(format!("{file}:1: cannot read the header: {e}")))?
        .iter()
        .map(|h| h.trim_start_matches('\u{feff}').to_string())
        .collect();
    let find = |name: &str, what: &str| -> Result<usize> {
        header.iter().position(|h| h == name).ok_or_else(|| {
            Error::Data(format!(
                "{file}:1: no {what} column `{name}`; the columns are: {}",
                header.join(", ")
            ))
        })
    };
    let label_col = layout
        .label
        .as_deref()
        .map(|l| find(l, "target"))
        .transpose()?;
    let group_col = layout
        .group
        .as_deref()
        .map(|g| find(g, "group"))
        .transpose()?;
    let prob_cols: Vec<usize> = match &layout.columns {
        Some(cols) => cols
            .iter()
            .map(|c| find(c, "probability"))
            .collect::<Result<_>>()?,
        None => (0..header.len())
            .filter(|&i| Some(i) != label_col && Some(i) != group_col)
            .filter(|&i| layout.label.is_some() || header[i] != "label")
            .collect(),
    };
    if prob_cols.is_empty() {
        return Err(Error::Data(format!(
            "{file}:1: no probability columns besides the label and group; add one column per class, or one for P(positive)"
        )));
    }
    let mut rows = Vec::new();
    for (i, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| {
            Error::Data(format!(
                "{file}:{}: {e}; check the delimiter and quoting",
                i + 2
            ))
        })?;
        rows.push(rec.iter().map(str::to_string).collect::<Vec<String>>());
    }
    if rows.is_empty() {
        return Err(Error::Data(format!("{file}: no rows after the header")));
    }
    let raw_labels: Vec<&str> =
        label_col.map_or_else(Vec::new, |c| rows.iter().map(|r| r[c].as_str()).collect());
    if let Some(i) = raw_labels.iter().position(|l| l.is_empty()) {
        return Err(Error::Data(format!(
            "{file}:{}: the label is empty; every row needs its true label",
            i + 2
        )));
    }
    let names: Vec<&str> = prob_cols.iter().map(|&c| header[c].as_str()).collect();
    let classes: Vec<String> = match classes {
        Some(c) => c.to_vec(),
        None => classes_from_labels(&file, &raw_labels, &names, layout.positive.as_deref())?,
    };
    let k = classes.len();
    // Which class each probability column holds.
    let column_class: Vec<usize> = if prob_cols.len() == 1 {
        if k != 2 {
            return Err(Error::Data(format!(
                "{file}: one probability column but {k} classes; give one column per class"
            )));
        }
        vec![1]
    } else {
        map_columns(&file, &names, &classes)?
    };
    let given_scores = layout.scores != ScoreScale::Probability;
    let mut proba = Array2::zeros((rows.len(), k));
    let mut bad_value = Vec::new();
    let mut bad_values = 0;
    let mut first_bad: Option<(String, String)> = None;
    let mut bad_sum = Vec::new();
    for (i, row) in rows.iter().enumerate() {
        let mut sum = 0.0;
        for (&c, &class) in prob_cols.iter().zip(&column_class) {
            match row[c].parse::<f64>() {
                Ok(z) if given_scores && z.is_finite() => proba[[i, class]] = z,
                Ok(p) if !given_scores && p.is_finite() && (0.0..=1.0).contains(&p) => {
                    proba[[i, class]] = p;
                    sum += p;
                }
                _ => {
                    // Each line once, however many of its values are bad.
                    if bad_value.last() != Some(&(i + 2)) {
                        bad_value.push(i + 2);
                    }
                    bad_values += 1;
                    first_bad.get_or_insert((header[c].clone(), row[c].clone()));
                }
            }
        }
        if given_scores {
            continue;
        }
        if prob_cols.len() == 1 {
            proba[[i, 0]] = 1.0 - proba[[i, 1]];
        } else if (sum - 1.0).abs() > layout.tolerance {
            bad_sum.push(i + 2);
        } else if sum > 0.0 {
            for j in 0..k {
                proba[[i, j]] /= sum;
            }
        }
    }
    let lines = |v: &[usize]| {
        let shown: Vec<String> = v.iter().take(8).map(|l| l.to_string()).collect();
        let more = if v.len() > 8 {
            format!(" and {} more", v.len() - 8)
        } else {
            String::new()
        };
        format!("{}{more}", shown.join(", "))
    };
    if !bad_value.is_empty() && given_scores {
        let (column, value) = first_bad.unwrap_or_default();
        return Err(Error::Data(format!(
            "{file}: --scores {} needs finite numbers, but column `{column}` holds `{value}` on line {} ({bad_values} bad values on lines {}); name the score columns with --columns, or a segment column with --group",
            layout.scores.name(),
            bad_value[0],
            lines(&bad_value)
        )));
    }
    if !bad_value.is_empty() {
        let (column, value) = first_bad.unwrap_or_default();
        return Err(Error::Data(format!(
            "{file}: probabilities must be numbers in [0, 1], but column `{column}` holds `{value}` on line {} ({bad_values} bad values on lines {}); name the probability columns with --columns, or a segment column with --group",
            bad_value[0],
            lines(&bad_value)
        )));
    }
    if !bad_sum.is_empty() {
        return Err(Error::Data(format!(
            "{file}: probabilities do not sum to 1 (within {}) on lines {}; check the columns, or widen --tolerance",
            layout.tolerance,
            lines(&bad_sum)
        )));
    }
    let labels = raw_labels
        .iter()
        .enumerate()
        .map(|(i, l)| {
            classes.iter().position(|c| c == l).ok_or_else(|| {
                Error::Data(format!(
                    "{file}:{}: label `{l}` is none of the classes {}",
                    i + 2,
                    classes.join(", ")
                ))
            })
        })
        .collect::<Result<Vec<usize>>>()?;
    let groups = group_col.map(|g| rows.iter().map(|r| r[g].clone()).collect());
    let (proba, native) = if given_scores {
        from_scores(proba, prob_cols.len() == 1)
    } else {
        (proba, None)
    };
    Ok(Predictions {
        classes,
        labels,
        proba,
        native,
        scale: layout.scores,
        groups,
        header,
        rows,
    })
}

/// Probabilities and native scores from given scores, held one column per
/// class (`one_column`: only the positive class's column of a binary task
/// was given): the sigmoid of a binary task's positive score, the softmax
/// of several. A binary task's native score is one column, the positive
/// class's score, or the difference of the two given ones.
fn from_scores(z: Array2<f64>, one_column: bool) -> (Array2<f64>, Option<Array2<f64>>) {
    if z.ncols() == 2 {
        let positive: Vec<f64> = z
            .rows()
            .into_iter()
            .map(|r| if one_column { r[1] } else { r[1] - r[0] })
            .collect();
        let proba = binary_from_log_odds(&positive);
        let native = Array2::from_shape_vec((positive.len(), 1), positive)
            .unwrap_or_else(|_| Array2::zeros((0, 1)));
        (proba, Some(native))
    } else {
        (softmax_rows(&z), Some(z))
    }
}

/// Class names from the labels: binary with one column orders (negative,
/// positive); several columns follow the column order.
fn classes_from_labels(
    file: &str,
    labels: &[&str],
    columns: &[&str],
    positive: Option<&str>,
) -> Result<Vec<String>> {
    let mut distinct: Vec<String> = labels.iter().map(|l| l.to_string()).collect();
    distinct.sort();
    distinct.dedup();
    if columns.len() > 1 {
        // Classes in column order, named by the columns (prefix removed).
        let prefix = shared_prefix(columns, &distinct);
        let classes: Vec<String> = columns.iter().map(|c| c[prefix..].to_string()).collect();
        return Ok(classes);
    }
    if distinct.len() != 2 {
        return Err(Error::Data(format!(
            "{file}: one probability column needs exactly two labels, found {} ({}); give one column per class for more",
            distinct.len(),
            distinct.iter().take(5).cloned().collect::<Vec<_>>().join(", ")
        )));
    }
    let pos = match positive {
        Some(p) => p.to_string(),
        None => distinct
            .iter()
            .find(|l| matches!(l.to_ascii_lowercase().as_str(), "1" | "true"))
            .cloned()
            .ok_or_else(|| {
                Error::Data(format!(
                    "{file}: labels are `{}` and `{}`; say which the probability column is for with --positive",
                    distinct[0], distinct[1]
                ))
            })?,
    };
    let Some(neg) = distinct.iter().find(|l| **l != pos) else {
        return Err(Error::Data(format!(
            "{file}: the positive label `{pos}` is the only label"
        )));
    };
    if !distinct.contains(&pos) {
        return Err(Error::Data(format!(
            "{file}: the positive label `{pos}` never occurs; the labels are {}",
            distinct.join(", ")
        )));
    }
    Ok(vec![neg.clone(), pos])
}

/// Length of the prefix to strip from every column name: none when the
/// names are the labels themselves, else the longest prefix all share.
fn shared_prefix(columns: &[&str], labels: &[String]) -> usize {
    if columns.iter().all(|c| labels.iter().any(|l| l == c)) {
        return 0;
    }
    let first = columns[0];
    let mut n = first.len();
    for c in &columns[1..] {
        n = n.min(
            first
                .bytes()
                .zip(c.bytes())
                .take_while(|(a, b)| a == b)
                .count(),
        );
    }
    while !first.is_char_boundary(n) {
        n -= 1;
    }
    // Keep at least one character of every class name.
    columns
        .iter()
        .map(|c| c.len().saturating_sub(1))
        .min()
        .unwrap_or(0)
        .min(n)
}

/// Which class each column holds, by name.
fn map_columns(file: &str, names: &[&str], classes: &[String]) -> Result<Vec<usize>> {
    let prefix = shared_prefix(names, classes);
    names
        .iter()
        .map(|n| {
            let class = &n[prefix..];
            classes.iter().position(|c| c == class || c == n).ok_or_else(|| {
                Error::Data(format!(
                    "{file}:1: column `{n}` names no class (classes: {}); name probability columns after the classes, optionally with a shared prefix such as `p_`",
                    classes.join(", ")
                ))
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_line_with_several_bad_values_is_listed_once_with_the_count() {
        let dir = tempfile::tempdir().expect("a temporary folder");
        let path = dir.path().join("p.csv");
        std::fs::write(&path, "label,p_a,p_b\na,x,y\nb,0.5,0.5\na,z,0.5\n").expect("written");
        let layout = Layout {
            label: Some("label".into()),
            group: None,
            positive: None,
            columns: None,
            tolerance: 1e-3,
            scores: ScoreScale::Probability,
        };
        let err = read(&path, &layout, None)
            .expect_err("bad values")
            .to_string();
        assert!(err.contains("(3 bad values on lines 2, 4)"), "{err}");
    }
}
