//! The GLMM's marginal log-likelihood by adaptive Gauss–Hermite quadrature and its exact
//! gradient in (β, σ). Records are held sorted by plot in plain arrays; an [`Evaluator`]
//! keeps each plot's conditional mode between calls as the next starting point, and
//! allocates nothing per plot or per call. See docs/mixed-models.md, "Adaptive Gauss–Hermite
//! quadrature" and "The gradient".

use ndarray::ArrayView2;
use statrs::function::gamma::ln_gamma;

use super::family::{Family, Record};
use super::quadrature::GaussHermite;
use crate::model::ModelError;

/// |σ| below which a plot's log-likelihood uses its expansion in σ² (exact to O(σ⁴)):
/// the quadrature formulas divide by σ³ and would lose digits there.
pub const SIGMA_SERIES: f64 = 1e-5;

/// Newton steps allowed for one conditional mode.
const MAX_MODE_STEPS: usize = 200;

/// The records of a GLMM sorted by plot, rows with zero weight or zero trials left out.
#[derive(Debug, Clone)]
pub struct GlmmData {
    /// How a record's response depends on η.
    pub family: Family,
    /// Number of coefficients.
    pub p: usize,
    x: Vec<f64>,
    offset: Vec<f64>,
    y: Vec<f64>,
    trials: Vec<f64>,
    years: Vec<f64>,
    weight: Vec<f64>,
    /// Record range of plot j: `starts[j]..starts[j + 1]`.
    starts: Vec<usize>,
    /// The caller's plot code of each plot here (plots without records are left out).
    pub plot_codes: Vec<u32>,
    /// Σ wᵢ ln C(nᵢ, yᵢ).
    pub ln_choose: f64,
}

/// The columns of a GLMM before sorting, as the fit pipeline holds them.
#[derive(Debug, Clone, Copy)]
pub struct GlmmColumns<'a> {
    /// Design matrix, n×p.
    pub x: ArrayView2<'a, f64>,
    /// Successes (or the 0/1 outcome).
    pub y: &'a [f64],
    /// Trials per record (None: 1).
    pub trials: Option<&'a [f64]>,
    /// Prior weights (None: 1).
    pub weights: Option<&'a [f64]>,
    /// Offset (None: 0).
    pub offset: Option<&'a [f64]>,
    /// Intervals in years (annualised family only; empty otherwise).
    pub years: &'a [f64],
    /// Plot code per record, 0-based.
    pub plots: &'a [u32],
}

impl GlmmData {
    /// Sort the records of `c` by plot.
    ///
    /// # Errors
    /// Lengths that do not match, or no records with positive weight.
    pub fn new(family: Family, c: &GlmmColumns) -> Result<Self, ModelError> {
        let (n, p) = c.x.dim();
        let bad = |m: String| ModelError::Invalid(m);
        if c.y.len() != n
            || c.plots.len() != n
            || c.trials.is_some_and(|t| t.len() != n)
            || c.weights.is_some_and(|w| w.len() != n)
            || c.offset.is_some_and(|o| o.len() != n)
            || (family == Family::Annualized && c.years.len() != n)
        {
            return Err(bad(format!("GLMM columns must all have {n} rows")));
        }
        let keep =
            |i: usize| c.weights.is_none_or(|w| w[i] > 0.0) && c.trials.is_none_or(|t| t[i] > 0.0);
        let groups = c.plots.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
        let mut count = vec![0usize; groups + 1];
        for i in (0..n).filter(|&i| keep(i)) {
            count[c.plots[i] as usize + 1] += 1;
        }
        let mut first = count.clone();
        for g in 1..=groups {
            first[g] += first[g - 1];
        }
        let kept = first[groups];
        if kept == 0 {
            return Err(bad("no records with positive weight".into()));
        }
        let mut order = vec![0usize; kept];
        let mut next = first.clone();
        for i in (0..n).filter(|&i| keep(i)) {
            let g = c.plots[i] as usize;
            order[next[g]] = i;
            next[g] += 1;
        }
        let mut starts = vec![0usize];
        let mut plot_codes = Vec::new();
        for g in 0..groups {
            if first[g + 1] > first[g] {
                starts.push(first[g + 1]);
                plot_codes.push(g as u32);
            }
        }
        let pick = |v: Option<&[f64]>, default: f64| -> Vec<f64> {
            order.iter().map(|&i| v.map_or(default, |v| v[i])).collect()
        };
        let mut x = Vec::with_capacity(kept * p);
        for &i in &order {
            x.extend(c.x.row(i).iter());
        }
        let y = pick(Some(c.y), 0.0);
        let trials = pick(c.trials, 1.0);
        let weight = pick(c.weights, 1.0);
        let years = if family == Family::Annualized {
            pick(Some(c.years), 1.0)
        } else {
            vec![1.0; kept]
        };
        let ln_choose = (0..if c.trials.is_some() { kept } else { 0 })
            .map(|i| {
                let (k, m) = (y[i], trials[i]);
                weight[i] * (ln_gamma(m + 1.0) - ln_gamma(k + 1.0) - ln_gamma(m - k + 1.0))
            })
            .sum();
        Ok(GlmmData {
            family,
            p,
            x,
            offset: pick(c.offset, 0.0),
            y,
            trials,
            years,
            weight,
            starts,
            plot_codes,
            ln_choose,
        })
    }

    /// Number of plots with records.
    pub fn n_plots(&self) -> usize {
        self.starts.len() - 1
    }

    /// Number of records (positive weight).
    pub fn n_records(&self) -> usize {
        self.y.len()
    }

    /// Size of the largest plot.
    pub fn largest_plot(&self) -> usize {
        self.starts
            .windows(2)
            .map(|w| w[1] - w[0])
            .max()
            .unwrap_or(0)
    }

    #[inline]
    fn record(&self, i: usize) -> Record {
        Record {
            y: self.y[i],
            n: self.trials[i],
            years: self.years[i],
        }
    }
}

/// The marginal log-likelihood and, when asked for, its gradient in (β, σ).
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// ℓ(β, σ), binomial constants included.
    pub value: f64,
    /// ∂ℓ/∂(β, σ) (empty when not asked for).
    pub gradient: Vec<f64>,
}

/// Evaluates the approximate marginal log-likelihood of one data set with one rule.
#[derive(Debug, Clone)]
pub struct Evaluator<'a> {
    data: &'a GlmmData,
    /// √2 zₘ.
    scaled_nodes: Vec<f64>,
    /// ln(ωₘ e^(zₘ²)).
    ln_weights: Vec<f64>,
    /// Conditional mode of each plot at the last evaluation (the next starting point).
    pub modes: Vec<f64>,
    /// Conditional SD (−h″(û))^(−1/2) of each plot at the last evaluation.
    pub mode_sds: Vec<f64>,
    eta: Vec<f64>,
    scratch: Scratch,
}

/// Per-plot work space, reused for every plot.
#[derive(Debug, Clone)]
struct Scratch {
    sx2: Vec<f64>,
    sx3: Vec<f64>,
    sx1: Vec<f64>,
    node_value: Vec<f64>,
    node_slope: Vec<f64>,
    /// Σᵢ wᵢ ℓ′ᵢ(η + vₘ) xᵢ per node, k×p.
    node_score: Vec<f64>,
    grad: Vec<f64>,
}

/// Sums over a plot's records at one u.
#[derive(Debug, Clone, Copy, Default)]
struct Sums {
    value: f64,
    d1: f64,
    d2: f64,
    d3: f64,
}

impl<'a> Evaluator<'a> {
    /// An evaluator of `data` with the Gauss–Hermite `rule` (1 node: Laplace).
    pub fn new(data: &'a GlmmData, rule: &GaussHermite) -> Self {
        let k = rule.len();
        let p = data.p;
        let g = data.n_plots();
        Evaluator {
            data,
            scaled_nodes: rule
                .nodes
                .iter()
                .map(|z| std::f64::consts::SQRT_2 * z)
                .collect(),
            ln_weights: rule
                .nodes
                .iter()
                .zip(&rule.weights)
                .map(|(z, w)| w.ln() + z * z)
                .collect(),
            modes: vec![0.0; g],
            mode_sds: vec![0.0; g],
            eta: vec![0.0; data.n_records()],
            scratch: Scratch {
                sx1: vec![0.0; p],
                sx2: vec![0.0; p],
                sx3: vec![0.0; p],
                node_value: vec![0.0; k],
                node_slope: vec![0.0; k],
                node_score: vec![0.0; k * p],
                grad: vec![0.0; p + 1],
            },
        }
    }

    /// ℓ at θ = (β, σ) (σ may be negative: ℓ is even in σ), with the gradient when
    /// `gradient` is set.
    ///
    /// # Errors
    /// [`ModelError::NotConverged`] when a conditional mode cannot be found.
    pub fn evaluate(&mut self, theta: &[f64], gradient: bool) -> Result<Evaluation, ModelError> {
        let p = self.data.p;
        let (beta, sigma) = (&theta[..p], theta[p]);
        for (i, e) in self.eta.iter_mut().enumerate() {
            let row = &self.data.x[i * p..(i + 1) * p];
            *e = self.data.offset[i] + row.iter().zip(beta).map(|(a, b)| a * b).sum::<f64>();
        }
        let mut value = self.data.ln_choose;
        let mut total = vec![0.0; if gradient { p + 1 } else { 0 }];
        for j in 0..self.data.n_plots() {
            value += self.plot(j, sigma, gradient)?;
            if gradient {
                for (t, g) in total.iter_mut().zip(&self.scratch.grad) {
                    *t += g;
                }
            }
        }
        Ok(Evaluation {
            value,
            gradient: total,
        })
    }

    /// Σ over plot j's records of w·[ℓ, ℓ′, ℓ″, ℓ‴] at u, and of w·ℓ″·x, w·ℓ‴·x (and w·ℓ′·x)
    /// into the scratch vectors when `vectors` is set.
    fn sums(&mut self, j: usize, u: f64, vectors: bool) -> Sums {
        let d = self.data;
        let p = d.p;
        let mut s = Sums::default();
        if vectors {
            for v in [
                &mut self.scratch.sx1,
                &mut self.scratch.sx2,
                &mut self.scratch.sx3,
            ] {
                v.fill(0.0);
            }
        }
        for i in d.starts[j]..d.starts[j + 1] {
            let w = d.weight[i];
            let l = d.family.derivatives(self.eta[i] + u, d.record(i));
            s.value += w * l[0];
            s.d1 += w * l[1];
            s.d2 += w * l[2];
            s.d3 += w * l[3];
            if vectors {
                let row = &d.x[i * p..(i + 1) * p];
                let (a1, a2, a3) = (w * l[1], w * l[2], w * l[3]);
                let sc = &mut self.scratch;
                for (c, &xv) in row.iter().enumerate() {
                    sc.sx1[c] += a1 * xv;
                    sc.sx2[c] += a2 * xv;
                    sc.sx3[c] += a3 * xv;
                }
            }
        }
        s
    }

    /// The conditional mode of plot j (safeguarded Newton on h′), leaving the sums at the
    /// mode (with vectors when `vectors`).
    fn mode(&mut self, j: usize, inv_var: f64, vectors: bool) -> Result<(f64, Sums), ModelError> {
        let mut u = self.modes[j];
        let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
        for _ in 0..MAX_MODE_STEPS {
            let s = self.sums(j, u, vectors);
            let h1 = s.d1 - u * inv_var;
            let h2 = s.d2 - inv_var;
            if h1 > 0.0 {
                lo = u;
            } else if h1 < 0.0 {
                hi = u;
            } else {
                return Ok((u, s));
            }
            let newton = if h2 < 0.0 {
                u - h1 / h2
            } else {
                u + h1 / inv_var
            };
            let scale = u.abs() + inv_var.sqrt().recip();
            if (newton - u).abs() <= 1e-10 * scale {
                return Ok((u, s));
            }
            // Outside the bracket of sign changes of h′, bisect (once both ends are known).
            let next = if (newton > lo && newton < hi) || !(lo.is_finite() && hi.is_finite()) {
                newton
            } else {
                0.5 * (lo + hi)
            };
            if !next.is_finite() {
                break;
            }
            u = next;
        }
        Err(ModelError::NotConverged {
            iterations: MAX_MODE_STEPS,
            deviance: f64::NAN,
            hint: format!(
                "the conditional mode of plot {} was not found",
                self.data.plot_codes[j] + 1
            ),
        })
    }

    /// ln L_j, and its gradient into `scratch.grad` when `gradient`.
    fn plot(&mut self, j: usize, sigma: f64, gradient: bool) -> Result<f64, ModelError> {
        let p = self.data.p;
        let var = sigma * sigma;
        if sigma.abs() < SIGMA_SERIES {
            return Ok(self.plot_series(j, sigma, gradient));
        }
        let inv_var = 1.0 / var;
        let (mode, s) = self.mode(j, inv_var, gradient)?;
        let curvature = inv_var - s.d2;
        let sd = curvature.sqrt().recip();
        self.modes[j] = mode;
        self.mode_sds[j] = sd;
        let k = self.scaled_nodes.len();
        let d = self.data;
        let sc = &mut self.scratch;
        sc.node_value.fill(0.0);
        sc.node_slope.fill(0.0);
        if gradient {
            sc.node_score.fill(0.0);
        }
        for i in d.starts[j]..d.starts[j + 1] {
            let (w, r, base) = (d.weight[i], d.record(i), self.eta[i] + mode);
            let row = &d.x[i * p..(i + 1) * p];
            for m in 0..k {
                let (l, d1) = d.family.value_d1(base + sd * self.scaled_nodes[m], r);
                sc.node_value[m] += w * l;
                sc.node_slope[m] += w * d1;
                if gradient {
                    let score = &mut sc.node_score[m * p..(m + 1) * p];
                    for c in 0..p {
                        score[c] += w * d1 * row[c];
                    }
                }
            }
        }
        // ln of the integrand at each node, without the constant −ln|σ| − ½ ln 2π.
        let mut top = f64::NEG_INFINITY;
        for m in 0..k {
            let v = mode + sd * self.scaled_nodes[m];
            sc.node_value[m] += self.ln_weights[m] - 0.5 * v * v * inv_var;
            top = top.max(sc.node_value[m]);
        }
        let total: f64 = sc.node_value.iter().map(|t| (t - top).exp()).sum();
        let lse = top + total.ln();
        let ln_sigma = sigma.abs().ln();
        let value = std::f64::consts::SQRT_2.ln() + sd.ln() + lse
            - ln_sigma
            - 0.5 * (2.0 * std::f64::consts::PI).ln();
        if !gradient {
            return Ok(value);
        }
        // Posterior node weights πₘ and the derivative of ln L_j (docs/mixed-models.md).
        let (mut e_hu, mut e_huz, mut e_v2) = (0.0, 0.0, 0.0);
        sc.grad.fill(0.0);
        for m in 0..k {
            let pi = (sc.node_value[m] - lse).exp();
            let z = self.scaled_nodes[m];
            let v = mode + sd * z;
            let hu = sc.node_slope[m] - v * inv_var;
            e_hu += pi * hu;
            e_huz += pi * hu * z;
            e_v2 += pi * v * v;
            for c in 0..p {
                sc.grad[c] += pi * sc.node_score[m * p + c];
            }
        }
        let h3 = s.d3;
        for c in 0..p {
            let du = sc.sx2[c] / curvature;
            let dh = -(sc.sx3[c] + h3 * du);
            let ds = -0.5 * sd * dh / curvature;
            sc.grad[c] += -0.5 * dh / curvature + e_hu * du + e_huz * ds;
        }
        let s3 = sigma * var;
        let du = 2.0 * mode / (s3 * curvature);
        let dh = -(2.0 / s3 + h3 * du);
        let ds = -0.5 * sd * dh / curvature;
        sc.grad[p] = -0.5 * dh / curvature + e_v2 / s3 - 1.0 / sigma + e_hu * du + e_huz * ds;
        Ok(value)
    }

    /// ln L_j for |σ| < [`SIGMA_SERIES`]: a(0) + ½σ²(a′² + a″) with a(u) = Σ wᵢ ℓᵢ(ηᵢ + u).
    fn plot_series(&mut self, j: usize, sigma: f64, gradient: bool) -> f64 {
        let p = self.data.p;
        let var = sigma * sigma;
        let s = self.sums(j, 0.0, gradient);
        let excess = s.d1 * s.d1 + s.d2;
        self.modes[j] = var * s.d1;
        self.mode_sds[j] = sigma.abs();
        if gradient {
            let sc = &mut self.scratch;
            for c in 0..p {
                sc.grad[c] = sc.sx1[c] + 0.5 * var * (2.0 * s.d1 * sc.sx2[c] + sc.sx3[c]);
            }
            sc.grad[p] = sigma * excess;
        }
        s.value + 0.5 * var * excess
    }
}
