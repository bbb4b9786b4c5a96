//! A small multilayer perceptron: one or two ReLU hidden layers and a
//! softmax output, trained on the log loss by Adam (Kingma & Ba 2015) in
//! mini-batches, with early stopping on a stratified internal validation
//! split (the weights of the best validation loss are kept).
//!
//! Initial weights are Glorot-uniform from the seeded generator and each
//! epoch's row order is a seeded shuffle, so a seed fixes the model. The
//! output layer's logits are the native score (for binary tasks the
//! difference of the two logits, the log-odds).

use super::{binary_from_log_odds, log_softmax_rows, Family, Learner, Model, Scores};
use crate::error::{Error, Result};
use crate::folds;
use crate::params::{ParamKind, ParamSpec, ParamValue};
use crate::rng::SplitMix64;
use ndarray::{Array1, Array2, ArrayView2, Axis};

pub const FAMILY: Family = Family {
    kind: "mlp",
    about: "multilayer perceptron (ReLU, softmax), Adam with early stopping on an internal split",
    params: &[
        ParamSpec {
            name: "hidden",
            kind: ParamKind::Int { min: 1, max: 4096 },
            default: ParamValue::Int(64),
            about: "units in the first hidden layer",
        },
        ParamSpec {
            name: "hidden2",
            kind: ParamKind::Int { min: 0, max: 4096 },
            default: ParamValue::Int(0),
            about: "units in a second hidden layer (0 = none)",
        },
        ParamSpec {
            name: "learning_rate",
            kind: ParamKind::Float {
                min: 1e-6,
                max: 1.0,
            },
            default: ParamValue::Float(1e-3),
            about: "Adam step size",
        },
        ParamSpec {
            name: "l2",
            kind: ParamKind::Float { min: 0.0, max: 1e3 },
            default: ParamValue::Float(1e-4),
            about: "L2 penalty on the weights, per training row",
        },
        ParamSpec {
            name: "batch",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(200),
            about: "rows per mini-batch",
        },
        ParamSpec {
            name: "max_epochs",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(200),
            about: "passes over the training rows at most",
        },
        ParamSpec {
            name: "patience",
            kind: ParamKind::Int { min: 1, max: 1000 },
            default: ParamValue::Int(10),
            about: "epochs without a better validation loss before stopping",
        },
        ParamSpec {
            name: "tol",
            kind: ParamKind::Float { min: 0.0, max: 1.0 },
            default: ParamValue::Float(1e-4),
            about: "smallest fall in validation log loss that counts as better (scikit-learn's default tolerance)",
        },
    ],
    build: |p| {
        Box::new(Mlp {
            hidden: p.int("hidden") as usize,
            hidden2: p.int("hidden2") as usize,
            learning_rate: p.float("learning_rate"),
            l2: p.float("l2"),
            batch: p.int("batch") as usize,
            max_epochs: p.int("max_epochs") as usize,
            patience: p.int("patience") as usize,
            tol: p.float("tol"),
        })
    },
};

struct Mlp {
    hidden: usize,
    hidden2: usize,
    learning_rate: f64,
    l2: f64,
    batch: usize,
    max_epochs: usize,
    patience: usize,
    tol: f64,
}

/// Weights and biases of every layer.
#[derive(Clone)]
struct Net {
    w: Vec<Array2<f64>>,
    b: Vec<Array1<f64>>,
}

impl Net {
    fn new(sizes: &[usize], rng: &mut SplitMix64) -> Net {
        let mut w = Vec::new();
        let mut b = Vec::new();
        for pair in sizes.windows(2) {
            let limit = (6.0 / (pair[0] + pair[1]) as f64).sqrt();
            w.push(Array2::from_shape_fn((pair[0], pair[1]), |_| {
                (2.0 * rng.unit() - 1.0) * limit
            }));
            b.push(Array1::zeros(pair[1]));
        }
        Net { w, b }
    }

    /// The activations of every layer; the last holds the logits.
    fn forward(&self, x: ArrayView2<'_, f64>) -> Vec<Array2<f64>> {
        let mut acts = vec![x.to_owned()];
        for (l, (w, b)) in self.w.iter().zip(&self.b).enumerate() {
            let mut z = acts[l].dot(w) + b;
            if l + 1 < self.w.len() {
                z.mapv_inplace(|v| v.max(0.0));
            }
            acts.push(z);
        }
        acts
    }

    fn logits(&self, x: ArrayView2<'_, f64>) -> Array2<f64> {
        self.forward(x).pop().unwrap_or_default()
    }
}

/// Mean log loss of the logits against the labels.
fn loss(logits: &Array2<f64>, y: &[usize]) -> f64 {
    let lp = log_softmax_rows(logits);
    -y.iter().enumerate().map(|(i, &c)| lp[[i, c]]).sum::<f64>() / y.len() as f64
}

/// Adam's running moments for one array.
struct Moments {
    m: Vec<f64>,
    v: Vec<f64>,
}

impl Learner for Mlp {
    fn wants_standardised(&self) -> bool {
        true
    }

    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        seed: u64,
    ) -> Result<Box<dyn Model>> {
        let mut rng = SplitMix64::new(seed);
        // A stratified tenth of the rows decides when to stop.
        let split = folds::stratified(y, n_classes, 10, crate::rng::derive_seed(seed, &["valid"]));
        let (train, valid) = folds::split(&split, 0);
        if valid.is_empty() || train.is_empty() {
            return Err(Error::Fit(
                "too few rows for the multilayer perceptron's internal validation split".into(),
            ));
        }
        let xt = x.select(Axis(0), &train);
        let yt: Vec<usize> = train.iter().map(|&i| y[i]).collect();
        let xv = x.select(Axis(0), &valid);
        let yv: Vec<usize> = valid.iter().map(|&i| y[i]).collect();

        let mut sizes = vec![x.ncols(), self.hidden];
        if self.hidden2 > 0 {
            sizes.push(self.hidden2);
        }
        sizes.push(n_classes);
        let mut net = Net::new(&sizes, &mut rng);
        let mut mw: Vec<Moments> = net
            .w
            .iter()
            .map(|w| Moments {
                m: vec![0.0; w.len()],
                v: vec![0.0; w.len()],
            })
            .collect();
        let mut mb: Vec<Moments> = net
            .b
            .iter()
            .map(|b| Moments {
                m: vec![0.0; b.len()],
                v: vec![0.0; b.len()],
            })
            .collect();
        let (beta1, beta2, eps): (f64, f64, f64) = (0.9, 0.999, 1e-8);
        let mut step = 0i32;
        let mut best = (loss(&net.logits(xv.view()), &yv), net.clone());
        let mut stale = 0;
        let mut order: Vec<usize> = (0..train.len()).collect();
        let n = train.len() as f64;
        for _ in 0..self.max_epochs {
            rng.shuffle(&mut order);
            for chunk in order.chunks(self.batch) {
                let xb = xt.select(Axis(0), chunk);
                let acts = net.forward(xb.view());
                let m = chunk.len() as f64;
                // d loss / d logits = softmax - onehot, averaged.
                let mut delta = log_softmax_rows(acts.last().expect("output layer")).mapv(f64::exp);
                for (r, &i) in chunk.iter().enumerate() {
                    delta[[r, yt[i]]] -= 1.0;
                }
                delta /= m;
                step += 1;
                for l in (0..net.w.len()).rev() {
                    let gw = acts[l].t().dot(&delta) + &net.w[l] * (self.l2 / n);
                    let gb = delta.sum_axis(Axis(0));
                    if l > 0 {
                        let mut back = delta.dot(&net.w[l].t());
                        back.zip_mut_with(&acts[l], |d, &a| {
                            if a <= 0.0 {
                                *d = 0.0;
                            }
                        });
                        delta = back;
                    }
                    let c1 = 1.0 - beta1.powi(step);
                    let c2 = 1.0 - beta2.powi(step);
                    let lr = self.learning_rate;
                    let update = |p: &mut f64, g: f64, m: &mut f64, v: &mut f64| {
                        *m = beta1 * *m + (1.0 - beta1) * g;
                        *v = beta2 * *v + (1.0 - beta2) * g * g;
                        *p -= lr * (*m / c1) / ((*v / c2).sqrt() + eps);
                    };
                    let Moments { m: wm, v: wv } = &mut mw[l];
                    for (((p, g), m), v) in net.w[l]
                        .iter_mut()
                        .zip(gw.iter())
                        .zip(wm.iter_mut())
                        .zip(wv.iter_mut())
                    {
                        update(p, *g, m, v);
                    }
                    let Moments { m: bm, v: bv } = &mut mb[l];
                    for (((p, g), m), v) in net.b[l]
                        .iter_mut()
                        .zip(gb.iter())
                        .zip(bm.iter_mut())
                        .zip(bv.iter_mut())
                    {
                        update(p, *g, m, v);
                    }
                }
            }
            let v = loss(&net.logits(xv.view()), &yv);
            if !v.is_finite() {
                return Err(Error::Fit(
                    "the multilayer perceptron diverged; lower `learning_rate`".into(),
                ));
            }
            if v < best.0 - self.tol {
                best = (v, net.clone());
                stale = 0;
            } else {
                stale += 1;
                if stale >= self.patience {
                    break;
                }
            }
        }
        Ok(Box::new(Fitted { net: best.1 }))
    }
}

struct Fitted {
    net: Net,
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let logits = self.net.logits(x);
        if logits.ncols() == 2 {
            let z: Vec<f64> = logits.rows().into_iter().map(|r| r[1] - r[0]).collect();
            return Scores {
                proba: binary_from_log_odds(&z),
                native: Some(Array1::from(z).insert_axis(Axis(1))),
            };
        }
        let lp = log_softmax_rows(&logits);
        Scores {
            proba: lp.mapv(f64::exp),
            native: Some(logits),
        }
    }
}
