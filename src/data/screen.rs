//! Data screening: records that look wrong are counted and listed, never dropped silently
//! (docs/histories.md, "Screening"). Four reasons: an annual diameter increment far from
//! its group's (robust z-score), a diameter that shrinks beyond the measurement tolerance, a
//! tree alive after its recorded death, and a new tree too large to have grown in.

use std::collections::HashMap;

use super::frame::Frame;
use super::history::History;
use super::pairing::Pairing;
use super::remeasure::ColumnNames;
use super::units::Units;

/// |robust z| above which an increment is flagged (Iglewicz & Hoaglin 1993).
pub const ROBUST_Z_LIMIT: f64 = 3.5;
/// Groups with fewer increments than this are judged by the statistics of all records.
pub const MIN_GROUP: usize = 10;
/// 0.6745 = Φ⁻¹(0.75): scales the median absolute deviation to a normal SD.
const MAD_SCALE: f64 = 0.6745;

/// Why a record is flagged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum FlagReason {
    /// Annual diameter increment with |robust z| > 3.5 within its group.
    IncrementOutlier,
    /// Second diameter smaller than the first by more than the tolerance.
    Shrinks,
    /// Alive at a measurement after being recorded dead or cut.
    Reappears,
    /// New tree whose diameter above the threshold implies an outlying growth rate.
    FarAboveThreshold,
}

impl FlagReason {
    /// Every reason, in report order.
    pub const ALL: [FlagReason; 4] = [
        FlagReason::IncrementOutlier,
        FlagReason::Shrinks,
        FlagReason::Reappears,
        FlagReason::FarAboveThreshold,
    ];

    /// The name in the screening file and the JSON summary.
    pub fn as_str(self) -> &'static str {
        match self {
            FlagReason::IncrementOutlier => "increment_outlier",
            FlagReason::Shrinks => "diameter_shrinks",
            FlagReason::Reappears => "alive_after_death",
            FlagReason::FarAboveThreshold => "new_tree_far_above_threshold",
        }
    }
}

/// How to screen.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScreenSpec {
    /// Group column of the increment statistics (`--screen-by`, e.g. species); `None`: one
    /// group.
    pub by: Option<String>,
    /// How much a diameter may shrink before it is flagged (diameter units); `None`: 0.25 cm
    /// or 0.1 in.
    pub shrink_tolerance: Option<f64>,
    /// |robust z| above which an increment is flagged; `None`: [`ROBUST_Z_LIMIT`].
    pub z_limit: Option<f64>,
    /// Units of the diameters.
    pub units: Units,
}

impl ScreenSpec {
    /// The shrink tolerance in diameter units.
    pub fn tolerance(&self) -> f64 {
        self.shrink_tolerance.unwrap_or(match self.units {
            Units::Metric => 0.25,
            Units::Imperial => 0.1,
        })
    }
}

/// One flagged record and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Flag {
    /// The record's line in the data file (its first measurement's, in a history).
    pub line: u64,
    /// Another line involved (the second measurement, the reappearance), if any.
    pub other_line: Option<u64>,
    /// Stand or plot id.
    pub plot: String,
    /// Tree id.
    pub tree: String,
    /// Why.
    pub reason: FlagReason,
    /// The number judged: robust z, shrinkage, or the implied growth's robust z.
    pub value: f64,
    /// A readable explanation.
    pub detail: String,
    /// The record (index into the loaded frame) that the flag concerns, if it is loaded.
    pub record: Option<usize>,
}

/// Median of a non-empty slice (reordered in place; O(n) selection).
fn median(v: &mut [f64]) -> f64 {
    let n = v.len();
    let (below, mid, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    let upper = *mid;
    if n % 2 == 1 {
        upper
    } else {
        let lower = below.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (lower + upper)
    }
}

/// Median and median absolute deviation.
///
/// # Formula
/// m = median(x), MAD = median(|x − m|); the robust z of x is 0.6745 (x − m) / MAD
/// (Iglewicz & Hoaglin 1993).
pub fn median_mad(values: &[f64]) -> (f64, f64) {
    let mut v = values.to_vec();
    let m = median(&mut v);
    let mut dev: Vec<f64> = values.iter().map(|x| (x - m).abs()).collect();
    (m, median(&mut dev))
}

/// Per-group increment statistics: (median, MAD) by group, with the pooled ones as fallback.
struct Stats {
    groups: HashMap<String, (f64, f64)>,
    pooled: Option<(f64, f64)>,
}

impl Stats {
    fn of(&self, group: &str) -> Option<(f64, f64)> {
        self.groups.get(group).copied().or(self.pooled)
    }
}

fn cell(frame: &Frame, column: Option<&str>, i: usize) -> String {
    column
        .and_then(|c| frame.column(c))
        .and_then(|c| c.text(i))
        .map(|t| t.into_owned())
        .unwrap_or_default()
}

/// A column as numbers (`NaN` for empty or text cells, or when the column is absent).
fn numbers(frame: &Frame, column: &str) -> Vec<f64> {
    match frame.column(column) {
        Some(c) => (0..frame.len())
            .map(|i| c.number(i).unwrap_or(f64::NAN))
            .collect(),
        None => vec![f64::NAN; frame.len()],
    }
}

/// The group of every record (index into the names) by the cell text of column `by`; one
/// group named "" without it.
fn groups(frame: &Frame, by: Option<&str>) -> (Vec<u32>, Vec<String>) {
    let Some(column) = by.and_then(|c| frame.column(c)) else {
        return (vec![0; frame.len()], vec![String::new()]);
    };
    let mut index: HashMap<String, u32> = HashMap::new();
    let mut names = Vec::new();
    let of = (0..frame.len())
        .map(|i| {
            let text = column.text(i).unwrap_or_default();
            if let Some(&g) = index.get(text.as_ref()) {
                return g;
            }
            let g = names.len() as u32;
            names.push(text.to_string());
            index.insert(text.into_owned(), g);
            g
        })
        .collect();
    (of, names)
}

/// Screen the loaded records of `frame` (role columns `names`, plot column `plot`) and, for a
/// history, its pairing. Increments use `dbh`, `dbh2` and `years` (1 year when absent).
pub fn screen(
    frame: &Frame,
    names: &ColumnNames,
    plot: &str,
    history: Option<(&History, &Pairing)>,
    spec: &ScreenSpec,
) -> Vec<Flag> {
    let n = frame.len();
    let by = spec.by.as_deref();
    let (d1s, d2s, years) = (
        numbers(frame, &names.dbh),
        numbers(frame, &names.dbh2),
        numbers(frame, &names.years),
    );
    let mut increments: Vec<(usize, f64, f64, f64)> = Vec::new();
    for i in 0..n {
        let (d1, d2) = (d1s[i], d2s[i]);
        let years = if years[i].is_finite() && years[i] > 0.0 {
            years[i]
        } else {
            1.0
        };
        if d1.is_finite() && d2.is_finite() {
            increments.push((i, d1, d2, (d2 - d1) / years));
        }
    }
    let (group_of, group_names) = groups(frame, by);
    let mut grouped: Vec<Vec<f64>> = vec![Vec::new(); group_names.len()];
    for &(i, _, _, a) in &increments {
        grouped[group_of[i] as usize].push(a);
    }
    let all: Vec<f64> = increments.iter().map(|x| x.3).collect();
    let stats = Stats {
        groups: grouped
            .iter()
            .zip(&group_names)
            .filter(|(v, _)| v.len() >= MIN_GROUP)
            .map(|(v, k)| (k.clone(), median_mad(v)))
            .collect(),
        pooled: (!all.is_empty()).then(|| median_mad(&all)),
    };
    let group_label = |g: &str| match by {
        Some(c) => format!(" among {c} = {g}"),
        None => String::new(),
    };
    let tol = spec.tolerance();
    let z_limit = spec.z_limit.unwrap_or(ROBUST_Z_LIMIT);
    let mut flags = Vec::new();
    let flag = |i: usize, reason, value, detail: String| Flag {
        line: frame.lines[i],
        other_line: None,
        plot: cell(frame, Some(plot), i),
        tree: cell(frame, Some(&names.tree), i),
        reason,
        value,
        detail,
        record: Some(i),
    };
    for &(i, d1, d2, a) in &increments {
        let g = &group_names[group_of[i] as usize];
        if let Some((m, mad)) = stats.of(g).filter(|s| s.1 > 0.0) {
            let z = MAD_SCALE * (a - m) / mad;
            if z.abs() > z_limit {
                let detail = format!(
                    "annual diameter increment {a:.4} ({d1} to {d2}): robust z {z:.2}{} (median {m:.4}, MAD {mad:.4})",
                    group_label(g)
                );
                flags.push(flag(i, FlagReason::IncrementOutlier, z, detail));
            }
        }
        if d2 < d1 - tol {
            let detail =
                format!("diameter shrinks from {d1} to {d2}, more than the tolerance {tol}");
            flags.push(flag(i, FlagReason::Shrinks, d1 - d2, detail));
        }
    }
    if let Some((h, p)) = history {
        history_flags(frame, h, p, (&stats, z_limit), by, &mut flags);
    }
    flags.sort_by_key(|f| (f.line, f.reason));
    flags
}

/// Trees alive after their death, and new trees too large to be ingrowth.
fn history_flags(
    frame: &Frame,
    h: &History,
    p: &Pairing,
    (stats, z_limit): (&Stats, f64),
    by: Option<&str>,
    flags: &mut Vec<Flag>,
) {
    let record_of_line: HashMap<u64, usize> = frame
        .lines
        .iter()
        .enumerate()
        .map(|(i, &l)| (l, i))
        .collect();
    let names = &h.spec.names;
    let hc = |column: &str, row: usize| cell(&h.frame, Some(column), row);
    for r in &p.reappearances {
        let line = r
            .death
            .map_or(h.frame.lines[r.anchor], |d| h.frame.lines[d]);
        let detail = match r.death {
            Some(d) => format!(
                "recorded {} at {} (line {}) and alive again at {} (line {})",
                hc(&names.status, d),
                h.time[d],
                h.frame.lines[d],
                h.time[r.row],
                h.frame.lines[r.row]
            ),
            None => format!(
                "missing after {} (counted dead) and alive again at {} (line {})",
                h.time[r.anchor], h.time[r.row], h.frame.lines[r.row]
            ),
        };
        flags.push(Flag {
            line,
            other_line: Some(h.frame.lines[r.row]),
            plot: h.plots[h.plot[r.row] as usize].clone(),
            tree: hc(&names.tree, r.row),
            reason: FlagReason::Reappears,
            value: h.time[r.row],
            detail,
            record: record_of_line.get(&h.frame.lines[r.anchor]).copied(),
        });
    }
    let threshold = p.ingrowth.threshold_dbh;
    for t in p.new_trees.iter().filter(|t| t.ingrowth) {
        let years = p.ingrowth.periods[t.period].years;
        let implied = (h.dbh[t.row] - threshold) / years;
        let g = by.map(|c| hc(c, t.row)).unwrap_or_default();
        let Some((m, mad)) = stats.of(&g).filter(|s| s.1 > 0.0) else {
            continue;
        };
        let z = MAD_SCALE * (implied - m) / mad;
        if z > z_limit {
            flags.push(Flag {
                line: h.frame.lines[t.row],
                other_line: None,
                plot: h.plots[h.plot[t.row] as usize].clone(),
                tree: hc(&names.tree, t.row),
                reason: FlagReason::FarAboveThreshold,
                value: z,
                detail: format!(
                    "first recorded at {} with diameter {}: growing from the threshold {threshold} in {years} years needs {implied:.4} a year, robust z {z:.2} — a tree missed earlier rather than ingrowth",
                    h.time[t.row], h.dbh[t.row]
                ),
                record: record_of_line.get(&h.frame.lines[t.row]).copied(),
            });
        }
    }
}

/// The flags as CSV: `line,other_line,plot,tree,reason,value,detail`.
pub fn flags_csv(flags: &[Flag]) -> String {
    let field = |s: &str| {
        if s.contains([',', '"', '\n']) {
            format!("\"{}\"", s.replace('"', "\"\""))
        } else {
            s.to_string()
        }
    };
    let mut out = String::from("line,other_line,plot,tree,reason,value,detail\n");
    for f in flags {
        out.push_str(&format!(
            "{},{},{},{},{},{},{}\n",
            f.line,
            f.other_line.map(|l| l.to_string()).unwrap_or_default(),
            field(&f.plot),
            field(&f.tree),
            f.reason.as_str(),
            f.value,
            field(&f.detail)
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_and_mad_of_a_small_sample() {
        // Derived analytically: sorted 1, 2, 3, 4, 100 → median 3; |x − 3| = 2, 1, 0, 1, 97
        // → sorted 0, 1, 1, 2, 97 → MAD 1.
        assert_eq!(median_mad(&[3.0, 100.0, 1.0, 2.0, 4.0]), (3.0, 1.0));
        // Even count: median of 1, 2, 3, 4 is 2.5; deviations 1.5, 0.5, 0.5, 1.5 → MAD 1.
        assert_eq!(median_mad(&[4.0, 1.0, 3.0, 2.0]), (2.5, 1.0));
    }
}
