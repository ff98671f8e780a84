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
