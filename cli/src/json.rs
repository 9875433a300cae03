//! Building the JSON objects the commands print.
//!
//! Keys come out sorted (serde_json's map is ordered), so output is byte-for-byte
//! deterministic. A non-finite number (a kernel evaluated on a singularity) becomes `null`,
//! the only JSON value for it.

use geokern_symbolic::program::OpCounts;
use serde_json::{Map, Value};

/// A number; `null` when not finite.
pub fn number(v: f64) -> Value {
    Value::from(v)
}

/// A flat array of numbers.
pub fn vector(values: &[f64]) -> Value {
    Value::Array(values.iter().map(|&v| number(v)).collect())
}

/// Nested arrays of `flat` (row-major) over `shape`; an empty shape is a single number.
pub fn nested(flat: &[f64], shape: &[usize]) -> Value {
    match shape.split_first() {
        None => flat.first().map_or(Value::Null, |&v| number(v)),
        Some((&len, rest)) => {
            let stride: usize = rest.iter().product();
            Value::Array(
                (0..len)
                    .map(|i| nested(flat.get(i * stride..(i + 1) * stride).unwrap_or(&[]), rest))
                    .collect(),
            )
        }
    }
}

/// `{"add": n, "mul": n, "div": n, "call": n, "total": n}`.
pub fn op_counts(c: &OpCounts) -> Value {
    let mut m = Map::new();
    m.insert("add".into(), c.add.into());
    m.insert("mul".into(), c.mul.into());
    m.insert("div".into(), c.div.into());
    m.insert("call".into(), c.call.into());
    m.insert("total".into(), c.total().into());
    Value::Object(m)
}

/// An object of named numbers, `{NAME: value, ..}`.
pub fn named(names: &[String], values: &[f64]) -> Value {
    Value::Object(
        names
            .iter()
            .zip(values)
            .map(|(n, &v)| (n.clone(), number(v)))
            .collect(),
    )
}

/// The text printed for `value`: pretty-printed, with a final newline.
pub fn to_text(value: &Value) -> String {
    // Serialising a `Value` cannot fail: its keys are strings and its numbers finite.
    let mut text = serde_json::to_string_pretty(value).unwrap_or_else(|_| "null".to_string());
    text.push('\n');
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nesting_follows_the_shape() {
        let flat: Vec<f64> = (0..8).map(f64::from).collect();
        assert_eq!(
            nested(&flat, &[2, 2, 2]).to_string(),
            "[[[0.0,1.0],[2.0,3.0]],[[4.0,5.0],[6.0,7.0]]]"
        );
        assert_eq!(nested(&[2.5], &[]).to_string(), "2.5");
        assert_eq!(nested(&[], &[0]).to_string(), "[]");
        assert_eq!(vector(&[f64::NAN, 1.0]).to_string(), "[null,1.0]");
    }
}
