//! Checking a GLM's data and putting the response in proportion form; the full binomial
//! log-likelihood.

use statrs::function::gamma::ln_gamma;

use super::{invalid, GlmData};
use crate::model::irls::Response;
use crate::model::ModelError;

/// Checks the shapes and values of `data` and returns the response in proportion form.
pub(crate) fn prepare_response(data: &GlmData) -> Result<Response, ModelError> {
    let n = data.x.nrows();
    if data.terms.len() != data.x.ncols() {
        return Err(invalid(format!(
            "{} term names for {} design columns",
            data.terms.len(),
            data.x.ncols()
        )));
    }
    for (name, len) in [
        ("response", Some(data.y.len())),
        ("trials", data.trials.map(|t| t.len())),
        ("weights", data.weights.map(|t| t.len())),
        ("offset", data.offset.map(|t| t.len())),
    ] {
        if let Some(len) = len.filter(|&len| len != n) {
            return Err(invalid(format!("{name} has {len} values for {n} rows")));
        }
    }
    // A branch-free scan first (vectorised on contiguous data); the position only on failure.
    let all_finite = match data.x.as_slice() {
        Some(xs) => xs.iter().fold(true, |ok, v| ok & v.is_finite()),
        None => data.x.iter().all(|v| v.is_finite()),
    };
    if let Some(i) = (!all_finite)
        .then(|| data.x.iter().position(|v| !v.is_finite()))
        .flatten()
    {
        let (r, c) = (i / data.x.ncols().max(1), i % data.x.ncols().max(1));
        return Err(invalid(format!(
            "row {}: term `{}` is not a finite number",
            r + 1,
            data.terms[c]
        )));
    }
    if data.trials.is_none() && data.weights.is_none() && data.offset.is_none() {
        // The common unweighted 0/1 case, checked without branches; errors fall through to
        // the row-by-row loop, which names the row.
        let binary = data
            .y
            .iter()
            .fold(true, |ok, &v| ok & (v == 0.0 || v == 1.0));
        if binary {
            return Ok(Response::new(data.y.to_vec(), vec![1.0; n]));
        }
    }
    let mut y = Vec::with_capacity(n);
    let mut wt = Vec::with_capacity(n);
    for i in 0..n {
        let row = i + 1;
        let w = data.weights.map_or(1.0, |w| w[i]);
        if !(w.is_finite() && w >= 0.0) {
            return Err(invalid(format!(
                "row {row}: weight {w} is not a non-negative number"
            )));
        }
        if let Some(o) = data.offset.filter(|o| !o[i].is_finite()) {
            return Err(invalid(format!("row {row}: offset {} is not finite", o[i])));
        }
        let yi = data.y[i];
        match data.trials {
            Some(t) => {
                let ni = t[i];
                if !(ni.is_finite() && ni >= 0.0 && yi.is_finite() && (0.0..=ni).contains(&yi)) {
                    return Err(invalid(format!(
                        "row {row}: {yi} successes out of {ni} trials is not a valid count"
                    )));
                }
                y.push(if ni > 0.0 { yi / ni } else { 0.0 });
                wt.push(w * ni);
            }
            None => {
                if yi != 0.0 && yi != 1.0 {
                    return Err(invalid(format!("row {row}: response {yi} is not 0 or 1")));
                }
                y.push(yi);
                wt.push(w);
            }
        }
    }
    Ok(Response::new(y, wt))
}

/// The full binomial log-likelihood from the deviance: ℓ = −D/2 + ℓ_saturated.
///
/// # Formula
/// 0/1 rows: ℓ = Σ wᵢ [yᵢ ln μᵢ + (1 − yᵢ) ln(1 − μᵢ)] = −D/2 (the saturated model fits 0/1
/// exactly). Successes sᵢ of nᵢ trials with prior weight wᵢ, proportion yᵢ = sᵢ/nᵢ:
/// ℓ = Σ wᵢ [ln C(nᵢ, sᵢ) + sᵢ ln μᵢ + (nᵢ − sᵢ) ln(1 − μᵢ)]
///   = −D/2 + Σ wᵢ [ln C(nᵢ, sᵢ) + nᵢ (yᵢ ln yᵢ + (1 − yᵢ) ln(1 − yᵢ))], ln C via ln Γ.
pub(crate) fn log_likelihood(data: &GlmData, r: &Response, deviance: f64) -> f64 {
    let Some(trials) = data.trials else {
        return -deviance / 2.0;
    };
    let xlogx = |v: f64| if v > 0.0 { v * v.ln() } else { 0.0 };
    let saturated: f64 = (0..r.y.len())
        .filter(|&i| r.wt[i] > 0.0)
        .map(|i| {
            let (n, s) = (trials[i], data.y[i]);
            let prior = data.weights.map_or(1.0, |w| w[i]);
            let ln_choose = ln_gamma(n + 1.0) - ln_gamma(s + 1.0) - ln_gamma(n - s + 1.0);
            prior * ln_choose + r.wt[i] * (xlogx(r.y[i]) + xlogx(1.0 - r.y[i]))
        })
        .sum();
    -deviance / 2.0 + saturated
}
