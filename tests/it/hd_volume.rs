//! Volume equations: `fit volume` against the shared OLS cases (statsmodels 0.15.0, R 4.2.2
//! `lm`; tests/fixtures/hd_volume), and per-hectare volume of a tree list from hand-typed
//! height and volume models against hand computations.

use serde_json::Value;
use stemcast::data::Units;
use stemcast::fit::volume::{fit_volume, VolumeSpec};
use stemcast::model::height_file::HeightModel;
use stemcast::model::tree_volume::TreeVolumeModels;
use stemcast::model::volume::{VolumeForm, VolumeModel};

use crate::common::fixtures::{close, fixture, numbers};
use crate::common::{stderr, Sandbox};

fn case(name: &str) -> Value {
    let path = fixture(&format!("hd_volume/{name}.json"));
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn all_close(what: &str, got: &[f64], want: &[f64], rtol: f64, atol: f64) {
    assert_eq!(got.len(), want.len(), "{what}");
    for (g, w) in got.iter().zip(want) {
        assert!(
            close(*g, *w, rtol, atol),
            "{what}: got {got:?}, expected {want:?}"
        );
    }
}

/// Both shared OLS cases with the tolerances of their `tolerance` blocks.
#[test]
fn shared_volume_cases_match_statsmodels_and_r() {
    for (name, form) in [
        ("trees_volume_combined_ols", VolumeForm::Combined),
        ("trees_volume_log_ols", VolumeForm::Logarithmic),
    ] {
        let json = case(name);
        let e = &json["expected"];
        let fit = fit_volume(&VolumeSpec {
            path: fixture("hd_volume/trees_metric.csv"),
            form,
            dbh: "dbh_cm".into(),
            height: "height_m".into(),
            volume: "volume_m3".into(),
            units: Units::Metric,
        })
        .unwrap();
        let o = &fit.ols;
        assert_eq!(o.records, 31);
        all_close(
            name,
            &o.coefficients,
            &numbers(&e["coefficients"]),
            1e-9,
            1e-12,
        );
        all_close(name, &o.std_errors, &numbers(&e["std_errors"]), 1e-9, 1e-14);
        all_close(name, &o.t_values, &numbers(&e["t_values"]), 1e-9, 1e-9);
        all_close(name, &o.p_values, &numbers(&e["p_values"]), 1e-6, 1e-14);
        for (got, key) in [
            (o.residual_sd, "residual_std_error"),
            (o.r_squared, "r_squared"),
            (o.adj_r_squared, "adj_r_squared"),
        ] {
            assert!(
                close(got, e[key].as_f64().unwrap(), 1e-10, 1e-12),
                "{name}: {key}"
            );
        }
        for (got, key) in [
            (o.log_likelihood, "log_likelihood"),
            (o.aic, "aic"),
            (o.bic, "bic"),
        ] {
            assert!(
                close(got, e[key].as_f64().unwrap(), 1e-10, 1e-9),
                "{name}: {key}"
            );
        }
        // Predictions through the model file, as the projector will evaluate it.
        let model = VolumeModel::from_file(fit.model.clone(), "fit").unwrap();
        for p in e["predictions"].as_array().unwrap() {
            let (d, h) = (
                p["dbh_cm"].as_f64().unwrap(),
                p["height_m"].as_f64().unwrap(),
            );
            let want = p
                .get("volume_m3")
                .or(p.get("volume_m3_bias_corrected"))
                .unwrap()
                .as_f64()
                .unwrap();
            assert!(
                close(model.tree_volume(d, h), want, 1e-9, 1e-12),
                "{name}: V({d}, {h})"
            );
        }
        if form == VolumeForm::Logarithmic {
            let cf = e["log_bias_correction_factor"].as_f64().unwrap();
            assert!(close(fit.bias_factor.unwrap(), cf, 1e-10, 1e-12));
        }
    }
}

/// A volume equation typed by hand from published coefficients: the black-cherry logarithmic
/// equation of trees_volume_log_ols.json (statsmodels 0.15.0 / R 4.2.2 `lm` fit to R's
/// `trees`, converted to metric), with its residual SD and the log-bias correction.
const BLACK_CHERRY: &str = r#"
kind = "volume"
form = "logarithmic"
units = "metric"
source = "black cherry, R datasets::trees (Ryan, Joiner & Ryan 1976), metric fit of trees_volume_log_ols.json"
residual_sd = 0.08138606689496128
log_bias_correction = true

[[coefficients]]
term = "b0"
estimate = -10.716816899550919
[[coefficients]]
term = "b1"
estimate = 1.9826499102842847
[[coefficients]]
term = "b2"
estimate = 1.117123333133373
"#;

/// Hand computation: the fixture's bias-corrected volumes of trees (25 cm, 20 m),
/// (35 cm, 23 m), (50 cm, 26 m) are 0.3734396879067569, 0.8506446638092936 and
/// 1.9785468702607663 m³ (trees_volume_log_ols.json `predictions`, statsmodels); with 120, 45
/// and 8 stems/ha the stand holds 120·0.3734396879067569 + 45·0.8506446638092936 +
/// 8·1.9785468702607663 = 44.81276254881083 + 38.27900987141821 + 15.82837496208613
/// = 98.92014738231517 m³/ha.
#[test]
fn hand_typed_volume_model_gives_the_hand_computed_stand_volume() {
    let sb = Sandbox::new();
    let path = sb.write("black_cherry.toml", BLACK_CHERRY);
    let model = VolumeModel::read(&path).unwrap();
    let v = model.volume_per_area(
        &[25.0, 35.0, 50.0],
        &[20.0, 23.0, 26.0],
        &[120.0, 45.0, 8.0],
    );
    assert!(close(v, 98.92014738231517, 1e-12, 0.0), "{v}");
}

/// Heights from a per-species height model, then volume per hectare. Hand computation
/// (derived analytically): Näslund with a = 2, b = 0.2 (species A) gives at D = 20 cm
/// H = 1.3 + 400/(2 + 4)² = 1.3 + 100/9 m; the default curve a = 1.5, b = 0.25 gives at
/// D = 30 cm H = 1.3 + 900/(1.5 + 7.5)² = 1.3 + 100/9 m as well (= 1117/90 = 12.41111… m).
/// The combined equation V = 0.01 + 4e-5·D²H then gives 0.01 + 0.016·1117/90 = 0.2085777…
/// and 0.01 + 0.036·1117/90 = 0.4568 m³; with 100 and 50 stems/ha,
/// 20.857777… + 22.84 = 43.697777… m³/ha.
#[test]
fn heights_then_volumes_per_hectare() {
    let height = "kind = \"height\"\nform = \"naslund\"\nby = \"species\"\n\
        [[coefficients]]\nterm = \"a\"\nestimate = 1.5\n[[coefficients]]\nterm = \"b\"\nestimate = 0.25\n\
        [[levels.A.coefficients]]\nterm = \"a\"\nestimate = 2.0\n[[levels.A.coefficients]]\nterm = \"b\"\nestimate = 0.2\n";
    let volume = "kind = \"volume\"\nform = \"combined\"\n\
        [[coefficients]]\nterm = \"b0\"\nestimate = 0.01\n[[coefficients]]\nterm = \"b1\"\nestimate = 4e-5\n";
    let sb = Sandbox::new();
    let h = HeightModel::read(&sb.write("h.toml", height)).unwrap();
    let v = VolumeModel::read(&sb.write("v.toml", volume)).unwrap();
    let levels = vec!["A".to_string(), "B".to_string()];
    let models = TreeVolumeModels::new(&h, &v, &levels).unwrap();
    let mut heights = [0.0; 2];
    models.heights(&[20.0, 30.0], Some(&[0, 1]), &mut heights);
    all_close(
        "heights",
        &heights,
        &[1117.0 / 90.0, 1117.0 / 90.0],
        1e-12,
        0.0,
    );
    let total = models.volume_per_area(&[20.0, 30.0], Some(&[0, 1]), &[100.0, 50.0]);
    assert!(
        close(total, 20.0 + 0.857_777_777_777_777_8 + 22.84, 1e-12, 0.0),
        "{total}"
    );
}

/// The command line writes a volume model file that reads back; bad data exits with code 2.
#[test]
fn fit_volume_command() {
    let sb = Sandbox::new();
    let data = fixture("hd_volume/trees_metric.csv").display().to_string();
    let args = [
        "fit",
        "volume",
        &data,
        "--form",
        "logarithmic",
        "--dbh",
        "dbh_cm",
        "--height",
        "height_m",
        "--volume",
        "volume_m3",
    ];
    let out = sb.run(&[&args[..], &["--format", "json", "--out", "v.toml"]].concat());
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let json: Value = serde_json::from_str(&String::from_utf8_lossy(&out.stdout)).unwrap();
    let e = &case("trees_volume_log_ols")["expected"];
    assert!(close(
        json["coefficients"][1]["estimate"].as_f64().unwrap(),
        numbers(&e["coefficients"])[1],
        1e-9,
        1e-12
    ));
    let model = VolumeModel::read(&sb.path("v.toml")).unwrap();
    assert!(close(
        model.factor,
        e["log_bias_correction_factor"].as_f64().unwrap(),
        1e-10,
        1e-12
    ));
    sb.write(
        "bad.csv",
        "dbh,height,volume\n20,15,0.2\n25,18,0\n30,20,0.5\n",
    );
    let out = sb.run(&[
        "fit",
        "volume",
        "bad.csv",
        "--form",
        "logarithmic",
        "--out",
        "w.toml",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("line 3, column \"volume\""),
        "{}",
        stderr(&out)
    );
    assert!(!sb.path("w.toml").exists());
}
