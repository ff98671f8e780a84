//! Loading an interval-pair remeasurement file (one row per tree and period) for a fit.

use std::path::Path;

use super::duplicates::check_pair_keys;
use super::remeasure::{load_with, RemeasureSpec, Remeasurement};
use super::table::{parse_table, read_bytes};
use super::DataError;

/// Load the remeasurement file at `path` for the fit described by `spec`.
///
/// # Errors
/// - [`DataError::Io`] when the file cannot be read; [`DataError::File`] and
///   [`DataError::Record`] for an empty file, duplicate column names or ragged rows.
/// - [`DataError::MissingColumn`] for a required column the file lacks.
/// - [`DataError::Cell`] (line 1, the header) when a derived covariate that would be computed
///   is also a file column (use `--use-column NAME` or rename it); [`DataError::File`] when no
///   record is left.
/// - [`DataError::Cell`] for a `dbh` (or `dbh2` in a growth fit) that is not a positive
///   number, a non-positive `years` or `expansion`, an empty stand, and a status that is
///   empty or not understood.
/// - [`DataError::Record`] when a (stand, tree) pair repeats (both columns present), naming
///   both lines.
pub fn load_remeasurement(path: &Path, spec: &RemeasureSpec) -> Result<Remeasurement, DataError> {
    let source = path.display().to_string();
    let bytes = read_bytes(path)?;
    load_remeasurement_bytes(&bytes, &source, spec)
}

/// [`load_remeasurement`] on CSV bytes already in memory, named `source` in messages.
///
/// # Examples
/// ```
/// use stemcast::data::{load_remeasurement_bytes, DerivedCovariate, RemeasureSpec, Required};
/// let csv = b"stand,dbh,alive,expansion\nA,10,1,100\nA,30,cut,100\nA,,1,100\n";
/// let spec = RemeasureSpec {
///     required: vec![Required::new("dbh", "term `dbh`")],
///     derived: vec![DerivedCovariate::Bal],
///     ..RemeasureSpec::default()
/// };
/// let r = load_remeasurement_bytes(csv, "remeasure.csv", &spec).unwrap();
/// assert_eq!((r.counts.records, r.counts.censored, r.counts.ingrowth), (1, 1, 1));
/// assert_eq!(r.alive.as_deref(), Some(&[true][..]));
/// // The cut 30 cm tree still counts as larger: π/40000 · 30² · 100 m²/ha.
/// let bal = r.frame.numeric("bal").unwrap()[0];
/// assert!((bal - 7.0685835).abs() < 1e-6);
/// ```
///
/// # Errors
/// As [`load_remeasurement`].
pub fn load_remeasurement_bytes(
    bytes: &[u8],
    source: &str,
    spec: &RemeasureSpec,
) -> Result<Remeasurement, DataError> {
    let header = super::table::parse_header(bytes, source)?;
    let names = &spec.names;
    // One row per tree: the same (stand, tree) twice double counts the tree in the stand
    // covariates (two periods of a plot under one stand id).
    let keyed = [&names.stand, &names.tree]
        .iter()
        .all(|c| header.iter().any(|h| h == *c));
    load_with(header, source, spec, |options| {
        let mut options = options.clone();
        if keyed {
            if let Some(columns) = options.columns.as_mut() {
                for c in [&names.stand, &names.tree] {
                    if !columns.contains(c) {
                        columns.push(c.clone());
                    }
                }
            }
        }
        let table = parse_table(bytes, source, &options)?;
        if keyed {
            check_pair_keys(&table.frame, names)?;
        }
        Ok(table)
    })
}
