//! Where the records of a fit come from: an interval-pair file or a measurement history
//! (docs/histories.md), with status codes, the plot column that folds and clusters follow,
//! and the data screening that every fit reports.

use super::DataOptions;
use crate::data::{
    interval_names, load_history, load_remeasurement, screen, ColumnNames, Flag, FlagReason,
    HistorySpec, MissingAs, RemeasureSpec, Remeasurement, Required, ScreenSpec, StatusCodes,
    ADDED_COLUMNS,
};
use crate::Error;

/// How the data file is read beyond the role-column names.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct InputOptions {
    /// The meaning of each status code (`--status-codes`).
    pub status_codes: Option<StatusCodes>,
    /// The plot column, where it differs from the stand column (`--plot`): the unit of
    /// cross-validation folds. Defaults to the stand column.
    pub plot: Option<String>,
    /// Read the file as a measurement history (`--history`).
    pub history: Option<HistoryOptions>,
    /// Data screening.
    pub screen: ScreenOptions,
    /// Plots to leave out of the fit (`--exclude-plots`, docs/validation.md): records whose
    /// plot column holds one of these ids.
    pub exclude_plots: Option<std::collections::BTreeSet<String>>,
}

/// The options of a history beyond the role columns (the stand column is the plot; the tree
/// column is `names.tree`).
#[derive(Debug, Clone, PartialEq)]
pub struct HistoryOptions {
    /// The measurement-time column (`--time-col`, default `year`).
    pub time: String,
    /// Trees missing at a remeasurement (`--missing-as`).
    pub missing_as: MissingAs,
    /// Ingrowth threshold diameter (`--threshold-dbh`).
    pub threshold_dbh: Option<f64>,
}

impl Default for HistoryOptions {
    fn default() -> Self {
        HistoryOptions {
            time: "year".into(),
            missing_as: MissingAs::Error,
            threshold_dbh: None,
        }
    }
}

/// Data screening options.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ScreenOptions {
    /// Group column of the increment statistics (`--screen-by`).
    pub by: Option<String>,
    /// Diameter shrinkage tolerated (`--shrink-tolerance`), in diameter units.
    pub shrink_tolerance: Option<f64>,
    /// |robust z| above which an increment is flagged (`--screen-z`; default 3.5).
    pub z_limit: Option<f64>,
    /// Leave flagged records out of the fit (`--drop-flagged`).
    pub drop_flagged: bool,
}

/// What screening found, and whether the flagged records were left out.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Screening {
    /// Every flag, in line order.
    pub flags: Vec<Flag>,
    /// Loaded records with at least one flag.
    pub flagged_records: usize,
    /// Records left out by `--drop-flagged` (0 without it).
    pub left_out: usize,
    /// Whether `--drop-flagged` was given.
    pub drop_flagged: bool,
}

impl Screening {
    /// Flags with `reason`.
    pub fn count(&self, reason: FlagReason) -> usize {
        self.flags.iter().filter(|f| f.reason == reason).count()
    }

    /// The model file's `flagged_records`: the count when anything was flagged or
    /// `--drop-flagged` was given.
    pub fn file_count(&self) -> Option<u64> {
        (self.flagged_records > 0 || self.drop_flagged).then_some(self.flagged_records as u64)
    }

    /// The model file's `flagged_left_out`, alongside [`Screening::file_count`].
    pub fn file_left_out(&self) -> Option<bool> {
        self.file_count().map(|_| self.left_out > 0)
    }

    /// The `screening` object of the JSON summaries: flagged records, flags by reason,
    /// records left out.
    pub fn json(&self) -> serde_json::Value {
        let by_reason: serde_json::Map<String, serde_json::Value> = FlagReason::ALL
            .iter()
            .map(|&r| (r.as_str().to_string(), self.count(r).into()))
            .collect();
        serde_json::json!({"flagged_records": self.flagged_records, "flags": by_reason,
                           "drop_flagged": self.drop_flagged, "left_out": self.left_out})
    }

    /// One sentence for the summary, or `None` when nothing was flagged.
    pub fn sentence(&self) -> Option<String> {
        if self.flags.is_empty() {
            return None;
        }
        let parts: Vec<String> = FlagReason::ALL
            .iter()
            .map(|&r| (r, self.count(r)))
            .filter(|(_, c)| *c > 0)
            .map(|(r, c)| format!("{c} {}", r.as_str()))
            .collect();
        let fate = if self.drop_flagged {
            format!(
                "{} flagged records were left out (--drop-flagged)",
                self.left_out
            )
        } else {
            "kept in the fit (leave them out with --drop-flagged)".to_string()
        };
        Some(format!(
            "screening flagged {} records ({}); {fate}; list them with --screen FILE (docs/histories.md, \"Screening\")",
            self.flagged_records,
            parts.join(", ")
        ))
    }
}

/// The records of a fit and what screening found.
#[derive(Debug, Clone)]
pub struct Loaded {
    /// The records that enter the fit.
    pub records: Remeasurement,
    /// Screening results.
    pub screening: Screening,
}

/// The plot column: `--plot`, else the stand column (the plot of a history).
pub fn plot_column(data: &DataOptions) -> &str {
    data.input.plot.as_deref().unwrap_or(&data.names.stand)
}

/// Whether the records of `data` can have `column`: the file's header, or for a history the
/// interval table's (the history's columns without time and status, plus the added ones).
pub fn has_column(data: &DataOptions, column: &str) -> bool {
    match &data.input.history {
        None => super::file_has_column(&data.path, column),
        Some(h) => {
            ADDED_COLUMNS.contains(&column)
                || (column != h.time
                    && column != data.names.status
                    && super::file_has_column(&data.path, column))
        }
    }
}

/// The role names of the loaded records (a history's interval table renames some).
pub fn record_names(data: &DataOptions) -> ColumnNames {
    match &data.input.history {
        None => data.names.clone(),
        Some(_) => interval_names(&data.names),
    }
}

/// Load the records for `spec` from a pair file or a history, screen them, and leave the
/// flagged ones out with `--drop-flagged`.
///
/// # Errors
/// Bad data (exit code 2), including no record left after `--drop-flagged`.
pub fn load_records(data: &DataOptions, mut spec: RemeasureSpec) -> Result<Loaded, Error> {
    let names = record_names(data);
    let screen_opts = &data.input.screen;
    let mut extra = vec![(names.dbh2.clone(), "data screening")];
    if let Some(by) = &screen_opts.by {
        extra.push((by.clone(), "--screen-by"));
    }
    let plot_why = match data.input.plot {
        Some(_) => "--plot",
        None => "the plot of each record",
    };
    extra.push((plot_column(data).to_string(), plot_why));
    extra.push((names.tree.clone(), "the tree of each record"));
    for (column, why) in extra {
        let needed = why.starts_with("--") || has_column(data, &column);
        if needed && !spec.required.iter().any(|r| r.column == column) {
            spec.required.push(Required::new(column, why));
        }
    }
    spec.status_codes = data.input.status_codes.clone();
    let (mut records, history) = match &data.input.history {
        None => (load_remeasurement(&data.path, &spec)?, None),
        Some(h) => {
            let hspec = HistorySpec {
                names: data.names.clone(),
                time: h.time.clone(),
                status_codes: data.input.status_codes.clone(),
                missing_as: h.missing_as,
                threshold_dbh: h.threshold_dbh,
                categorical: data.categorical.clone(),
                units: data.units,
            };
            let load = load_history(&data.path, &hspec, &spec)?;
            (load.records, Some((load.history, load.pairing)))
        }
    };
    if let Some((_, pairing)) = &history {
        let c = &pairing.counts;
        if c.missing_dead + c.missing_dropped > 0 {
            records.warnings.push(format!(
                "{} trees alive at a measurement had no record at the plot's next one and were counted {} (--missing-as)",
                c.missing_dead + c.missing_dropped,
                if c.missing_dead > 0 { "dead" } else { "as censored (left out of the fits, kept in the stand covariates)" }
            ));
        }
    }
    let flags = screen(
        &records.frame,
        &names,
        plot_column(data),
        history.as_ref().map(|(h, p)| (h, p)),
        &ScreenSpec {
            by: screen_opts.by.clone(),
            shrink_tolerance: screen_opts.shrink_tolerance,
            z_limit: screen_opts.z_limit,
            units: data.units,
        },
    );
    let mut flagged = vec![false; records.frame.len()];
    for f in &flags {
        if let Some(r) = f.record {
            flagged[r] = true;
        }
    }
    let excluded = super::exclude::excluded(&records.frame, plot_column(data), &data.input);
    let flagged_records = flagged.iter().filter(|&&f| f).count();
    let mut left_out = 0;
    if let Some((excluded, note)) = &excluded {
        records.warnings.push(note.clone());
        if screen_opts.drop_flagged {
            left_out = flagged
                .iter()
                .zip(excluded)
                .filter(|(f, x)| **f && !**x)
                .count();
        }
    }
    if (screen_opts.drop_flagged && flagged_records > 0) || excluded.is_some() {
        let drop = screen_opts.drop_flagged;
        let keep: Vec<bool> = match &excluded {
            Some((x, _)) => flagged
                .iter()
                .zip(x)
                .map(|(f, x)| !(*x || (drop && *f)))
                .collect(),
            None => flagged.iter().map(|f| !f).collect(),
        };
        records.frame.retain(&keep);
        if let Some(alive) = records.alive.as_mut() {
            let mut it = keep.iter();
            alive.retain(|_| it.next().copied().unwrap_or(false));
        }
        if excluded.is_none() {
            left_out = flagged_records;
        }
        records.counts.records = records.frame.len();
        if records.frame.is_empty() {
            let why = if excluded.is_some() {
                "no record is left to fit after --exclude-plots (and --drop-flagged)"
            } else {
                "every record was flagged by screening, so --drop-flagged leaves nothing to fit"
            };
            return Err(Error::Usage(format!("{}: {why}", data.path.display())));
        }
    }
    let screening = Screening {
        flags,
        flagged_records,
        left_out,
        drop_flagged: screen_opts.drop_flagged,
    };
    if let Some(s) = screening.sentence() {
        records.warnings.push(s);
    }
    Ok(Loaded { records, screening })
}
