//! Declared, typed parameters for registry entries (model families today).
//!
//! Each family lists its parameters once, with type, default, range and a
//! one-line explanation. The manifest checks user values against this list,
//! so a typo or a wrong type is caught at load time with the allowed names
//! shown, and `candor list families` can print the same list as documentation.

use serde::Serialize;
use std::collections::BTreeMap;

/// The type and admissible range of one parameter.
#[derive(Debug, Clone, Copy)]
pub enum ParamKind {
    /// A finite float in `[min, max]`.
    Float { min: f64, max: f64 },
    /// An integer in `[min, max]`.
    Int { min: i64, max: i64 },
    /// One of a few named conventions.
    Choice(&'static [&'static str]),
}

/// One documented parameter of a registry entry.
#[derive(Debug, Clone, Copy)]
pub struct ParamSpec {
    pub name: &'static str,
    pub kind: ParamKind,
    pub default: ParamValue,
    pub about: &'static str,
}

/// A parameter value after checking.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(untagged)]
pub enum ParamValue {
    Float(f64),
    Int(i64),
    Choice(&'static str),
}

/// Fully resolved parameters: every declared name present, user values
/// checked, defaults filled in. Ordered so that serialisation is stable.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Params(pub BTreeMap<String, ParamValue>);

impl Params {
    /// The defaults of a parameter list.
    pub fn defaults(specs: &[ParamSpec]) -> Self {
        Params(
            specs
                .iter()
                .map(|s| (s.name.to_string(), s.default))
                .collect(),
        )
    }

    /// A float parameter; declared parameters are always present.
    pub fn float(&self, name: &str) -> f64 {
        match self.0.get(name) {
            Some(ParamValue::Float(v)) => *v,
            Some(ParamValue::Int(v)) => *v as f64,
            _ => panic!("number parameter `{name}` is not declared"),
        }
    }

    /// An integer parameter; declared parameters are always present.
    pub fn int(&self, name: &str) -> i64 {
        match self.0.get(name) {
            Some(ParamValue::Int(v)) => *v,
            _ => panic!("integer parameter `{name}` is not declared"),
        }
    }

    /// A choice parameter; declared parameters are always present.
    pub fn choice(&self, name: &str) -> &'static str {
        match self.0.get(name) {
            Some(ParamValue::Choice(v)) => v,
            _ => panic!("choice parameter `{name}` is not declared"),
        }
    }
}

/// Checks one user value against its declaration; the error says what is
/// allowed.
pub fn check(spec: &ParamSpec, value: &toml::Value) -> Result<ParamValue, String> {
    match (spec.kind, value) {
        (ParamKind::Float { min, max }, toml::Value::Float(v)) => in_range(spec, *v, min, max),
        (ParamKind::Float { min, max }, toml::Value::Integer(v)) => {
            in_range(spec, *v as f64, min, max)
        }
        (ParamKind::Int { min, max }, toml::Value::Integer(v)) => {
            if *v < min || *v > max {
                Err(format!(
                    "parameter `{}` = {v} is out of range; use an integer from {min} to {max}",
                    spec.name
                ))
            } else {
                Ok(ParamValue::Int(*v))
            }
        }
        (ParamKind::Choice(options), toml::Value::String(v)) => options
            .iter()
            .find(|o| **o == v.as_str())
            .map(|o| ParamValue::Choice(o))
            .ok_or_else(|| {
                format!(
                    "parameter `{}` = \"{v}\" is not one of: {}",
                    spec.name,
                    options.join(", ")
                )
            }),
        (ParamKind::Choice(options), other) => Err(format!(
            "parameter `{}` must be one of the strings {}, found {}",
            spec.name,
            options
                .iter()
                .map(|o| format!("\"{o}\""))
                .collect::<Vec<_>>()
                .join(", "),
            other.type_str()
        )),
        (ParamKind::Float { .. }, other) => Err(format!(
            "parameter `{}` must be a number, found {}",
            spec.name,
            other.type_str()
        )),
        (ParamKind::Int { .. }, other) => Err(format!(
            "parameter `{}` must be an integer, found {}",
            spec.name,
            other.type_str()
        )),
    }
}

fn in_range(spec: &ParamSpec, v: f64, min: f64, max: f64) -> Result<ParamValue, String> {
    if v.is_finite() && v >= min && v <= max {
        Ok(ParamValue::Float(v))
    } else {
        Err(format!(
            "parameter `{}` = {v} is out of range; use a number from {min} to {max}",
            spec.name
        ))
    }
}
