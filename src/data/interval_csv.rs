//! Writing loaded records (the interval table of a history, with its derived covariates) as a
//! tidy CSV: one row per record, numbers in their shortest exact form, empty cells for missing
//! values.

use std::fmt::Write;

use super::frame::Frame;

/// Quote a cell when it holds a comma, a quote or a line break.
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The columns `columns` of `frame` (those it has, in that order) as CSV text with a header.
/// Numbers are written in the shortest form that reads back to the same `f64`.
///
/// # Examples
/// ```
/// use stemcast::data::{frame_csv, parse_table, TableOptions};
/// let t = parse_table(b"plot,dbh\nA,12.5\nB,\n", "t.csv", &TableOptions::default()).unwrap();
/// let csv = frame_csv(&t.frame, &["plot".into(), "dbh".into()]);
/// assert_eq!(csv, "plot,dbh\nA,12.5\nB,\n");
/// ```
pub fn frame_csv(frame: &Frame, columns: &[String]) -> String {
    let present: Vec<&String> = columns
        .iter()
        .filter(|c| frame.column(c).is_some())
        .collect();
    let mut out = present
        .iter()
        .map(|c| field(c))
        .collect::<Vec<_>>()
        .join(",");
    out.push('\n');
    for i in 0..frame.len() {
        for (k, c) in present.iter().enumerate() {
            if k > 0 {
                out.push(',');
            }
            if let Some(text) = frame.column(c).and_then(|col| col.text(i)) {
                let _ = write!(out, "{}", field(&text));
            }
        }
        out.push('\n');
    }
    out
}
