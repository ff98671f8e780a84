//! Coefficient draws for parameter uncertainty: β⁽ʳ⁾ = β̂ + L z with L Lᵀ = V̂ (nalgebra's
//! Cholesky; a symmetric eigen-decomposition when V̂ is only positive semi-definite).

use nalgebra::{DMatrix, SymmetricEigen};

use super::rng;

/// A factor L of a covariance matrix, row-major p×p.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct CovarianceFactor {
    p: usize,
    l: Vec<f64>,
}

impl CovarianceFactor {
    /// Factor V (row by row). Negative eigenvalues from rounding are set to zero.
    pub fn new(v: &[Vec<f64>]) -> CovarianceFactor {
        let p = v.len();
        let m = DMatrix::from_fn(p, p, |i, j| v[i][j]);
        let l = match m.clone().cholesky() {
            Some(c) => c.l(),
            None => {
                let e = SymmetricEigen::new(m);
                let root = e.eigenvalues.map(|x| x.max(0.0).sqrt());
                &e.eigenvectors * DMatrix::from_diagonal(&root)
            }
        };
        CovarianceFactor {
            p,
            l: (0..p)
                .flat_map(|i| (0..p).map(move |j| (i, j)))
                .map(|(i, j)| l[(i, j)])
                .collect(),
        }
    }

    /// β̂ + L z with z_k drawn from `stream` at (model, k).
    pub fn draw(&self, beta: &[f64], stream: u64, model: u64) -> Vec<f64> {
        let z: Vec<f64> = (0..self.p)
            .map(|k| rng::normal(rng::draw(stream, model, k as u64)))
            .collect();
        (0..self.p)
            .map(|i| {
                beta[i]
                    + (0..self.p)
                        .map(|j| self.l[i * self.p + j] * z[j])
                        .sum::<f64>()
            })
            .collect()
    }
}
