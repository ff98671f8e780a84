//! Management actions applied to a stand at the end of a sub-step (design §4–5): thinning to a
//! density from below or above, and setting attributes of every tree.

use super::stand::Stand;
use crate::scenario::{SetValue, ThinFrom};

/// Thin `stand` to at most `target` stems/ha. Monte Carlo (`whole_records`) removes whole
/// records in diameter order (ties by record index) until stems ≤ target; the expected driver
/// removes weight in the same order and splits the boundary record exactly. Returns the stems
/// removed (0 when the target is at or above the current density).
pub(crate) fn thin(stand: &mut Stand, from: ThinFrom, target: f64, whole_records: bool) -> f64 {
    let mut total: f64 = stand.stems.iter().sum();
    if total <= target {
        return 0.0;
    }
    let mut order: Vec<usize> = (0..stand.len()).collect();
    let (dbh, tree) = (&stand.dbh, &stand.tree);
    order.sort_by(|&a, &b| {
        let by_dbh = match from {
            ThinFrom::Below => dbh[a].total_cmp(&dbh[b]),
            ThinFrom::Above => dbh[b].total_cmp(&dbh[a]),
        };
        by_dbh.then(tree[a].cmp(&tree[b]))
    });
    let mut removed = 0.0;
    for i in order {
        if total <= target {
            break;
        }
        let e = stand.stems[i];
        let take = if whole_records {
            e
        } else {
            e.min(total - target)
        };
        stand.stems[i] = e - take;
        total -= take;
        removed += take;
    }
    if whole_records {
        stand.compact();
    }
    removed
}

/// Give every tree the values of a `set` action.
pub(crate) fn set(values: &[SetValue], numeric: &mut [Vec<f64>], codes: &mut [Vec<u32>]) {
    for v in values {
        match *v {
            SetValue::Number { column, value } => numeric[column].fill(value),
            SetValue::Level { column, code } => codes[column].fill(code),
        }
    }
}
