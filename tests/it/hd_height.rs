//! Height–diameter fits against outside references: the shared NLS cases (R 4.2.2 `nls`,
//! Gauss–Newton with analytic gradient, tol 1e-10; cross-checked with SciPy and a 40-digit
//! optimum) and the non-shared cases of extra_nls.json (40-digit optimum, cross-checked with
//! R `nls` and SciPy). Fixtures and their sources: tests/fixtures/hd_volume/README.md.

use std::path::PathBuf;

use serde_json::Value;
use stemcast::data::Units;
use stemcast::fit::height::{fit_height, HeightSpec};
use stemcast::fit::measured::RowFilter;
use stemcast::model::height::HeightForm;
use stemcast::model::nls::NlsFit;

use crate::common::fixtures::{close, fixture, numbers};

fn dir(name: &str) -> PathBuf {
    fixture(&format!("hd_volume/{name}"))
}

fn case(name: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(dir(&format!("{name}.json"))).unwrap()).unwrap()
}

fn spec(file: &str, form: HeightForm, dbh: &str, height: &str, units: Units) -> HeightSpec {
    HeightSpec {
        path: dir(file),
        form,
        dbh: dbh.into(),
        height: height.into(),
        by: None,
        filter: None,
        start: None,
        units,
    }
}

fn assert_close(what: &str, got: &[f64], want: &[f64], rtol: f64, atol: f64) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (g, w) in got.iter().zip(want) {
        assert!(
            close(*g, *w, rtol, atol),
            "{what}: got {got:?}, expected {want:?}"
        );
    }
}

/// The tolerances of the shared README (and of every case's `tolerance` block): estimates,
/// SEs, t 1e-6 relative; covariance 1e-6 · √(V_ii V_jj); RSS and s 1e-8 relative;
/// log-likelihood, AIC, BIC 1e-6 absolute; p-values 1e-4 relative + 1e-15.
fn check_statistics(name: &str, f: &NlsFit, e: &Value) {
    assert_eq!(f.records as u64, e["n_obs"].as_u64().unwrap(), "{name}: n");
    assert_eq!(
        f.df_residual as u64,
        e["df_residual"].as_u64().unwrap(),
        "{name}: df"
    );
    assert_close(
        &format!("{name} estimates"),
        &f.coefficients,
        &numbers(&e["coefficients"]),
        1e-6,
        0.0,
    );
    assert_close(
        &format!("{name} SEs"),
        &f.std_errors,
        &numbers(&e["std_errors"]),
        1e-6,
        0.0,
    );
    let cov: Vec<Vec<f64>> = e["covariance"]
        .as_array()
        .unwrap()
        .iter()
        .map(numbers)
        .collect();
    for i in 0..cov.len() {
        for j in 0..cov.len() {
            let scale = (cov[i][i] * cov[j][j]).sqrt();
            assert!(
                (f.covariance[i][j] - cov[i][j]).abs() <= 1e-6 * scale,
                "{name}: covariance [{i}][{j}]"
            );
        }
    }
    assert!(
        close(f.rss, e["rss"].as_f64().unwrap(), 1e-8, 0.0),
        "{name}: rss {}",
        f.rss
    );
    let s = e
        .get("residual_std_error")
        .or(e.get("residual_sd"))
        .unwrap();
    assert!(
        close(f.residual_sd, s.as_f64().unwrap(), 1e-8, 0.0),
        "{name}: s"
    );
    for (got, key) in [
        (f.log_likelihood, "log_likelihood"),
        (f.aic, "aic"),
        (f.bic, "bic"),
    ] {
        assert!(
            close(got, e[key].as_f64().unwrap(), 0.0, 1e-6),
            "{name}: {key} {got}"
        );
    }
}

/// Every shared NLS case (hd_speciesA_*.json): species A of hd_sample.csv, metric, bh 1.3 m.
#[test]
fn shared_species_a_cases_match_r_nls() {
    for (name, form) in [
        ("hd_speciesA_chapman_richards", HeightForm::ChapmanRichards),
        ("hd_speciesA_naslund", HeightForm::Naslund),
        ("hd_speciesA_log_reciprocal", HeightForm::LogReciprocal),
    ] {
        let json = case(name);
        let e = &json["expected"];
        let mut s = spec("hd_sample.csv", form, "dbh_cm", "height_m", Units::Metric);
        s.filter = Some(RowFilter {
            column: "species".into(),
            value: "A".into(),
        });
        let fit = fit_height(&s).unwrap();
        assert_eq!(
            fit.breast_height,
            json["model"]["breast_height"].as_f64().unwrap()
        );
        let f = &fit.fits[0].fit;
        check_statistics(name, f, e);
        assert_close(
            &format!("{name} t"),
            &f.t_values,
            &numbers(&e["t_values"]),
            1e-6,
            0.0,
        );
        assert_close(
            &format!("{name} p"),
            &f.p_values,
            &numbers(&e["p_values"]),
            1e-4,
            1e-15,
        );
        // model.start follows the start rule that HeightForm::start_values documents; only
        // summation order can differ.
        let start: Vec<f64> = form
            .parameter_names()
            .iter()
            .map(|p| json["model"]["start"][*p].as_f64().unwrap())
            .collect();
        assert_close(&format!("{name} start"), &f.start, &start, 1e-12, 0.0);
        // Predictions (breast height included), 1e-6 relative, through the model file's curve.
        let model =
            stemcast::model::height_file::HeightModel::from_file(fit.model.clone(), "fit").unwrap();
        let curve = model.curve(None).unwrap();
        let got: Vec<f64> = numbers(&e["predictions"]["dbh"])
            .iter()
            .map(|&d| curve.height(d))
            .collect();
        assert_close(
            &format!("{name} predictions"),
            &got,
            &numbers(&e["predictions"]["height"]),
            1e-6,
            0.0,
        );
    }
}

/// The non-shared cases of extra_nls.json: species B of hd_sample.csv (through `--by species`,
/// which also fits A) and R's `trees` height (ft) on diameter (in) with bh 4.5 ft. Expected
/// values are the 40-digit optimum; trees_imperial_chapman_richards is ill-conditioned (SE of
/// c twice the estimate), where R `nls` stops 4.4e-7 and SciPy 6.6e-7 from the optimum.
#[test]
fn non_shared_cases_match_the_exact_optimum() {
    let extra = case("extra_nls");
    let cases = extra["cases"].as_array().unwrap();
    let get = |name: &str| cases.iter().find(|c| c["case"] == name).unwrap().clone();
    for form in [
        HeightForm::ChapmanRichards,
        HeightForm::Naslund,
        HeightForm::LogReciprocal,
    ] {
        let mut s = spec("hd_sample.csv", form, "dbh_cm", "height_m", Units::Metric);
        s.by = Some("species".into());
        let fit = fit_height(&s).unwrap();
        let levels: Vec<_> = fit.fits.iter().map(|f| f.level.clone().unwrap()).collect();
        assert_eq!(levels, ["A", "B"]);
        let name = format!("hd_speciesB_{}", form.as_str());
        check_statistics(&name, &fit.fits[1].fit, &get(&name)["expected"]);
        // Species A of the --by fit is the shared case again (R nls, shared fixture).
        let a = case(&format!("hd_speciesA_{}", form.as_str()));
        check_statistics("species A via --by", &fit.fits[0].fit, &a["expected"]);

        let s = spec(
            "trees_metric.csv",
            form,
            "diameter_in",
            "height_ft",
            Units::Imperial,
        );
        let fit = fit_height(&s).unwrap();
        assert_eq!(fit.breast_height, 4.5);
        let name = format!("trees_imperial_{}", form.as_str());
        let c = get(&name);
        assert_eq!(c["breast_height"].as_f64(), Some(4.5));
        check_statistics(&name, &fit.fits[0].fit, &c["expected"]);
    }
}

/// `--start` replaces the automatic values, and the optimum does not depend on them (the
/// shared case's `reference.multistart`: 60 of 60 random starts reached the expected RSS).
#[test]
fn given_start_values_reach_the_same_optimum() {
    let json = case("hd_speciesA_chapman_richards");
    let mut s = spec(
        "hd_sample.csv",
        HeightForm::ChapmanRichards,
        "dbh_cm",
        "height_m",
        Units::Metric,
    );
    s.filter = Some(RowFilter {
        column: "species".into(),
        value: "A".into(),
    });
    s.start = Some(vec![40.0, 0.02, 2.0]);
    let fit = fit_height(&s).unwrap();
    assert!(fit.start_given);
    assert_eq!(fit.fits[0].fit.start, [40.0, 0.02, 2.0]);
    check_statistics("CR from another start", &fit.fits[0].fit, &json["expected"]);
}
