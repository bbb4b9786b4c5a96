//! A fitted calibration as a small JSON document that any language can
//! apply, and back. The format (`candor score --fit METHOD --save FILE`
//! writes it, `candor apply` reads it):
//!
//! ```json
//! {"format": "candor-calibration-map", "version": 1,
//!  "method": "platt", "classes": ["no", "yes"], "strategy": "binary",
//!  "reads": "logit", "maps": [{"class": "yes", "kind": "sigmoid", "a": -1.2, "b": 0.3}]}
//! ```
//!
//! `reads` says what each map is given for a row: `logit`, the log-odds
//! ln(p / (1 - p)) of the class's probability p clipped to
//! [1e-15, 1 - 1e-15], or `probability`, p itself. Binary tasks have one map
//! for the positive class (the second of `classes`); the other class gets
//! 1 - p. Multiclass tasks have one map per class, and each row is then
//! divided by its sum (uniform if the sum is 0). Map kinds, for an input s:
//!
//! - `sigmoid` (Platt): p = 1 / (1 + exp(a s + b)), with s first clipped to
//!   `clip` = [low, high] when the map has it (scores beyond the
//!   calibration scores' outer fences);
//! - `piecewise_linear` (isotonic): linear interpolation through the points
//!   (x, y), constant beyond the first and last x;
//! - `steps` (histogram binning): y[i] for the first i with s <= upper[i],
//!   the last y when s exceeds every upper bound;
//! - `beta`: p = 1 / (1 + exp(-(c + a ln s - b ln(1 - s)))), with s clipped
//!   to [1e-12, 1 - 1e-12];
//! - `constant`: p = value (a degenerate calibration set);
//! - `identity`: p unchanged (no calibration).
//!
//! Temperature scaling has `"temperature": T` and no maps: p_k is replaced
//! by p_k^(1/T) / sum_j p_j^(1/T).

use super::{
    BetaMap, BinaryMap, Calibration, Constant, FittedOvr, HistogramMap, Input, IsotonicMap,
    PlattMap,
};
use crate::common::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// One class's map.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum MapSpec {
    Sigmoid {
        a: f64,
        b: f64,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        clip: Option<[f64; 2]>,
    },
    PiecewiseLinear {
        x: Vec<f64>,
        y: Vec<f64>,
    },
    Steps {
        upper: Vec<f64>,
        y: Vec<f64>,
    },
    Beta {
        a: f64,
        b: f64,
        c: f64,
    },
    Constant {
        value: f64,
    },
}

/// A map with the class it is for.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClassMap {
    pub class: String,
    #[serde(flatten)]
    pub map: MapSpec,
}

/// What a fitted calibration exports, before the classes are named.
#[derive(Debug, Clone, PartialEq)]
pub enum Exported {
    Identity,
    Temperature(f64),
    Maps { input: Input, maps: Vec<MapSpec> },
}

/// The file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CalibrationFile {
    pub format: String,
    pub version: u32,
    pub method: String,
    pub classes: Vec<String>,
    pub strategy: String,
    /// `logit`, `probability`, or absent for identity and temperature.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reads: Option<String>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub maps: Vec<ClassMap>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub temperature: Option<f64>,
    /// What the predictions the map was fitted on held, when not
    /// probabilities: `log-odds` or `margin`. The map then reads that
    /// score itself where `reads` is `logit`, and its sigmoid (softmax for
    /// several classes) where `reads` is `probability`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scores: Option<String>,
}

pub const FORMAT: &str = "candor-calibration-map";

impl CalibrationFile {
    /// Names the classes of an export.
    pub fn new(method: &str, strategy: &str, classes: &[String], e: Exported) -> Self {
        let mut f = CalibrationFile {
            format: FORMAT.into(),
            version: 1,
            method: method.into(),
            classes: classes.to_vec(),
            strategy: strategy.into(),
            reads: None,
            maps: Vec::new(),
            temperature: None,
            scores: None,
        };
        match e {
            Exported::Identity => {}
            Exported::Temperature(beta) => f.temperature = Some(1.0 / beta),
            Exported::Maps { input, maps } => {
                f.reads = Some(
                    match input {
                        Input::Native => "logit",
                        Input::Probability => "probability",
                    }
                    .into(),
                );
                let names: Vec<&String> = if classes.len() == 2 {
                    vec![&classes[1]]
                } else {
                    classes.iter().collect()
                };
                f.maps = names
                    .into_iter()
                    .zip(maps)
                    .map(|(c, map)| ClassMap {
                        class: c.clone(),
                        map,
                    })
                    .collect();
            }
        }
        f
    }

    /// Checks a file read from disk and rebuilds the calibration it holds.
    pub fn calibration(&self, path: &str) -> Result<Box<dyn Calibration>> {
        let bad = |m: String| Error::Data(format!("{path}: {m}"));
        if self.format != FORMAT || self.version != 1 {
            return Err(bad(format!(
                "not a version 1 `{FORMAT}` file; write one with `candor score --fit METHOD --save FILE`"
            )));
        }
        let k = self.classes.len();
        if k < 2 {
            return Err(bad("`classes` needs at least two classes".into()));
        }
        if let Some(t) = self.temperature {
            if !(t.is_finite() && t > 0.0) {
                return Err(bad(format!("temperature {t} must be a positive number")));
            }
            return Ok(super::temperature::from_beta(1.0 / t, k));
        }
        if self.maps.is_empty() {
            return Ok(Box::new(super::Identity));
        }
        let input = match self.reads.as_deref() {
            Some("logit") => Input::Native,
            Some("probability") => Input::Probability,
            other => {
                return Err(bad(format!(
                    "`reads` is {other:?}; it must be \"logit\" or \"probability\""
                )))
            }
        };
        let want: Vec<&String> = if k == 2 {
            vec![&self.classes[1]]
        } else {
            self.classes.iter().collect()
        };
        if self.maps.len() != want.len() || self.maps.iter().zip(&want).any(|(m, c)| &&m.class != c)
        {
            return Err(bad(format!(
                "`maps` must hold one map per class, in order: {}",
                want.iter()
                    .map(|c| c.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )));
        }
        let maps = self
            .maps
            .iter()
            .map(|m| binary_map(&m.map).map_err(|e| bad(format!("class `{}`: {e}", m.class))))
            .collect::<Result<Vec<_>>>()?;
        Ok(Box::new(FittedOvr {
            input,
            maps,
            n_classes: k,
            warnings: Vec::new(),
        }))
    }
}

fn binary_map(m: &MapSpec) -> std::result::Result<Box<dyn BinaryMap>, String> {
    let finite = |v: &[f64]| v.iter().all(|x| x.is_finite());
    Ok(match m {
        MapSpec::Sigmoid { a, b, clip }
            if finite(&[*a, *b]) && clip.is_none_or(|[lo, hi]| lo <= hi && finite(&[lo, hi])) =>
        {
            let [low, high] = clip.unwrap_or([f64::NEG_INFINITY, f64::INFINITY]);
            Box::new(PlattMap {
                a: *a,
                b: *b,
                low,
                high,
                clipped: 0,
                flat: false,
            })
        }
        MapSpec::PiecewiseLinear { x, y }
            if !x.is_empty()
                && x.len() == y.len()
                && finite(x)
                && finite(y)
                && x.windows(2).all(|w| w[0] <= w[1]) =>
        {
            Box::new(IsotonicMap {
                x: x.clone(),
                y: y.clone(),
            })
        }
        MapSpec::Steps { upper, y }
            if y.len() == upper.len() + 1
                && finite(upper)
                && finite(y)
                && upper.windows(2).all(|w| w[0] <= w[1]) =>
        {
            Box::new(HistogramMap {
                boundaries: upper.clone(),
                rates: y.clone(),
            })
        }
        MapSpec::Beta { a, b, c } if finite(&[*a, *b, *c]) => Box::new(BetaMap {
            a: *a,
            b: *b,
            c: *c,
            smoothed: false,
            reduced: None,
        }),
        MapSpec::Constant { value } if value.is_finite() => Box::new(Constant(*value)),
        _ => return Err("a map with missing, non-finite or unordered numbers".into()),
    })
}
