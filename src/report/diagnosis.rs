//! Naming a family's habitual miscalibration from three raw-model
//! quantities measured on held-out folds:
//!
//! - the calibration slope b of logit P(y) = a + b logit(p): b < 1 means
//!   forecasts are too extreme (over-confident), b > 1 too moderate
//!   (under-confident, the sigmoid-shaped reliability curve);
//! - the calibration intercept a with b fixed at 1 (calibration in the
//!   large): a < 0 means the forecasts are too high on average (biased up),
//!   a > 0 too low (biased down);
//! - the signed gap, mean top-label confidence minus accuracy, which
//!   catches over- or under-confidence the slope misses when it is poorly
//!   determined; it is read only when neither the slope nor the intercept
//!   gave a finding, because a level bias moves it too.
//!
//! A finding needs both a size worth acting on and a 95% fold interval
//! that excludes the ideal, so noise alone is called near-calibrated. The
//! sizes are our own choices, tested on synthetic sources of known shape:
//! a slope outside [0.85, 1.15], an intercept beyond 0.2 on the logit scale
//! (about 5 percentage points at p = 0.5), a gap beyond 0.03.
//! Binary tasks read the positive-class forecast, multiclass tasks the
//! top-label confidence.

use super::{test_over_train, Results};
use crate::common::stats::fold_interval;
use crate::common::table::{Table, Value};
use crate::experiment::score::MARGIN_NOTE;
use crate::experiment::summary::fold_values;

/// How far the slope must be from 1 to count.
pub const SLOPE_MARGIN: f64 = 0.15;
/// How far the intercept must be from 0 (logit scale) to count.
pub const INTERCEPT_MARGIN: f64 = 0.2;
/// How far the signed gap must be from 0 to count.
pub const GAP_MARGIN: f64 = 0.03;

/// The spread of the forecasts relative to what is observed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    OverConfident,
    UnderConfident,
}

/// The level of the forecasts relative to what is observed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Bias {
    Up,
    Down,
}

/// A diagnosis; neither finding means near-calibrated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Diagnosis {
    pub shape: Option<Shape>,
    pub bias: Option<Bias>,
    /// False when a quantity was undefined in some fold.
    pub determined: bool,
}

impl Diagnosis {
    /// The words the table shows.
    pub fn label(&self) -> String {
        if !self.determined {
            return "undetermined".into();
        }
        let mut parts = Vec::new();
        match self.shape {
            Some(Shape::OverConfident) => parts.push("over-confident"),
            Some(Shape::UnderConfident) => parts.push("under-confident"),
            None => {}
        }
        match self.bias {
            Some(Bias::Up) => parts.push("biased up"),
            Some(Bias::Down) => parts.push("biased down"),
            None => {}
        }
        if parts.is_empty() {
            "near-calibrated".into()
        } else {
            parts.join(", ")
        }
    }
}

/// Mean with its interval from per-fold values.
type Estimate = (f64, f64, f64);

/// Diagnoses from per-fold slope, intercept and gap values; `ratio` is
/// test rows over training rows for the corrected interval.
pub fn diagnose(slope: &[f64], intercept: &[f64], gap: &[f64], ratio: f64) -> Diagnosis {
    let est = |v: &[f64]| -> Option<Estimate> {
        (v.len() >= 2 && v.iter().all(|x| x.is_finite())).then(|| fold_interval(v, ratio))
    };
    let (Some(s), Some(a), Some(g)) = (est(slope), est(intercept), est(gap)) else {
        return Diagnosis {
            shape: None,
            bias: None,
            determined: false,
        };
    };
    let mut shape = if s.0 <= 1.0 - SLOPE_MARGIN && s.2 < 1.0 {
        Some(Shape::OverConfident)
    } else if s.0 >= 1.0 + SLOPE_MARGIN && s.1 > 1.0 {
        Some(Shape::UnderConfident)
    } else {
        None
    };
    let bias = if a.0 <= -INTERCEPT_MARGIN && a.2 < 0.0 {
        Some(Bias::Up)
    } else if a.0 >= INTERCEPT_MARGIN && a.1 > 0.0 {
        Some(Bias::Down)
    } else {
        None
    };
    // A level bias also moves the gap, so the gap speaks only when
    // neither the slope nor the intercept has.
    if shape.is_none() && bias.is_none() {
        if g.0 >= GAP_MARGIN && g.1 > 0.0 {
            shape = Some(Shape::OverConfident);
        } else if g.0 <= -GAP_MARGIN && g.2 < 0.0 {
            shape = Some(Shape::UnderConfident);
        }
    }
    Diagnosis {
        shape,
        bias,
        determined: true,
    }
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len().max(1) as f64
}

/// The diagnosis table: one row per (dataset, family) of the raw model,
/// then one row per family over all datasets counting each property.
pub fn table(results: &Results) -> Table {
    let mut t = Table::new(
        "diagnosis",
        "Each family's typical miscalibration before calibration",
        &[
            "dataset",
            "family",
            "forecast",
            "slope",
            "intercept",
            "gap",
            "diagnosis",
        ],
    );
    t.notes.push(format!(
        "Over-confident: calibration slope <= {:.2} with its 95% fold interval below 1 (or, when neither slope nor intercept gives a finding, a signed gap >= {GAP_MARGIN} with its interval above 0); under-confident: the mirror image. Biased up or down: calibration intercept <= -{INTERCEPT_MARGIN} or >= {INTERCEPT_MARGIN} (logit scale) with its interval excluding 0. Otherwise near-calibrated.",
        1.0 - SLOPE_MARGIN
    ));
    t.notes.push("Slope, intercept and gap are fold means of the raw model. Binary datasets read the positive-class forecast, multiclass datasets the top-label confidence.".into());
    t.notes
        .extend(convention_notes(&results.exp.families, &results.info));
    let has = [
        "calibration_slope",
        "calibration_intercept",
        "calibration_gap",
    ]
    .iter()
    .all(|m| results.exp.metrics.iter().any(|x| x == m));
    if !has {
        t.notes.push("Not available: these results lack calibration_slope, calibration_intercept or calibration_gap; list them in the manifest's `metrics`.".into());
        return t;
    }
    let mut overall = Vec::new();
    for f in &results.exp.families {
        let mut found_all = Vec::new();
        for d in results.datasets() {
            let cells = results.cells(&d.name, &f.name);
            let s = fold_values(&cells, "none", "calibration_slope");
            let a = fold_values(&cells, "none", "calibration_intercept");
            let g = fold_values(&cells, "none", "calibration_gap");
            // Scored margins have no probability to diagnose.
            let margins = cells.iter().any(|c| {
                c.results
                    .iter()
                    .any(|m| m.method == "none" && m.strategy == MARGIN_NOTE)
            });
            let found = diagnose(&s, &a, &g, test_over_train(&cells));
            let label = if margins {
                "not applicable: margins are not probabilities".to_string()
            } else {
                found_all.push(found);
                found.label()
            };
            let forecast = if results.classes(&d.name) > 2 {
                "top label"
            } else {
                "positive class"
            };
            t.rows.push(vec![
                d.name.as_str().into(),
                f.name.as_str().into(),
                forecast.into(),
                mean(&s).into(),
                mean(&a).into(),
                mean(&g).into(),
                label.as_str().into(),
            ]);
        }
        overall.push(vec![
            Value::from("all datasets"),
            f.name.as_str().into(),
            "".into(),
            f64::NAN.into(),
            f64::NAN.into(),
            f64::NAN.into(),
            if found_all.is_empty() {
                "not applicable".into()
            } else {
                summarise(&found_all).into()
            },
        ]);
    }
    t.rows.extend(overall);
    t
}

/// For families whose raw probability is one of several conventions (boosted
/// stumps), which one these results used, since the raw diagnosis depends
/// on it while calibrated results do not. `info` is `run.json`, where the
/// checked parameters are recorded.
fn convention_notes(
    families: &[crate::experiment::manifest::FamilySpec],
    info: &serde_json::Value,
) -> Vec<String> {
    families
        .iter()
        .enumerate()
        .filter(|(_, f)| f.kind == "boosted_stumps")
        .map(|(i, f)| {
            let used = info["settings"]["families"][i]["params"]["probability"]
                .as_str()
                .unwrap_or("logistic");
            let (this, other, story) = if used == "vote_share" {
                (
                    "the weighted vote share, each class's share of the stump weights ((1 + F/sum alpha)/2 for two classes)",
                    "logistic",
                    "the logistic correction p = 1/(1+exp(-2F)) tends to read over-confident where the vote share reads under-confident",
                )
            } else {
                (
                    "the logistic correction p = 1/(1+exp(-2F)) (Friedman, Hastie & Tibshirani 2000)",
                    "vote_share",
                    "the weighted vote share squeezes forecasts towards the middle and reads strongly under-confident where this one tends to read over-confident",
                )
            };
            format!(
                "`{}` (boosted stumps): raw probabilities are {this}. The raw diagnosis depends on that convention ({story}); set `probability = \"{other}\"` in the family's params to compare like with like. The native score, and so every calibrated result, is the same under both.",
                f.name
            )
        })
        .collect()
}

/// How often each property holds over a family's datasets, counted
/// separately: a row that is over-confident and biased down counts for
/// both, so "over-confident in 13 of 14" means just that. Properties that
/// never hold are left out; the order is fixed.
pub fn summarise(rows: &[Diagnosis]) -> String {
    let n = rows.len();
    let count = |f: &dyn Fn(&Diagnosis) -> bool| rows.iter().filter(|d| f(d)).count();
    let found = |d: &Diagnosis| d.determined;
    let parts: [(&str, usize); 6] = [
        (
            "over-confident",
            count(&|d| found(d) && d.shape == Some(Shape::OverConfident)),
        ),
        (
            "under-confident",
            count(&|d| found(d) && d.shape == Some(Shape::UnderConfident)),
        ),
        (
            "biased up",
            count(&|d| found(d) && d.bias == Some(Bias::Up)),
        ),
        (
            "biased down",
            count(&|d| found(d) && d.bias == Some(Bias::Down)),
        ),
        (
            "near-calibrated",
            count(&|d| found(d) && d.shape.is_none() && d.bias.is_none()),
        ),
        ("undetermined", count(&|d| !d.determined)),
    ];
    parts
        .iter()
        .filter(|(_, k)| *k > 0)
        .map(|(what, k)| format!("{what} in {k} of {n}"))
        .collect::<Vec<_>>()
        .join("; ")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::common::params::Params;
    use crate::experiment::manifest::FamilySpec;

    #[test]
    fn boosted_stumps_state_their_probability_convention() {
        let family = |name: &str, kind: &str| FamilySpec {
            name: name.into(),
            kind: kind.into(),
            params: Params::default(),
            program: None,
        };
        let families = [family("lr", "logistic"), family("ada", "boosted_stumps")];
        let info = serde_json::json!({"settings": {"families": [
            {"params": {"l2": 1.0}},
            {"params": {"rounds": 200, "probability": "logistic"}}
        ]}});
        let notes = convention_notes(&families, &info);
        assert_eq!(notes.len(), 1);
        assert!(notes[0]
            .starts_with("`ada` (boosted stumps): raw probabilities are the logistic correction"));
        assert!(notes[0].contains("probability = \"vote_share\""));
        let info = serde_json::json!({"settings": {"families": [
            {"params": {}},
            {"params": {"rounds": 200, "probability": "vote_share"}}
        ]}});
        let notes = convention_notes(&families, &info);
        assert!(notes[0].contains("the weighted vote share"), "{}", notes[0]);
        assert!(notes[0].contains("probability = \"logistic\""));
    }
}
