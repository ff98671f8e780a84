//! Loading remeasurement records (`docs/data.md#remeasurement-files`): row selection, counts,
//! derived covariates and the messages for bad input.

use std::path::PathBuf;

use stemcast::data::{
    load_remeasurement, DataError, DerivedCovariate, FrameColumn, Purpose, RemeasureSpec,
    Remeasurement, Required, Units,
};

/// A temporary `remeasure.csv` holding `text`.
fn file(text: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("remeasure.csv");
    std::fs::write(&path, text).unwrap();
    (dir, path)
}

fn load(text: &str, spec: &RemeasureSpec) -> Result<Remeasurement, DataError> {
    let (_dir, path) = file(text);
    load_remeasurement(&path, spec)
}

fn survival(required: &[&str], derived: &[DerivedCovariate]) -> RemeasureSpec {
    RemeasureSpec {
        purpose: Purpose::Survival,
        required: required
            .iter()
            .map(|c| Required::new(*c, format!("term `{c}`")))
            .collect(),
        derived: derived.to_vec(),
        ..RemeasureSpec::default()
    }
}

/// Assert that `err` is a cell error whose message names the file, line and column and
/// contains `what`.
fn assert_cell(err: DataError, line: u64, column: &str, what: &str) {
    let message = err.to_string();
    let place = format!("remeasure.csv: line {line}, column \"{column}\": ");
    assert!(matches!(err, DataError::Cell { .. }), "{message}");
    assert!(
        message.contains(&place),
        "expected {place:?} in {message:?}"
    );
    assert!(message.contains(what), "expected {what:?} in {message:?}");
}

const STANDS: &str = "\
stand,tree,dbh,dbh2,alive,years,expansion,treatment
A,1,10,11,1,5,100,a
A,2,20,21.5,0,5,100,b
A,3,30,,cut,5,100,a
A,4,,6,1,5,100,c
B,1,20,22,yes,5,50,b
B,2,20,,dead,5,50,a
";

#[test]
fn survival_fit_with_bal() {
    let spec = survival(
        &["dbh", "treatment"],
        &[DerivedCovariate::Bal, DerivedCovariate::Ba],
    );
    let r = load(STANDS, &spec).unwrap();
    assert_eq!(r.counts.rows_read, 6);
    assert_eq!(r.counts.ingrowth, 1);
    assert_eq!(r.counts.censored, 1);
    assert_eq!(r.counts.records, 4);
    assert_eq!(r.frame.lines, [2, 3, 6, 7]);
    assert_eq!(r.alive.as_deref(), Some(&[true, false, true, false][..]));
    // Derived: stand A has 10, 20, 30 cm at 100/ha (the cut tree counts, the ingrowth tree
    // does not), as in the handbook BAL example: 10.21018, 7.06858; stand B two equal trees.
    let bal = r.frame.numeric("bal").unwrap();
    assert!((bal[0] - 10.21018).abs() < 5e-6);
    assert!((bal[1] - 7.06858).abs() < 5e-6);
    assert_eq!(&bal[2..], &[0.0, 0.0]);
    let ba = r.frame.numeric("ba").unwrap();
    assert!((ba[0] - 10.99557).abs() < 5e-6);
    // Derived: 2 · 50 · π/40000 · 400.
    assert!((ba[2] - std::f64::consts::PI).abs() < 1e-12);
    // Level "c" only occurs on the ingrowth row, so it is gone.
    match r.frame.column("treatment").unwrap() {
        FrameColumn::Text { levels, codes, .. } => {
            assert_eq!(levels, &["a", "b"]);
            assert_eq!(codes, &[0, 1, 1, 0]);
        }
        other => panic!("{other:?}"),
    }
    assert!(r.warnings.is_empty());
    assert_eq!(r.sha256.len(), 64);
}

#[test]
fn imperial_units_change_the_constant() {
    let spec = RemeasureSpec {
        units: Units::Imperial,
        ..survival(&[], &[DerivedCovariate::Ba])
    };
    let r = load(STANDS, &spec).unwrap();
    // Derived: stand B, 2 · 50 · π/576 · 400 ft²/acre.
    let ba = r.frame.numeric("ba").unwrap();
    assert!((ba[2] - 100.0 * 400.0 * std::f64::consts::PI / 576.0).abs() < 1e-9);
}

#[test]
fn growth_fit_excludes_dead_cut_and_missing_second_diameter() {
    let spec = RemeasureSpec {
        purpose: Purpose::Growth,
        required: vec![Required::new("years", "--years-col")],
        ..RemeasureSpec::default()
    };
    let r = load(STANDS, &spec).unwrap();
    assert_eq!(r.counts.ingrowth, 1);
    assert_eq!(r.counts.censored, 1);
    assert_eq!(r.counts.dead, 2);
    assert_eq!(r.counts.no_second_diameter, 0);
    assert_eq!(r.counts.records, 2);
    assert_eq!(r.frame.numeric("dbh2").unwrap(), &[11.0, 22.0]);
    assert_eq!(r.frame.numeric("years").unwrap(), &[5.0, 5.0]);

    // Without a status column, an empty dbh2 is what leaves the tree out.
    let r = load("dbh,dbh2\n10,11\n12,\n", &spec_growth()).unwrap();
    assert_eq!(r.counts.no_second_diameter, 1);
    assert_eq!(r.counts.records, 1);
    assert!(r.alive.is_none());
}

fn spec_growth() -> RemeasureSpec {
    RemeasureSpec {
        purpose: Purpose::Growth,
        ..RemeasureSpec::default()
    }
}

#[test]
fn counts_purpose_needs_no_status() {
    let spec = RemeasureSpec {
        purpose: Purpose::Counts,
        required: vec![
            Required::new("s", "--successes"),
            Required::new("n", "--trials"),
        ],
        ..RemeasureSpec::default()
    };
    let r = load("s,n,x\n1,3,0.5\n2,2,1\n", &spec).unwrap();
    assert_eq!(r.counts.records, 2);
    assert!(r.alive.is_none());
    assert!(r.frame.column("x").is_none());
}

#[test]
fn missing_column_lists_the_file_columns() {
    let err = load(STANDS, &survival(&["height"], &[])).unwrap_err();
    assert!(matches!(err, DataError::MissingColumn { .. }));
    assert_eq!(
        err.to_string(),
        format!(
            "{}: no column \"height\" (term `height`); the file has: stand, tree, dbh, dbh2, alive, years, expansion, treatment",
            file_name(&err)
        )
    );
    let err = load("dbh,x\n1,2\n", &survival(&[], &[])).unwrap_err();
    assert!(
        err.to_string().contains(
            "no column \"alive\" (the survival response (--status)); the file has: dbh, x"
        ),
        "{err}"
    );
}

fn file_name(err: &DataError) -> String {
    match err {
        DataError::MissingColumn { file, .. } => file.clone(),
        _ => String::new(),
    }
}

#[test]
fn non_numeric_dbh() {
    let text = "stand,dbh,alive,expansion\nA,12,1,10\nA,\"12,5\",1,10\n";
    let err = load(text, &survival(&["dbh"], &[])).unwrap_err();
    assert_cell(err, 3, "dbh", "\"12,5\" is not a number");
}

#[test]
fn zero_and_negative_dbh() {
    let err = load("dbh,alive\n12,1\n-3,0\n", &survival(&["dbh"], &[])).unwrap_err();
    assert_cell(err, 3, "dbh", "-3 is not a positive diameter");
    let err = load("dbh,alive\n0,1\n", &survival(&["dbh"], &[])).unwrap_err();
    assert_cell(err, 2, "dbh", "0 is not a positive diameter");
}

#[test]
fn bad_second_diameter_in_growth_fit() {
    let err = load("dbh,dbh2\n10,11\n12,-1\n", &spec_growth()).unwrap_err();
    assert_cell(err, 3, "dbh2", "-1 is not a positive diameter");
}

#[test]
fn non_positive_years_and_expansion() {
    let spec = survival(&["years"], &[]);
    let err = load("dbh,alive,years\n10,1,5\n10,1,0\n", &spec).unwrap_err();
    assert_cell(err, 3, "years", "0 is not a positive number of years");
    let err = load(
        STANDS
            .replace("B,1,20,22,yes,5,50", "B,1,20,22,yes,5,-50")
            .as_str(),
        &survival(&[], &[DerivedCovariate::Bal]),
    )
    .unwrap_err();
    assert_cell(
        err,
        6,
        "expansion",
        "-50 is not a positive expansion factor",
    );
}

#[test]
fn empty_file_names_the_file() {
    let err = load("", &survival(&[], &[])).unwrap_err();
    assert!(
        err.to_string()
            .ends_with("remeasure.csv: the file is empty (no header line)"),
        "{err}"
    );
}

#[test]
fn status_not_understood() {
    let err = load("dbh,alive\n10,1\n11,maybe\n", &survival(&[], &[])).unwrap_err();
    assert_cell(
        err,
        3,
        "alive",
        "\"maybe\" is not a tree status; use 1/0, true/false, yes/no, alive/dead",
    );
}

#[test]
fn empty_status_on_a_measured_tree() {
    let err = load("dbh,alive\n10,1\n11,\n", &survival(&[], &[])).unwrap_err();
    assert_cell(
        err,
        3,
        "alive",
        "the status is empty on a row with a first diameter",
    );
    // An ingrowth row (no first diameter) may have an empty status.
    let r = load("dbh,alive\n10,1\n,\n", &survival(&[], &[])).unwrap();
    assert_eq!(r.counts.ingrowth, 1);
}

#[test]
fn derived_covariate_name_clash() {
    let text = "stand,dbh,alive,expansion,bal\nA,10,1,100,3\nA,20,1,100,0\n";
    let err = load(text, &survival(&[], &[DerivedCovariate::Bal])).unwrap_err();
    let message = err.to_string();
    assert_cell(err, 1, "bal", "--use-column bal");
    assert!(message.contains("rename the column"), "{message}");

    let spec = RemeasureSpec {
        use_columns: vec!["bal".into()],
        ..survival(&[], &[DerivedCovariate::Bal])
    };
    let r = load(text, &spec).unwrap();
    assert_eq!(r.frame.numeric("bal").unwrap(), &[3.0, 0.0]);
    assert_eq!(r.warnings.len(), 1);
    assert!(
        r.warnings[0].contains("projections recompute bal"),
        "{:?}",
        r.warnings
    );
    assert_eq!(r.field_covariates, [DerivedCovariate::Bal]);
}

#[test]
fn bal_column_without_stand_and_expansion_is_used_directly() {
    // The FIT-1M layout (docs/performance.md#fit-1m): stand and bal columns, no expansion column.
    let text = "stand,dbh,bal,treatment,years,alive\n1,10,3.5,a,5,1\n1,20,0,b,5,0\n";
    let r = load(
        text,
        &survival(&["dbh", "treatment"], &[DerivedCovariate::Bal]),
    )
    .unwrap();
    assert_eq!(r.frame.numeric("bal").unwrap(), &[3.5, 0.0]);
    assert_eq!(r.warnings.len(), 1);
    // Without a bal column, the missing expansion column is named.
    let err = load(
        "stand,dbh,alive\n1,10,1\n",
        &survival(&[], &[DerivedCovariate::Bal]),
    )
    .unwrap_err();
    assert!(err.to_string().contains("no column \"expansion\""), "{err}");
}

#[test]
fn nothing_left_to_fit() {
    let err = load("dbh,alive\n10,cut\n", &survival(&[], &[])).unwrap_err();
    assert!(err.to_string().contains("no records left to fit"), "{err}");
}

#[test]
fn text_only_on_excluded_rows_is_numeric_again() {
    // "NA" in dbh2 of a dead tree makes the column text in the file, but not among the
    // records of the growth fit.
    let text = "dbh,dbh2,alive\n10,11.5,1\n12,NA,0\n14,15,1\n";
    let r = load(text, &spec_growth()).unwrap();
    assert_eq!(r.counts.dead, 1);
    assert_eq!(r.frame.numeric("dbh2").unwrap(), &[11.5, 15.0]);
    // A declared categorical column stays text.
    let spec = RemeasureSpec {
        categorical: vec!["plot".into()],
        required: vec![Required::new("plot", "term `plot`")],
        ..spec_growth()
    };
    let r = load("dbh,dbh2,plot\n10,11,1\n12,13,2\n", &spec).unwrap();
    assert!(matches!(
        r.frame.column("plot"),
        Some(FrameColumn::Text { .. })
    ));
}

#[test]
fn computed_covariates_need_a_dbh_column() {
    let spec = RemeasureSpec {
        purpose: Purpose::Counts,
        ..survival(&[], &[DerivedCovariate::Qmd])
    };
    let err = load("stand,expansion,diameter\nA,10,12\n", &spec).unwrap_err();
    assert!(
        err.to_string()
            .contains("no column \"dbh\" (derived covariates qmd need diameters)"),
        "{err}"
    );
}
