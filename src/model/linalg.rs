//! Small dense linear algebra for the model fits: Cholesky solve, inverse and log
//! determinant of a symmetric positive-definite p×p matrix, detection of aliased columns, and
//! least squares by Householder QR (the growth OLS).
//!
//! This is the only module that uses nalgebra; everything else passes plain row-major slices
//! or ndarray views.

use nalgebra::{DMatrix, DVector};
use ndarray::{ArrayView1, ArrayView2};

use super::ModelError;

/// A column is aliased when, after scaling the Gram matrix to unit diagonal, the part of it not
/// explained by the earlier columns (1 − R², uncentred) is below this.
pub const ALIAS_TOL: f64 = 1e-9;

/// The Cholesky factor of a symmetric positive-definite p×p matrix.
#[derive(Debug, Clone)]
pub struct SpdFactor {
    chol: nalgebra::Cholesky<f64, nalgebra::Dyn>,
}

impl SpdFactor {
    /// Factors the p×p matrix `a` (row-major, symmetric; only the full matrix is read).
    /// Returns `None` when it is not numerically positive definite.
    pub fn new(a: &[f64], p: usize) -> Option<Self> {
        if a.len() != p * p || a.iter().any(|v| !v.is_finite()) {
            return None;
        }
        let m = DMatrix::from_row_slice(p, p, a);
        nalgebra::Cholesky::new(m).map(|chol| SpdFactor { chol })
    }

    /// Solves A x = b.
    pub fn solve(&self, b: &[f64]) -> Vec<f64> {
        let x = self.chol.solve(&DVector::from_column_slice(b));
        x.iter().copied().collect()
    }

    /// A⁻¹ as a vector of rows.
    pub fn inverse(&self) -> Vec<Vec<f64>> {
        let inv = self.chol.inverse();
        (0..inv.nrows())
            .map(|i| (0..inv.ncols()).map(|j| inv[(i, j)]).collect())
            .collect()
    }

    /// ln det A.
    ///
    /// # Formula
    /// ln det A = 2 Σ ln Lᵢᵢ with A = L Lᵀ.
    pub fn ln_det(&self) -> f64 {
        let l = self.chol.l_dirty();
        (0..l.nrows()).map(|i| 2.0 * l[(i, i)].ln()).sum()
    }
}

/// The first column of a p×p Gram matrix XᵀWX (row-major) that is a linear combination of the
/// columns before it, or all zero; `None` when the matrix has full rank.
///
/// Scales the matrix to unit diagonal and runs an in-order Cholesky: the squared pivot of
/// column j is the uncentred 1 − R² of column j regressed on columns 0..j, so the column named
/// is the later member of a collinear set, as R's `glm` reports aliased coefficients.
pub fn first_aliased_column(gram: &[f64], p: usize) -> Option<usize> {
    let scale: Vec<f64> = (0..p).map(|j| gram[j * p + j].max(0.0).sqrt()).collect();
    if let Some(j) = scale.iter().position(|&s| s == 0.0 || !s.is_finite()) {
        return Some(j);
    }
    let mut l = vec![0.0; p * p];
    let mut kept = vec![false; p];
    for j in 0..p {
        let mut d = gram[j * p + j] / (scale[j] * scale[j]);
        for k in (0..j).filter(|&k| kept[k]) {
            d -= l[j * p + k] * l[j * p + k];
        }
        if d < ALIAS_TOL {
            return Some(j);
        }
        let djj = d.sqrt();
        l[j * p + j] = djj;
        kept[j] = true;
        for i in j + 1..p {
            let mut s = gram[i * p + j] / (scale[i] * scale[j]);
            for k in 0..j {
                s -= l[i * p + k] * l[j * p + k];
            }
            l[i * p + j] = s / djj;
        }
    }
    None
}

/// Rounding allowance for a stored covariance: the smallest eigenvalue of its correlation
/// form (`D^-1/2 V D^-1/2`, unit diagonal) may be this far below zero (docs/model-files.md).
pub const PSD_RTOL: f64 = 1e-8;

/// Smallest eigenvalue of the correlation form of a symmetric matrix `v` (rows); a zero
/// variance is left unscaled. NaN when the decomposition fails.
pub(crate) fn min_correlation_eigenvalue(v: &[Vec<f64>]) -> f64 {
    let p = v.len();
    let scale: Vec<f64> = (0..p)
        .map(|i| if v[i][i] > 0.0 { v[i][i].sqrt() } else { 1.0 })
        .collect();
    let m = DMatrix::from_fn(p, p, |i, j| v[i][j] / (scale[i] * scale[j]));
    m.symmetric_eigen()
        .eigenvalues
        .iter()
        .copied()
        .fold(f64::INFINITY, f64::min)
}

/// Relative size of a QR diagonal below which a column counts as aliased (R `lm` uses 1e-7).
pub const QR_ALIAS_RTOL: f64 = 1e-7;

/// Solution of a least-squares problem.
pub(crate) struct LeastSquares {
    /// β̂.
    pub coefficients: Vec<f64>,
    /// (XᵀX)⁻¹ = R⁻¹R⁻ᵀ.
    pub unscaled_covariance: Vec<Vec<f64>>,
}

/// Solve min ‖y − Xβ‖ by Householder QR without pivoting, so that the first column found to
/// be (numerically) a combination of the columns before it is the one named as aliased.
pub(crate) fn least_squares_qr(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    names: &[String],
) -> Result<LeastSquares, ModelError> {
    let (n, p) = x.dim();
    let m = DMatrix::from_fn(n, p, |i, j| x[[i, j]]);
    let norms: Vec<f64> = (0..p).map(|j| m.column(j).norm()).collect();
    let qr = m.qr();
    let r = qr.r();
    for j in 0..p {
        if r[(j, j)].abs() <= QR_ALIAS_RTOL * norms[j] || norms[j] == 0.0 {
            let name = names
                .get(j)
                .cloned()
                .unwrap_or_else(|| format!("column {j}"));
            return Err(ModelError::RankDeficient {
                message: format!(
                    "term `{name}` is a linear combination of the terms before it (collinear predictors), so its coefficient cannot be estimated; drop it"
                ),
                term: name,
            });
        }
    }
    let mut qty = DVector::from_iterator(n, y.iter().copied());
    qr.q_tr_mul(&mut qty);
    let rp = r.view((0, 0), (p, p)).into_owned();
    let beta = rp
        .solve_upper_triangular(&qty.rows(0, p).into_owned())
        .ok_or_else(|| ModelError::Invalid("singular triangular factor".into()))?;
    let rinv = rp
        .solve_upper_triangular(&DMatrix::identity(p, p))
        .ok_or_else(|| ModelError::Invalid("singular triangular factor".into()))?;
    let cov = &rinv * rinv.transpose();
    Ok(LeastSquares {
        coefficients: beta.iter().copied().collect(),
        unscaled_covariance: (0..p)
            .map(|i| (0..p).map(|j| cov[(i, j)]).collect())
            .collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Derived analytically: A = [[4, 2], [2, 3]], det 8, A⁻¹ = [[3, −2], [−2, 4]] / 8.
    const A: [f64; 4] = [4.0, 2.0, 2.0, 3.0];

    #[test]
    fn solve_inverse_and_log_determinant() {
        let f = SpdFactor::new(&A, 2).unwrap();
        let x = f.solve(&[2.0, 1.0]);
        // A x = (2, 1) → x = (3·2 − 2·1, −2·2 + 4·1)/8 = (0.5, 0).
        assert!((x[0] - 0.5).abs() < 1e-15 && x[1].abs() < 1e-15);
        let inv = f.inverse();
        assert!((inv[0][0] - 0.375).abs() < 1e-15);
        assert!((inv[0][1] + 0.25).abs() < 1e-15);
        assert!((inv[1][1] - 0.5).abs() < 1e-15);
        assert!((f.ln_det() - 8f64.ln()).abs() < 1e-14);
    }

    #[test]
    fn not_positive_definite_is_refused() {
        assert!(SpdFactor::new(&[1.0, 2.0, 2.0, 1.0], 2).is_none());
        assert!(SpdFactor::new(&[1.0, f64::NAN, f64::NAN, 1.0], 2).is_none());
    }

    fn gram(cols: &[Vec<f64>]) -> Vec<f64> {
        let p = cols.len();
        let mut g = vec![0.0; p * p];
        for i in 0..p {
            for j in 0..p {
                g[i * p + j] = cols[i].iter().zip(&cols[j]).map(|(a, b)| a * b).sum();
            }
        }
        g
    }

    #[test]
    fn names_the_later_collinear_column() {
        let one = vec![1.0; 5];
        let x1 = vec![1.0, 2.0, 4.0, 8.0, 3.0];
        let x2 = vec![0.0, 1.0, 1.0, 0.0, 1.0];
        let x3: Vec<f64> = x1.iter().zip(&x2).map(|(a, b)| 2.0 * a - b + 3.0).collect();
        let g = gram(&[one.clone(), x1.clone(), x2.clone(), x3]);
        assert_eq!(first_aliased_column(&g, 4), Some(3));
        let g = gram(&[one.clone(), x1.clone(), x2]);
        assert_eq!(first_aliased_column(&g, 3), None);
        let g = gram(&[one, vec![0.0; 5], x1]);
        assert_eq!(first_aliased_column(&g, 3), Some(1));
    }

    // Derived analytically: x = 0, 1, 2 and y = 1, 2, 4 give x̄ = 1, ȳ = 7/3, Sxy = 3, Sxx = 2,
    // so slope 3/2 and intercept 7/3 − 3/2 = 5/6; XᵀX = [[3, 3], [3, 5]] has inverse
    // [[5, −3], [−3, 3]] / 6.
    #[test]
    fn least_squares_by_qr() {
        let x = ndarray::array![[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]];
        let y = ndarray::array![1.0, 2.0, 4.0];
        let names = ["(intercept)".to_string(), "x".to_string()];
        let ls = least_squares_qr(x.view(), y.view(), &names).unwrap();
        assert!((ls.coefficients[0] - 5.0 / 6.0).abs() < 1e-14);
        assert!((ls.coefficients[1] - 1.5).abs() < 1e-14);
        let expected = [[5.0 / 6.0, -0.5], [-0.5, 0.5]];
        for (got, want) in ls.unscaled_covariance.iter().zip(expected) {
            for (g, w) in got.iter().zip(want) {
                assert!((g - w).abs() < 1e-14);
            }
        }
    }

    #[test]
    fn least_squares_names_the_aliased_column() {
        // z = 2 + x exactly, so z is the later member of a collinear set.
        let x = ndarray::array![
            [1.0, 0.0, 2.0],
            [1.0, 1.0, 3.0],
            [1.0, 2.0, 4.0],
            [1.0, 5.0, 7.0]
        ];
        let y = ndarray::array![1.0, 2.0, 4.0, 3.0];
        let names = ["(intercept)".to_string(), "x".to_string(), "z".to_string()];
        match least_squares_qr(x.view(), y.view(), &names) {
            Err(ModelError::RankDeficient { term, .. }) => assert_eq!(term, "z"),
            _ => panic!("expected the aliased column z"),
        }
        let zero = ndarray::array![[1.0, 0.0], [1.0, 0.0], [1.0, 0.0]];
        match least_squares_qr(zero.view(), y.slice(ndarray::s![..3]), &names[..2]) {
            Err(ModelError::RankDeficient { term, .. }) => assert_eq!(term, "x"),
            _ => panic!("expected the zero column x"),
        }
    }
}
