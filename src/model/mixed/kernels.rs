//! The inner loops over one plot's records: sums of the record log-likelihood's derivatives at
//! one u (for the conditional mode) and at every quadrature node (for the integral). The
//! logit family has a fast path that needs no exponential per record and node: with
//! Eᵢ = e^ηᵢ computed once per evaluation, e^(ηᵢ + v) = Eᵢ·e^v, and the log terms of
//! unit-weight 0/1 records are summed as the log of a product (docs/mixed-models.md,
//! "Computation").

// Several parallel per-node arrays are indexed by the node number.
#![allow(clippy::needless_range_loop)]

use super::glmm_data::GlmmData;

/// Unit-weight records multiplied into one product before its log is taken: each factor is
/// in (1, 2], so 512 of them stay below 2⁵¹².
const PRODUCT_RUN: usize = 512;

/// Per-plot work space, reused for every plot of a task.
#[derive(Debug, Clone)]
pub(crate) struct Scratch {
    /// Σ w ℓ′ x, Σ w ℓ″ x, Σ w ℓ‴ x at the mode.
    pub sx1: Vec<f64>,
    pub sx2: Vec<f64>,
    pub sx3: Vec<f64>,
    /// Σ w ℓ and Σ w ℓ′ per node.
    pub node_value: Vec<f64>,
    pub node_slope: Vec<f64>,
    /// Σ w ℓ′ x per node, k×p.
    pub node_score: Vec<f64>,
    /// Logit: e^(vₘ), the product of unit records' factors, and Σ max(x, 0) per node.
    node_exp: Vec<f64>,
    node_product: Vec<f64>,
    node_positive: Vec<f64>,
    /// The plot's gradient in (β, σ).
    pub grad: Vec<f64>,
}

impl Scratch {
    /// Work space for k nodes and p coefficients.
    pub fn new(k: usize, p: usize) -> Self {
        Scratch {
            sx1: vec![0.0; p],
            sx2: vec![0.0; p],
            sx3: vec![0.0; p],
            node_value: vec![0.0; k],
            node_slope: vec![0.0; k],
            node_score: vec![0.0; k * p],
            node_exp: vec![0.0; k],
            node_product: vec![1.0; k],
            node_positive: vec![0.0; k],
            grad: vec![0.0; p + 1],
        }
    }
}

/// Sums over a plot's records at one u.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Sums {
    /// Σ w ℓ (only when asked for).
    pub value: f64,
    pub d1: f64,
    pub d2: f64,
    pub d3: f64,
}

/// The linear predictors of one evaluation (and their exponentials for the logit path).
pub(crate) struct Predictors<'a> {
    pub eta: &'a [f64],
    pub exp_eta: &'a [f64],
}

/// e^(−|x|) and μ = logistic(x) from t = e^x, without overflow for t = 0 or ∞.
#[inline(always)]
fn logit_parts(t: f64) -> (f64, f64, f64) {
    let small = t <= 1.0;
    let a = if small { t } else { 1.0 / t };
    let r = 1.0 / (1.0 + a);
    let (mu, q) = if small { (a * r, r) } else { (r, a * r) };
    (a, mu, q)
}

/// Σ over plot j's records of w·[ℓ, ℓ′, ℓ″, ℓ‴] at u (ℓ only with `value`), and the
/// vectors Σ w ℓ^(k) x into `sc` when `vectors`.
pub(crate) fn sums(
    d: &GlmmData,
    pr: &Predictors,
    j: usize,
    u: f64,
    value: bool,
    vectors: bool,
    sc: &mut Scratch,
) -> Sums {
    let p = d.p;
    if vectors {
        sc.sx1.fill(0.0);
        sc.sx2.fill(0.0);
        sc.sx3.fill(0.0);
    }
    let logit = d.family == super::Family::Binomial(crate::model::link::Link::Logit);
    let eu = u.exp();
    let mut s = Sums::default();
    for i in d.starts[j]..d.starts[j + 1] {
        let w = d.weight[i];
        let l = if logit {
            let (y, n) = (d.y[i], d.trials[i]);
            let (a, mu, q) = logit_parts(pr.exp_eta[i] * eu);
            let v = n * mu * q;
            let l0 = if value {
                let x = pr.eta[i] + u;
                y * x - n * (x.max(0.0) + a.ln_1p())
            } else {
                0.0
            };
            [l0, y - n * mu, -v, -v * (q - mu)]
        } else {
            d.family.derivatives(pr.eta[i] + u, d.record(i))
        };
        s.value += w * l[0];
        s.d1 += w * l[1];
        s.d2 += w * l[2];
        s.d3 += w * l[3];
        if vectors {
            let row = &d.x[i * p..(i + 1) * p];
            let (a1, a2, a3) = (w * l[1], w * l[2], w * l[3]);
            for (c, &xv) in row.iter().enumerate() {
                sc.sx1[c] += a1 * xv;
                sc.sx2[c] += a2 * xv;
                sc.sx3[c] += a3 * xv;
            }
        }
    }
    s
}

/// Σ w ℓ, Σ w ℓ′ (and Σ w ℓ′ x with `gradient`) at every node u = `mode` + `sd`·√2 zₘ,
/// into `sc.node_value`, `sc.node_slope`, `sc.node_score`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn node_sums(
    d: &GlmmData,
    pr: &Predictors,
    j: usize,
    mode: f64,
    sd: f64,
    scaled_nodes: &[f64],
    gradient: bool,
    sc: &mut Scratch,
) {
    let (p, k) = (d.p, scaled_nodes.len());
    sc.node_value.fill(0.0);
    sc.node_slope.fill(0.0);
    if gradient {
        sc.node_score.fill(0.0);
    }
    if d.family != super::Family::Binomial(crate::model::link::Link::Logit) {
        for i in d.starts[j]..d.starts[j + 1] {
            let (w, r, base) = (d.weight[i], d.record(i), pr.eta[i] + mode);
            let row = &d.x[i * p..(i + 1) * p];
            for m in 0..k {
                let (l, d1) = d.family.value_d1(base + sd * scaled_nodes[m], r);
                sc.node_value[m] += w * l;
                sc.node_slope[m] += w * d1;
                if gradient {
                    for (s, &xv) in sc.node_score[m * p..(m + 1) * p].iter_mut().zip(row) {
                        *s += w * d1 * xv;
                    }
                }
            }
        }
        return;
    }
    logit_node_sums(d, pr, j, mode, sd, scaled_nodes, gradient, sc);
}

#[allow(clippy::too_many_arguments)]
fn logit_node_sums(
    d: &GlmmData,
    pr: &Predictors,
    j: usize,
    mode: f64,
    sd: f64,
    scaled_nodes: &[f64],
    gradient: bool,
    sc: &mut Scratch,
) {
    let (p, k) = (d.p, scaled_nodes.len());
    let unit = d.unit[j];
    for m in 0..k {
        sc.node_exp[m] = (mode + sd * scaled_nodes[m]).exp();
    }
    sc.node_product.fill(1.0);
    sc.node_positive.fill(0.0);
    let (mut sy, mut sy_eta) = (0.0, 0.0);
    for (run, i) in (d.starts[j]..d.starts[j + 1]).enumerate() {
        let (w, y, n, e, base) = (d.weight[i], d.y[i], d.trials[i], pr.exp_eta[i], pr.eta[i]);
        sy += w * y;
        sy_eta += w * y * base;
        let row = &d.x[i * p..(i + 1) * p];
        for m in 0..k {
            let (a, mu, _) = logit_parts(e * sc.node_exp[m]);
            let x = base + mode + sd * scaled_nodes[m];
            let positive = if e * sc.node_exp[m] > 1.0 { x } else { 0.0 };
            if unit {
                sc.node_product[m] *= 1.0 + a;
                sc.node_positive[m] += positive;
            } else {
                sc.node_value[m] -= w * n * (positive + a.ln_1p());
            }
            let slope = w * (y - n * mu);
            sc.node_slope[m] += slope;
            if gradient {
                for (s, &xv) in sc.node_score[m * p..(m + 1) * p].iter_mut().zip(row) {
                    *s += slope * xv;
                }
            }
        }
        if unit && (run + 1) % PRODUCT_RUN == 0 {
            for m in 0..k {
                sc.node_value[m] -= sc.node_product[m].ln();
                sc.node_product[m] = 1.0;
            }
        }
    }
    for m in 0..k {
        let v = mode + sd * scaled_nodes[m];
        sc.node_value[m] += sy_eta + sy * v;
        if unit {
            sc.node_value[m] -= sc.node_product[m].ln() + sc.node_positive[m];
        }
    }
}
