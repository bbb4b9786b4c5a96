//! Stratified K-fold assignment.
//!
//! Each class's rows are shuffled with a seeded generator and dealt to the
//! folds in turn, continuing the deal from one class to the next, so every
//! fold gets within one row of its share of each class and fold sizes differ
//! by at most one.

use crate::common::rng::SplitMix64;

/// The fold (in `0..k`) of every row, stratified by `labels`.
pub fn stratified(labels: &[usize], n_classes: usize, k: usize, seed: u64) -> Vec<usize> {
    let mut rng = SplitMix64::new(seed);
    let mut by_class: Vec<Vec<usize>> = vec![Vec::new(); n_classes];
    for (i, &y) in labels.iter().enumerate() {
        by_class[y].push(i);
    }
    let mut fold = vec![0; labels.len()];
    let mut next = 0;
    for rows in &mut by_class {
        rng.shuffle(rows);
        for &r in rows.iter() {
            fold[r] = next % k;
            next += 1;
        }
    }
    fold
}

/// The training and test positions for fold `f`.
pub fn split(assignment: &[usize], f: usize) -> (Vec<usize>, Vec<usize>) {
    let mut train = Vec::new();
    let mut test = Vec::new();
    for (i, &a) in assignment.iter().enumerate() {
        if a == f {
            test.push(i);
        } else {
            train.push(i);
        }
    }
    (train, test)
}

/// Whether a class of `count` rows fits the folds: each outer fold must
/// hold one of its rows, and each outer training split one per inner fold.
pub fn class_fits_folds(count: usize, outer: usize, inner: usize) -> bool {
    count >= outer && count - count.div_ceil(outer) >= inner
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_fold_gets_its_share_of_every_class() {
        // 3 classes of 53, 17 and 9 rows over 4 folds.
        let labels: Vec<usize> = (0..79)
            .map(|i| {
                if i < 53 {
                    0
                } else if i < 70 {
                    1
                } else {
                    2
                }
            })
            .collect();
        let a = stratified(&labels, 3, 4, 11);
        let mut sizes = [0usize; 4];
        for (f, size) in sizes.iter_mut().enumerate() {
            *size = a.iter().filter(|&&x| x == f).count();
            for (class, total) in [(0, 53usize), (1, 17), (2, 9)] {
                let n = (0..79).filter(|&i| a[i] == f && labels[i] == class).count();
                assert!(
                    n == total / 4 || n == total.div_ceil(4),
                    "fold {f} class {class}: {n}"
                );
            }
        }
        assert!(sizes.iter().max().unwrap() - sizes.iter().min().unwrap() <= 1);
    }

    #[test]
    fn the_seed_changes_the_assignment_and_fixes_it() {
        let labels = vec![0usize; 40];
        assert_eq!(stratified(&labels, 1, 5, 1), stratified(&labels, 1, 5, 1));
        assert_ne!(stratified(&labels, 1, 5, 1), stratified(&labels, 1, 5, 2));
    }

    #[test]
    fn split_partitions_the_rows() {
        let (train, test) = split(&[0, 1, 0, 2], 0);
        assert_eq!(train, vec![1, 3]);
        assert_eq!(test, vec![0, 2]);
    }
}
