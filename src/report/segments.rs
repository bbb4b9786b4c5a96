//! Segments (`candor score --group`): each group of rows of a dataset,
//! reported on its own. A segment repeats rows of its whole and shares its
//! folds, so it is shown in this table and never ranked or counted as an
//! independent dataset.

use super::diagnosis::diagnose;
use super::tables::{argmin, badness, direction, mean};
use super::{test_over_train, Results};
use crate::common::table::{Table, Value};
use crate::experiment::summary::fold_values;
use crate::metrics::Metric;

/// One row per (segment, family): the raw model's value of the deciding
/// metric, the best method on the segment, and the raw diagnosis. `None`
/// when the results have no segments.
pub fn table(results: &Results, metric: &Metric) -> Option<Table> {
    let segments: Vec<_> = results.segments().collect();
    if segments.is_empty() {
        return None;
    }
    let m = metric.name;
    let mut t = Table::new(
        "segments",
        &format!("Each segment on its own: raw {m}, the best method, and the raw diagnosis"),
        &[
            "segment",
            "of",
            "family",
            &format!("raw_{m}"),
            "best_method",
            &format!("best_{m}"),
            "diagnosis",
        ],
    );
    t.notes.push(format!(
        "Segments are groups of rows of the dataset named under `of`, calibrated by maps fitted on every group's rows of the other folds; they are not independent datasets, so the ranking and the diagnosis counts leave them out. Best = best fold mean of {m} ({}).",
        direction(metric)
    ));
    let diagnosable = [
        "calibration_slope",
        "calibration_intercept",
        "calibration_gap",
    ]
    .iter()
    .all(|x| results.exp.metrics.iter().any(|y| y == x));
    for s in segments {
        for f in &results.exp.families {
            let values: Vec<f64> = results
                .exp
                .methods
                .iter()
                .map(|method| mean(results, &s.name, &f.name, method, m))
                .collect();
            let scored: Vec<f64> = values.iter().map(|&v| badness(metric, v)).collect();
            let best = argmin(&scored);
            let label = if diagnosable {
                let cells = results.cells(&s.name, &f.name);
                let v = |x: &str| fold_values(&cells, "none", x);
                diagnose(
                    &v("calibration_slope"),
                    &v("calibration_intercept"),
                    &v("calibration_gap"),
                    test_over_train(&cells),
                )
                .label()
            } else {
                "–".into()
            };
            t.rows.push(vec![
                Value::from(s.name.as_str()),
                s.segment_of.as_deref().unwrap_or_default().into(),
                f.name.as_str().into(),
                values.first().copied().unwrap_or(f64::NAN).into(),
                best.map_or("–".into(), |i| results.exp.methods[i].as_str().into()),
                best.map_or(f64::NAN, |i| values[i]).into(),
                label.into(),
            ]);
        }
    }
    Some(t)
}
