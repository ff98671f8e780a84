//! Named numerical tolerances used by the fitting code (and mirrored by the tests).

/// IRLS stops when the relative change of the deviance is below this ...
pub const IRLS_DEVIANCE_RTOL: f64 = 1e-10;
/// ... and the largest relative change of a coefficient is below this (`docs/maths.md#irls`).
pub const IRLS_COEF_RTOL: f64 = 1e-8;
/// Maximum number of IRLS / Newton iterations.
pub const MAX_ITERATIONS: usize = 50;
/// Fixed-interval models accept remeasurement intervals within this relative distance of the
/// model period (`docs/data.md#remeasurement-intervals`).
pub const INTERVAL_RTOL: f64 = 0.05;
/// `area_ha · expansion` must be this close to a whole number of stems
/// (`docs/maths.md#binomial-survival-of-whole-stems`).
pub const WHOLE_STEMS_ATOL: f64 = 1e-9;
/// Levenberg–Marquardt is restarted from its own estimate while the relative-offset criterion
/// (Bates and Watts; docs/height-volume.md) is above this and the last run still moved the
/// estimate. R `nls` defaults to 1e-5, which can leave estimates about 1e-6 (relative) from
/// the optimum.
pub const NLS_RELATIVE_OFFSET_TARGET: f64 = 1e-8;
/// A height–diameter fit has converged when the relative offset is at most this once the runs
/// stop. Between this and the target lies the rounding floor of ill-conditioned curves: there
/// the decrease of the RSS that a further step would bring is below what double precision can
/// measure, and no least-squares solver that compares RSS values gets closer.
pub const NLS_RELATIVE_OFFSET: f64 = 1e-6;
/// Levenberg–Marquardt runs (each restarting from the last estimate) at most.
pub const NLS_MAX_RUNS: usize = 5;
/// Residuals whose norm is at most this fraction of the heights' norm are at rounding level:
/// the relative offset is undefined there and the fit counts as converged.
pub const NLS_ZERO_RESIDUAL_RTOL: f64 = 1e-12;
/// Newton–Raphson fits of the ingrowth count part stop after a full step shorter than this many
/// standard errors in every parameter (`docs/ingrowth.md`); quadratic convergence then leaves
/// an error far below it.
pub const NEWTON_STEP_SE_TOL: f64 = 1e-7;
/// Maximum number of Newton iterations of the ingrowth count part.
pub const NEWTON_MAX_ITERATIONS: usize = 200;
/// A projected covariate counts as outside a model's fitting range only when it passes a bound
/// by more than this relative amount (docs/scenario.md): `x < lo − tol·|lo|` or
/// `x > hi + tol·|hi|`, so a rounding-level excursion such as 0.9999999999999999 below a minimum
/// of 1 does not warn.
pub const EXTRAPOLATION_RTOL: f64 = 1e-9;
