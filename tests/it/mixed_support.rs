//! Helpers of the mixed-model tests: reading the fixtures' CSV files into columns, plot codes,
//! and comparisons that name what differs.

use std::collections::BTreeMap;

use ndarray::Array2;
use serde_json::Value;

/// The numeric columns of a fixture CSV (header names unquoted); text cells become NaN.
pub fn columns(path: &str) -> BTreeMap<String, Vec<f64>> {
    let text = std::fs::read_to_string(crate::common::fixtures::fixture(path)).expect("csv");
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .expect("header")
        .split(',')
        .map(|h| h.trim_matches('"').to_string())
        .collect();
    let mut out: BTreeMap<String, Vec<f64>> =
        header.iter().map(|h| (h.clone(), Vec::new())).collect();
    for line in lines.filter(|l| !l.is_empty()) {
        for (h, cell) in header.iter().zip(line.split(',')) {
            let v = cell.trim_matches('"').parse().unwrap_or(f64::NAN);
            out.get_mut(h).expect("column").push(v);
        }
    }
    out
}

/// The text cells of one column.
pub fn text_column(path: &str, name: &str) -> Vec<String> {
    let text = std::fs::read_to_string(crate::common::fixtures::fixture(path)).expect("csv");
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let k = header
        .iter()
        .position(|h| h.trim_matches('"') == name)
        .expect("column");
    lines
        .filter(|l| !l.is_empty())
        .map(|l| {
            l.split(',')
                .nth(k)
                .expect("cell")
                .trim_matches('"')
                .to_string()
        })
        .collect()
}

/// Plot codes 0.. by increasing numeric id, and the ids in code order.
pub fn codes(ids: &[f64]) -> (Vec<u32>, Vec<f64>) {
    let mut levels = ids.to_vec();
    levels.sort_by(f64::total_cmp);
    levels.dedup();
    let codes = ids
        .iter()
        .map(|v| levels.iter().position(|l| l == v).expect("level") as u32)
        .collect();
    (codes, levels)
}

/// The design [1, terms…] of the named columns.
pub fn design(cols: &BTreeMap<String, Vec<f64>>, terms: &[&str]) -> Array2<f64> {
    let n = cols.values().next().map_or(0, Vec::len);
    let mut x = Array2::ones((n, terms.len() + 1));
    for (c, t) in terms.iter().enumerate() {
        for (i, v) in cols[*t].iter().enumerate() {
            x[[i, c + 1]] = *v;
        }
    }
    x
}

/// A JSON array of numbers.
pub fn nums(v: &Value) -> Vec<f64> {
    crate::common::fixtures::numbers(v)
}

/// Assert |got − want| ≤ atol + rtol·|want| elementwise, naming the quantity and index.
pub fn assert_close(what: &str, got: &[f64], want: &[f64], rtol: f64, atol: f64) {
    assert_eq!(got.len(), want.len(), "{what}: lengths");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            crate::common::fixtures::close(*g, *w, rtol, atol),
            "{what}[{i}]: got {g}, want {w} (rtol {rtol}, atol {atol})"
        );
    }
}

/// (rtol, atol) of a fixture's `tolerance` entry.
pub fn tol(t: &Value, key: &str) -> (f64, f64) {
    (
        t[key]["rtol"].as_f64().expect("rtol"),
        t[key]["atol"].as_f64().expect("atol"),
    )
}
