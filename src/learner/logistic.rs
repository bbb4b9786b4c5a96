//! L2-regularised logistic regression, binary and multinomial, via
//! linfa-logistic.
//!
//! linfa labels the *more frequent* training class as its positive class, so
//! the binary model's log-odds are flipped when that class is not ours; the
//! multinomial model orders its columns by class value, which we map back
//! explicitly rather than assume.

use super::{binary_from_log_odds, softmax_rows, Family, Learner, Model, Scores};
use crate::error::{Error, Result};
use crate::params::{ParamKind, ParamSpec, ParamValue};
use linfa::prelude::*;
use linfa_logistic::{LogisticRegression, MultiLogisticRegression};
use ndarray::{Array1, Array2, ArrayView2};

pub const FAMILY: Family = Family {
    kind: "logistic",
    about: "L2-regularised logistic regression (binary or multinomial) on standardised features",
    params: &[
        ParamSpec {
            name: "l2",
            kind: ParamKind::Float { min: 0.0, max: 1e6 },
            default: ParamValue::Float(1.0),
            about: "weight of the squared-coefficient penalty (linfa's alpha); larger shrinks more",
        },
        ParamSpec {
            name: "max_iter",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(200),
            about: "iteration limit of the L-BFGS solver",
        },
    ],
    build: |p| {
        Box::new(Logistic {
            l2: p.float("l2"),
            max_iter: p.int("max_iter") as u64,
        })
    },
};

struct Logistic {
    l2: f64,
    max_iter: u64,
}

enum Fitted {
    /// Log-odds of class 1 are `x·w + b`.
    Binary { w: Array1<f64>, b: f64 },
    /// Logits of every class are `x·W + b`, columns in class order.
    Multi { w: Array2<f64>, b: Array1<f64> },
}

impl Learner for Logistic {
    fn wants_standardised(&self) -> bool {
        true
    }

    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        _seed: u64,
    ) -> Result<Box<dyn Model>> {
        let data = Dataset::new(x.to_owned(), Array1::from(y.to_vec()));
        let fail = |e: linfa_logistic::error::Error| {
            Error::Fit(format!(
                "logistic regression did not fit: {e}; try a larger `l2` or `max_iter`"
            ))
        };
        let fitted = if n_classes == 2 {
            let model = LogisticRegression::default()
                .alpha(self.l2)
                .max_iterations(self.max_iter)
                .fit(&data)
                .map_err(fail)?;
            let flip = if model.labels().pos.class == 1 {
                1.0
            } else {
                -1.0
            };
            Fitted::Binary {
                w: model.params() * flip,
                b: model.intercept() * flip,
            }
        } else {
            let model = MultiLogisticRegression::default()
                .alpha(self.l2)
                .max_iterations(self.max_iter)
                .fit(&data)
                .map_err(fail)?;
            // Columns follow `classes()`; place each at its class index so a
            // class absent from training gets a logit of -inf (probability 0).
            let mut w = Array2::zeros((x.ncols(), n_classes));
            let mut b = Array1::from_elem(n_classes, f64::NEG_INFINITY);
            for (col, &class) in model.classes().iter().enumerate() {
                w.column_mut(class).assign(&model.params().column(col));
                b[class] = model.intercept()[col];
            }
            Fitted::Multi { w, b }
        };
        Ok(Box::new(fitted))
    }
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        match self {
            Fitted::Binary { w, b } => {
                let z = x.dot(w) + *b;
                Scores {
                    proba: binary_from_log_odds(z.as_slice().unwrap_or(&z.to_vec())),
                    native: z.insert_axis(ndarray::Axis(1)),
                }
            }
            Fitted::Multi { w, b } => {
                let logits = x.dot(w) + b;
                Scores {
                    proba: softmax_rows(&logits),
                    native: logits,
                }
            }
        }
    }
}
