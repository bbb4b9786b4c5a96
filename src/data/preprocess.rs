//! Turning table columns into a numeric matrix, fitted on training rows only.
//!
//! Missing numbers take the training median, missing categories the training
//! mode; categories become one-hot columns, capped by the table's
//! [`LevelCap`](super::table::LevelCap): the most frequent levels of the
//! training rows keep their own column, and rare levels, levels beyond the
//! cap and levels unseen in training share one "other" column (when no
//! training row falls there, an unseen level encodes as all zeros);
//! scale-sensitive families also get each column
//! centred and scaled by the training mean and standard deviation. Columns
//! that are constant on the training rows are left out, since they carry no
//! information there and would divide by zero when scaled.

use super::table::{ColumnData, Table, MISSING_CODE};
use crate::common::math::median;
use ndarray::Array2;

/// Raised whenever a change to the encoding changes results (1: categorical
/// levels capped, rare levels pooled into "other"), so resumed runs do not
/// reuse cells an earlier encoding made; part of every cell's fingerprint.
pub const REVISION: u32 = 1;

/// Rows encoded together by [`Preprocessor::transform`].
const TRANSFORM_BLOCK: usize = 256;

/// One output column: where it comes from and how it is shifted and scaled.
#[derive(Debug, Clone, PartialEq)]
enum Source {
    Numeric {
        column: usize,
        fill: f64,
    },
    Indicator {
        column: usize,
        code: u32,
        fill: u32,
    },
    /// 1 for any level outside `kept` (rare, beyond the cap, or unseen).
    Other {
        column: usize,
        kept: Vec<u32>,
        fill: u32,
    },
}

#[derive(Debug, Clone, PartialEq)]
struct Output {
    source: Source,
    shift: f64,
    scale: f64,
}

/// A preprocessing fitted on one set of training rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Preprocessor {
    outputs: Vec<Output>,
}

/// A categorical column's level code on a row, missing values taking the
/// training mode `fill`; `None` for a numeric column.
/// A category code with a missing value imputed.
fn level(code: u32, fill: u32) -> u32 {
    if code == MISSING_CODE {
        fill
    } else {
        code
    }
}

impl Output {
    /// The output's values before shifting and scaling on `rows`, into
    /// `into`. One match per column rather than per value: encoding is a
    /// large share of a fit's time on simple families at a million rows.
    fn fill(&self, table: &Table, rows: &[usize], into: &mut [f64]) {
        let column = match self.source {
            Source::Numeric { column, .. }
            | Source::Indicator { column, .. }
            | Source::Other { column, .. } => &table.columns[column].data,
        };
        let slots = into.iter_mut().zip(rows);
        match (&self.source, column) {
            (Source::Numeric { fill, .. }, ColumnData::Numeric(v)) => {
                for (o, &r) in slots {
                    *o = if v[r].is_nan() { *fill } else { v[r] };
                }
            }
            (Source::Indicator { code, fill, .. }, ColumnData::Categorical { codes, .. }) => {
                for (o, &r) in slots {
                    *o = f64::from(u8::from(level(codes[r], *fill) == *code));
                }
            }
            (Source::Other { kept, fill, .. }, ColumnData::Categorical { codes, .. }) => {
                for (o, &r) in slots {
                    let c = level(codes[r], *fill);
                    *o = f64::from(u8::from(kept.binary_search(&c).is_err()));
                }
            }
            // A source is built from its own column's kind; a mismatch
            // cannot occur, and would read as missing everywhere.
            (Source::Numeric { fill, .. }, _) => into.fill(*fill),
            _ => into.fill(0.0),
        }
    }
}

impl Preprocessor {
    /// Learns imputation values, categories and (if `standardise`) scaling
    /// from `rows` of `table`, and nothing else.
    pub fn fit(table: &Table, rows: &[usize], standardise: bool) -> Preprocessor {
        let mut sources = Vec::new();
        for (c, column) in table.columns.iter().enumerate() {
            match &column.data {
                ColumnData::Numeric(v) => {
                    let present: Vec<f64> =
                        rows.iter().map(|&r| v[r]).filter(|x| !x.is_nan()).collect();
                    if !present.is_empty() {
                        sources.push(Source::Numeric {
                            column: c,
                            fill: median(&present),
                        });
                    }
                }
                ColumnData::Categorical { codes, levels } => {
                    let mut counts = vec![0usize; levels.len()];
                    for &r in rows {
                        if codes[r] != MISSING_CODE {
                            counts[codes[r] as usize] += 1;
                        }
                    }
                    // Mode; the first (alphabetically lowest) level wins ties.
                    let Some(fill) = (0..counts.len())
                        .filter(|&i| counts[i] > 0)
                        .max_by(|&a, &b| counts[a].cmp(&counts[b]).then(b.cmp(&a)))
                    else {
                        continue;
                    };
                    // The most frequent levels with enough rows, ties to the
                    // lower code, then back in code order.
                    let cap = table.levels;
                    let mut kept: Vec<usize> = (0..counts.len())
                        .filter(|&i| counts[i] >= cap.min_rows.max(1))
                        .collect();
                    kept.sort_by(|&a, &b| counts[b].cmp(&counts[a]).then(a.cmp(&b)));
                    kept.truncate(cap.max_levels);
                    kept.sort_unstable();
                    for &code in &kept {
                        sources.push(Source::Indicator {
                            column: c,
                            code: code as u32,
                            fill: fill as u32,
                        });
                    }
                    let pooled = counts
                        .iter()
                        .enumerate()
                        .any(|(i, &n)| n > 0 && kept.binary_search(&i).is_err());
                    if pooled {
                        sources.push(Source::Other {
                            column: c,
                            kept: kept.iter().map(|&k| k as u32).collect(),
                            fill: fill as u32,
                        });
                    }
                }
            }
        }
        let mut outputs = Vec::with_capacity(sources.len());
        let mut values = vec![0.0; rows.len()];
        for source in sources {
            let mut out = Output {
                source,
                shift: 0.0,
                scale: 1.0,
            };
            let n = rows.len() as f64;
            out.fill(table, rows, &mut values);
            let mean = values.iter().sum::<f64>() / n;
            let var = values.iter().map(|&v| (v - mean).powi(2)).sum::<f64>() / n;
            if var <= 1e-24 * (1.0 + mean * mean) {
                continue;
            }
            if standardise {
                out.shift = mean;
                out.scale = var.sqrt();
            }
            outputs.push(out);
        }
        Preprocessor { outputs }
    }

    /// Number of output columns.
    pub fn width(&self) -> usize {
        self.outputs.len()
    }

    /// A name for each output column, for a program that reads the encoded
    /// matrix: a numeric column keeps its name, an indicator is
    /// `column=level`, and the pooled level is `column=(other)`.
    pub fn names(&self, table: &Table) -> Vec<String> {
        self.outputs
            .iter()
            .map(|out| match &out.source {
                Source::Numeric { column, .. } => table.columns[*column].name.clone(),
                Source::Indicator { column, code, .. } => {
                    let c = &table.columns[*column];
                    match &c.data {
                        ColumnData::Categorical { levels, .. } => {
                            format!("{}={}", c.name, levels[*code as usize])
                        }
                        ColumnData::Numeric(_) => c.name.clone(),
                    }
                }
                Source::Other { column, .. } => format!("{}=(other)", table.columns[*column].name),
            })
            .collect()
    }

    /// Encodes `rows` of `table` with what was learned in `fit`.
    pub fn transform(&self, table: &Table, rows: &[usize]) -> Array2<f64> {
        let mut x = Array2::zeros((rows.len(), self.outputs.len()));
        // A block of rows at a time, column by column, so the block's part
        // of the matrix stays in cache while its columns are filled.
        let mut values = vec![0.0; TRANSFORM_BLOCK.min(rows.len())];
        for (b, block) in rows.chunks(TRANSFORM_BLOCK).enumerate() {
            let start = b * TRANSFORM_BLOCK;
            let values = &mut values[..block.len()];
            for (j, out) in self.outputs.iter().enumerate() {
                out.fill(table, block, values);
                for (i, &v) in values.iter().enumerate() {
                    x[[start + i, j]] = (v - out.shift) / out.scale;
                }
            }
        }
        x
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::csv::parse_csv;

    const CSV: &str = "\
num,colour,y
1,red,a
,blue,b
3,,a
100,red,b
5,green,a
";

    /// The tiny table, with every level kept (no minimum count), so the
    /// tests see one column per level.
    fn table() -> Table {
        let mut t = parse_csv(CSV.as_bytes(), "t.csv", "y", Some("b")).unwrap();
        t.levels.min_rows = 1;
        t
    }

    #[test]
    fn imputes_from_training_rows_only() {
        let t = table();
        // Training rows 0..3: numeric median of {1, 3} is 2; mode of
        // {red, blue} is a tie, broken towards "blue" (alphabetically first).
        let p = Preprocessor::fit(&t, &[0, 1, 2], false);
        let x = p.transform(&t, &[1, 2]);
        // Columns: num, colour=blue, colour=red (green unseen in training).
        assert_eq!(p.width(), 3);
        assert_eq!(x.row(0).to_vec(), vec![2.0, 1.0, 0.0]);
        assert_eq!(x.row(1).to_vec(), vec![3.0, 1.0, 0.0]);
        // The test row with an unseen category encodes as all zeros.
        let unseen = p.transform(&t, &[4]);
        assert_eq!(unseen.row(0).to_vec(), vec![5.0, 0.0, 0.0]);
    }

    #[test]
    fn a_test_row_cannot_move_the_fitted_values() {
        let t = table();
        let a = Preprocessor::fit(&t, &[0, 1, 2], true);
        let mut t2 = t.clone();
        if let ColumnData::Numeric(v) = &mut t2.columns[0].data {
            v[3] = 1e9; // row 3 is not a training row
        }
        assert_eq!(a, Preprocessor::fit(&t2, &[0, 1, 2], true));
    }

    #[test]
    fn standardised_training_columns_have_mean_zero_and_unit_variance() {
        let t = table();
        let rows = [0, 1, 2, 3, 4];
        let x = Preprocessor::fit(&t, &rows, true).transform(&t, &rows);
        for col in x.columns() {
            let mean = col.sum() / 5.0;
            let var = col.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / 5.0;
            assert!(mean.abs() < 1e-12 && (var - 1.0).abs() < 1e-12);
        }
    }

    #[test]
    fn columns_constant_on_the_training_rows_are_left_out() {
        let t = table();
        // Rows 0 and 3 are both "red" and the numbers differ.
        let p = Preprocessor::fit(&t, &[0, 3], true);
        assert_eq!(p.width(), 1);
    }

    #[test]
    fn a_many_level_column_is_capped_on_training_rows() {
        // 3,000 distinct values, the last 300 rows sharing ten levels: only
        // those ten reach the 5-row minimum on the training rows, and
        // every other value shares one "other" column.
        let mut csv = String::from("id,y\n");
        for i in 0..3000 {
            let id = if i >= 2700 {
                format!("shared{}", i % 10)
            } else {
                format!("c{i}")
            };
            csv.push_str(&format!("{id},{}\n", i % 2));
        }
        let t = parse_csv(csv.as_bytes(), "t.csv", "y", None).unwrap();
        let rows: Vec<usize> = (0..3000).collect();
        let p = Preprocessor::fit(&t, &rows, false);
        assert_eq!(p.width(), 11);
        // A level the training rows never saw encodes as "other", like the
        // rare ones: row 5's value is unseen when it is left out.
        let train: Vec<usize> = (0..3000).filter(|&r| r != 5).collect();
        let p = Preprocessor::fit(&t, &train, false);
        let x = p.transform(&t, &[5, 6, 2700]);
        assert_eq!(x.row(0), x.row(1), "unseen and rare share `other`");
        assert_eq!(x.row(0).sum(), 1.0);
        assert_ne!(x.row(0), x.row(2));
        // With a cap of 4 levels, the rest join "other".
        let mut capped = t.clone();
        capped.levels.max_levels = 4;
        assert_eq!(Preprocessor::fit(&capped, &rows, false).width(), 5);
    }
}
