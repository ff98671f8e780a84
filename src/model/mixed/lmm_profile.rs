//! The profiled likelihood of the random-intercept LMM: sufficient statistics (within-plot
//! centred data and plot means) and, for one variance ratio γ = σ_u²/σ_e², the GLS estimate,
//! the minimised quadratic form and the REML or ML log-likelihood with its derivative in γ.
//! See docs/mixed-models.md, "The growth model (linear mixed model)".

use ndarray::ArrayView2;

use super::lmm::LmmMethod;
use crate::model::linalg::SpdFactor;
use crate::model::ModelError;

/// Sufficient statistics: within-plot centred data and plot means.
pub(super) struct Stats {
    pub(super) p: usize,
    pub(super) n: usize,
    /// Within-plot centred rows of X (n×p) and y.
    pub(super) xc: Vec<f64>,
    pub(super) yc: Vec<f64>,
    /// Plot sizes, mean rows of X (G×p) and mean responses.
    pub(super) size: Vec<f64>,
    pub(super) xbar: Vec<f64>,
    pub(super) ybar: Vec<f64>,
    /// Σ x̃ x̃ᵀ and Σ x̃ ỹ.
    pub(super) wxx: Vec<f64>,
    pub(super) wxy: Vec<f64>,
    /// Plot code of each plot here.
    pub(super) codes: Vec<u32>,
}

/// The profile at one γ.
pub(super) struct Profile {
    pub(super) beta: Vec<f64>,
    pub(super) factor: SpdFactor,
    /// Σ (y − Xβ)ᵀ M (y − Xβ), the minimised quadratic form.
    pub(super) rss: f64,
    /// Plot mean residuals ȳ_j − x̄_jᵀβ.
    pub(super) ebar: Vec<f64>,
    /// ℓ of the method at (γ, σ̂_e²(γ)).
    pub(super) ll: f64,
    /// dℓ/dγ.
    pub(super) slope: f64,
}

impl Stats {
    pub(super) fn new(x: ArrayView2<f64>, y: &[f64], plots: &[u32]) -> Result<Self, ModelError> {
        let (n, p) = x.dim();
        if y.len() != n || plots.len() != n {
            return Err(ModelError::Invalid(format!(
                "LMM columns must have {n} rows"
            )));
        }
        let groups = plots.iter().map(|&g| g as usize + 1).max().unwrap_or(0);
        let mut size = vec![0.0; groups];
        let mut xbar = vec![0.0; groups * p];
        let mut ybar = vec![0.0; groups];
        for i in 0..n {
            let g = plots[i] as usize;
            size[g] += 1.0;
            ybar[g] += y[i];
            for c in 0..p {
                xbar[g * p + c] += x[[i, c]];
            }
        }
        let present: Vec<usize> = (0..groups).filter(|&g| size[g] > 0.0).collect();
        let mut index = vec![usize::MAX; groups];
        for (k, &g) in present.iter().enumerate() {
            index[g] = k;
            ybar[g] /= size[g];
            for c in 0..p {
                xbar[g * p + c] /= size[g];
            }
        }
        let mut xc = vec![0.0; n * p];
        let mut yc = vec![0.0; n];
        let mut wxx = vec![0.0; p * p];
        let mut wxy = vec![0.0; p];
        for i in 0..n {
            let g = plots[i] as usize;
            yc[i] = y[i] - ybar[g];
            for c in 0..p {
                xc[i * p + c] = x[[i, c]] - xbar[g * p + c];
            }
            let row = &xc[i * p..(i + 1) * p];
            for a in 0..p {
                wxy[a] += row[a] * yc[i];
                for b in 0..p {
                    wxx[a * p + b] += row[a] * row[b];
                }
            }
        }
        Ok(Stats {
            p,
            n,
            xc,
            yc,
            size: present.iter().map(|&g| size[g]).collect(),
            xbar: present
                .iter()
                .flat_map(|&g| xbar[g * p..(g + 1) * p].to_vec())
                .collect(),
            ybar: present.iter().map(|&g| ybar[g]).collect(),
            wxx,
            wxy,
            codes: present.iter().map(|&g| g as u32).collect(),
        })
    }

    /// The profile of the method's log-likelihood at γ.
    ///
    /// # Formula
    /// aⱼ = nⱼ/(1 + nⱼγ); A = W_xx + Σ aⱼ x̄ⱼx̄ⱼᵀ; β̂ = A⁻¹(W_xy + Σ aⱼ x̄ⱼȳⱼ);
    /// r = Σ (ỹ − x̃ᵀβ̂)² + Σ aⱼ (ȳⱼ − x̄ⱼᵀβ̂)²; with m = n (ML) or n − p (REML),
    /// ℓ = −½[m(ln(2π r/m) + 1) + Σ ln(1 + nⱼγ) (+ ln det A for REML)].
    pub(super) fn profile(&self, gamma: f64, method: LmmMethod) -> Option<Profile> {
        let p = self.p;
        let mut a = self.wxx.clone();
        let mut rhs = self.wxy.clone();
        let mut ln_det_v = 0.0;
        for (j, &nj) in self.size.iter().enumerate() {
            let aj = nj / (1.0 + nj * gamma);
            ln_det_v += (nj * gamma).ln_1p();
            let xb = &self.xbar[j * p..(j + 1) * p];
            for r in 0..p {
                rhs[r] += aj * xb[r] * self.ybar[j];
                for c in 0..p {
                    a[r * p + c] += aj * xb[r] * xb[c];
                }
            }
        }
        let factor = SpdFactor::new(&a, p)?;
        let beta = factor.solve(&rhs);
        let dot = |row: &[f64]| row.iter().zip(&beta).map(|(u, v)| u * v).sum::<f64>();
        let within: f64 = (0..self.n)
            .map(|i| {
                let e = self.yc[i] - dot(&self.xc[i * p..(i + 1) * p]);
                e * e
            })
            .sum();
        let ebar: Vec<f64> = (0..self.size.len())
            .map(|j| self.ybar[j] - dot(&self.xbar[j * p..(j + 1) * p]))
            .collect();
        let mut rss = within;
        let (mut d_rss, mut d_ln_det_v, mut d_ln_det_a) = (0.0, 0.0, 0.0);
        for (j, &nj) in self.size.iter().enumerate() {
            let aj = nj / (1.0 + nj * gamma);
            let daj = -aj * aj;
            rss += aj * ebar[j] * ebar[j];
            d_rss += daj * ebar[j] * ebar[j];
            d_ln_det_v += aj;
            if method == LmmMethod::Reml {
                let xb = &self.xbar[j * p..(j + 1) * p];
                let s = factor.solve(xb);
                d_ln_det_a += daj * xb.iter().zip(&s).map(|(u, v)| u * v).sum::<f64>();
            }
        }
        let m = self.dof(method);
        let two_pi = 2.0 * std::f64::consts::PI;
        let (ll, slope) = match method {
            LmmMethod::Ml => (
                -0.5 * (m * ((two_pi * rss / m).ln() + 1.0) + ln_det_v),
                -0.5 * (m * d_rss / rss + d_ln_det_v),
            ),
            LmmMethod::Reml => (
                -0.5 * (m * ((two_pi * rss / m).ln() + 1.0) + ln_det_v + factor.ln_det()),
                -0.5 * (m * d_rss / rss + d_ln_det_v + d_ln_det_a),
            ),
        };
        Some(Profile {
            beta,
            factor,
            rss,
            ebar,
            ll,
            slope,
        })
    }

    pub(super) fn dof(&self, method: LmmMethod) -> f64 {
        match method {
            LmmMethod::Ml => self.n as f64,
            LmmMethod::Reml => (self.n - self.p) as f64,
        }
    }

    /// The method's log-likelihood at (σ_u, σ_e), β profiled (ML) or integrated out (REML).
    pub(super) fn at_sds(&self, su: f64, se: f64, method: LmmMethod) -> f64 {
        let v = se * se;
        let Some(pr) = self.profile(su * su / v, method) else {
            return f64::NAN;
        };
        let gamma = su * su / v;
        let ln_det_v: f64 = self.size.iter().map(|nj| (nj * gamma).ln_1p()).sum();
        let m = self.dof(method);
        let two_pi = 2.0 * std::f64::consts::PI;
        let extra = match method {
            LmmMethod::Ml => 0.0,
            LmmMethod::Reml => pr.factor.ln_det(),
        };
        -0.5 * (m * (two_pi * v).ln() + ln_det_v + extra + pr.rss / v)
    }
}
