//! A small multilayer perceptron: one or two ReLU hidden layers and a
//! softmax output, trained on the log loss by Adam (Kingma & Ba 2015) in
//! mini-batches, with early stopping on a stratified internal validation
//! split (the weights of the best validation loss are kept).
//!
//! Initial weights are Glorot-uniform from the seeded generator and each
//! epoch's row order is a seeded shuffle, so a seed fixes the model. The
//! output layer's logits are the native score (for binary tasks the
//! difference of the two logits, the log-odds).

use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::{Error, Result};
use crate::common::params::{ParamKind, ParamSpec, ParamValue};
use crate::common::rng::SplitMix64;
use crate::common::scores::{binary_from_log_odds, log_softmax_rows, Scores};
use crate::data::folds;
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
            name: "stop_tolerance",
            kind: ParamKind::Float { min: 0.0, max: 1.0 },
            default: ParamValue::Float(1e-4),
            about: "smallest fall in validation log loss that counts as better (scikit-learn's default tolerance)",
        },
    ],
    build: Build::Learner(|p| {
        Box::new(Mlp {
            hidden: p.int("hidden") as usize,
            hidden2: p.int("hidden2") as usize,
            learning_rate: p.float("learning_rate"),
            l2: p.float("l2"),
            batch: p.int("batch") as usize,
            max_epochs: p.int("max_epochs") as usize,
            patience: p.int("patience") as usize,
            stop_tolerance: p.float("stop_tolerance"),
        })
    }),
    // 1: our own blocked matrix product and Adam's folded step size.
    revision: 1,
    cost: super::Cost::Linear(1.4e-6),
};

struct Mlp {
    hidden: usize,
    hidden2: usize,
    learning_rate: f64,
    l2: f64,
    batch: usize,
    max_epochs: usize,
    patience: usize,
    stop_tolerance: f64,
}

/// Below this many outputs a layer works on its transposed weights, so the
/// inner loops run over its (longer) inputs.
const NARROW: usize = 8;

/// One dense layer. Why flat buffers and a matrix product of our own rather
/// than ndarray's: the products here are small (a 200-row batch against tens
/// of weights), where allocation, packing and broadcasting cost more than
/// the arithmetic (measured with perf: about 60% of a fit). With this and
/// the AVX2 build of training the fit on magic_gamma went from 1.0 s to
/// 0.21 s.
#[derive(Clone)]
struct Layer {
    /// `n_in x n_out`, row-major.
    w: Vec<f64>,
    /// The transpose, `n_out x n_in`, kept in step with `w`.
    wt: Vec<f64>,
    b: Vec<f64>,
    n_in: usize,
    n_out: usize,
}

impl Layer {
    fn new(n_in: usize, n_out: usize, rng: &mut SplitMix64) -> Layer {
        let limit = (6.0 / (n_in + n_out) as f64).sqrt();
        let w: Vec<f64> = (0..n_in * n_out)
            .map(|_| (2.0 * rng.unit() - 1.0) * limit)
            .collect();
        let mut layer = Layer {
            wt: vec![0.0; w.len()],
            w,
            b: vec![0.0; n_out],
            n_in,
            n_out,
        };
        layer.transpose();
        layer
    }

    #[inline(always)]
    fn transpose(&mut self) {
        for k in 0..self.n_in {
            for j in 0..self.n_out {
                self.wt[j * self.n_in + k] = self.w[k * self.n_out + j];
            }
        }
    }

    /// `out = a w + b` for the rows of `a` (`m x n_in`).
    #[inline(always)]
    fn forward(&self, a: &[f64], out: &mut [f64]) {
        let (n_in, n_out) = (self.n_in, self.n_out);
        if n_out < NARROW {
            for (ar, or) in a.chunks_exact(n_in).zip(out.chunks_exact_mut(n_out)) {
                for (o, (wj, &bj)) in or.iter_mut().zip(self.wt.chunks_exact(n_in).zip(&self.b)) {
                    *o = dot(ar, wj) + bj;
                }
            }
        } else {
            gemm(out, n_out, Strided::rows(a, n_in), &self.w, Some(&self.b));
        }
    }

    /// The weight and bias gradients of the batch (`a` the layer's input,
    /// `delta` the loss gradient at its output), into `gw` (`n_in x n_out`)
    /// and `gb`; `gt` is scratch for the transposed form.
    #[inline(always)]
    fn gradient(&self, a: &[f64], delta: &[f64], gw: &mut [f64], gt: &mut [f64], gb: &mut [f64]) {
        let (n_in, n_out) = (self.n_in, self.n_out);
        gb.fill(0.0);
        for dr in delta.chunks_exact(n_out) {
            for (g, &d) in gb.iter_mut().zip(dr) {
                *g += d;
            }
        }
        // Both forms sum over the rows in order, so they agree exactly.
        if n_out < NARROW {
            gemm(gt, n_in, Strided::columns(delta, n_out), a, None);
            for k in 0..n_in {
                for j in 0..n_out {
                    gw[k * n_out + j] = gt[j * n_in + k];
                }
            }
        } else {
            gemm(gw, n_out, Strided::columns(a, n_in), delta, None);
        }
    }

    /// The loss gradient at the layer's input, given it at the output and
    /// the input's ReLU activations `a` (zero where the unit was off).
    #[inline(always)]
    fn backward(&self, delta: &[f64], a: &[f64], out: &mut [f64]) {
        gemm(
            out,
            self.n_in,
            Strided::rows(delta, self.n_out),
            &self.wt,
            None,
        );
        for (o, &x) in out.iter_mut().zip(a) {
            *o = if x > 0.0 { *o } else { 0.0 };
        }
    }
}

/// A dot product in eight running sums (a fixed order, so the compiler can
/// vectorise it without changing the result).
#[inline(always)]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut s = [0.0; 8];
    let (a8, b8) = (a.chunks_exact(8), b.chunks_exact(8));
    let (ar, br) = (a8.remainder(), b8.remainder());
    for (x, y) in a8.zip(b8) {
        for t in 0..8 {
            s[t] += x[t] * y[t];
        }
    }
    for (t, (x, y)) in ar.iter().zip(br).enumerate() {
        s[t] += x * y;
    }
    ((s[0] + s[1]) + (s[2] + s[3])) + ((s[4] + s[5]) + (s[6] + s[7]))
}

/// A matrix read through strides: element (i, p) is `data[i * row + p * col]`,
/// so a row-major matrix and its transpose are both views of one buffer.
#[derive(Clone, Copy)]
struct Strided<'a> {
    data: &'a [f64],
    row: usize,
    col: usize,
    /// Length of the summed dimension p.
    depth: usize,
}

impl<'a> Strided<'a> {
    /// A row-major matrix with `width` columns.
    fn rows(data: &'a [f64], width: usize) -> Strided<'a> {
        Strided {
            data,
            row: width,
            col: 1,
            depth: width,
        }
    }

    /// The transpose of a row-major matrix with `width` columns.
    fn columns(data: &'a [f64], width: usize) -> Strided<'a> {
        Strided {
            data,
            row: 1,
            col: width,
            depth: data.len() / width,
        }
    }
}

/// Columns of the output computed together, held in registers.
const BLOCK: usize = 16;

/// `c = bias + a b` with `c` row-major `m x n`, `a` an `m x q` view and `b`
/// row-major `q x n`. Every element is its bias (or zero) plus the products
/// added in order of p, however the work is blocked or vectorised, so the
/// result does not depend on the instruction set.
#[inline(always)]
fn gemm(c: &mut [f64], n: usize, a: Strided<'_>, b: &[f64], bias: Option<&[f64]>) {
    let m = c.len() / n;
    let q = a.depth;
    let start = |j: usize| -> [f64; BLOCK] {
        let mut acc = [0.0; BLOCK];
        if let Some(bias) = bias {
            let w = (n - j).min(BLOCK);
            acc[..w].copy_from_slice(&bias[j..j + w]);
        }
        acc
    };
    let mut i = 0;
    while i + 2 <= m {
        let mut j = 0;
        while j + BLOCK <= n {
            let (mut c0, mut c1) = (start(j), start(j));
            for p in 0..q {
                let bp: &[f64; BLOCK] = b[p * n + j..p * n + j + BLOCK]
                    .try_into()
                    .expect("a full block");
                let x0 = a.data[i * a.row + p * a.col];
                let x1 = a.data[(i + 1) * a.row + p * a.col];
                for t in 0..BLOCK {
                    c0[t] += x0 * bp[t];
                    c1[t] += x1 * bp[t];
                }
            }
            c[i * n + j..i * n + j + BLOCK].copy_from_slice(&c0);
            c[(i + 1) * n + j..(i + 1) * n + j + BLOCK].copy_from_slice(&c1);
            j += BLOCK;
        }
        if j < n {
            edge(c, n, a, b, i..i + 2, j, &start);
        }
        i += 2;
    }
    if i < m {
        let mut j = 0;
        while j < n {
            edge(c, n, a, b, i..m, j, &start);
            j += BLOCK;
        }
    }
}

/// The rows `rows` and columns `j..` (up to a block) of [`gemm`], element by
/// element in the same order of addition.
#[inline(always)]
fn edge(
    c: &mut [f64],
    n: usize,
    a: Strided<'_>,
    b: &[f64],
    rows: std::ops::Range<usize>,
    j: usize,
    start: &impl Fn(usize) -> [f64; BLOCK],
) {
    let w = (n - j).min(BLOCK);
    for i in rows {
        let mut acc = start(j);
        for p in 0..a.depth {
            let x = a.data[i * a.row + p * a.col];
            for t in 0..w {
                acc[t] += x * b[p * n + j + t];
            }
        }
        c[i * n + j..i * n + j + w].copy_from_slice(&acc[..w]);
    }
}

/// Every layer's weights and biases.
#[derive(Clone)]
struct Net {
    layers: Vec<Layer>,
}

impl Net {
    fn new(sizes: &[usize], rng: &mut SplitMix64) -> Net {
        Net {
            layers: sizes
                .windows(2)
                .map(|p| Layer::new(p[0], p[1], rng))
                .collect(),
        }
    }

    #[inline(always)]
    fn outputs(&self) -> usize {
        self.layers[self.layers.len() - 1].n_out
    }

    /// Every layer's output for the rows of `x` (`m x n_in`, row-major)
    /// into `acts`; the last holds the logits.
    #[inline(always)]
    fn forward(&self, x: &[f64], acts: &mut [Vec<f64>]) {
        let m = x.len() / self.layers[0].n_in;
        let last = self.layers.len() - 1;
        for (l, layer) in self.layers.iter().enumerate() {
            let (done, rest) = acts.split_at_mut(l);
            let input = if l == 0 { x } else { &done[l - 1] };
            let out = &mut rest[0];
            out.resize(m * layer.n_out, 0.0);
            layer.forward(input, out);
            if l < last {
                out.iter_mut().for_each(|v| *v = v.max(0.0));
            }
        }
    }

    /// The logits of the rows of `x`, a block of rows at a time.
    #[inline(always)]
    fn logits(&self, x: &[f64]) -> Vec<f64> {
        let n_in = self.layers[0].n_in;
        let mut acts = vec![Vec::new(); self.layers.len()];
        let mut out = Vec::with_capacity(x.len() / n_in * self.outputs());
        for block in x.chunks(256 * n_in) {
            self.forward(block, &mut acts);
            out.extend_from_slice(&acts[acts.len() - 1]);
        }
        out
    }
}

/// Log-softmax of each row of `z` (`k` columns), in place.
#[inline(always)]
fn log_softmax(z: &mut [f64], k: usize) {
    for row in z.chunks_exact_mut(k) {
        let max = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let sum: f64 = row.iter().map(|v| (v - max).exp()).sum();
        let log_norm = max + sum.ln();
        row.iter_mut().for_each(|v| *v -= log_norm);
    }
}

/// The softmax of one row of logits, in place.
#[inline(always)]
fn softmax(row: &mut [f64]) {
    let max = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut sum = 0.0;
    for v in row.iter_mut() {
        *v = (*v - max).exp();
        sum += *v;
    }
    row.iter_mut().for_each(|v| *v /= sum);
}

/// Mean log loss of logits `z` (`k` columns) against the labels.
#[inline(always)]
fn loss(mut z: Vec<f64>, k: usize, y: &[usize]) -> f64 {
    log_softmax(&mut z, k);
    -y.iter()
        .enumerate()
        .map(|(i, &c)| z[i * k + c])
        .sum::<f64>()
        / y.len() as f64
}

/// Adam's running moments for one array.
struct Moments {
    m: Vec<f64>,
    v: Vec<f64>,
}

impl Moments {
    fn new(len: usize) -> Moments {
        Moments {
            m: vec![0.0; len],
            v: vec![0.0; len],
        }
    }
}

const BETA1: f64 = 0.9;
const BETA2: f64 = 0.999;
const EPS: f64 = 1e-8;

/// One Adam step, in the form Kingma & Ba give as the more efficient order
/// of computation (section 2): the bias corrections fold into the step size,
/// `lr_t = lr sqrt(1 - beta2^t) / (1 - beta1^t)`, and
/// `p -= lr_t m / (sqrt(v) + eps)`.
#[inline(always)]
fn adam(lr_t: f64, params: &mut [f64], grads: &[f64], moments: &mut Moments) {
    for (((p, &g), m), v) in params
        .iter_mut()
        .zip(grads)
        .zip(moments.m.iter_mut())
        .zip(moments.v.iter_mut())
    {
        *m = BETA1 * *m + (1.0 - BETA1) * g;
        *v = BETA2 * *v + (1.0 - BETA2) * g * g;
        *p -= lr_t * *m / (v.sqrt() + EPS);
    }
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
        let split = folds::stratified(
            y,
            n_classes,
            10,
            crate::common::rng::derive_seed(seed, &["valid"]),
        );
        let (train, valid) = folds::split(&split, 0);
        if valid.is_empty() || train.is_empty() {
            return Err(Error::Fit(
                "too few rows for the multilayer perceptron's internal validation split".into(),
            ));
        }
        let d = x.ncols();
        let rows_of = |idx: &[usize]| -> Vec<f64> {
            let mut out = Vec::with_capacity(idx.len() * d);
            for &i in idx {
                out.extend(x.row(i).iter());
            }
            out
        };
        let xt = rows_of(&train);
        let yt: Vec<usize> = train.iter().map(|&i| y[i]).collect();
        let xv = rows_of(&valid);
        let yv: Vec<usize> = valid.iter().map(|&i| y[i]).collect();

        let mut sizes = vec![d, self.hidden];
        if self.hidden2 > 0 {
            sizes.push(self.hidden2);
        }
        sizes.push(n_classes);
        let net = Net::new(&sizes, &mut rng);
        let data = Split {
            xt: &xt,
            yt: &yt,
            xv: &xv,
            yv: &yv,
        };
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor has just been found to support AVX2.
            let net = unsafe { self.train_avx2(net, data, rng) }?;
            return Ok(Box::new(Fitted { net }));
        }
        let net = self.train(net, data, rng)?;
        Ok(Box::new(Fitted { net }))
    }
}

/// The training and validation rows, row-major, with their labels.
#[derive(Clone, Copy)]
struct Split<'a> {
    xt: &'a [f64],
    yt: &'a [usize],
    xv: &'a [f64],
    yv: &'a [usize],
}

impl Mlp {
    /// [`Mlp::train`] compiled for AVX2: the same arithmetic in wider
    /// registers (no fused multiply-add, which would round differently), so
    /// the results do not depend on the processor.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn train_avx2(&self, net: Net, data: Split<'_>, rng: SplitMix64) -> Result<Net> {
        self.train(net, data, rng)
    }

    /// Adam in mini-batches until the validation loss stops falling;
    /// returns the net of the best validation loss.
    #[inline(always)]
    fn train(&self, mut net: Net, data: Split<'_>, mut rng: SplitMix64) -> Result<Net> {
        let Split { xt, yt, xv, yv } = data;
        let layers = net.layers.len();
        let d = net.layers[0].n_in;
        let n_classes = net.outputs();
        let mut mw: Vec<Moments> = net.layers.iter().map(|l| Moments::new(l.w.len())).collect();
        let mut mb: Vec<Moments> = net.layers.iter().map(|l| Moments::new(l.b.len())).collect();
        let mut gw: Vec<Vec<f64>> = net.layers.iter().map(|l| vec![0.0; l.w.len()]).collect();
        let mut gb: Vec<Vec<f64>> = net.layers.iter().map(|l| vec![0.0; l.b.len()]).collect();
        let mut gt: Vec<f64> = Vec::new();
        let mut acts: Vec<Vec<f64>> = vec![Vec::new(); layers];
        let mut delta: Vec<f64> = Vec::new();
        let mut back: Vec<f64> = Vec::new();
        let mut xb: Vec<f64> = Vec::with_capacity(self.batch * d);

        let mut step = 0i32;
        let mut best = (loss(net.logits(xv), n_classes, yv), net.clone());
        let mut stale = 0;
        let mut order: Vec<usize> = (0..yt.len()).collect();
        let decay = self.l2 / yt.len() as f64;
        for _ in 0..self.max_epochs {
            rng.shuffle(&mut order);
            for chunk in order.chunks(self.batch) {
                xb.clear();
                for &i in chunk {
                    xb.extend_from_slice(&xt[i * d..(i + 1) * d]);
                }
                net.forward(&xb, &mut acts);
                // d loss / d logits = softmax - onehot, averaged.
                let m = chunk.len() as f64;
                delta.clone_from(&acts[layers - 1]);
                for (row, &i) in delta.chunks_exact_mut(n_classes).zip(chunk) {
                    softmax(row);
                    row[yt[i]] -= 1.0;
                    row.iter_mut().for_each(|v| *v /= m);
                }
                step += 1;
                let lr_t =
                    self.learning_rate * (1.0 - BETA2.powi(step)).sqrt() / (1.0 - BETA1.powi(step));
                for l in (0..layers).rev() {
                    let input = if l == 0 { &xb } else { &acts[l - 1] };
                    let layer = &net.layers[l];
                    gt.resize(layer.w.len(), 0.0);
                    layer.gradient(input, &delta, &mut gw[l], &mut gt, &mut gb[l]);
                    for (g, &w) in gw[l].iter_mut().zip(&layer.w) {
                        *g += w * decay;
                    }
                    if l > 0 {
                        back.resize(chunk.len() * layer.n_in, 0.0);
                        layer.backward(&delta, input, &mut back);
                        std::mem::swap(&mut delta, &mut back);
                    }
                    let layer = &mut net.layers[l];
                    adam(lr_t, &mut layer.w, &gw[l], &mut mw[l]);
                    adam(lr_t, &mut layer.b, &gb[l], &mut mb[l]);
                    layer.transpose();
                }
            }
            let v = loss(net.logits(xv), n_classes, yv);
            if !v.is_finite() {
                return Err(Error::Fit(
                    "the multilayer perceptron diverged; lower `learning_rate`".into(),
                ));
            }
            if v < best.0 - self.stop_tolerance {
                best = (v, net.clone());
                stale = 0;
            } else {
                stale += 1;
                if stale >= self.patience {
                    break;
                }
            }
        }
        Ok(best.1)
    }
}

struct Fitted {
    net: Net,
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let flat: Vec<f64> = x.iter().copied().collect();
        let logits =
            Array2::from_shape_vec((x.nrows(), self.net.outputs()), self.net.logits(&flat))
                .expect("one row of logits per row");
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

#[cfg(test)]
mod tests {
    use super::*;

    fn filled(len: usize, rng: &mut SplitMix64) -> Vec<f64> {
        (0..len).map(|_| 2.0 * rng.unit() - 1.0).collect()
    }

    #[test]
    fn the_blocked_product_equals_the_plain_triple_loop_bit_for_bit() {
        let mut rng = SplitMix64::new(7);
        // Shapes that hit full blocks, edge columns and an odd last row.
        for &(m, q, n) in &[
            (5, 3, 37),
            (200, 10, 64),
            (2, 200, 16),
            (7, 1, 1),
            (64, 57, 2),
        ] {
            let a = filled(m * q, &mut rng);
            let b = filled(q * n, &mut rng);
            let bias = filled(n, &mut rng);
            let mut c = vec![0.0; m * n];
            gemm(&mut c, n, Strided::rows(&a, q), &b, Some(&bias));
            let mut ct = vec![0.0; m * n];
            // The transposed view of a's transpose is a again.
            let at: Vec<f64> = (0..q * m).map(|i| a[(i % m) * q + i / m]).collect();
            gemm(&mut ct, n, Strided::columns(&at, m), &b, Some(&bias));
            for i in 0..m {
                for j in 0..n {
                    let mut want = bias[j];
                    for p in 0..q {
                        want += a[i * q + p] * b[p * n + j];
                    }
                    assert_eq!(
                        c[i * n + j].to_bits(),
                        want.to_bits(),
                        "({m},{q},{n}) at ({i},{j})"
                    );
                    assert_eq!(ct[i * n + j].to_bits(), want.to_bits());
                }
            }
        }
    }

    #[cfg(target_arch = "x86_64")]
    #[test]
    fn the_avx2_build_trains_the_same_net_bit_for_bit() {
        if !std::arch::is_x86_feature_detected!("avx2") {
            return;
        }
        let mut rng = SplitMix64::new(3);
        let (n, d) = (300, 6);
        let xt = filled(n * d, &mut rng);
        let yt: Vec<usize> = xt
            .chunks(d)
            .map(|r| usize::from(r[0] + r[1] > 0.0))
            .collect();
        let xv = filled(60 * d, &mut rng);
        let yv: Vec<usize> = xv
            .chunks(d)
            .map(|r| usize::from(r[0] + r[1] > 0.0))
            .collect();
        let data = Split {
            xt: &xt,
            yt: &yt,
            xv: &xv,
            yv: &yv,
        };
        let mlp = Mlp {
            hidden: 20,
            hidden2: 9,
            learning_rate: 1e-2,
            l2: 1e-4,
            batch: 32,
            max_epochs: 5,
            patience: 10,
            stop_tolerance: 1e-4,
        };
        let net = Net::new(&[d, 20, 9, 2], &mut rng);
        let plain = mlp.train(net.clone(), data, SplitMix64::new(9)).unwrap();
        // SAFETY: AVX2 support was checked above.
        let wide = unsafe { mlp.train_avx2(net, data, SplitMix64::new(9)) }.unwrap();
        for (a, b) in plain.layers.iter().zip(&wide.layers) {
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&a.w), bits(&b.w));
            assert_eq!(bits(&a.b), bits(&b.b));
        }
    }

    /// Mean log loss of a net on rows `x`, for the finite differences.
    fn net_loss(net: &Net, x: &[f64], y: &[usize]) -> f64 {
        loss(net.logits(x), net.outputs(), y)
    }

    #[test]
    fn back_propagation_matches_finite_differences() {
        // Two hidden layers, a narrow and a wide output, three classes.
        let mut rng = SplitMix64::new(11);
        let net = Net::new(&[5, 12, 9, 3], &mut rng);
        let m = 7;
        let x = filled(m * 5, &mut rng);
        let y: Vec<usize> = (0..m).map(|i| i % 3).collect();
        let mut acts = vec![Vec::new(); 3];
        net.forward(&x, &mut acts);
        let mut delta = acts[2].clone();
        log_softmax(&mut delta, 3);
        for (row, &c) in delta.chunks_exact_mut(3).zip(&y) {
            row.iter_mut().for_each(|v| *v = v.exp());
            row[c] -= 1.0;
            row.iter_mut().for_each(|v| *v /= m as f64);
        }
        for l in (0..3).rev() {
            let layer = &net.layers[l];
            let input = if l == 0 { &x } else { &acts[l - 1] };
            let (mut gw, mut gt, mut gb) = (
                vec![0.0; layer.w.len()],
                vec![0.0; layer.w.len()],
                vec![0.0; layer.n_out],
            );
            layer.gradient(input, &delta, &mut gw, &mut gt, &mut gb);
            // Central differences on a few weights and every bias.
            let h = 1e-6;
            for i in (0..layer.w.len()).step_by(5) {
                let mut plus = net.clone();
                plus.layers[l].w[i] += h;
                plus.layers[l].transpose();
                let mut minus = net.clone();
                minus.layers[l].w[i] -= h;
                minus.layers[l].transpose();
                let numeric = (net_loss(&plus, &x, &y) - net_loss(&minus, &x, &y)) / (2.0 * h);
                assert!((numeric - gw[i]).abs() < 1e-7, "layer {l} weight {i}");
            }
            for (j, &g) in gb.iter().enumerate() {
                let mut plus = net.clone();
                plus.layers[l].b[j] += h;
                let mut minus = net.clone();
                minus.layers[l].b[j] -= h;
                let numeric = (net_loss(&plus, &x, &y) - net_loss(&minus, &x, &y)) / (2.0 * h);
                assert!((numeric - g).abs() < 1e-7, "layer {l} bias {j}");
            }
            if l > 0 {
                let mut back = vec![0.0; m * layer.n_in];
                layer.backward(&delta, input, &mut back);
                delta = back;
            }
        }
    }
}
