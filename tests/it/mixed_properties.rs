//! Properties of the GLMM that need no outside numbers: recovery of known values from
//! simulated data, the boundary σ_u = 0, the annualised family (against the logit GLMM at
//! L = 1 and against a brute-force integral), and the exact gradient.

use ndarray::{Array2, ArrayView1};
use stemcast::model::glm::{fit_glm, GlmData, GlmOptions};
use stemcast::model::link::Link;
use stemcast::model::mixed::family::Record;
use stemcast::model::mixed::glmm::Evaluator;
use stemcast::model::mixed::simulate::{simulate_glmm, GlmmSimulation};
use stemcast::model::mixed::{
    fit_glmm, Family, GaussHermite, GlmmColumns, GlmmData, GlmmFit, GlmmOptions,
};

fn data(family: Family, x: &Array2<f64>, y: &[f64], plots: &[u32], years: &[f64]) -> GlmmData {
    GlmmData::new(
        family,
        &GlmmColumns {
            x: x.view(),
            y,
            trials: None,
            weights: None,
            offset: None,
            years,
            plots,
        },
    )
    .expect("data")
}

fn glm_start(x: &Array2<f64>, y: &[f64], link: Link) -> (Vec<f64>, Vec<Vec<f64>>, f64) {
    let names: Vec<String> = (0..x.ncols()).map(|c| format!("x{c}")).collect();
    let g = fit_glm(
        &GlmData {
            x: x.view(),
            terms: &names,
            y: ArrayView1::from(y),
            trials: None,
            weights: None,
            offset: None,
        },
        &GlmOptions { link },
    )
    .expect("GLM");
    (g.coefficients, g.covariance, g.log_likelihood)
}

fn fit(d: &GlmmData, start: &(Vec<f64>, Vec<Vec<f64>>, f64), nodes: usize) -> GlmmFit {
    let opts = GlmmOptions {
        nodes,
        ..GlmmOptions::default()
    };
    fit_glmm(d, &start.0, &start.1, &opts).expect("GLMM")
}

#[test]
fn simulated_values_are_recovered_within_three_standard_errors() {
    // Known truth: the simulation's β = (1.5, 0.04, −0.03), σ_u = 0.6 (its documented
    // defaults), 120 plots of 40 trees, seed fixed.
    let spec = GlmmSimulation {
        plots: 120,
        trees: 40,
        ..GlmmSimulation::default()
    };
    let sim = simulate_glmm(&spec, 7).expect("simulation");
    let d = data(spec.family, &sim.x, &sim.y, &sim.plots, &[]);
    let f = fit(&d, &glm_start(&sim.x, &sim.y, Link::Logit), 15);
    for (j, truth) in spec.beta.iter().enumerate() {
        let z = (f.coefficients[j] - truth) / f.std_errors[j];
        assert!(
            z.abs() < 3.0,
            "β{j}: {} ± {} vs {truth}",
            f.coefficients[j],
            f.std_errors[j]
        );
    }
    let se = f.std_error_sd.expect("SE of σ");
    assert!(((f.sd - spec.sd) / se).abs() < 3.0, "σ {} ± {se}", f.sd);
    assert!(f.lr_test.p_value < 1e-6, "a plot effect of 0.6 is detected");
}

#[test]
fn identical_plots_give_sigma_zero_and_the_glm() {
    // Derived analytically: when every plot holds the same records, each plot's score a′(0)
    // is zero at the GLM estimate, so ∂²ℓ/∂σ² = Σ a″ < 0 at σ = 0: σ = 0 is the maximum, the
    // estimates are the GLM's and, for the logit link, so are the standard errors (observed =
    // expected information).
    let base = simulate_glmm(
        &GlmmSimulation {
            plots: 1,
            trees: 60,
            sd: 0.0,
            ..Default::default()
        },
        3,
    )
    .expect("simulation");
    let copies = 8;
    let mut x = Array2::zeros((60 * copies, 3));
    let (mut y, mut plots) = (Vec::new(), Vec::new());
    for c in 0..copies {
        for i in 0..60 {
            x.row_mut(c * 60 + i).assign(&base.x.row(i));
            y.push(base.y[i]);
            plots.push(c as u32);
        }
    }
    let start = glm_start(&x, &y, Link::Logit);
    let f = fit(
        &data(Family::Binomial(Link::Logit), &x, &y, &plots, &[]),
        &start,
        15,
    );
    assert_eq!(f.sd, 0.0);
    assert!(f.std_error_sd.is_none());
    assert_eq!(f.coefficients, start.0, "β is the GLM's");
    for j in 0..3 {
        let glm_se = start.1[j][j].sqrt();
        assert!((f.std_errors[j] - glm_se).abs() < 1e-6 * glm_se, "SE {j}");
    }
    assert!((f.log_likelihood - start.2).abs() < 1e-9);
    assert_eq!((f.lr_test.statistic, f.lr_test.p_value), (0.0, 1.0));
    assert_eq!(f.intraclass_correlation, 0.0);
    assert!(f.plots.iter().all(|p| p.mode == 0.0 && p.sd == 0.0));
}

#[test]
fn annualized_with_one_year_is_the_logit_glmm() {
    // Derived analytically: P = logistic(η)^L is the logistic model at L = 1; the logit
    // family runs the fast kernels, the annualised one the general code, so this also checks
    // one against the other.
    let sim = simulate_glmm(&GlmmSimulation::default(), 11).expect("simulation");
    let ones = vec![1.0; sim.y.len()];
    let logit = data(
        Family::Binomial(Link::Logit),
        &sim.x,
        &sim.y,
        &sim.plots,
        &[],
    );
    let annual = data(Family::Annualized, &sim.x, &sim.y, &sim.plots, &ones);
    for nodes in [1, 7] {
        let rule = GaussHermite::new(nodes).expect("rule");
        let theta = [1.2, 0.05, -0.02, 0.7];
        let a = Evaluator::new(&logit, &rule)
            .evaluate(&theta, true)
            .expect("logit");
        let b = Evaluator::new(&annual, &rule)
            .evaluate(&theta, true)
            .expect("annual");
        assert!((a.value - b.value).abs() < 1e-9 * a.value.abs());
        for (g, h) in a.gradient.iter().zip(&b.gradient) {
            assert!((g - h).abs() < 1e-8 * g.abs().max(1.0), "{g} vs {h}");
        }
    }
    let start = glm_start(&sim.x, &sim.y, Link::Logit);
    let (fa, fb) = (fit(&logit, &start, 15), fit(&annual, &start, 15));
    for (a, b) in fa.coefficients.iter().zip(&fb.coefficients) {
        assert!((a - b).abs() < 1e-6 * a.abs());
    }
    assert!((fa.sd - fb.sd).abs() < 1e-6 * fa.sd);
}

#[test]
fn annualized_likelihood_is_the_integral_over_the_plot_effect() {
    // Derived analytically: L_j = ∫ Π_i f(y_i | η_i + u) N(u; 0, σ²) du, here by the trapezoid
    // rule on [−12σ, 12σ] with 24,001 points (error far below 1e-9 for this smooth integrand),
    // against AGQ with 25 nodes.
    let sim = simulate_glmm(
        &GlmmSimulation {
            plots: 6,
            trees: 25,
            ..Default::default()
        },
        5,
    )
    .expect("simulation");
    let years: Vec<f64> = (0..sim.y.len())
        .map(|i| [1.0, 2.5, 4.0, 7.0][i % 4])
        .collect();
    let d = data(Family::Annualized, &sim.x, &sim.y, &sim.plots, &years);
    let theta = [2.4, 0.03, -0.02, 0.8];
    let rule = GaussHermite::new(25).expect("rule");
    let agq = Evaluator::new(&d, &rule)
        .evaluate(&theta, false)
        .expect("AGQ")
        .value;
    let sd = theta[3];
    let mut total = 0.0;
    for j in 0..6u32 {
        let rows: Vec<usize> = (0..sim.y.len()).filter(|&i| sim.plots[i] == j).collect();
        let integrand = |u: f64| -> f64 {
            let ll: f64 = rows
                .iter()
                .map(|&i| {
                    let eta = theta[0] + theta[1] * sim.x[[i, 1]] + theta[2] * sim.x[[i, 2]];
                    let r = Record {
                        y: sim.y[i],
                        n: 1.0,
                        years: years[i],
                    };
                    Family::Annualized.derivatives(eta + u, r)[0]
                })
                .sum();
            (ll - 0.5 * (u / sd).powi(2)).exp() / (sd * (2.0 * std::f64::consts::PI).sqrt())
        };
        let m = 24_000;
        let (a, b) = (-12.0 * sd, 12.0 * sd);
        let h = (b - a) / m as f64;
        let sum: f64 = (0..=m)
            .map(|k| {
                let w = if k == 0 || k == m { 0.5 } else { 1.0 };
                w * integrand(a + h * k as f64)
            })
            .sum();
        total += (sum * h).ln();
    }
    assert!((agq - total).abs() < 1e-8, "AGQ {agq} vs trapezoid {total}");
}

#[test]
fn the_gradient_matches_central_differences_for_every_family() {
    // Derived analytically: the gradient is the derivative of the evaluated objective; a
    // central difference with step 1e-6 agrees to about 1e-7 (truncation h² ≈ 1e-12, rounding
    // 1e-13/1e-6).
    let sim = simulate_glmm(
        &GlmmSimulation {
            plots: 10,
            trees: 20,
            ..Default::default()
        },
        9,
    )
    .expect("simulation");
    let years: Vec<f64> = (0..sim.y.len()).map(|i| 1.0 + (i % 3) as f64).collect();
    for family in [
        Family::Binomial(Link::Logit),
        Family::Binomial(Link::Probit),
        Family::Binomial(Link::Cloglog),
        Family::Annualized,
    ] {
        let d = data(family, &sim.x, &sim.y, &sim.plots, &years);
        for nodes in [1, 9] {
            let rule = GaussHermite::new(nodes).expect("rule");
            let mut ev = Evaluator::new(&d, &rule);
            let theta = [0.4, 0.02, -0.01, 0.5];
            let g = ev.evaluate(&theta, true).expect("gradient").gradient;
            for k in 0..4 {
                let h = 1e-6;
                let (mut up, mut dn) = (theta, theta);
                up[k] += h;
                dn[k] -= h;
                let num = (ev.evaluate(&up, false).expect("up").value
                    - ev.evaluate(&dn, false).expect("down").value)
                    / (2.0 * h);
                assert!(
                    (num - g[k]).abs() < 1e-6 * g[k].abs().max(1.0),
                    "{family:?} k {nodes}: ∂{k} {} vs {num}",
                    g[k]
                );
            }
        }
    }
}

#[test]
fn single_binary_records_per_plot_are_refused() {
    // Derived analytically: with one 0/1 record per plot the marginal probability
    // ∫F(η + u)φ(u; 0, σ)du is itself a binary GLM (for probit exactly Φ(η/√(1 + σ²))), so σ
    // trades off against the scale of β and is not identified.
    let sim = simulate_glmm(
        &GlmmSimulation {
            plots: 200,
            trees: 1,
            ..Default::default()
        },
        2,
    )
    .expect("simulation");
    let d = data(
        Family::Binomial(Link::Logit),
        &sim.x,
        &sim.y,
        &sim.plots,
        &[],
    );
    let start = glm_start(&sim.x, &sim.y, Link::Logit);
    let e = fit_glmm(&d, &start.0, &start.1, &GlmmOptions::default()).unwrap_err();
    assert!(e.to_string().contains("single 0/1 record"), "{e}");
}
