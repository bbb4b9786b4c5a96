//! The Hosmer-Lemeshow (1980) goodness-of-fit test.
//!
//! Rows are sorted by forecast and cut into G equal-mass groups (manifest
//! `hl_groups`, default 10, "deciles of risk"; tied forecasts stay in one
//! group, see [`super::bins`]). With O and E the observed and expected
//! positives and n the size of a group,
//! C = sum (O - E)^2 / (E (1 - E / n)), compared with a chi-squared
//! distribution on G' - 2 degrees of freedom, G' being the non-empty groups.
//! G - 2 is the classic choice for the sample a model was fitted on; for
//! held-out data some authors use G or G - 1, which gives smaller p-values,
//! so our p-value is the conservative one. Groups whose expected count is 0
//! or n contribute nothing. Like every such test it has little power on
//! small folds and rejects trivial miscalibration on large ones; read it
//! beside ECE and the slope. Multiclass tasks use the top-label confidence.

use super::{Forecasts, MetricOptions};
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// The statistic and its degrees of freedom.
fn statistic(fc: &Forecasts<'_>, groups: usize) -> (f64, usize) {
    let totals = fc.mass_totals(groups.max(1));
    let mut c = 0.0;
    let mut used = 0usize;
    for g in totals.iter().filter(|g| g.count > 0) {
        used += 1;
        let n = g.count as f64;
        let denom = g.sum_f * (1.0 - g.sum_f / n);
        if denom > 0.0 {
            c += (g.sum_o - g.sum_f).powi(2) / denom;
        }
    }
    (c, used.saturating_sub(2))
}

/// The Hosmer-Lemeshow statistic C.
pub fn hosmer_lemeshow(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    statistic(fc, opts.hl_groups).0
}

/// The p-value of C on G' - 2 degrees of freedom; NaN with fewer than three
/// non-empty groups.
pub fn hosmer_lemeshow_p(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    let (c, df) = statistic(fc, opts.hl_groups);
    if df == 0 {
        return f64::NAN;
    }
    ChiSquared::new(df as f64).map_or(f64::NAN, |d| d.sf(c))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::toy_forecaster;
    use crate::metrics::Forecasts;

    #[test]
    fn toy_forecaster_with_one_group_per_forecast_value() {
        // hosmer-lemeshow-toy in docs/methods.md: groups = the 4 distinct
        // forecasts, C = 0.43254, p = 0.8055 on 2 degrees of freedom. Four
        // equal-mass groups with ties kept whole are exactly those groups.
        let (p, y) = toy_forecaster();
        let o = MetricOptions {
            hl_groups: 4,
            ..Default::default()
        };
        assert!((hosmer_lemeshow(&Forecasts::new(p.view(), &y), &o) - 0.43254).abs() < 5e-6);
        assert!((hosmer_lemeshow_p(&Forecasts::new(p.view(), &y), &o) - 0.8055).abs() < 5e-5);
    }
}
