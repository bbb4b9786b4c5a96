//! A dataset in memory: typed feature columns and a class-index target,
//! as every later stage sees it whatever file it came from.

/// Marks a missing categorical value.
pub const MISSING_CODE: u32 = u32::MAX;

/// A feature column.
#[derive(Debug, Clone, PartialEq)]
pub enum ColumnData {
    /// Numbers; missing values are NaN.
    Numeric(Vec<f64>),
    /// Category codes into `levels` (sorted); missing is [`MISSING_CODE`].
    Categorical {
        codes: Vec<u32>,
        levels: Vec<String>,
    },
}

/// A named feature column.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    pub name: String,
    pub data: ColumnData,
}

/// A loaded dataset.
#[derive(Debug, Clone)]
pub struct Table {
    /// The dataset's name in the manifest.
    pub name: String,
    /// The file it was read from, for messages.
    pub source: String,
    /// SHA-256 of the file's bytes.
    pub sha256: String,
    pub columns: Vec<Column>,
    /// Class index of every row.
    pub labels: Vec<usize>,
    /// Class labels by index. Binary tasks are ordered `[negative, positive]`.
    pub classes: Vec<String>,
    /// Plain-words notes about dropped columns and the like.
    pub warnings: Vec<String>,
}

impl Table {
    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.labels.len()
    }

    /// Number of classes.
    pub fn n_classes(&self) -> usize {
        self.classes.len()
    }

    /// Rows per class, by class index.
    pub fn class_counts(&self) -> Vec<usize> {
        let mut counts = vec![0; self.n_classes()];
        for &y in &self.labels {
            counts[y] += 1;
        }
        counts
    }
}
