//! Column roles on the command line: renamed role columns, `--use-column`, and cells that the
//! standard float parser would read as numbers but are no measurements.

use crate::common::{stderr, stdout, Sandbox};

/// The bundled trial with every role column renamed.
fn renamed_trial() -> String {
    let text = stemcast::demo::TRIAL_CSV;
    let (_, body) = text.split_once('\n').unwrap();
    format!("plot,tree,treatment,d1,d2,status,years,ef\n{body}")
}

#[test]
fn the_term_dbh_means_the_renamed_diameter_column() {
    // Same data, renamed columns: the fit must be identical and the model file must still
    // call the term `dbh`, so that the projector can evaluate it.
    let sb = Sandbox::new();
    sb.write("trial.csv", stemcast::demo::TRIAL_CSV);
    sb.write("ren.csv", &renamed_trial());
    let a = sb.run(&[
        "fit",
        "survival",
        "trial.csv",
        "-p",
        "dbh, bal",
        "--format",
        "json",
    ]);
    let b = sb.run(&[
        "fit",
        "survival",
        "ren.csv",
        "-p",
        "dbh, bal",
        "--dbh",
        "d1",
        "--stand",
        "plot",
        "--expansion",
        "ef",
        "--status",
        "status",
        "--format",
        "json",
        "--out",
        "m.toml",
    ]);
    assert_eq!(b.status.code(), Some(0), "{}", stderr(&b));
    let ja: serde_json::Value = serde_json::from_str(&stdout(&a)).unwrap();
    let jb: serde_json::Value = serde_json::from_str(&stdout(&b)).unwrap();
    assert_eq!(ja["coefficients"], jb["coefficients"]);
    let model = std::fs::read_to_string(sb.path("m.toml")).unwrap();
    assert!(model.contains("term = \"dbh\""), "{model}");
    let g = sb.run(&[
        "fit",
        "growth",
        "ren.csv",
        "-p",
        "ln(dbh), bal",
        "--dbh",
        "d1",
        "--dbh2",
        "d2",
        "--stand",
        "plot",
        "--expansion",
        "ef",
        "--status",
        "status",
    ]);
    assert_eq!(g.status.code(), Some(0), "{}", stderr(&g));
    // The status column is found under its new name: 343 dead and 47 cut trees are counted
    // as such (the counts of the bundled file, scenarios/README.md).
    assert!(stdout(&g).contains("343 dead, 47 cut"), "{}", stdout(&g));
}

#[test]
fn use_column_warns_that_projections_recompute_the_covariate() {
    let sb = Sandbox::new();
    sb.write(
        "t.csv",
        "stand,tree,dbh,alive,expansion,bal\n1,1,10,1,25,0\n1,2,8,0,25,1\n1,3,12,1,25,0.5\n\
         1,4,5,0,25,2\n2,1,9,1,25,0\n2,2,7,1,25,1\n2,3,4,0,25,2\n2,4,11,1,25,3\n2,5,6,0,25,0.3\n",
    );
    let out = sb.run(&[
        "fit",
        "survival",
        "t.csv",
        "-p",
        "dbh, bal",
        "--use-column",
        "bal",
        "--format",
        "json",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let j: serde_json::Value = serde_json::from_str(&stdout(&out)).unwrap();
    let warnings = j["warnings"].to_string();
    assert!(warnings.contains("projections recompute bal"), "{warnings}");
}

#[test]
fn nan_and_infinity_words_are_reported_not_read() {
    let sb = Sandbox::new();
    sb.write("x.csv", "dbh,alive\n5,1\n6,0\n7,1\n8,0\n9,1\nNaN,0\n");
    let out = sb.run(&["fit", "survival", "x.csv", "-p", "dbh"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("x.csv: line 7, column \"dbh\": \"NaN\""),
        "{}",
        stderr(&out)
    );
}

#[test]
fn growth_response_accepts_the_model_file_spelling() {
    let sb = Sandbox::new();
    sb.write("trial.csv", stemcast::demo::TRIAL_CSV);
    for r in ["ln_bai", "ln-bai", "annual_increment"] {
        let out = sb.run(&[
            "fit",
            "growth",
            "trial.csv",
            "-p",
            "ln(dbh)",
            "--response",
            r,
        ]);
        assert_eq!(out.status.code(), Some(0), "{r}: {}", stderr(&out));
    }
}

#[test]
fn bad_counts_and_weights_name_file_line_and_column() {
    let sb = Sandbox::new();
    sb.write("over.csv", "dose,k,n\n1,2,10\n2,12,10\n3,7,10\n");
    sb.write("frac.csv", "dose,k,n\n1,2,10\n2,2.5,10\n3,7,10\n");
    sb.write("neg.csv", "dose,alive,w\n1,1,1\n2,0,-1\n3,1,2\n4,0,1\n");
    for (file, args, needle) in [
        (
            "over.csv",
            vec!["--successes", "k", "--trials", "n"],
            "over.csv: line 3, column \"k\"",
        ),
        (
            "frac.csv",
            vec!["--successes", "k", "--trials", "n"],
            "frac.csv: line 3, column \"k\"",
        ),
        (
            "neg.csv",
            vec!["--weights", "w"],
            "neg.csv: line 3, column \"w\"",
        ),
    ] {
        let mut a = vec!["fit", "survival", file, "-p", "dose"];
        a.extend(args);
        let out = sb.run(&a);
        assert_eq!(out.status.code(), Some(2), "{file}");
        assert!(stderr(&out).contains(needle), "{file}: {}", stderr(&out));
    }
}

#[test]
fn a_numeric_column_with_one_text_cell_is_refused_unless_declared_categorical() {
    let sb = Sandbox::new();
    sb.write(
        "si.csv",
        "si,alive\n12.5,1\n\"15,5\",0\n23.0,1\n9.5,0\n17.2,1\n11.0,0\n",
    );
    let out = sb.run(&["fit", "survival", "si.csv", "-p", "si"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("si.csv, line 3, holds \"15,5\""),
        "{}",
        stderr(&out)
    );
}
