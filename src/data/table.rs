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
    /// How many levels of a categorical column the encoding keeps.
    pub levels: LevelCap,
    /// A group id per row (rows of one customer, patient or device), when
    /// the dataset names a `group` column: folds keep each group whole.
    pub groups: Option<Vec<u32>>,
    /// A time per row, when the dataset names a `time` column: folds are
    /// then an expanding window over time. Text times are ranked in text
    /// order, which is time order for ISO 8601 dates.
    pub order: Option<Vec<f64>>,
}

/// The cap on a categorical column's encoding, fitted on training rows only:
/// a level seen in fewer than `min_rows` training rows, or beyond the
/// `max_levels` most frequent, joins one "other" level, as does a level the
/// training rows never saw. An identifier-like column of 3,000 values thus
/// becomes at most `max_levels + 1` indicator columns, not 3,000.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct LevelCap {
    pub max_levels: usize,
    pub min_rows: usize,
}

impl Default for LevelCap {
    fn default() -> Self {
        LevelCap {
            max_levels: 50,
            min_rows: 5,
        }
    }
}

impl LevelCap {
    /// True for the default cap, so manifests that never set it keep their
    /// recorded settings.
    pub fn is_default(&self) -> bool {
        *self == LevelCap::default()
    }
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

    /// Takes a feature column out of the table, for a setting `key` that
    /// names it; a name that is not a feature column is an error listing
    /// the columns there are.
    fn take_column(&mut self, name: &str, key: &str) -> Result<ColumnData, String> {
        let Some(at) = self.columns.iter().position(|c| c.name == name) else {
            let shown: Vec<&str> = self
                .columns
                .iter()
                .take(20)
                .map(|c| c.name.as_str())
                .collect();
            return Err(format!(
                "`{key}` names `{name}`, which is not a feature column (the target cannot be used); columns are: {}",
                shown.join(", ")
            ));
        };
        Ok(self.columns.remove(at).data)
    }

    /// Drops the named columns (identifiers, leaks, free text).
    pub fn exclude(&mut self, names: &[String]) -> Result<(), String> {
        for (i, name) in names.iter().enumerate() {
            if !names[..i].contains(name) {
                self.take_column(name, "exclude")?;
            }
        }
        Ok(())
    }

    /// Takes the named column out of the features as the rows' group ids.
    /// A missing group value is an error naming the first such row.
    pub fn take_groups(&mut self, name: &str) -> Result<(), String> {
        let ids: Vec<Option<u32>> = match self.take_column(name, "group")? {
            ColumnData::Categorical { codes, .. } => codes
                .into_iter()
                .map(|c| (c != MISSING_CODE).then_some(c))
                .collect(),
            ColumnData::Numeric(v) => {
                let mut distinct: Vec<f64> = v.iter().copied().filter(|x| !x.is_nan()).collect();
                distinct.sort_by(f64::total_cmp);
                distinct.dedup();
                v.iter()
                    .map(|x| {
                        distinct
                            .binary_search_by(|d| d.total_cmp(x))
                            .ok()
                            .map(|i| i as u32)
                    })
                    .collect()
            }
        };
        if let Some(row) = ids.iter().position(Option::is_none) {
            return Err(format!(
                "the group column `{name}` is empty on data row {}; give every row its group",
                row + 1
            ));
        }
        self.groups = Some(ids.into_iter().flatten().collect());
        Ok(())
    }

    /// Takes the named column out of the features as the rows' times.
    pub fn take_order(&mut self, name: &str) -> Result<(), String> {
        let times: Vec<f64> = match self.take_column(name, "time")? {
            ColumnData::Numeric(v) => v,
            // Codes follow the sorted levels, so they rank the text.
            ColumnData::Categorical { codes, .. } => codes
                .into_iter()
                .map(|c| {
                    if c == MISSING_CODE {
                        f64::NAN
                    } else {
                        f64::from(c)
                    }
                })
                .collect(),
        };
        if let Some(row) = times.iter().position(|t| t.is_nan()) {
            return Err(format!(
                "the time column `{name}` is empty on data row {}; give every row its time",
                row + 1
            ));
        }
        self.order = Some(times);
        Ok(())
    }

    /// Notes on categorical columns that look like identifiers: nearly a
    /// different value in every row. The encoding caps them, but a column
    /// like that rarely measures anything a model can use.
    pub fn identifier_notes(&self) -> Vec<String> {
        let n = self.rows();
        self.columns
            .iter()
            .filter_map(|c| match &c.data {
                ColumnData::Categorical { codes, levels } => {
                    let present = codes.iter().filter(|&&v| v != MISSING_CODE).count();
                    (present > 20 && levels.len() * 2 > present).then(|| {
                        format!(
                            "{}: column `{}` has {} distinct values in {n} rows, like an identifier; it is encoded as at most its {} most frequent levels plus `other`. Drop it with `exclude = [\"{}\"]` unless it truly measures something",
                            self.source,
                            c.name,
                            levels.len(),
                            self.levels.max_levels,
                            c.name
                        )
                    })
                }
                ColumnData::Numeric(_) => None,
            })
            .collect()
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
