//! Gaussian naive Bayes via linfa-bayes.
//!
//! Probabilities are computed here from linfa's joint log-likelihoods with a
//! max-shifted softmax: linfa's own `predict_proba` exponentiates before
//! normalising and returns NaN when every likelihood underflows, which happens
//! on wide datasets.

use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::{Error, Result};
use crate::common::params::{ParamKind, ParamSpec, ParamValue, Params};
use crate::common::scores::{binary_from_log_odds, log_softmax_rows, Scores};
use linfa::prelude::*;
use linfa_bayes::{GaussianNb, NaiveBayes};
use ndarray::{Array1, Array2, ArrayView2};

pub const FAMILY: Family = Family {
    kind: "naive_bayes",
    about: "Gaussian naive Bayes; known for over-confident, extreme probabilities",
    params: &[ParamSpec {
        name: "variance_floor",
        kind: ParamKind::Float { min: 0.0, max: 1.0 },
        default: ParamValue::Float(1e-9),
        about: "fraction of the largest feature variance added to every variance",
    }],
    build: Build::Learner(|p: &Params| {
        Box::new(NaiveBayesLearner {
            variance_floor: p.float("variance_floor"),
        })
    }),
    revision: 0,
    cost: super::Cost::Linear(1.3e-8),
};

struct NaiveBayesLearner {
    variance_floor: f64,
}

struct Fitted {
    model: GaussianNb<f64, usize>,
    n_classes: usize,
}

impl Learner for NaiveBayesLearner {
    fn wants_standardised(&self) -> bool {
        false
    }

    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        _seed: u64,
    ) -> Result<Box<dyn Model>> {
        // A view, not a copy: at a million rows a copy of the training
        // matrix is more memory than the rest of the fit.
        let data = DatasetBase::new(x, Array1::from(y.to_vec()));
        let model = GaussianNb::params()
            .var_smoothing(self.variance_floor)
            .fit(&data)
            .map_err(|e| {
                Error::Fit(format!(
                    "Gaussian naive Bayes did not fit: {e}; try a larger `variance_floor`"
                ))
            })?;
        Ok(Box::new(Fitted { model, n_classes }))
    }
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let jll = self.model.joint_log_likelihood(x);
        // A class unseen in training has no likelihood: log-score -inf.
        let mut scores = Array2::from_elem((x.nrows(), self.n_classes), f64::NEG_INFINITY);
        for (class, values) in jll {
            scores.column_mut(*class).assign(&values);
        }
        if self.n_classes == 2 {
            let z: Vec<f64> = scores.rows().into_iter().map(|r| r[1] - r[0]).collect();
            Scores {
                proba: binary_from_log_odds(&z),
                native: Some(Array1::from(z).insert_axis(ndarray::Axis(1))),
            }
        } else {
            // Log-probabilities stay finite where probabilities underflow.
            let native = log_softmax_rows(&scores);
            Scores {
                proba: native.mapv(f64::exp),
                native: Some(native),
            }
        }
    }
}
