//! Least squares by Householder QR (nalgebra), with aliasing detection.

use nalgebra::DMatrix;
use ndarray::{ArrayView1, ArrayView2};

use super::ModelError;

/// Relative size of a QR diagonal below which a column counts as aliased (R `lm` uses 1e-7).
const ALIAS_RTOL: f64 = 1e-7;

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
        if r[(j, j)].abs() <= ALIAS_RTOL * norms[j] || norms[j] == 0.0 {
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
    let mut qty = nalgebra::DVector::from_iterator(n, y.iter().copied());
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
