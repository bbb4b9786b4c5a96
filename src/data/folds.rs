//! Stratified K-fold assignment, with or without groups.
//!
//! Without groups, each class's rows are shuffled with a seeded generator
//! and dealt to the folds in turn, continuing the deal from one class to the
//! next, so every fold gets within one row of its share of each class and
//! fold sizes differ by at most one.
//!
//! With groups (rows of one customer, patient or device), every group goes
//! whole to one fold, so no entity is on both sides of a split, and the
//! folds are stratified as far as whole groups allow: the groups, shuffled
//! by the seed and then taken largest first, each go to the fold whose
//! class counts are furthest below their shares for the classes the group
//! holds (ties to the smaller fold, then the lower index).
//!
//! With a time order, the rows are sorted by time (ties by row) and cut
//! into K + 1 blocks of nearly equal size; outer fold f trains on blocks
//! 0..=f and tests on block f + 1 (an expanding window), so no fold trains
//! on rows later than the ones it is tested on. Inside a training split the
//! same cut into M + 1 blocks gives the calibration scores: inner fit m
//! trains on blocks 0..=m and scores block m + 1, so the first block is
//! never scored and every scored row was scored from its past.

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

/// The fold of every row: with `order` (a time per row), its time block in
/// `0..=k` (split it with [`split_for`] and `time` true); otherwise its fold
/// in `0..k`, keeping `groups` whole when given.
pub fn assign(
    labels: &[usize],
    groups: Option<&[u32]>,
    order: Option<&[f64]>,
    n_classes: usize,
    k: usize,
    seed: u64,
) -> Vec<usize> {
    match (order, groups) {
        (Some(o), _) => time_blocks(o, k),
        (None, Some(g)) => grouped(labels, g, n_classes, k, seed),
        (None, None) => stratified(labels, n_classes, k, seed),
    }
}

/// The fold of every row, keeping each group whole and stratifying by
/// `labels` as far as whole groups allow.
pub fn grouped(
    labels: &[usize],
    groups: &[u32],
    n_classes: usize,
    k: usize,
    seed: u64,
) -> Vec<usize> {
    // Each group's rows and class counts, in order of first appearance.
    let mut ids: Vec<u32> = Vec::new();
    let mut index = std::collections::HashMap::new();
    let mut members: Vec<Vec<usize>> = Vec::new();
    for (row, &g) in groups.iter().enumerate() {
        let at = *index.entry(g).or_insert_with(|| {
            ids.push(g);
            members.push(Vec::new());
            members.len() - 1
        });
        members[at].push(row);
    }
    let counts: Vec<Vec<usize>> = members
        .iter()
        .map(|rows| {
            let mut c = vec![0usize; n_classes];
            for &r in rows {
                c[labels[r]] += 1;
            }
            c
        })
        .collect();
    let mut order: Vec<usize> = (0..members.len()).collect();
    SplitMix64::new(seed).shuffle(&mut order);
    order.sort_by_key(|&g| std::cmp::Reverse(members[g].len()));
    let mut share = vec![0.0f64; n_classes];
    for &y in labels {
        share[y] += 1.0;
    }
    share.iter_mut().for_each(|s| *s /= k as f64);
    let mut held = vec![vec![0usize; n_classes]; k];
    let mut size = vec![0usize; k];
    let mut fold = vec![0usize; labels.len()];
    for g in order {
        // How far below its shares each fold is, weighted by what the
        // group would add; the most negative need wins.
        let need = |f: usize| -> f64 {
            (0..n_classes)
                .filter(|&c| counts[g][c] > 0 && share[c] > 0.0)
                .map(|c| {
                    counts[g][c] as f64 * (held[f][c] as f64 - share[c]) / (share[c] * share[c])
                })
                .sum()
        };
        let best = (0..k)
            .min_by(|&a, &b| {
                need(a)
                    .total_cmp(&need(b))
                    .then(size[a].cmp(&size[b]))
                    .then(a.cmp(&b))
            })
            .unwrap_or(0);
        for &r in &members[g] {
            fold[r] = best;
        }
        for c in 0..n_classes {
            held[best][c] += counts[g][c];
        }
        size[best] += members[g].len();
    }
    fold
}

/// The time block (in `0..=k`) of every row: sorted by `order` (ties by
/// row), cut into `k + 1` blocks of nearly equal size.
pub fn time_blocks(order: &[f64], k: usize) -> Vec<usize> {
    let mut rows: Vec<usize> = (0..order.len()).collect();
    rows.sort_by(|&a, &b| order[a].total_cmp(&order[b]).then(a.cmp(&b)));
    let n = rows.len();
    let mut block = vec![0; n];
    for (rank, &r) in rows.iter().enumerate() {
        block[r] = rank * (k + 1) / n.max(1);
    }
    block
}

/// The training and test positions of fold `f`: with `time`, the expanding
/// window over time blocks (train on blocks up to `f`, test on `f + 1`),
/// otherwise everything but fold `f` against fold `f`.
pub fn split_for(assignment: &[usize], f: usize, time: bool) -> (Vec<usize>, Vec<usize>) {
    if !time {
        return split(assignment, f);
    }
    let mut train = Vec::new();
    let mut test = Vec::new();
    for (i, &b) in assignment.iter().enumerate() {
        if b <= f {
            train.push(i);
        } else if b == f + 1 {
            test.push(i);
        }
    }
    (train, test)
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
    fn groups_stay_whole_and_folds_stay_near_their_shares() {
        // 300 customers with 1 to 6 rows each; a customer's rows share a
        // label 80% of the time.
        let mut rng = SplitMix64::new(4);
        let (mut labels, mut groups) = (Vec::new(), Vec::new());
        for g in 0..300u32 {
            let rows = 1 + (rng.unit() * 6.0) as usize;
            let usual = usize::from(rng.unit() < 0.3);
            for _ in 0..rows {
                let y = if rng.unit() < 0.8 { usual } else { 1 - usual };
                labels.push(y);
                groups.push(g);
            }
        }
        let a = grouped(&labels, &groups, 2, 5, 9);
        for g in 0..300u32 {
            let folds: std::collections::BTreeSet<usize> = (0..labels.len())
                .filter(|&i| groups[i] == g)
                .map(|i| a[i])
                .collect();
            assert_eq!(folds.len(), 1, "group {g} split over {folds:?}");
        }
        let positives = labels.iter().filter(|&&y| y == 1).count() as f64;
        for f in 0..5 {
            let n = (0..labels.len()).filter(|&i| a[i] == f).count() as f64;
            let p = (0..labels.len())
                .filter(|&i| a[i] == f && labels[i] == 1)
                .count() as f64;
            assert!(
                (n / labels.len() as f64 - 0.2).abs() < 0.02,
                "fold {f}: {n} rows"
            );
            assert!(
                (p / positives - 0.2).abs() < 0.02,
                "fold {f}: {p} positives"
            );
        }
        assert_eq!(a, grouped(&labels, &groups, 2, 5, 9));
        assert_ne!(a, grouped(&labels, &groups, 2, 5, 10));
    }

    #[test]
    fn time_folds_never_train_on_the_future() {
        let order: Vec<f64> = (0..103).map(|i| f64::from((i * 37) % 103)).collect();
        let blocks = time_blocks(&order, 4);
        for f in 0..4 {
            let (train, test) = split_for(&blocks, f, true);
            assert!(!train.is_empty() && !test.is_empty());
            let latest = train.iter().map(|&r| order[r]).fold(f64::MIN, f64::max);
            let earliest = test.iter().map(|&r| order[r]).fold(f64::MAX, f64::min);
            assert!(latest < earliest, "fold {f}");
            // An expanding window: each fold trains on all that came before.
            let (all_before, _) = split_for(&blocks, f + 1, true);
            if f < 3 {
                assert_eq!(all_before.len(), train.len() + test.len());
            }
        }
    }

    #[test]
    fn split_partitions_the_rows() {
        let (train, test) = split(&[0, 1, 0, 2], 0);
        assert_eq!(train, vec![1, 3]);
        assert_eq!(test, vec![0, 2]);
    }
}
