//! `--exclude-plots FILE` (docs/validation.md, "Out-of-sample validation"): the records of
//! the listed plots are left out of a fit, after their plots' derived covariates were
//! computed and the data screened (so the kept records are exactly those of a full fit).

use super::source::InputOptions;
use crate::data::Frame;

/// Per record, whether its plot (the `plot` column) is listed in `--exclude-plots`, with the
/// sentence the summary shows; `None` without the option.
pub fn excluded(frame: &Frame, plot: &str, input: &InputOptions) -> Option<(Vec<bool>, String)> {
    let list = input.exclude_plots.as_ref()?;
    let column = frame.column(plot);
    let out: Vec<bool> = (0..frame.len())
        .map(|i| {
            column
                .and_then(|c| c.text(i))
                .is_some_and(|id| list.contains(id.as_ref()))
        })
        .collect();
    let records = out.iter().filter(|&&x| x).count();
    let mut plots = std::collections::BTreeSet::new();
    if let Some(c) = column {
        for (i, _) in out.iter().enumerate().filter(|(_, &x)| x) {
            if let Some(id) = c.text(i) {
                plots.insert(id.into_owned());
            }
        }
    }
    let note = format!(
        "--exclude-plots: {records} records of {} of the {} listed plots left out of the fit",
        plots.len(),
        list.len()
    );
    Some((out, note))
}
