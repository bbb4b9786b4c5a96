//! The one shape every report table takes, so each output format is one
//! exporter over it rather than one renderer per table.

use serde::Serialize;

/// One cell: text, a number (NaN when undefined) or a count.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Text(String),
    Number(f64),
    Count(usize),
}

impl From<&str> for Value {
    fn from(s: &str) -> Self {
        Value::Text(s.to_string())
    }
}

impl From<String> for Value {
    fn from(s: String) -> Self {
        Value::Text(s)
    }
}

impl From<f64> for Value {
    fn from(v: f64) -> Self {
        Value::Number(v)
    }
}

impl From<usize> for Value {
    fn from(v: usize) -> Self {
        Value::Count(v)
    }
}

impl Serialize for Value {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self {
            Value::Text(t) => s.serialize_str(t),
            Value::Number(v) if v.is_finite() => s.serialize_f64(*v),
            Value::Number(_) => s.serialize_none(),
            Value::Count(c) => s.serialize_u64(*c as u64),
        }
    }
}

/// A titled table with notes that travel with it into every format.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Table {
    /// File stem, e.g. `families` for `families.md`.
    #[serde(skip)]
    pub name: String,
    pub title: String,
    /// Conventions a reader needs: bins, strategies, interval method.
    pub notes: Vec<String>,
    pub columns: Vec<String>,
    pub rows: Vec<Vec<Value>>,
}

impl Table {
    pub fn new(name: &str, title: &str, columns: &[&str]) -> Self {
        Table {
            name: name.to_string(),
            title: title.to_string(),
            notes: Vec::new(),
            columns: columns.iter().map(|c| c.to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// The value in `column` of `row`, if both exist.
    pub fn get(&self, row: usize, column: &str) -> Option<&Value> {
        let c = self.columns.iter().position(|x| x == column)?;
        self.rows.get(row)?.get(c)
    }
}

/// Full precision for machine-read formats; empty when undefined.
pub fn exact(v: &Value) -> String {
    match v {
        Value::Text(t) => t.clone(),
        Value::Number(x) if x.is_finite() => format!("{x}"),
        Value::Number(_) => String::new(),
        Value::Count(c) => c.to_string(),
    }
}

/// Four decimals for reading, scientific below 0.001, `–` when undefined.
pub fn short(v: &Value) -> String {
    match v {
        Value::Number(x) if !x.is_finite() => "–".to_string(),
        Value::Number(x) if *x != 0.0 && x.abs() < 1e-3 => format!("{x:.2e}"),
        Value::Number(x) => format!("{x:.4}"),
        other => exact(other),
    }
}
