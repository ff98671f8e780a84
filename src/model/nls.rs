//! Nonlinear least squares for height–diameter curves: Levenberg–Marquardt from the
//! `levenberg-marquardt` crate, a convergence check of our own (the relative-offset criterion),
//! and the statistics R's `summary.nls`, `logLik` and `AIC` report (docs/height-volume.md).
//!
//! The crate is built on nalgebra 0.34 (ours is 0.35), so its problem types come from the
//! `nalgebra_lm` alias and stay inside this module.

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra_lm::storage::Owned;
use nalgebra_lm::{DMatrix, DVector, Dyn};
use ndarray::{Array1, Array2};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::height::HeightForm;
use super::linalg::least_squares_qr;
use super::ModelError;
use crate::tolerance::{
    NLS_MAX_RUNS, NLS_RELATIVE_OFFSET, NLS_RELATIVE_OFFSET_TARGET, NLS_ZERO_RESIDUAL_RTOL,
};

/// A fitted height–diameter curve with its statistics. Holds no data.
#[derive(Debug, Clone, PartialEq)]
pub struct NlsFit {
    /// The form.
    pub form: HeightForm,
    /// Breast height added to every prediction.
    pub breast_height: f64,
    /// Parameter names (a, b and, for Chapman–Richards, c).
    pub names: Vec<String>,
    /// The start values the iterations began from.
    pub start: Vec<f64>,
    /// Least-squares estimates.
    pub coefficients: Vec<f64>,
    /// Asymptotic standard errors √(s² (JᵀJ)⁻¹)ⱼⱼ.
    pub std_errors: Vec<f64>,
    /// Estimate / standard error.
    pub t_values: Vec<f64>,
    /// Two-sided p-values, Student t with n − p degrees of freedom.
    pub p_values: Vec<f64>,
    /// s² (JᵀJ)⁻¹, row by row.
    pub covariance: Vec<Vec<f64>>,
    /// Residual standard deviation s = √(RSS / (n − p)).
    pub residual_sd: f64,
    /// Residual sum of squares.
    pub rss: f64,
    /// Trees in the fit.
    pub records: usize,
    /// n − p.
    pub df_residual: usize,
    /// Gaussian log-likelihood at σ̂² = RSS/n.
    pub log_likelihood: f64,
    /// −2ℓ + 2(p + 1) (σ counted, as R).
    pub aic: f64,
    /// −2ℓ + ln(n)(p + 1).
    pub bic: f64,
    /// Residual evaluations by the Levenberg–Marquardt runs.
    pub evaluations: usize,
    /// Levenberg–Marquardt runs (a run restarts from the last one's estimate until the
    /// relative offset is met).
    pub runs: usize,
    /// The relative-offset criterion at the estimate.
    pub relative_offset: f64,
    /// Smallest and largest diameter in the fit.
    pub dbh_range: [f64; 2],
}

/// The least-squares problem as the crate sees it: residuals fᵢ(θ) + bh − Hᵢ.
struct CurveProblem<'a> {
    form: HeightForm,
    bh: f64,
    dbh: &'a [f64],
    height: &'a [f64],
    theta: DVector<f64>,
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for CurveProblem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.theta.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.theta.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let t = self.theta.as_slice();
        Some(DVector::from_iterator(
            self.dbh.len(),
            self.dbh
                .iter()
                .zip(self.height)
                .map(|(&d, &h)| self.form.above_breast_height(d, t) + self.bh - h),
        ))
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let t = self.theta.as_slice();
        let p = t.len();
        let mut j = DMatrix::zeros(self.dbh.len(), p);
        let mut row = vec![0.0; p];
        for (i, &d) in self.dbh.iter().enumerate() {
            self.form.gradient(d, t, &mut row);
            for (k, v) in row.iter().enumerate() {
                j[(i, k)] = *v;
            }
        }
        Some(j)
    }
}

/// The Jacobian, the Gauss–Newton increment and (JᵀJ)⁻¹ at `theta`, with the RSS.
struct Local {
    rss: f64,
    relative_offset: f64,
    unscaled_covariance: Vec<Vec<f64>>,
}

/// Evaluate the residuals and the linearisation at `theta`.
///
/// # Formula
/// With r = H − f(θ) and J = ∂f/∂θ = QR, the relative offset is ‖Q₁ᵀr‖ / ‖Q₂ᵀr‖ (Bates and
/// Watts 1981, R `nls` without scaling): ‖Q₁ᵀr‖² = ‖Jδ‖² for the Gauss–Newton increment
/// δ = (JᵀJ)⁻¹Jᵀr, and ‖Q₂ᵀr‖² = RSS − ‖Jδ‖².
fn local(
    form: HeightForm,
    bh: f64,
    dbh: &[f64],
    height: &[f64],
    theta: &[f64],
) -> Result<Local, ModelError> {
    let (n, p) = (dbh.len(), theta.len());
    let mut j = Array2::<f64>::zeros((n, p));
    let mut r = Array1::<f64>::zeros(n);
    let mut row = vec![0.0; p];
    for i in 0..n {
        form.gradient(dbh[i], theta, &mut row);
        for k in 0..p {
            j[[i, k]] = row[k];
        }
        r[i] = height[i] - bh - form.above_breast_height(dbh[i], theta);
    }
    let rss: f64 = r.iter().map(|v| v * v).sum();
    if !rss.is_finite() || j.iter().any(|v| !v.is_finite()) {
        return Err(ModelError::Invalid("not finite".into()));
    }
    let names: Vec<String> = form
        .parameter_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let ls = least_squares_qr(j.view(), r.view(), &names)?;
    let step = j.dot(&Array1::from(ls.coefficients));
    let along: f64 = step.iter().map(|v| v * v).sum();
    let across = (rss - along).max(0.0);
    let scale: f64 = height.iter().map(|h| h * h).sum();
    let relative_offset = if rss <= NLS_ZERO_RESIDUAL_RTOL * NLS_ZERO_RESIDUAL_RTOL * scale {
        0.0
    } else if across == 0.0 {
        f64::INFINITY
    } else {
        (along / across).sqrt()
    };
    Ok(Local {
        rss,
        relative_offset,
        unscaled_covariance: ls.unscaled_covariance,
    })
}

/// Fit `form` to the trees (`dbh`, `height`, equal lengths) by least squares from `start`.
///
/// Levenberg–Marquardt runs without the relative-reduction stop and with the crate's step and
/// gradient tolerances (30 machine epsilons); a run that ends with the relative offset above
/// [`NLS_RELATIVE_OFFSET_TARGET`] after moving the estimate is restarted from it, up to
/// [`NLS_MAX_RUNS`] runs. The fit has converged when the relative offset is then at most
/// [`NLS_RELATIVE_OFFSET`].
///
/// # Formula
/// Cov = s² (JᵀJ)⁻¹ with s² = RSS/(n − p) and J the analytic Jacobian at the estimate (by QR);
/// ℓ = −n/2 (ln 2π + ln(RSS/n) + 1); AIC = −2ℓ + 2(p + 1); BIC = −2ℓ + ln(n)(p + 1).
///
/// # Errors
/// [`ModelError::Invalid`] with too few trees or start values at which the curve is not
/// finite; [`ModelError::CurveNotConverged`] (a runtime failure) when the criterion is not met or
/// the Jacobian is singular at the estimate.
pub fn fit_height_curve(
    form: HeightForm,
    bh: f64,
    dbh: &[f64],
    height: &[f64],
    start: &[f64],
) -> Result<NlsFit, ModelError> {
    let (n, p) = (dbh.len(), form.n_params());
    if n <= p {
        return Err(ModelError::Invalid(format!(
            "{n} trees cannot estimate the {p} parameters of the {form} form and a residual variance; at least {} are needed",
            p + 1
        )));
    }
    if start.len() != p || start.iter().any(|v| !v.is_finite()) {
        return Err(ModelError::Invalid(format!(
            "the {form} form needs {p} finite start values ({}), got {:?}",
            form.parameter_names().join(", "),
            start
        )));
    }
    if local(form, bh, dbh, height, start).is_err() {
        return Err(ModelError::Invalid(format!(
            "at the start values {start:?} the {form} curve or its derivatives are not finite numbers, or its parameters are not identified; give other values with --start"
        )));
    }
    let mut problem = CurveProblem {
        form,
        bh,
        dbh,
        height,
        theta: DVector::from_column_slice(start),
    };
    // ftol = 0: never stop on the relative decrease of the RSS alone (30 machine epsilons
    // would stop at a relative offset near 1e-7); the step-size and gradient tests and the
    // rounding limit end the run instead.
    let solver = LevenbergMarquardt::new().with_ftol(0.0);
    let (mut evaluations, mut runs) = (0, 0);
    let mut last = None;
    while runs < NLS_MAX_RUNS {
        let before = problem.theta.clone();
        let (solved, report) = solver.minimize(problem);
        problem = solved;
        runs += 1;
        evaluations += report.number_of_evaluations;
        last = local(form, bh, dbh, height, problem.theta.as_slice()).ok();
        let moved = problem.theta != before;
        match &last {
            Some(l) if l.relative_offset > NLS_RELATIVE_OFFSET_TARGET && moved => {}
            _ => break,
        }
    }
    let theta: Vec<f64> = problem.theta.iter().copied().collect();
    let at: Vec<String> = form
        .parameter_names()
        .iter()
        .zip(&theta)
        .map(|(n, v)| format!("{n} = {v:.6e}"))
        .collect();
    let not_converged = |why: String| {
        ModelError::CurveNotConverged(format!(
            "the {form} curve did not converge ({runs} Levenberg–Marquardt runs, {evaluations} evaluations): {why}, stopping at {}; try other start values with --start, or another form",
            at.join(", ")
        ))
    };
    let l = match last {
        Some(l) if l.relative_offset <= NLS_RELATIVE_OFFSET => l,
        Some(l) => {
            return Err(not_converged(format!(
                "the relative offset is {:.2e}, above {NLS_RELATIVE_OFFSET:e} (RSS {:.6})",
                l.relative_offset, l.rss
            )))
        }
        None => {
            return Err(not_converged(
                "the curve is not finite or its parameters are not identified by these data (singular Jacobian)".into(),
            ))
        }
    };
    statistics(form, bh, dbh, start, theta, &l, evaluations, runs)
}

#[allow(clippy::too_many_arguments)]
fn statistics(
    form: HeightForm,
    bh: f64,
    dbh: &[f64],
    start: &[f64],
    theta: Vec<f64>,
    l: &Local,
    evaluations: usize,
    runs: usize,
) -> Result<NlsFit, ModelError> {
    let (n, p) = (dbh.len(), theta.len());
    let df = n - p;
    let s2 = l.rss / df as f64;
    let covariance: Vec<Vec<f64>> = l
        .unscaled_covariance
        .iter()
        .map(|row| row.iter().map(|v| v * s2).collect())
        .collect();
    let std_errors: Vec<f64> = (0..p).map(|k| covariance[k][k].sqrt()).collect();
    let t_values: Vec<f64> = theta.iter().zip(&std_errors).map(|(b, s)| b / s).collect();
    let t_dist = StudentsT::new(0.0, 1.0, df as f64)
        .map_err(|e| ModelError::Invalid(format!("t distribution: {e}")))?;
    let p_values = t_values.iter().map(|t| 2.0 * t_dist.sf(t.abs())).collect();
    let nf = n as f64;
    let log_likelihood = -0.5 * nf * ((2.0 * std::f64::consts::PI).ln() + (l.rss / nf).ln() + 1.0);
    let k = (p + 1) as f64;
    let lo = dbh.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = dbh.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Ok(NlsFit {
        form,
        breast_height: bh,
        names: form
            .parameter_names()
            .iter()
            .map(|s| s.to_string())
            .collect(),
        start: start.to_vec(),
        coefficients: theta,
        std_errors,
        t_values,
        p_values,
        covariance,
        residual_sd: s2.sqrt(),
        rss: l.rss,
        records: n,
        df_residual: df,
        log_likelihood,
        aic: -2.0 * log_likelihood + 2.0 * k,
        bic: -2.0 * log_likelihood + nf.ln() * k,
        evaluations,
        runs,
        relative_offset: l.relative_offset,
        dbh_range: [lo, hi],
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Derived analytically: heights generated exactly from a Näslund curve (no error) have the
    // generating parameters as their least-squares solution, with RSS 0.
    #[test]
    fn recovers_an_exact_curve() {
        let dbh: Vec<f64> = (1..=30).map(|i| 2.0 * i as f64).collect();
        let height: Vec<f64> = dbh
            .iter()
            .map(|&d| 1.3 + HeightForm::Naslund.above_breast_height(d, &[2.5, 0.16]))
            .collect();
        let fit = fit_height_curve(HeightForm::Naslund, 1.3, &dbh, &height, &[2.0, 0.2]).unwrap();
        assert!((fit.coefficients[0] - 2.5).abs() < 1e-9);
        assert!((fit.coefficients[1] - 0.16).abs() < 1e-9);
        assert!(fit.rss < 1e-12);
    }

    #[test]
    fn too_few_trees_and_bad_starts_are_input_errors() {
        let e = fit_height_curve(
            HeightForm::ChapmanRichards,
            1.3,
            &[1.0, 2.0, 3.0],
            &[2.0, 3.0, 4.0],
            &[5.0, 0.1, 1.0],
        );
        assert!(matches!(e, Err(ModelError::Invalid(_))));
        let e = fit_height_curve(
            HeightForm::Naslund,
            1.3,
            &[1.0, 2.0, 3.0],
            &[2.0, 3.0, 4.0],
            &[f64::NAN, 0.1],
        );
        assert!(matches!(e, Err(ModelError::Invalid(_))));
    }
}
