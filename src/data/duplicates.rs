//! Finding records that repeat a key: (stand, tree) in an interval-pair file, (plot, tree,
//! time) in a history. A repeated key double counts a tree in the stand covariates (basal area
//! in larger trees summed over two periods), so it is an error naming both lines.

use super::frame::{Frame, FrameColumn};
use super::remeasure::ColumnNames;
use super::DataError;

/// Refuse a pair file whose (stand, tree) repeats, naming both lines and the two ways to give
/// several periods of a plot (docs/histories.md, "Duplicates").
pub(super) fn check_pair_keys(frame: &Frame, names: &ColumnNames) -> Result<(), DataError> {
    let all = vec![true; frame.len()];
    let Some((first, repeat, stand, tree)) =
        repeated_stand_tree(frame, &names.stand, &names.tree, &all)
    else {
        return Ok(());
    };
    Err(DataError::Record {
        file: frame.source.clone(),
        line: repeat,
        message: format!(
            "stand \"{stand}\", tree \"{tree}\" appears again (first on line {first}); a pair file holds one row per tree and period, and a repeated tree would count twice in its stand's covariates. If the file holds several remeasurement periods, read the measurements as a history (--history, see docs/histories.md) or make the stand column a stand-period id and name the plot with --plot COL"
        ),
    })
}

/// One key component per row: text codes, or the bits of a number (−0 read as 0).
fn key_part(column: &FrameColumn, i: usize) -> u64 {
    match column {
        FrameColumn::Numeric(v) => (v[i] + 0.0).to_bits(),
        FrameColumn::Text { codes, .. } => u64::from(codes[i]),
    }
}

/// The first repeated key among the rows where `rows` is true: `(first row, repeating row)`,
/// the repeating row being the earliest in the file that repeats an earlier one. `keys[i]`
/// is row `i`'s key. O(n log n).
pub(super) fn first_repeat<K: Ord + Copy>(keys: &[K], rows: &[bool]) -> Option<(usize, usize)> {
    let mut order: Vec<usize> = (0..keys.len()).filter(|&i| rows[i]).collect();
    order.sort_unstable_by(|&a, &b| keys[a].cmp(&keys[b]).then(a.cmp(&b)));
    let mut best: Option<(usize, usize)> = None;
    let mut run_start = 0;
    for j in 1..order.len() {
        if keys[order[j]] != keys[order[j - 1]] {
            run_start = j;
        } else if j == run_start + 1 {
            // Within a run of equal keys (rows in file order), the run's second row is its
            // earliest repeat.
            let (first, repeat) = (order[run_start], order[j]);
            if best.is_none_or(|(_, b)| repeat < b) {
                best = Some((first, repeat));
            }
        }
    }
    best
}

/// The (stand, tree) pair of the first repeated record of a pair file, as (line of the first
/// record, line of the repeat, stand text, tree text); `None` when every pair is unique.
pub(super) fn repeated_stand_tree(
    frame: &Frame,
    stand: &str,
    tree: &str,
    rows: &[bool],
) -> Option<(u64, u64, String, String)> {
    let (Some(s), Some(t)) = (frame.column(stand), frame.column(tree)) else {
        return None;
    };
    let keys: Vec<(u64, u64)> = (0..frame.len())
        .map(|i| (key_part(s, i), key_part(t, i)))
        .collect();
    let rows: Vec<bool> = (0..frame.len())
        .map(|i| rows[i] && !s.is_missing(i) && !t.is_missing(i))
        .collect();
    let (a, b) = first_repeat(&keys, &rows)?;
    Some((
        frame.lines[a],
        frame.lines[b],
        s.text(b).unwrap_or_default().into_owned(),
        t.text(b).unwrap_or_default().into_owned(),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_earliest_repeat_is_reported_with_the_first_occurrence() {
        // Rows 1 and 4 share key 7, rows 2 and 3 key 5: row 3 is the earliest repeat, of row 2.
        let keys = [1, 7, 5, 5, 7];
        assert_eq!(first_repeat(&keys, &[true; 5]), Some((2, 3)));
        // A run of three reports its first two rows.
        assert_eq!(first_repeat(&[9, 9, 9], &[true; 3]), Some((0, 1)));
        // Rows left out do not count.
        assert_eq!(
            first_repeat(&keys, &[true, true, true, false, true]),
            Some((1, 4))
        );
        assert_eq!(first_repeat(&[1, 2, 3], &[true; 3]), None);
    }
}
