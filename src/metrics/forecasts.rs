//! The input every metric reads: probabilities and labels, plus the
//! reductions and bin totals several metrics share, computed once on first
//! use. Metrics stay pure functions of this value; the caches only spare
//! repeating the same pass (ten metrics bin the same forecasts).

use super::bins::{argmax, mass_totals, width_totals, BinTotals};
use ndarray::ArrayView2;
use std::cell::{OnceCell, RefCell};

/// Probabilities (rows sum to 1, column k = class k, binary column 1 =
/// positive class) with their labels.
pub struct Forecasts<'a> {
    pub p: ArrayView2<'a, f64>,
    pub y: &'a [usize],
    reduced: OnceCell<(Vec<f64>, Vec<f64>)>,
    width: RefCell<Vec<(usize, Vec<BinTotals>)>>,
    mass: RefCell<Vec<(usize, Vec<BinTotals>)>>,
}

impl<'a> Forecasts<'a> {
    pub fn new(p: ArrayView2<'a, f64>, y: &'a [usize]) -> Self {
        Forecasts {
            p,
            y,
            reduced: OnceCell::new(),
            width: RefCell::new(Vec::new()),
            mass: RefCell::new(Vec::new()),
        }
    }

    /// Number of rows.
    pub fn n(&self) -> usize {
        self.y.len()
    }

    /// Whether the task has two classes.
    pub fn is_binary(&self) -> bool {
        self.p.ncols() == 2
    }

    /// The forecast and outcome a one-dimensional calibration metric looks
    /// at. Binary tasks: the positive-class probability and whether the row
    /// is positive. Multiclass tasks: the top-label confidence and whether
    /// the top label is right (ties go to the lower class index).
    pub fn reduced(&self) -> (&[f64], &[f64]) {
        let (f, o) = self.reduced.get_or_init(|| {
            if self.is_binary() {
                let f = self.p.column(1).to_vec();
                let o = self
                    .y
                    .iter()
                    .map(|&l| f64::from(u8::from(l == 1)))
                    .collect();
                return (f, o);
            }
            let mut f = Vec::with_capacity(self.n());
            let mut o = Vec::with_capacity(self.n());
            for (row, &label) in self.p.rows().into_iter().zip(self.y) {
                let (top, conf) = argmax(row.iter().copied());
                f.push(conf);
                o.push(f64::from(u8::from(top == label)));
            }
            (f, o)
        });
        (f, o)
    }

    /// Equal-width bin totals of the reduced forecasts.
    pub fn width_totals(&self, bins: usize) -> Vec<BinTotals> {
        cached(&self.width, bins, || {
            let (f, o) = self.reduced();
            width_totals(f, o, bins)
        })
    }

    /// Equal-mass bin totals of the reduced forecasts.
    pub fn mass_totals(&self, bins: usize) -> Vec<BinTotals> {
        cached(&self.mass, bins, || {
            let (f, o) = self.reduced();
            mass_totals(f, o, bins)
        })
    }
}

fn cached(
    cache: &RefCell<Vec<(usize, Vec<BinTotals>)>>,
    bins: usize,
    make: impl FnOnce() -> Vec<BinTotals>,
) -> Vec<BinTotals> {
    if let Some((_, t)) = cache.borrow().iter().find(|(b, _)| *b == bins) {
        return t.clone();
    }
    let t = make();
    cache.borrow_mut().push((bins, t.clone()));
    t
}
