//! Expected and maximum calibration error (Naeini, Cooper & Hauskrecht 2015;
//! Guo et al. 2017), over equal-width or equal-mass bins, and the class-wise
//! variant (Kull et al. 2019).
//!
//! ECE = sum over non-empty bins of (n_b / n) |mean forecast - mean outcome|;
//! MCE is the largest of those gaps. Binary tasks bin the positive-class
//! probability; multiclass tasks the top-label confidence (see
//! [`super::bins::reduce`]). Binning conventions are in [`super::bins`].

use super::bins::{width_totals, BinTotals};
use super::{Forecasts, MetricOptions};

fn weighted_gap(t: &[BinTotals], n: usize) -> f64 {
    t.iter()
        .filter(|b| b.count > 0)
        .map(|b| (b.sum_f - b.sum_o).abs())
        .sum::<f64>()
        / n as f64
}

/// ECE over equal-width bins.
pub fn ece(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    weighted_gap(&fc.width_totals(opts.bins), fc.n())
}

/// ECE over equal-mass bins (ties kept together).
pub fn ece_mass(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    weighted_gap(&fc.mass_totals(opts.bins), fc.n())
}

/// MCE: the largest gap over non-empty equal-width bins.
pub fn mce(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    fc.width_totals(opts.bins)
        .iter()
        .filter(|b| b.count > 0)
        .map(|b| (b.mean_f() - b.mean_o()).abs())
        .fold(0.0, f64::max)
}

/// Class-wise ECE: the equal-width ECE of every class's probability column
/// against that class's indicator, averaged over classes. For a binary task
/// this averages the positive and the negative column.
pub fn ece_classwise(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    let k = fc.p.ncols();
    let mut total = 0.0;
    for c in 0..k {
        let f = fc.p.column(c).to_vec();
        let o: Vec<f64> = fc.y.iter().map(|&l| f64::from(u8::from(l == c))).collect();
        total += weighted_gap(&width_totals(&f, &o, opts.bins), fc.n());
    }
    total / k as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::{binary, multiclass_toy, toy_forecaster};
    use crate::metrics::Forecasts;

    fn opts(bins: usize) -> MetricOptions {
        MetricOptions {
            bins,
            ..MetricOptions::default()
        }
    }

    #[test]
    fn toy_forecaster_ece_and_mce() {
        // toy-ece10 and toy-ece2 in docs/methods.md (toy forecaster
        // from Flach & Perello-Nieto's "Classifier Calibration" slides):
        // ECE 0.075 and MCE 0.10 with 10 equal-width bins; 0 with 2 bins,
        // equal-width or equal-mass.
        let (p, y) = toy_forecaster();
        assert!((ece(&Forecasts::new(p.view(), &y), &opts(10)) - 0.075).abs() < 1e-12);
        assert!((mce(&Forecasts::new(p.view(), &y), &opts(10)) - 0.10).abs() < 1e-12);
        assert!(ece(&Forecasts::new(p.view(), &y), &opts(2)).abs() < 1e-12);
        assert!(ece_mass(&Forecasts::new(p.view(), &y), &opts(2)).abs() < 1e-12);
    }

    #[test]
    fn equal_mass_ece_keeps_ties_together() {
        // toy-mass4 in docs/methods.md gives 0.15 for 4 bins cut by
        // rank with numpy.array_split, which splits the tie at 0.7 into
        // {.7, .7} and {.7, .9}. Keeping the tie whole gives bins
        // {.1,.1} {.4,.4} {.7,.7,.7} {.9}: gaps .1, .1, 1/30, .1 with
        // weights 2, 2, 3, 1 (of 8), so ECE = 0.075.
        let (p, y) = toy_forecaster();
        assert!((ece_mass(&Forecasts::new(p.view(), &y), &opts(4)) - 0.075).abs() < 1e-12);
    }

    #[test]
    fn multiclass_top_label_and_classwise() {
        // multiclass-toy in docs/methods.md: top-label ECE 0.05,
        // class-wise ECE mean(0.15, 0.10, 0.15) = 0.13333.
        let (p, y) = multiclass_toy();
        assert!((ece(&Forecasts::new(p.view(), &y), &opts(10)) - 0.05).abs() < 1e-12);
        let cw = ece_classwise(&Forecasts::new(p.view(), &y), &opts(10));
        assert!((cw - 0.4 / 3.0).abs() < 1e-12, "{cw}");
    }

    #[test]
    fn a_forecast_on_an_edge_uses_the_right_closed_bin() {
        // Two rows at exactly 0.3 with outcome rate 1/2, and two at 0.35
        // with rate 1/2. Right-closed bins keep them apart ((0.2, 0.3] and
        // (0.3, 0.4]): gaps 0.2 and 0.15, ECE 0.175. Left-closed bins would
        // pool all four at mean 0.325, gap 0.175 as well, so use MCE, which
        // tells them apart: 0.2 here against 0.175 pooled.
        let p = binary(&[0.3, 0.3, 0.35, 0.35]);
        let y = [0, 1, 0, 1];
        assert!((mce(&Forecasts::new(p.view(), &y), &opts(10)) - 0.2).abs() < 1e-12);
    }
}
