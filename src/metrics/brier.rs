//! The Brier score (Brier 1950) and its Murphy (1973) decomposition.
//!
//! Binary tasks use the positive-class form, mean (p - y)^2, which is
//! scikit-learn's `brier_score_loss` and half the two-class sum. Multiclass
//! tasks use the original sum over classes, which ranges over [0, 2].
//!
//! The decomposition BS = REL - RES + UNC groups forecasts into the
//! equal-width bins (per class, summed over classes for multiclass tasks).
//! It is exact only when every forecast in a bin is the same value; for
//! continuous forecasts the within-bin spread is not captured, so
//! REL - RES + UNC differs from BS (Stephenson, Coelho & Jolliffe 2008).

use super::bins::width_totals;
use super::{Forecasts, MetricOptions};

/// Mean squared difference between forecast and outcome.
pub fn brier(fc: &Forecasts<'_>) -> f64 {
    terms(fc).iter().sum::<f64>() / fc.y.len() as f64
}

/// Each row's squared difference between forecast and outcome (the
/// positive class's for a binary task, summed over classes otherwise): the
/// Brier score is their mean, and the bootstrap resamples them.
pub fn terms(fc: &Forecasts<'_>) -> Vec<f64> {
    let (p, y) = (fc.p, fc.y);
    if p.ncols() == 2 {
        return p
            .column(1)
            .iter()
            .zip(y)
            .map(|(&q, &label)| (q - f64::from(u8::from(label == 1))).powi(2))
            .collect();
    }
    p.rows()
        .into_iter()
        .zip(y)
        .map(|(row, &label)| {
            row.iter()
                .enumerate()
                .map(|(k, &q)| (q - f64::from(u8::from(k == label))).powi(2))
                .sum::<f64>()
        })
        .collect()
}

/// The three Murphy terms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Murphy {
    /// Reliability: weighted squared gap between bin forecast and bin
    /// outcome rate. Lower is better; it is the calibration part.
    pub reliability: f64,
    /// Resolution: weighted squared spread of bin outcome rates around the
    /// base rate. Higher is better.
    pub resolution: f64,
    /// Uncertainty: the base rate's variance, a property of the data.
    pub uncertainty: f64,
}

/// The Murphy decomposition over `opts.bins` equal-width bins.
pub fn murphy(fc: &Forecasts<'_>, opts: &MetricOptions) -> Murphy {
    let (p, y) = (fc.p, fc.y);
    let n = y.len() as f64;
    let columns: Vec<usize> = if p.ncols() == 2 {
        vec![1]
    } else {
        (0..p.ncols()).collect()
    };
    let mut m = Murphy {
        reliability: 0.0,
        resolution: 0.0,
        uncertainty: 0.0,
    };
    for c in columns {
        let f = p.column(c).to_vec();
        let o: Vec<f64> = y.iter().map(|&l| f64::from(u8::from(l == c))).collect();
        let base = o.iter().sum::<f64>() / n;
        for b in width_totals(&f, &o, opts.bins)
            .iter()
            .filter(|b| b.count > 0)
        {
            let w = b.count as f64 / n;
            m.reliability += w * (b.mean_f() - b.mean_o()).powi(2);
            m.resolution += w * (b.mean_o() - base).powi(2);
        }
        m.uncertainty += base * (1.0 - base);
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::{binary, multiclass_toy, toy_forecaster};
    use crate::metrics::Forecasts;

    #[test]
    fn toy_forecaster_and_its_exact_decomposition() {
        // toy-brier and toy-murphy in docs/methods.md: BS 0.1525
        // (scikit-learn's brier_score_loss agrees); REL 0.0066667,
        // RES 0.1041667, UNC 0.25, and REL - RES + UNC = BS exactly because
        // each bin holds one forecast value.
        let (p, y) = toy_forecaster();
        let bs = brier(&Forecasts::new(p.view(), &y));
        assert!((bs - 0.1525).abs() < 1e-12);
        let m = murphy(
            &Forecasts::new(p.view(), &y),
            &MetricOptions {
                bins: 10,
                ..Default::default()
            },
        );
        assert!((m.reliability - 0.02 / 3.0).abs() < 1e-12);
        assert!((m.resolution - 0.125 / 1.2).abs() < 1e-12);
        assert!((m.uncertainty - 0.25).abs() < 1e-15);
        assert!((m.reliability - m.resolution + m.uncertainty - bs).abs() < 1e-12);
    }

    #[test]
    fn binned_decomposition_is_not_exact_for_spread_forecasts() {
        // murphy-binned in docs/methods.md: p = (0.05, 0.15), y = (0, 1)
        // in one bin gives BS 0.3625 but REL - RES + UNC = 0.41.
        let p = binary(&[0.05, 0.15]);
        let y = [0, 1];
        let m = murphy(
            &Forecasts::new(p.view(), &y),
            &MetricOptions {
                bins: 1,
                ..Default::default()
            },
        );
        assert!((brier(&Forecasts::new(p.view(), &y)) - 0.3625).abs() < 1e-12);
        assert!((m.reliability - m.resolution + m.uncertainty - 0.41).abs() < 1e-12);
    }

    #[test]
    fn multiclass_sums_over_classes() {
        // multiclass-toy in docs/methods.md: 0.57, equal to
        // scikit-learn's multiclass default.
        let (p, y) = multiclass_toy();
        assert!((brier(&Forecasts::new(p.view(), &y)) - 0.57).abs() < 1e-12);
    }
}
