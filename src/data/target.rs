//! The target column's labels as class indices: classes ordered
//! numerically when they are numbers, and a binary target's positive class
//! placed second, so "the probability" always means the positive class's.

use super::csv::Spelling;
use crate::common::error::{Error, Result};

/// Orders labels numerically when they are all numbers, else as text.
fn sort_labels(labels: &mut [String]) {
    let numeric: Option<Vec<f64>> = labels.iter().map(|l| l.parse::<f64>().ok()).collect();
    if numeric.is_some() {
        labels.sort_by(|a, b| {
            let (x, y) = (
                a.parse::<f64>().unwrap_or(0.0),
                b.parse::<f64>().unwrap_or(0.0),
            );
            x.total_cmp(&y).then_with(|| a.cmp(b))
        });
    } else {
        labels.sort();
    }
}

fn same_label(label: &str, wanted: &str) -> bool {
    label == wanted
        || matches!((label.parse::<f64>(), wanted.parse::<f64>()), (Ok(a), Ok(b)) if a == b)
        || (label.eq_ignore_ascii_case(wanted)
            && (wanted.eq_ignore_ascii_case("true") || wanted.eq_ignore_ascii_case("false")))
}

/// The class index of every row and the class names, in index order.
pub(super) fn encode_target(
    file: &str,
    target: &str,
    values: &[String],
    positive: Option<&str>,
    spelling: Spelling,
) -> Result<(Vec<usize>, Vec<String>)> {
    let positive_key = spelling.key("positive");
    let mut classes: Vec<String> = values.to_vec();
    classes.sort();
    classes.dedup();
    sort_labels(&mut classes);
    // More than 100 classes, each seen about twice or less on average, is a
    // continuous value or an identifier, not class labels.
    if classes.len() > 100 && classes.len() * 2 > values.len() {
        return Err(Error::Data(format!(
            "{file}: the target `{target}` has {} distinct values in {} rows, so it looks like a measurement or an identifier rather than class labels; choose a categorical target column (or bin the values into classes first)",
            classes.len(),
            values.len()
        )));
    }
    match classes.len() {
        1 => {
            return Err(Error::Data(format!(
                "{file}: the target `{target}` has a single class `{}` ({} rows); a classifier needs at least two classes",
                classes[0],
                values.len()
            )))
        }
        2 => {
            let pos = match positive {
                Some(p) => classes.iter().position(|c| same_label(c, p)).ok_or_else(|| {
                    Error::Data(format!(
                        "{file}: the positive class `{p}` is not a label of `{target}`; its labels are `{}` and `{}`",
                        classes[0], classes[1]
                    ))
                })?,
                None => classes
                    .iter()
                    .position(|c| same_label(c, "1") || same_label(c, "true"))
                    .filter(|_| {
                        classes
                            .iter()
                            .any(|c| same_label(c, "0") || same_label(c, "false"))
                    })
                    .ok_or_else(|| {
                        Error::Data(format!(
                            "{file}: the binary target `{target}` has labels `{}` and `{}`; set {positive_key} to the one whose probability you want",
                            classes[0], classes[1]
                        ))
                    })?,
            };
            if pos == 0 {
                classes.swap(0, 1);
            }
        }
        k => {
            if let Some(p) = positive {
                return Err(Error::Data(format!(
                    "{file}: {positive_key} `{p}` applies to binary targets, but `{target}` has {k} classes; remove {positive_key}"
                )));
            }
        }
    }
    let labels = values
        .iter()
        .map(|v| classes.iter().position(|c| c == v).unwrap_or(0))
        .collect();
    Ok((labels, classes))
}
