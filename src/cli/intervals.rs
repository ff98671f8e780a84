//! `stemcast intervals`: pair a measurement history into the derived interval table (one
//! row per tree and interval, with fate and derived covariates) for inspection or reuse.

use std::path::PathBuf;

use clap::Args as ClapArgs;
use stemcast::atomic::write_atomic;
use stemcast::data::{
    derive_intervals, frame_csv, plot_list_text, read_history, split_plots, ColumnNames,
    HistorySpec,
};
use stemcast::Error;

use super::fit_args::UnitsArg;
use super::input_args::{history_options, status_codes, HistoryArgs};

/// `intervals` options.
#[derive(Debug, ClapArgs)]
#[command(after_long_help = INTERVALS_HELP)]
pub struct Args {
    /// History CSV: one row per tree per measurement.
    history: PathBuf,
    /// Write the interval table here (CSV).
    #[arg(long, value_name = "FILE", required_unless_present = "split_plots")]
    out: Option<PathBuf>,
    /// Choose this fraction of the plots at random (for out-of-sample validation) and write
    /// their ids to --plots-out (docs/validation.md).
    #[arg(long, value_name = "FRACTION", requires_all = ["plots_out", "seed"])]
    split_plots: Option<f64>,
    /// Seed of --split-plots.
    #[arg(long, value_name = "S", requires = "split_plots")]
    seed: Option<u64>,
    /// The plot list that --split-plots writes (one id per line).
    #[arg(long, value_name = "FILE", requires = "split_plots")]
    plots_out: Option<PathBuf>,
    /// Also write the ingrowth of every plot and period here (CSV).
    #[arg(long, value_name = "FILE")]
    ingrowth: Option<PathBuf>,
    /// Plot column.
    #[arg(long, value_name = "COL", default_value = "stand")]
    stand: String,
    /// Diameter column.
    #[arg(long, value_name = "COL", default_value = "dbh")]
    dbh: String,
    /// Status column.
    #[arg(long, value_name = "COL", default_value = "status")]
    status: String,
    /// Expansion-factor column (stems per hectare, or per acre with --units imperial).
    #[arg(long, value_name = "COL", default_value = "expansion")]
    expansion: String,
    /// Treat a numeric column as categorical. Repeatable.
    #[arg(long, value_name = "COL")]
    categorical: Vec<String>,
    /// Units of diameters and per-area values.
    #[arg(long, value_enum, default_value = "metric")]
    units: UnitsArg,
    #[command(flatten)]
    reading: HistoryArgs,
}

const INTERVALS_HELP: &str =
    "Columns of the interval table: the plot and tree, occasion (plot@t1, the stand of the
derived covariates), t1, t2, years (= t2 - t1), the diameter at t1 (under the history's name),
dbh2 (at t2, empty unless alive), fate (alive, dead, cut or missing), every other history
column at t1, and the derived covariates ba, bal, qmd, rel_dbh, stems per plot and
measurement (when the history has an expansion column). Pairing rules: docs/histories.md.";

/// Run `intervals`.
pub fn run(a: &Args) -> Result<(), Error> {
    let options = history_options(&a.reading, true)?.unwrap_or_default();
    let spec = HistorySpec {
        names: ColumnNames {
            stand: a.stand.clone(),
            tree: a.reading.tree.clone(),
            dbh: a.dbh.clone(),
            status: a.status.clone(),
            expansion: a.expansion.clone(),
            ..ColumnNames::default()
        },
        time: options.time,
        status_codes: status_codes(&a.reading)?,
        missing_as: options.missing_as,
        threshold_dbh: options.threshold_dbh,
        categorical: a.categorical.clone(),
        units: a.units.into(),
    };
    let history = read_history(&a.history, &spec)?;
    if let (Some(f), Some(seed), Some(path)) = (a.split_plots, a.seed, &a.plots_out) {
        if !(f > 0.0 && f < 1.0) {
            return Err(Error::Usage(format!(
                "--split-plots {f}: give a fraction between 0 and 1"
            )));
        }
        let ids = split_plots(&history.plots, f, seed);
        let note = format!(
            "{} of {} plots of {} (--split-plots {f} --seed {seed})",
            ids.len(),
            history.plots.len(),
            a.history.display()
        );
        write_atomic(path, plot_list_text(&ids, &note).as_bytes())?;
        outln!("{note}: wrote {}", path.display());
    }
    let Some(out) = &a.out else {
        return Ok(());
    };
    let pairing = history.pair()?;
    let (records, columns) = derive_intervals(&history, &pairing)?;
    let ingrowth_csv = a.ingrowth.as_ref().map(|_| pairing.ingrowth.periods_csv());
    super::out::distinct(out, &[&a.history])?;
    write_atomic(out, frame_csv(&records.frame, &columns).as_bytes())?;
    if let (Some(path), Some(csv)) = (&a.ingrowth, ingrowth_csv) {
        write_atomic(path, csv.as_bytes())?;
    }
    let c = &pairing.counts;
    outln!(
        "{}: {} rows, {} plots, {} measurements, {} trees",
        a.history.display(),
        c.rows,
        c.plots,
        c.occasions,
        c.trees
    );
    outln!(
        "  {} intervals: {} alive, {} dead ({} of them missing, counted dead), {} cut, {} missing (dropped from fits)",
        c.intervals, c.alive, c.dead, c.missing_dead, c.cut, c.missing_dropped
    );
    outln!(
        "  new trees: {} ingrowth (at or above {}), {} below it, {} first recorded dead or cut",
        c.ingrowth,
        pairing.ingrowth.threshold_dbh,
        c.new_below_threshold,
        c.new_not_alive
    );
    if c.ignored_rows > 0 || c.reappeared > 0 {
        outln!(
            "  {} dead or cut rows of trees not alive at the previous measurement ignored; {} trees alive again after a recorded death",
            c.ignored_rows, c.reappeared
        );
    }
    outln!("  wrote {}", out.display());
    if let Some(p) = &a.ingrowth {
        outln!("  wrote {}", p.display());
    }
    Ok(())
}
