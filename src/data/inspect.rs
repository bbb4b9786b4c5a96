//! `candor data inspect`: what a team should know about its CSV before
//! adding it to a manifest. The schema as candor reads it, missing values,
//! class balance against the fold counts, and columns that look like
//! identifiers or that leak the target.

use super::folds::class_fits_folds;
use super::table::{ColumnData, Table, MISSING_CODE};
use crate::common::table::{Table as Out, Value};

/// The findings.
pub struct Inspection {
    pub schema: Out,
    pub classes: Out,
    /// Plain-words warnings, most important first.
    pub warnings: Vec<String>,
}

/// A column is flagged as mostly missing above this share.
const MOSTLY_MISSING: f64 = 0.5;

fn missing(data: &ColumnData) -> usize {
    match data {
        ColumnData::Numeric(v) => v.iter().filter(|x| x.is_nan()).count(),
        ColumnData::Categorical { codes, .. } => {
            codes.iter().filter(|&&c| c == MISSING_CODE).count()
        }
    }
}

/// The value of each row as a key, for comparing a column with the target.
fn keys(data: &ColumnData) -> Vec<Option<u64>> {
    match data {
        ColumnData::Numeric(v) => v
            .iter()
            .map(|x| (!x.is_nan()).then(|| x.to_bits()))
            .collect(),
        ColumnData::Categorical { codes, .. } => codes
            .iter()
            .map(|&c| (c != MISSING_CODE).then_some(u64::from(c)))
            .collect(),
    }
}

/// Whether each present value of the column occurs with one class only
/// (`pure`), and whether the values and classes correspond one to one
/// (`copy`).
fn purity(keys: &[Option<u64>], labels: &[usize], n_classes: usize) -> (bool, bool, usize) {
    let mut by_value: std::collections::HashMap<u64, usize> = std::collections::HashMap::new();
    let mut pure = true;
    for (k, &y) in keys.iter().zip(labels) {
        if let Some(k) = k {
            match by_value.get(k) {
                Some(&c) if c != y => pure = false,
                Some(_) => {}
                None => {
                    by_value.insert(*k, y);
                }
            }
        }
    }
    let present = keys.iter().all(Option::is_some);
    let copy = pure && present && by_value.len() == n_classes;
    (pure, copy, by_value.len())
}

/// Binary AUC of a numeric column against the positive class, ignoring
/// missing values; ties count half.
fn single_feature_auc(v: &[f64], labels: &[usize]) -> f64 {
    let mut pairs: Vec<(f64, usize)> = v
        .iter()
        .zip(labels)
        .filter(|(x, _)| !x.is_nan())
        .map(|(&x, &y)| (x, y))
        .collect();
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let pos = pairs.iter().filter(|p| p.1 == 1).count() as f64;
    let neg = pairs.len() as f64 - pos;
    if pos == 0.0 || neg == 0.0 {
        return f64::NAN;
    }
    let mut rank_sum = 0.0;
    let mut i = 0;
    while i < pairs.len() {
        let mut j = i;
        while j + 1 < pairs.len() && pairs[j + 1].0 == pairs[i].0 {
            j += 1;
        }
        let rank = (i + j) as f64 / 2.0 + 1.0;
        rank_sum += rank * pairs[i..=j].iter().filter(|p| p.1 == 1).count() as f64;
        i = j + 1;
    }
    (rank_sum - pos * (pos + 1.0) / 2.0) / (pos * neg)
}

/// For a numeric column of a binary task, whether one threshold separates
/// the classes.
fn separation(data: &ColumnData, labels: &[usize], k: usize) -> Option<&'static str> {
    match (data, k) {
        (ColumnData::Numeric(v), 2) => {
            let auc = single_feature_auc(v, labels);
            (auc == 1.0 || auc == 0.0).then_some("alone separates the two classes at a threshold")
        }
        _ => None,
    }
}

/// Inspects a loaded table against the outer and inner fold counts it will
/// meet.
pub fn inspect(table: &Table, outer: usize, inner: usize) -> Inspection {
    let n = table.rows();
    let k = table.n_classes();
    let mut schema = Out::new(
        "schema",
        &format!(
            "{}: {n} rows, {} usable feature columns",
            table.source,
            table.columns.len()
        ),
        &[
            "column",
            "type",
            "distinct",
            "missing",
            "missing_share",
            "note",
        ],
    );
    let mut warnings = Vec::new();
    for c in &table.columns {
        let miss = missing(&c.data);
        let keys = keys(&c.data);
        let (pure, copy, distinct) = purity(&keys, &table.labels, k);
        let (kind, distinct_shown) = match &c.data {
            ColumnData::Numeric(_) => ("numeric", distinct),
            ColumnData::Categorical { levels, .. } => ("categorical", levels.len()),
        };
        let present = n - miss;
        let mut note = Vec::new();
        // Only whole numbers and text can be identifiers: a measurement
        // that varies continuously takes a new value in every row too.
        let integer_like = match &c.data {
            ColumnData::Numeric(v) => v.iter().all(|x| x.is_nan() || x.fract() == 0.0),
            ColumnData::Categorical { .. } => true,
        };
        let id_like = present > 20 && distinct == present && integer_like;
        if copy {
            note.push("copy of the target");
            warnings.push(format!(
                "column `{}` is a copy of the target: each value goes with exactly one class. Remove it; it leaks the answer and every family will look perfect.",
                c.name
            ));
        } else if id_like {
            note.push("identifier?");
            warnings.push(format!(
                "column `{}` has a different value in every row, like an identifier. Remove it with `exclude = [\"{}\"]` in the manifest's dataset entry (or --exclude) unless it truly measures something; a model cannot generalise from it.",
                c.name, c.name
            ));
        } else if let Some(w) = separation(&c.data, &table.labels, k) {
            note.push("separates the classes");
            warnings.push(format!(
                "column `{}` {w}. Check that it is not recorded after the outcome.",
                c.name
            ));
        } else if pure && distinct > 1 && present > 2 * distinct {
            note.push("perfectly predictive");
            warnings.push(format!(
                "column `{}` predicts the target perfectly (each of its {distinct} values occurs with one class only). Check that it is not recorded after the outcome.",
                c.name
            ));
        }
        let share = miss as f64 / n.max(1) as f64;
        if share > MOSTLY_MISSING {
            note.push("mostly missing");
            warnings.push(format!(
                "column `{}` is missing in {:.0}% of rows; candor imputes it (median or mode from the training rows), which carries little information.",
                c.name,
                share * 100.0
            ));
        }
        schema.rows.push(vec![
            c.name.as_str().into(),
            kind.into(),
            distinct_shown.into(),
            miss.into(),
            share.into(),
            note.join("; ").into(),
        ]);
    }
    for w in &table.warnings {
        warnings.push(w.clone());
    }
    let mut classes = Out::new(
        "classes",
        "Class balance",
        &["class", "rows", "share", "role"],
    );
    let counts = table.class_counts();
    for (i, (name, &count)) in table.classes.iter().zip(&counts).enumerate() {
        let role = if k == 2 {
            if i == 1 {
                "positive"
            } else {
                "negative"
            }
        } else {
            ""
        };
        classes.rows.push(vec![
            name.as_str().into(),
            count.into(),
            Value::Number(count as f64 / n.max(1) as f64),
            role.into(),
        ]);
    }
    let enough = |c: usize| class_fits_folds(c, outer, inner);
    if let Some((rare, &count)) = table.classes.iter().zip(&counts).min_by_key(|(_, &c)| c) {
        classes.notes.push(format!(
            "Rarest class `{rare}`: {count} rows, {:.1} per outer test fold with {outer} outer and {inner} inner folds.",
            count as f64 / outer as f64
        ));
        if !enough(count) {
            warnings.insert(
                0,
                format!(
                    "class `{rare}` has {count} rows, too few for {outer} outer and {inner} inner folds; lower the folds in [evaluation], or merge or drop the class."
                ),
            );
        } else if count < 10 * outer {
            warnings.push(format!(
                "class `{rare}` has only {count} rows: each outer test fold holds about {:.0} of them, so per-fold calibration metrics will be noisy.",
                count as f64 / outer as f64
            ));
        }
    }
    Inspection {
        schema,
        classes,
        warnings,
    }
}
