//! The random-intercept linear mixed model against the reference fixtures
//! (tests/fixtures/lmm, see its README): Dyestuff by REML and ML, the invented growth plots by
//! REML; estimates, SEs, both SDs, the log-likelihood, BLUPs and their SDs.

use ndarray::Array2;
use serde_json::Value;
use stemcast::model::mixed::{fit_lmm, LmmFit, LmmMethod};

use crate::mixed_support::{assert_close, columns, nums, text_column};

fn case(name: &str) -> Value {
    let text = std::fs::read_to_string(crate::common::fixtures::fixture(&format!(
        "lmm/{name}.json"
    )))
    .expect("case");
    serde_json::from_str(&text).expect("json")
}

/// Codes in order of first appearance (the case files list groups that way).
fn first_appearance(ids: &[String]) -> (Vec<u32>, Vec<String>) {
    let mut levels: Vec<String> = Vec::new();
    let codes = ids
        .iter()
        .map(|v| match levels.iter().position(|l| l == v) {
            Some(k) => k as u32,
            None => {
                levels.push(v.clone());
                (levels.len() - 1) as u32
            }
        })
        .collect();
    (codes, levels)
}

fn check(name: &str, x: Array2<f64>, y: &[f64], groups: &[String], method: LmmMethod) -> LmmFit {
    let c = case(name);
    let (e, t) = (&c["expected"], &c["tolerance"]);
    let (plots, levels) = first_appearance(groups);
    let fit = fit_lmm(x.view(), y, &plots, method).expect("LMM");
    let rel = |k: &str| t[k].as_f64().expect("tolerance");
    assert_close(
        name,
        &fit.coefficients,
        &nums(&e["coefficients"]),
        rel("coefficients_rel"),
        0.0,
    );
    assert_close(
        name,
        &fit.std_errors,
        &nums(&e["std_errors"]),
        rel("std_errors_rel"),
        0.0,
    );
    assert_close(
        name,
        &[fit.sd],
        &[e["sigma_group"].as_f64().expect("σ_g")],
        rel("sigmas_rel"),
        0.0,
    );
    let se = e["sigma_residual"].as_f64().expect("σ");
    assert_close(name, &[fit.residual_sd], &[se], rel("sigmas_rel"), 0.0);
    let ll = e["log_likelihood"].as_f64().expect("ℓ");
    assert_close(
        name,
        &[fit.log_likelihood],
        &[ll],
        0.0,
        rel("log_likelihood_abs"),
    );
    let order: Vec<String> = e["groups"]
        .as_array()
        .expect("groups")
        .iter()
        .map(|g| g.as_str().expect("group").to_string())
        .collect();
    let by_label = |label: &str| {
        let code = levels.iter().position(|l| l == label).expect("level") as u32;
        *fit.plots.iter().find(|p| p.code == code).expect("plot")
    };
    let modes: Vec<f64> = order.iter().map(|g| by_label(g).mode).collect();
    let sds: Vec<f64> = order.iter().map(|g| by_label(g).sd).collect();
    assert_close(
        name,
        &modes,
        &nums(&e["conditional_modes"]),
        0.0,
        rel("conditional_modes_abs"),
    );
    // The case files give conditional SDs without a separate tolerance; the SDs' rule.
    assert_close(
        name,
        &sds,
        &nums(&e["conditional_sd"]),
        rel("sigmas_rel"),
        0.0,
    );
    fit
}

fn dyestuff() -> (Array2<f64>, Vec<f64>, Vec<String>) {
    let cols = columns("lmm/dyestuff.csv");
    let y = cols["Yield"].clone();
    (
        Array2::ones((y.len(), 1)),
        y,
        text_column("lmm/dyestuff.csv", "Batch"),
    )
}

#[test]
fn dyestuff_reml_matches_lme4() {
    // Reference: tests/fixtures/lmm/dyestuff_reml.json (closed-form primary; R 4.2.2 lme4
    // 1.1-31 lmer(Yield ~ 1 + (1 | Batch), REML = TRUE) agrees within 1e-7).
    let (x, y, g) = dyestuff();
    let fit = check("dyestuff_reml", x, &y, &g, LmmMethod::Reml);
    // SE of σ_u: balanced one-way REML (tests/fixtures/lmm/README.md, Searle, Casella &
    // McCulloch 1992 §4.5): a = 6 batches of n = 5, Var(σ̂_u²) = 2/n²[λ²/(a−1) + σ_e⁴/(a(n−1))],
    // λ = σ_e² + nσ_u², SE(σ̂_u) = SE(σ̂_u²)/(2σ̂_u), at the REML estimates.
    let (a, n) = (6.0, 5.0);
    let (vu, ve) = (fit.sd * fit.sd, fit.residual_sd * fit.residual_sd);
    let lambda = ve + n * vu;
    let var_vu = 2.0 / (n * n) * (lambda * lambda / (a - 1.0) + ve * ve / (a * (n - 1.0)));
    let want = var_vu.sqrt() / (2.0 * fit.sd);
    let got = fit.std_error_sd.expect("SE of σ_u");
    assert!((got - want).abs() < 1e-5 * want, "SE σ_u {got} vs {want}");
    // ICC σ_u²/(σ_u² + σ_e²) (derived analytically from the estimates).
    assert!((fit.intraclass_correlation - vu / (vu + ve)).abs() < 1e-15);
}

#[test]
fn dyestuff_ml_matches_lme4() {
    // Reference: tests/fixtures/lmm/dyestuff_ml.json (lmer(..., REML = FALSE)).
    let (x, y, g) = dyestuff();
    let ml = check("dyestuff_ml", x.clone(), &y, &g, LmmMethod::Ml);
    // The LR test compares ML fits; without the plot effect the ML fit is least squares:
    // ℓ₀ = −n/2 (ln 2π + ln(RSS/n) + 1) (derived analytically), RSS about the mean.
    let n = y.len() as f64;
    let mean = y.iter().sum::<f64>() / n;
    let rss: f64 = y.iter().map(|v| (v - mean).powi(2)).sum();
    let l0 = -0.5 * n * ((2.0 * std::f64::consts::PI).ln() + (rss / n).ln() + 1.0);
    assert!((ml.lr_test.statistic - 2.0 * (ml.log_likelihood - l0)).abs() < 1e-9);
    let reml = fit_lmm(x.view(), &y, &first_appearance(&g).0, LmmMethod::Reml).expect("REML");
    assert_eq!(
        reml.lr_test, ml.lr_test,
        "REML fits test with the ML likelihoods"
    );
}

#[test]
fn growth_plots_reml_matches_lme4() {
    // Reference: tests/fixtures/lmm/growth_plots_reml.json (lmer(ln_bai ~ 1 + log(dbh) +
    // dbh^2 + bal + (1 | plot), REML = TRUE)).
    let cols = columns("lmm/growth_plots.csv");
    let n = cols["dbh"].len();
    let mut x = Array2::ones((n, 4));
    for i in 0..n {
        let d = cols["dbh"][i];
        (x[[i, 1]], x[[i, 2]], x[[i, 3]]) = (d.ln(), d * d, cols["bal"][i]);
    }
    let groups = text_column("lmm/growth_plots.csv", "plot");
    check(
        "growth_plots_reml",
        x,
        &cols["ln_bai"],
        &groups,
        LmmMethod::Reml,
    );
}

#[test]
fn no_plot_variation_gives_the_least_squares_fit() {
    // Derived analytically: when every plot mean residual of the least-squares fit is 0 (each
    // plot holds the same responses), the profile likelihood falls with γ, so σ_u = 0 and the
    // estimates are the least-squares ones; the REML residual SD is then √(RSS/(n − p)).
    let y: Vec<f64> = (0..40).map(|i| [1.0, 2.5, 4.0, 3.0][i % 4]).collect();
    let plots: Vec<u32> = (0..40).map(|i| (i / 4) as u32).collect();
    let fit = fit_lmm(Array2::ones((40, 1)).view(), &y, &plots, LmmMethod::Reml).expect("LMM");
    assert_eq!(fit.sd, 0.0);
    assert!(fit.std_error_sd.is_none());
    assert!((fit.coefficients[0] - 2.625).abs() < 1e-12);
    let rss: f64 = y.iter().map(|v| (v - 2.625).powi(2)).sum();
    assert!((fit.residual_sd - (rss / 39.0).sqrt()).abs() < 1e-12);
    assert_eq!((fit.lr_test.statistic, fit.lr_test.p_value), (0.0, 1.0));
    assert!(fit.plots.iter().all(|p| p.mode == 0.0 && p.sd == 0.0));
}
