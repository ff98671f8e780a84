//! `fit ingrowth --history`: the plot-period table and the new trees taken from a measurement
//! history (docs/ingrowth.md, "From a history"). The table is the one `stemcast intervals
//! --ingrowth` writes, plus the plot attributes at the start of each period, so that a fit from
//! the history and a fit from that table written out are the same fit.

use std::path::Path;

use crate::data::{
    parse_table, read_history, DataError, Frame, History, HistorySpec, Ingrowth, Pairing, Table,
    TableOptions,
};
use crate::model::ingrowth_trees::{summarise_trees, IngrowthTreeRecords, IngrowthTrees};
use crate::Error;

/// Column of the number of new trees in the derived table.
pub const COUNT_COLUMN: &str = "ingrowth";
/// Column of the plot area.
pub const AREA_COLUMN: &str = "area";
/// Column of the period length.
pub const YEARS_COLUMN: &str = "years";

/// The columns the derived table always has, in order (those of `intervals --ingrowth`).
const PERIOD_COLUMNS: [&str; 10] = [
    "plot",
    "t1",
    "t2",
    YEARS_COLUMN,
    COUNT_COLUMN,
    "ingrowth_stems",
    AREA_COLUMN,
    "ba",
    "stems",
    "qmd",
];

/// What to take from the new trees of a history.
#[derive(Debug, Clone)]
pub struct HistoryTreesSpec {
    /// Species column of the history, for species shares.
    pub species: Option<String>,
    /// Attribute column whose levels get shares and quantiles of their own.
    pub by: Option<String>,
    /// Number of diameter quantiles stored per group.
    pub quantiles: usize,
}

/// A history turned into a plot-period table and its ingrowth trees.
#[derive(Debug, Clone)]
pub struct HistoryPlotPeriods {
    /// The plot-period table (columns [`COUNT_COLUMN`], [`AREA_COLUMN`], [`YEARS_COLUMN`], the
    /// covariates `ba`, `stems`, `qmd` and the plot attributes), with the history's SHA-256.
    pub table: Table,
    /// Species shares and diameter quantiles of the ingrowth trees.
    pub trees: IngrowthTrees,
    /// History columns left out of the table because they clash with a derived column.
    pub skipped: Vec<String>,
}

/// Quote a CSV cell when needed.
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The history columns that are plot attributes: not a role column and, at every plot
/// measurement, the same in every row (empty cells included).
fn attribute_columns(h: &History, pairing: &Pairing) -> Vec<String> {
    let n = &h.spec.names;
    let roles = [
        &n.stand,
        &n.tree,
        &n.dbh,
        &n.status,
        &n.expansion,
        &h.spec.time,
    ];
    h.header
        .iter()
        .filter(|c| !roles.contains(c))
        .filter(|c| {
            let Some(col) = h.frame.column(c) else {
                return false;
            };
            let mut first: Vec<Option<usize>> = vec![None; pairing.occasions.len()];
            (0..h.frame.len()).all(|i| {
                let o = pairing.occasion_of_row[i] as usize;
                match first[o] {
                    None => {
                        first[o] = Some(i);
                        true
                    }
                    Some(j) => col.text(i) == col.text(j),
                }
            })
        })
        .cloned()
        .collect()
}

/// The plot-period table as CSV text: the columns of `intervals --ingrowth`, then each
/// attribute at the period's first measurement.
fn table_csv(
    h: &History,
    pairing: &Pairing,
    attributes: &[String],
    file: &str,
) -> Result<String, Error> {
    let ing: &Ingrowth = &pairing.ingrowth;
    let base = ing.periods_csv();
    let mut lines = base.lines();
    let header = lines.next().unwrap_or_default();
    let mut out = String::from(header);
    for a in attributes {
        out.push(',');
        out.push_str(&field(a));
    }
    out.push('\n');
    // The first row of each occasion, for its attributes.
    let mut first_row: Vec<Option<usize>> = vec![None; pairing.occasions.len()];
    for i in (0..h.frame.len()).rev() {
        first_row[pairing.occasion_of_row[i] as usize] = Some(i);
    }
    let mut occasion_of_period = Vec::with_capacity(ing.periods.len());
    for (o, pair) in pairing.occasions.windows(2).enumerate() {
        if pair[0].plot == pair[1].plot {
            occasion_of_period.push(o);
        }
    }
    if occasion_of_period.len() != ing.periods.len() {
        return Err(DataError::file(
            file.to_string(),
            "the plot periods do not match the plot measurements".to_string(),
        )
        .into());
    }
    for p in &ing.periods {
        if p.area.is_none() {
            return Err(DataError::file(
                file.to_string(),
                format!(
                    "plot {}: its trees do not all have one expansion factor, so the plot area (1/expansion) is unknown; give a plot-period table with an area column instead",
                    p.plot
                ),
            )
            .into());
        }
    }
    // periods_csv quotes plot ids with line breaks; such ids would split a line here.
    if ing.periods.iter().any(|p| p.plot.contains(['\n', '\r'])) {
        return Err(
            DataError::file(file.to_string(), "a plot id holds a line break".to_string()).into(),
        );
    }
    for (k, line) in lines.enumerate() {
        out.push_str(line);
        let row = first_row[occasion_of_period[k]];
        for a in attributes {
            out.push(',');
            let cell = row.and_then(|i| h.frame.column(a).and_then(|c| c.text(i)));
            out.push_str(&field(cell.as_deref().unwrap_or("")));
        }
        out.push('\n');
    }
    Ok(out)
}

fn labels(
    frame: &Frame,
    column: &Option<String>,
    file: &str,
) -> Result<Option<Vec<String>>, Error> {
    let Some(name) = column else { return Ok(None) };
    let col = frame.column(name).ok_or_else(|| DataError::MissingColumn {
        file: file.to_string(),
        column: name.clone(),
        why: "ingrowth tree labels".into(),
        available: frame.columns.keys().cloned().collect::<Vec<_>>().join(", "),
    })?;
    (0..frame.len())
        .map(|i| {
            col.text(i).map(|s| s.into_owned()).ok_or_else(|| {
                DataError::Cell {
                    file: file.to_string(),
                    line: frame.lines.get(i).copied().unwrap_or(0),
                    column: name.clone(),
                    message: "empty, but every new tree needs a label here".into(),
                }
                .into()
            })
        })
        .collect::<Result<Vec<_>, Error>>()
        .map(Some)
}

/// Read and pair the history at `path` and derive its plot-period table and new trees.
///
/// # Errors
/// The history's own errors (file, line, column); a plot without a single expansion factor
/// (no plot area); no ingrowth tree at all (nothing to take shares and quantiles from).
pub fn history_plot_periods(
    path: &Path,
    spec: &HistorySpec,
    trees: &HistoryTreesSpec,
) -> Result<HistoryPlotPeriods, Error> {
    let h = read_history(path, spec)?;
    let pairing = h.pair()?;
    let file = h.frame.source.clone();
    let derived: Vec<String> = PERIOD_COLUMNS.iter().map(|c| c.to_string()).collect();
    let (attributes, skipped): (Vec<String>, Vec<String>) = attribute_columns(&h, &pairing)
        .into_iter()
        .partition(|a| !derived.contains(a));
    let csv = table_csv(&h, &pairing, &attributes, &file)?;
    let mut table = parse_table(
        csv.as_bytes(),
        &format!("{file} (plot periods)"),
        &TableOptions {
            categorical: spec.categorical.clone(),
            columns: None,
        },
    )?;
    table.sha256 = h.sha256.clone();
    let ing = &pairing.ingrowth;
    if ing.tree_dbh.is_empty() {
        return Err(DataError::file(
            file,
            format!(
                "no tree enters any plot at or above the threshold diameter {}: there is no ingrowth to model",
                ing.threshold_dbh
            ),
        )
        .into());
    }
    let species = labels(&ing.trees, &trees.species, &file)?;
    let group = labels(&ing.trees, &trees.by, &file)?;
    let mut summary = summarise_trees(
        &IngrowthTreeRecords {
            dbh: &ing.tree_dbh,
            species: species.as_deref(),
            group: group.as_deref(),
        },
        trees.quantiles,
    )?;
    summary.source = Some(path.display().to_string());
    summary.species_attribute = trees.species.clone();
    summary.by = trees.by.clone();
    Ok(HistoryPlotPeriods {
        table,
        trees: summary,
        skipped,
    })
}
