//! Design-matrix construction from terms (`docs/model-files.md#term-grammar`). Check values are
//! derived analytically from the term definitions (stated beside each assertion).

use std::collections::BTreeMap;

use stemcast::data::{Frame, FrameColumn};
use stemcast::model::design::{build_design, DesignOptions};
use stemcast::model::terms::parse_predictors;
use stemcast::model::ModelError;

fn frame() -> Frame {
    let mut columns = BTreeMap::new();
    columns.insert(
        "dbh".to_string(),
        FrameColumn::Numeric(vec![4.0, 9.0, 16.0]),
    );
    columns.insert("bal".to_string(), FrameColumn::Numeric(vec![2.0, 0.0, 0.0]));
    columns.insert(
        "treatment".to_string(),
        FrameColumn::Text {
            levels: vec!["a".into(), "b".into(), "no release".into()],
            codes: vec![0, 1, 2],
            first_text: Some((2, "a".into())),
        },
    );
    Frame {
        source: "t.csv".into(),
        lines: vec![2, 3, 4],
        columns,
    }
}

fn opts() -> DesignOptions {
    DesignOptions {
        intercept: true,
        references: BTreeMap::new(),
        declared_categorical: Vec::new(),
    }
}

#[test]
fn expands_categoricals_and_evaluates_transforms() {
    let terms = parse_predictors("sqrt(dbh), ln(bal+1), treatment, dbh:treatment=b").unwrap();
    let d = build_design(&terms, &frame(), &opts()).unwrap();
    assert_eq!(
        d.names,
        vec![
            "(intercept)",
            "sqrt(dbh)",
            "ln(bal+1)",
            "treatment=b",
            "treatment=\"no release\"",
            "dbh:treatment=b"
        ]
    );
    // Row 1: dbh 4, bal 2, level a → 1, 2, ln 3, 0, 0, 0 (derived analytically).
    let r: Vec<f64> = d.x.row(0).to_vec();
    assert_eq!(r, vec![1.0, 2.0, 3f64.ln(), 0.0, 0.0, 0.0]);
    // Row 2: dbh 9, level b → 3, ln 1 = 0, 1, 0, 9.
    assert_eq!(d.x.row(1).to_vec(), vec![1.0, 3.0, 0.0, 1.0, 0.0, 9.0]);
    assert_eq!(d.categorical["treatment"].reference, "a");
    assert_eq!(d.ranges["dbh"], [4.0, 16.0]);
}

#[test]
fn reference_level_can_be_chosen() {
    let mut o = opts();
    o.references.insert("treatment".into(), "b".into());
    let d = build_design(&parse_predictors("treatment").unwrap(), &frame(), &o).unwrap();
    assert_eq!(
        d.names,
        vec!["(intercept)", "treatment=a", "treatment=\"no release\""]
    );
}

#[test]
fn reports_unknown_names_levels_and_bad_cells() {
    let f = frame();
    let e = build_design(&parse_predictors("height").unwrap(), &f, &opts()).unwrap_err();
    assert!(
        e.to_string()
            .contains("no column or derived covariate `height`"),
        "{e}"
    );
    let e = build_design(&parse_predictors("treatment=c").unwrap(), &f, &opts()).unwrap_err();
    assert!(e.to_string().contains("`c` is not a level"), "{e}");
    let e = build_design(&parse_predictors("ln(treatment)").unwrap(), &f, &opts()).unwrap_err();
    assert!(e.to_string().contains("line 2"), "{e}");
    // ln(bal) is refused by the grammar; ln of a zero value in another column is a cell error.
    let mut g = frame();
    g.columns
        .insert("x".into(), FrameColumn::Numeric(vec![1.0, 0.0, 2.0]));
    let e = build_design(&parse_predictors("ln(x)").unwrap(), &g, &opts()).unwrap_err();
    assert!(matches!(e, ModelError::Data(_)), "{e}");
    assert!(e.to_string().contains("t.csv: line 3, column \"x\""), "{e}");
}

#[test]
fn constant_predictor_is_refused() {
    let mut f = frame();
    f.columns
        .insert("c".into(), FrameColumn::Numeric(vec![5.0; 3]));
    let e = build_design(&parse_predictors("dbh, c").unwrap(), &f, &opts()).unwrap_err();
    assert!(matches!(e, ModelError::RankDeficient { .. }), "{e}");
    assert!(e.to_string().contains("`c` is constant"), "{e}");
}
