//! No leakage: preprocessing, the family and the calibrators never see the
//! outer test fold. An instrumented learner and calibrator record every row
//! they are shown, identified by a unique `id` feature that passes through
//! preprocessing unchanged.

use candor::calibrate::{BinaryCalibrator, BinaryMap, Calibrator, Input, OneVsRest};
use candor::common::error::Result;
use candor::common::scores::Scores;
use candor::data::csv::parse_csv;
use candor::data::folds;
use candor::data::table::Table;
use candor::experiment::protocol::{run_cell, CellPlan};
use candor::learner::{Learner, Model, Trainer};
use candor::metrics::{MetricOptions, METRICS};
use ndarray::{Array2, ArrayView2};
use std::collections::BTreeSet;
use std::sync::{Arc, Mutex};

#[derive(Default)]
struct Seen {
    fits: Vec<BTreeSet<i64>>,
    /// The exact training matrices, bit for bit.
    fit_matrices: Vec<Vec<u64>>,
    predicts: Vec<BTreeSet<i64>>,
    calibrations: Vec<BTreeSet<i64>>,
}

type Log = Arc<Mutex<Seen>>;

fn ids(x: ArrayView2<'_, f64>) -> BTreeSet<i64> {
    x.column(0).iter().map(|v| *v as i64).collect()
}

struct Spy {
    log: Log,
    standardise: bool,
}
struct SpyModel(Log);

impl Learner for Spy {
    fn wants_standardised(&self) -> bool {
        self.standardise
    }
    fn fit(&self, x: ArrayView2<'_, f64>, _: &[usize], _: usize, _: u64) -> Result<Box<dyn Model>> {
        let mut seen = self.log.lock().unwrap();
        seen.fits.push(ids(x));
        seen.fit_matrices
            .push(x.iter().map(|v| v.to_bits()).collect());
        drop(seen);
        Ok(Box::new(SpyModel(self.log.clone())))
    }
}
impl Model for SpyModel {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        self.0.lock().unwrap().predicts.push(ids(x));
        let n = x.nrows();
        let p = Array2::from_shape_fn((n, 2), |(i, j)| {
            let q = (x[[i, 1]] / 100.0).clamp(0.01, 0.99);
            if j == 1 {
                q
            } else {
                1.0 - q
            }
        });
        // The native score is the row id, so the calibrator reveals which
        // rows it was fitted on.
        Scores {
            proba: p,
            native: Some(x.column(0).to_owned().insert_axis(ndarray::Axis(1))),
        }
    }
}

struct SpyCalibrator(Log);
struct Flat;

impl BinaryMap for Flat {
    fn apply(&self, _: f64) -> f64 {
        0.5
    }
}

impl BinaryCalibrator for SpyCalibrator {
    fn input(&self) -> Input {
        Input::Native
    }
    fn fit(&self, scores: &[f64], _: &[bool]) -> Result<Box<dyn BinaryMap>> {
        let seen = scores.iter().map(|v| *v as i64).collect();
        self.0.lock().unwrap().calibrations.push(seen);
        Ok(Box::new(Flat))
    }
}

fn table(test_rows_poisoned: &[usize]) -> Table {
    let mut csv = String::from("id,x,shop,y\n");
    for i in 0..60 {
        let poisoned = test_rows_poisoned.contains(&i);
        let x = if poisoned {
            "1e12".to_string()
        } else if i % 7 == 0 {
            String::new() // missing: imputed with the training median
        } else {
            ((i * 37) % 100).to_string()
        };
        // A categorical column whose level `rare` is too rare to keep its
        // own column when counted on training rows only (the encoding's
        // cap pools levels under 5 rows into `other`). Poisoned test rows
        // all take it: counted with them, it would be kept.
        let shop = if poisoned || (i % 20 == 1 && i < 60) {
            "rare"
        } else {
            ["north", "south", "east"][i % 3]
        };
        csv.push_str(&format!("{},{x},{shop},{}\n", 1000 + i, i % 3 == 0));
    }
    parse_csv(csv.as_bytes(), "spy.csv", "y", None).unwrap()
}

fn run(table: &Table, train: &[usize], test: &[usize], standardise: bool) -> Seen {
    let log: Log = Arc::default();
    let methods: Vec<(String, Box<dyn Calibrator>)> = vec![(
        "spy".into(),
        Box::new(OneVsRest(SpyCalibrator(log.clone()))),
    )];
    let plan = CellPlan {
        table,
        train,
        test,
        inner_folds: 4,
        inner_seed: 5,
        model_seed: 9,
        bootstrap: 0,
        bootstrap_seed: 0,
        step: None,
    };
    let metrics: Vec<_> = METRICS.iter().collect();
    let spy = Spy {
        log: log.clone(),
        standardise,
    };
    let spy = Trainer::Learner(Box::new(spy));
    run_cell(&plan, &spy, &methods, &metrics, &MetricOptions::default()).unwrap();
    let mut seen = std::mem::take(&mut *log.lock().unwrap());
    // A cell's fits run in parallel and log in any order.
    seen.fit_matrices.sort();
    seen
}

#[test]
fn the_test_fold_is_never_seen_in_training_or_calibration() {
    let base = table(&[]);
    let assignment = folds::stratified(&base.labels, 2, 5, 1);
    let (train, test) = folds::split(&assignment, 2);
    let train_ids: BTreeSet<i64> = train.iter().map(|&r| 1000 + r as i64).collect();
    let test_ids: BTreeSet<i64> = test.iter().map(|&r| 1000 + r as i64).collect();

    let seen = run(&base, &train, &test, false);
    // Four inner fits on parts of the training split, then one on all of it.
    assert_eq!(seen.fits.len(), 5);
    for fit in &seen.fits {
        assert!(fit.is_subset(&train_ids) && fit.is_disjoint(&test_ids));
    }
    // The fits run in parallel, so the log's order is not theirs: one fit
    // is on the whole training split.
    assert_eq!(seen.fits.iter().filter(|&f| *f == train_ids).count(), 1);
    // Only the final model scores the test fold; the other four score the
    // inner validation parts, which cover the training split exactly once.
    let (finals, inner): (Vec<_>, Vec<_>) = seen.predicts.iter().partition(|&p| *p == test_ids);
    assert_eq!((finals.len(), inner.len()), (1, 4));
    let mut covered = BTreeSet::new();
    for p in inner {
        assert!(p.is_disjoint(&covered));
        covered.extend(p.iter().copied());
    }
    assert_eq!(covered, train_ids);
    // The calibrator was fitted on out-of-fold scores of training rows only.
    assert_eq!(seen.calibrations, vec![train_ids]);

    // Poisoning the test rows' features changes nothing the training side
    // sees, bit for bit: imputation, the categorical levels and their cap,
    // and standardisation are fitted on training rows only.
    let poisoned = table(&test);
    for standardise in [false, true] {
        let clean = run(&base, &train, &test, standardise);
        let dirty = run(&poisoned, &train, &test, standardise);
        assert_eq!(clean.fit_matrices, dirty.fit_matrices);
        assert_eq!(clean.calibrations, dirty.calibrations);
    }
}

#[test]
fn groups_stay_whole_in_the_outer_and_inner_folds() {
    // Twenty customers with three rows each: no customer may be on both
    // sides of an outer split or of an inner cross-fitting split.
    let mut csv = String::from("id,x,customer,y\n");
    for i in 0..60 {
        csv.push_str(&format!(
            "{},{},c{},{}\n",
            1000 + i,
            (i * 37) % 100,
            i / 3,
            i % 4 == 0
        ));
    }
    let mut t = parse_csv(csv.as_bytes(), "spy.csv", "y", None).unwrap();
    t.take_groups("customer").unwrap();
    let groups = t.groups.clone().unwrap();
    let group_of = |id: i64| groups[(id - 1000) as usize];
    let assignment = folds::assign(&t.labels, Some(&groups), None, 2, 3, 1);
    let (train, test) = folds::split(&assignment, 0);
    let outer = |rows: &[usize]| -> BTreeSet<u32> { rows.iter().map(|&r| groups[r]).collect() };
    assert!(outer(&train).is_disjoint(&outer(&test)));
    let train_ids: BTreeSet<i64> = train.iter().map(|&r| 1000 + r as i64).collect();
    let seen = run(&t, &train, &test, false);
    // The four inner validation parts: each holds whole customers, none of
    // whom is in the part's training rows.
    let inner: Vec<&BTreeSet<i64>> = seen
        .predicts
        .iter()
        .filter(|p| p.is_subset(&train_ids))
        .collect();
    assert_eq!(inner.len(), 4);
    for part in inner {
        let inside: BTreeSet<u32> = part.iter().map(|&id| group_of(id)).collect();
        let outside: BTreeSet<u32> = train_ids.difference(part).map(|&id| group_of(id)).collect();
        assert!(
            inside.is_disjoint(&outside),
            "a customer on both sides: {inside:?}"
        );
    }
}

#[test]
fn time_ordered_folds_never_train_or_calibrate_on_the_future() {
    // Sixty days, one row each, in shuffled file order.
    let mut csv = String::from("id,x,day,y\n");
    for i in 0..60 {
        let day = (i * 37) % 60;
        csv.push_str(&format!(
            "{},{},{day},{}\n",
            1000 + i,
            (i * 13) % 100,
            i % 3 == 0
        ));
    }
    let mut t = parse_csv(csv.as_bytes(), "spy.csv", "y", None).unwrap();
    t.take_order("day").unwrap();
    let day = |id: i64| t.order.as_ref().unwrap()[(id - 1000) as usize];
    let blocks = folds::time_blocks(t.order.as_ref().unwrap(), 3);
    for f in 0..3 {
        let (train, test) = folds::split_for(&blocks, f, true);
        let ids =
            |rows: &[usize]| -> BTreeSet<i64> { rows.iter().map(|&r| 1000 + r as i64).collect() };
        let (train_ids, test_ids) = (ids(&train), ids(&test));
        let last_train = train_ids.iter().map(|&i| day(i)).fold(f64::MIN, f64::max);
        let first_test = test_ids.iter().map(|&i| day(i)).fold(f64::MAX, f64::min);
        assert!(last_train < first_test, "fold {f} trains on the future");
        let seen = run(&t, &train, &test, false);
        // Each inner validation part was scored by a fit on exactly the
        // training rows before it.
        for part in seen.predicts.iter().filter(|p| p.is_subset(&train_ids)) {
            let first = part.iter().map(|&i| day(i)).fold(f64::MAX, f64::min);
            let past: BTreeSet<i64> = train_ids
                .iter()
                .copied()
                .filter(|&i| day(i) < first)
                .collect();
            assert!(!past.is_empty());
            assert!(
                seen.fits.contains(&past),
                "fold {f}: a part scored from outside its past"
            );
        }
        // The calibrators saw only scored rows: every training row but the
        // earliest block.
        let calibrated = &seen.calibrations[0];
        let earliest = train_ids.iter().map(|&i| day(i)).fold(f64::MAX, f64::min);
        assert!(calibrated.is_subset(&train_ids));
        assert!(calibrated.iter().all(|&i| day(i) > earliest));
    }
}
