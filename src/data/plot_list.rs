//! Plot lists (docs/validation.md, "Plot lists"): one plot id per line, for `fit
//! --exclude-plots`, `validate --plots` and `intervals --split-plots`. Blank lines and lines
//! starting with `#` are ignored; ids are trimmed.

use std::collections::BTreeSet;
use std::path::Path;

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

use super::DataError;

/// Most plot ids a list may hold.
pub const MAX_LISTED_PLOTS: usize = 10_000_000;

/// Read a plot list.
///
/// # Errors
/// [`DataError::File`] when it cannot be read, is not UTF-8, or lists no plot.
pub fn read_plot_list(path: &Path) -> Result<BTreeSet<String>, DataError> {
    let shown = path.display().to_string();
    let bytes =
        std::fs::read(path).map_err(|e| DataError::file(&shown, format!("cannot be read: {e}")))?;
    let text =
        String::from_utf8(bytes).map_err(|_| DataError::file(&shown, "is not UTF-8 text"))?;
    let mut out = BTreeSet::new();
    for line in text.lines() {
        let id = line.trim();
        if id.is_empty() || id.starts_with('#') {
            continue;
        }
        if out.len() >= MAX_LISTED_PLOTS {
            return Err(DataError::file(
                &shown,
                format!("lists more than {MAX_LISTED_PLOTS} plots"),
            ));
        }
        out.insert(id.to_string());
    }
    if out.is_empty() {
        return Err(DataError::file(&shown, "lists no plot"));
    }
    Ok(out)
}

/// A random `fraction` of `plots` (at least one, at most all but one when there are two or
/// more), chosen by shuffling the ids in byte order with ChaCha8 seeded with `seed`; returned
/// in byte order.
pub fn split_plots(plots: &[String], fraction: f64, seed: u64) -> Vec<String> {
    let mut ids: Vec<String> = plots.to_vec();
    ids.sort();
    ids.dedup();
    let n = ids.len();
    let mut k = (fraction * n as f64).round() as usize;
    k = k.max(1).min(if n >= 2 { n - 1 } else { n });
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    ids.shuffle(&mut rng);
    ids.truncate(k);
    ids.sort();
    ids
}

/// A plot list's text: a comment line, then one id per line.
pub fn plot_list_text(ids: &[String], comment: &str) -> String {
    let mut s = format!("# {comment}\n");
    for id in ids {
        s.push_str(id);
        s.push('\n');
    }
    s
}
