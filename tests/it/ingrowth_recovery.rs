//! Recovery: plot periods simulated from a hurdle with known coefficients (seeded), fitted in
//! memory; every estimate must lie within 3 standard errors of the truth (for a consistent
//! estimator with correct SEs each does so with probability 0.997; the seed is fixed, so the
//! test is deterministic).

use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Gamma, Poisson};
use stemcast::model::hurdle::{fit_hurdle, HurdleFit, PlotPeriods};
use stemcast::model::truncated::CountFamily;

/// Truth of the any part: logit P(any) = γ·[1, ba, ln L, ln area].
const GAMMA: [f64; 4] = [1.2, -0.05, 1.0, 0.5];
/// Truth of the count part: ln(μ / (area·L)) = β·[1, ba, ln L]; Var = μ + αμ².
const BETA: [f64; 3] = [2.8, -0.03, 0.1];
const ALPHA: f64 = 0.8;
const PLOT_PERIODS: usize = 3000;

struct Simulated {
    x_any: Array2<f64>,
    x_count: Array2<f64>,
    count: Vec<u64>,
    area: Vec<f64>,
    years: Vec<f64>,
}

/// One count given any: untruncated draws (Poisson, or the NB2 gamma–Poisson mixture
/// λ ~ Gamma(1/α, αμ), N ~ Poisson(λ)) repeated until positive.
fn positive_draw(rng: &mut ChaCha8Rng, mu: f64, alpha: Option<f64>) -> u64 {
    loop {
        let lambda = match alpha {
            Some(a) => Gamma::new(1.0 / a, a * mu).unwrap().sample(rng),
            None => mu,
        };
        if lambda <= 0.0 {
            continue;
        }
        let n = Poisson::new(lambda).unwrap().sample(rng) as u64;
        if n > 0 {
            return n;
        }
    }
}

fn simulate(seed: u64, alpha: Option<f64>) -> Simulated {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = PLOT_PERIODS;
    let mut s = Simulated {
        x_any: Array2::zeros((n, 4)),
        x_count: Array2::zeros((n, 3)),
        count: Vec::with_capacity(n),
        area: Vec::with_capacity(n),
        years: Vec::with_capacity(n),
    };
    for i in 0..n {
        let area = 0.03 + 0.17 * rng.random::<f64>();
        let years = f64::from(3 + rng.random_range(0..8u32));
        let ba = 5.0 + 35.0 * rng.random::<f64>();
        let xa = [1.0, ba, years.ln(), area.ln()];
        let xc = [1.0, ba, years.ln()];
        let eta_any: f64 = xa.iter().zip(GAMMA).map(|(x, g)| x * g).sum();
        let eta_count: f64 = xc.iter().zip(BETA).map(|(x, b)| x * b).sum();
        let any = rng.random::<f64>() < 1.0 / (1.0 + (-eta_any).exp());
        let count = if any {
            positive_draw(&mut rng, eta_count.exp() * area * years, alpha)
        } else {
            0
        };
        s.x_any.row_mut(i).assign(&ndarray::ArrayView1::from(&xa));
        s.x_count.row_mut(i).assign(&ndarray::ArrayView1::from(&xc));
        s.count.push(count);
        s.area.push(area);
        s.years.push(years);
    }
    s
}

fn fit(s: &Simulated, family: CountFamily) -> HurdleFit {
    let any_terms = ["(intercept)", "ba", "ln(years)", "ln(area)"].map(String::from);
    let count_terms = ["(intercept)", "ba", "ln(years)"].map(String::from);
    fit_hurdle(
        &PlotPeriods {
            x_any: s.x_any.view(),
            any_terms: &any_terms,
            x_count: s.x_count.view(),
            count_terms: &count_terms,
            count: &s.count,
            area: &s.area,
            years: &s.years,
        },
        family,
    )
    .unwrap()
}

fn within_3_se(what: &str, est: &[f64], se: &[f64], truth: &[f64]) {
    for j in 0..truth.len() {
        let z = (est[j] - truth[j]) / se[j];
        assert!(
            z.abs() < 3.0,
            "{what}[{j}]: estimate {} SE {} truth {} (z = {z:.2})",
            est[j],
            se[j],
            truth[j]
        );
    }
}

#[test]
fn negative_binomial_hurdle_recovers_the_simulation_truth() {
    // Truth: GAMMA, BETA, ALPHA above (the simulation's own parameters).
    let s = simulate(20_250_611, Some(ALPHA));
    let h = fit(&s, CountFamily::NegativeBinomial);
    within_3_se("γ", &h.any.coefficients, &h.any.std_errors, &GAMMA);
    within_3_se("β", &h.count.coefficients, &h.count.std_errors, &BETA);
    let (alpha, se) = (h.count.alpha.unwrap(), h.count.alpha_std_error.unwrap());
    within_3_se("α", &[alpha], &[se], &[ALPHA]);
}

#[test]
fn poisson_hurdle_recovers_the_simulation_truth() {
    // Truth: GAMMA and BETA above, counts zero-truncated Poisson.
    let s = simulate(7, None);
    let h = fit(&s, CountFamily::Poisson);
    within_3_se("γ", &h.any.coefficients, &h.any.std_errors, &GAMMA);
    within_3_se("β", &h.count.coefficients, &h.count.std_errors, &BETA);
}

#[test]
fn negative_binomial_on_poisson_counts_without_overdispersion_says_to_refit_with_poisson() {
    // Poisson counts (α = 0): in about half of such samples the NB2 likelihood rises all the
    // way to α → 0 (the maximum lies on the boundary); seed 1 is one of them, and the same
    // data fitted as Poisson recover the truth.
    let s = simulate(1, None);
    let any_terms = ["(intercept)", "ba", "ln(years)", "ln(area)"].map(String::from);
    let count_terms = ["(intercept)", "ba", "ln(years)"].map(String::from);
    let data = PlotPeriods {
        x_any: s.x_any.view(),
        any_terms: &any_terms,
        x_count: s.x_count.view(),
        count_terms: &count_terms,
        count: &s.count,
        area: &s.area,
        years: &s.years,
    };
    let e = fit_hurdle(&data, CountFamily::NegativeBinomial).unwrap_err();
    assert!(e.is_runtime(), "{e}");
    assert!(e.to_string().contains("--counts poisson"), "{e}");
    let h = fit(&s, CountFamily::Poisson);
    within_3_se("β", &h.count.coefficients, &h.count.std_errors, &BETA);
}
