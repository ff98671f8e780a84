//! Named numerical tolerances used by the fitting code (and mirrored by the tests).

/// IRLS stops when the relative change of the deviance is below this ...
pub const IRLS_DEVIANCE_RTOL: f64 = 1e-10;
/// ... and the largest relative change of a coefficient is below this (design §4).
pub const IRLS_COEF_RTOL: f64 = 1e-8;
/// Maximum number of IRLS / Newton iterations.
pub const MAX_ITERATIONS: usize = 50;
/// Fixed-interval models accept remeasurement intervals within this relative distance of the
/// model period (design §4).
pub const INTERVAL_RTOL: f64 = 0.05;
/// `area_ha · expansion` must be this close to a whole number of stems (design §4).
pub const WHOLE_STEMS_ATOL: f64 = 1e-9;
/// Newton–Raphson fits of the ingrowth count part stop after a full step shorter than this many
/// standard errors in every parameter (`docs/ingrowth.md`); quadratic convergence then leaves
/// an error far below it.
pub const NEWTON_STEP_SE_TOL: f64 = 1e-7;
/// Maximum number of Newton iterations of the ingrowth count part.
pub const NEWTON_MAX_ITERATIONS: usize = 200;
