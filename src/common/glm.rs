//! Maximum-likelihood logistic regression in a few parameters, shared by the
//! Cox calibration intercept and slope and by beta calibration.
//!
//! Newton's method on logit P(y = 1) = offset + b0 + sum_j b_j x_j. A step is
//! halved until the log-likelihood's slope along the step is still
//! non-negative at its end; the log-likelihood is concave, so it then cannot
//! have fallen, and no logarithms are needed. When the outcomes are
//! separated the maximum is at infinity and the fit reports failure.

const MAX_ITER: usize = 100;

/// Fits an intercept and one coefficient per column of `x`; `offset` is a
/// fixed term per row (Cox's calibration in the large). Outcomes are in
/// [0, 1] (usually 0 or 1).
/// Returns `[b0, b1, ...]`, or `None` when there is no finite maximum.
pub fn logistic(x: &[&[f64]], offset: Option<&[f64]>, y: &[f64]) -> Option<Vec<f64>> {
    let d = x.len() + 1;
    let mut beta = vec![0.0; d];
    let mut here = local(x, offset, y, &beta);
    for _ in 0..MAX_ITER {
        let step_dir = solve(&here.hess, &here.grad)?;
        let mut t = 1.0;
        let along = |g: &[f64]| g.iter().zip(&step_dir).map(|(a, b)| a * b).sum::<f64>();
        let start_slope = along(&here.grad).abs();
        loop {
            let candidate: Vec<f64> = beta.iter().zip(&step_dir).map(|(b, s)| b + t * s).collect();
            let next = local(x, offset, y, &candidate);
            if along(&next.grad) >= -1e-9 * start_slope {
                beta = candidate;
                here = next;
                break;
            }
            t /= 2.0;
            if t < 1e-10 {
                return None;
            }
        }
        let done = step_dir
            .iter()
            .zip(&beta)
            .all(|(s, b)| (t * s).abs() < 1e-10 * (1.0 + b.abs()));
        if done {
            let finite = beta.iter().all(|b| b.abs() < 1e6) && here.max_weight > 1e-9;
            return finite.then_some(beta);
        }
    }
    None
}

struct Local {
    /// The largest row weight mu (1 - mu); near 0 only when every fitted
    /// probability is saturated, as when the fit separates the outcomes and
    /// runs off to infinity.
    max_weight: f64,
    grad: Vec<f64>,
    /// Negative Hessian, row-major d x d.
    hess: Vec<f64>,
}

fn local(x: &[&[f64]], offset: Option<&[f64]>, y: &[f64], beta: &[f64]) -> Local {
    let d = beta.len();
    let mut grad = vec![0.0; d];
    let mut hess = vec![0.0; d * d];
    let mut row = vec![1.0; d];
    let mut max_weight = 0.0f64;
    for i in 0..y.len() {
        for (j, col) in x.iter().enumerate() {
            row[j + 1] = col[i];
        }
        let z =
            offset.map_or(0.0, |o| o[i]) + row.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>();
        let e = (-z.abs()).exp();
        let mu = if z >= 0.0 {
            1.0 / (1.0 + e)
        } else {
            e / (1.0 + e)
        };
        let w = mu * (1.0 - mu);
        let r = y[i] - mu;
        max_weight = max_weight.max(w);
        for a in 0..d {
            grad[a] += r * row[a];
            for b in 0..=a {
                hess[a * d + b] += w * row[a] * row[b];
            }
        }
    }
    for a in 0..d {
        for b in 0..a {
            hess[b * d + a] = hess[a * d + b];
        }
    }
    Local {
        max_weight,
        grad,
        hess,
    }
}

/// Solves H s = g for a small symmetric positive-definite H by Gaussian
/// elimination with partial pivoting; `None` if H is singular.
fn solve(h: &[f64], g: &[f64]) -> Option<Vec<f64>> {
    let d = g.len();
    let mut a = h.to_vec();
    let mut b = g.to_vec();
    let scale = h.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    for col in 0..d {
        let pivot =
            (col..d).max_by(|&i, &j| a[i * d + col].abs().total_cmp(&a[j * d + col].abs()))?;
        if a[pivot * d + col].abs() <= 1e-14 * scale || !a[pivot * d + col].is_finite() {
            return None;
        }
        for k in 0..d {
            a.swap(col * d + k, pivot * d + k);
        }
        b.swap(col, pivot);
        for r in col + 1..d {
            let f = a[r * d + col] / a[col * d + col];
            for k in col..d {
                a[r * d + k] -= f * a[col * d + k];
            }
            b[r] -= f * b[col];
        }
    }
    let mut s = vec![0.0; d];
    for r in (0..d).rev() {
        let tail: f64 = (r + 1..d).map(|k| a[r * d + k] * s[k]).sum();
        s[r] = (b[r] - tail) / a[r * d + r];
    }
    Some(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recovers_a_known_two_feature_model() {
        // Outcomes as exact expected frequencies from a known model: with
        // fractional outcomes equal to the true probabilities, the maximum
        // likelihood estimate is the model itself.
        let x1: Vec<f64> = (0..50).map(|i| (i as f64 - 25.0) / 10.0).collect();
        let x2: Vec<f64> = (0..50).map(|i| ((i * 7) % 13) as f64 / 5.0).collect();
        let y: Vec<f64> = x1
            .iter()
            .zip(&x2)
            .map(|(a, b)| crate::common::math::sigmoid(0.3 + 1.2 * a - 0.7 * b))
            .collect();
        let beta = logistic(&[&x1, &x2], None, &y).unwrap();
        for (got, want) in beta.iter().zip([0.3, 1.2, -0.7]) {
            assert!((got - want).abs() < 1e-8, "{got} vs {want}");
        }
    }

    #[test]
    fn separated_outcomes_have_no_maximum() {
        let x = [0.1, 0.2, 0.8, 0.9];
        assert!(logistic(&[&x], None, &[0.0, 0.0, 1.0, 1.0]).is_none());
    }
}
