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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sample_covariance_of_draws_approaches_the_model_covariance() {
        // handbook-checks.md "Projection of tree lists": β* = β̂ + L z with L Lᵀ = V̂; the
        // sample covariance of many draws approaches V̂ (derived). With n = 20 000 draws the
        // SE of a sample covariance entry is about √((V_ii V_jj + V_ij²)/n); allow 4 SE.
        let v = vec![
            vec![0.04, 0.006, -0.001],
            vec![0.006, 0.01, 0.0],
            vec![-0.001, 0.0, 0.0025],
        ];
        let beta = [1.0, -0.5, 0.2];
        let f = CovarianceFactor::new(&v);
        let n = 20_000;
        let draws: Vec<Vec<f64>> = (0..n)
            .map(|r| f.draw(&beta, rng::stream(9, rng::Purpose::Parameters, 0, r), 0))
            .collect();
        let mean: Vec<f64> = (0..3)
            .map(|i| draws.iter().map(|d| d[i]).sum::<f64>() / n as f64)
            .collect();
        for i in 0..3 {
            assert!((mean[i] - beta[i]).abs() < 4.0 * (v[i][i] / n as f64).sqrt());
            for j in 0..3 {
                let c = draws
                    .iter()
                    .map(|d| (d[i] - mean[i]) * (d[j] - mean[j]))
                    .sum::<f64>()
                    / (n - 1) as f64;
                let se = ((v[i][i] * v[j][j] + v[i][j] * v[i][j]) / n as f64).sqrt();
                assert!(
                    (c - v[i][j]).abs() < 4.0 * se,
                    "({i},{j}): {c} vs {}",
                    v[i][j]
                );
            }
        }
    }

    #[test]
    fn semi_definite_covariance_falls_back_to_the_eigen_factor() {
        // Derived analytically: V = [[1, 1], [1, 1]] has rank 1, so both coefficients move
        // together: β₁ − β̂₁ = β₂ − β̂₂ for every draw.
        let f = CovarianceFactor::new(&[vec![1.0, 1.0], vec![1.0, 1.0]]);
        let b = f.draw(
            &[0.0, 0.0],
            rng::stream(1, rng::Purpose::Parameters, 0, 3),
            0,
        );
        assert!((b[0] - b[1]).abs() < 1e-9, "{b:?}");
    }
}
