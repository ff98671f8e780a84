//! New trees of an ingrowth model in a projection (docs/ingrowth.md, "In a projection"): the
//! hurdle and the zero-truncated count drawn once per model period of a stand and replicate,
//! with a random purpose of their own, and the expected driver's quantile trees. The driver
//! hook that appends these records to a stand between periods is not wired yet.

use crate::model::hurdle::HurdleExpectation;
use crate::model::ingrowth_trees::TreeGroup;
use crate::model::truncated::CountFamily;

use super::rng::{draw, stream, uniform, Purpose};

/// Largest number of new trees drawn for one stand period (the inversion loop is bounded by it).
pub const MAX_NEW_TREES: u64 = 1_000_000;

/// The key of one stand period's ingrowth draws.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct IngrowthKey {
    /// The scenario seed.
    pub seed: u64,
    /// The stand component of the key (`rng::stand_key` of the stand id).
    pub stand: u64,
    /// The replicate.
    pub replicate: u64,
    /// The model period (0 for the first period of the projection).
    pub period: u64,
}

/// New tree records to append to a stand: one entry per record.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NewTrees {
    /// Deterministic ids, `i<period>-<k>`, so that scenarios run with common random numbers
    /// pair them.
    pub id: Vec<String>,
    /// Diameter (cm or in).
    pub dbh: Vec<f64>,
    /// Species code, when the model stores species shares.
    pub species: Vec<Option<String>>,
    /// Stems per unit area each record stands for.
    pub stems_per_area: Vec<f64>,
}

impl NewTrees {
    /// Stems per unit area of all records.
    pub fn stems(&self) -> f64 {
        self.stems_per_area.iter().sum()
    }
}

/// Draw the number of new trees of one hurdle from two uniforms in (0, 1): any with
/// probability `p_any`, then the zero-truncated count by inversion of its distribution function.
///
/// # Formula
/// With x = αμ, the truncated probabilities are t₁ = h μ/(1 + x), h = P₀/(1 − P₀) =
/// 1/expm1(−ln P₀), ln P₀ = −ln(1 + x)/α, and t_{k+1} = t_k (1 + kα) μ / ((k + 1)(1 + x));
/// for the Poisson x = 0, ln P₀ = −μ and t_{k+1} = t_k μ/(k + 1). N is the least k with
/// t₁ + … + t_k ≥ u (at most [`MAX_NEW_TREES`]).
pub fn draw_count(
    p_any: f64,
    mu: f64,
    family: CountFamily,
    alpha: f64,
    u_any: f64,
    u_count: f64,
) -> u64 {
    if u_any >= p_any || mu.is_nan() || mu <= 0.0 {
        return 0;
    }
    let (x, ln_p0) = match family {
        CountFamily::Poisson => (0.0, -mu),
        CountFamily::NegativeBinomial => {
            let x = alpha * mu;
            (x, -x.ln_1p() / alpha)
        }
    };
    let h = 1.0 / (-ln_p0).exp_m1();
    let mut t = h * mu / (1.0 + x);
    let mut cumulative = t;
    let mut k: u64 = 1;
    while cumulative < u_count && k < MAX_NEW_TREES && t > 0.0 {
        let kf = k as f64;
        t *= match family {
            CountFamily::Poisson => mu / (kf + 1.0),
            CountFamily::NegativeBinomial => (1.0 + kf * alpha) * mu / ((kf + 1.0) * (1.0 + x)),
        };
        cumulative += t;
        k += 1;
    }
    k
}

/// The species and quantile slots of a group: (species code, share, diameter quantiles).
fn slots(group: &TreeGroup) -> Vec<(Option<&str>, f64, &[f64])> {
    if group.species.is_empty() {
        vec![(None, 1.0, &group.dbh_quantiles)]
    } else {
        group
            .species
            .iter()
            .map(|s| {
                (
                    Some(s.species.as_str()),
                    s.share,
                    s.dbh_quantiles.as_slice(),
                )
            })
            .collect()
    }
}

/// One Monte Carlo draw of a stand period's new trees on `area` (the area the stand's records
/// represent): the count from the hurdle, then for tree k a species by its share and one of
/// the species' diameter quantiles with equal probability, each from uniforms keyed by
/// (seed, stand, replicate, period, tree) under the ingrowth purpose. Each new record stands
/// for 1/area stems per unit area.
pub fn draw_new_trees(
    e: &HurdleExpectation,
    family: CountFamily,
    alpha: f64,
    group: &TreeGroup,
    area: f64,
    key: IngrowthKey,
) -> NewTrees {
    let s = stream(key.seed, Purpose::Ingrowth, key.stand, key.replicate);
    let u = |item: u64| uniform(draw(s, key.period, item));
    let n = draw_count(e.p_any, e.mu, family, alpha, u(0), u(1));
    let slots = slots(group);
    let mut out = NewTrees::default();
    for k in 0..n {
        let us = u(2 + 2 * k);
        let mut acc = 0.0;
        let mut chosen = slots.len() - 1;
        for (i, (_, share, _)) in slots.iter().enumerate() {
            acc += share;
            if us < acc {
                chosen = i;
                break;
            }
        }
        let (species, _, quantiles) = slots[chosen];
        let j = ((u(3 + 2 * k) * quantiles.len() as f64) as usize).min(quantiles.len() - 1);
        out.id.push(format!("i{}-{k}", key.period));
        out.dbh.push(quantiles[j]);
        out.species.push(species.map(str::to_string));
        out.stems_per_area.push(1.0 / area);
    }
    out
}

/// The expected driver's new trees of a stand period: every species' diameter quantiles, each
/// standing for E\[N\]/area × share/m stems per unit area, so that their stems add up to the
/// expected count per unit area and their diameters have the Monte Carlo draw's distribution.
pub fn expected_new_trees(
    e: &HurdleExpectation,
    group: &TreeGroup,
    area: f64,
    period: u64,
) -> NewTrees {
    let per_area = e.expected / area;
    let mut out = NewTrees::default();
    let mut k = 0;
    for (species, share, quantiles) in slots(group) {
        let m = quantiles.len() as f64;
        for &d in quantiles {
            out.id.push(format!("i{period}-{k}"));
            out.dbh.push(d);
            out.species.push(species.map(str::to_string));
            out.stems_per_area.push(per_area * share / m);
            k += 1;
        }
    }
    out
}

#[cfg(test)]
mod tests;
