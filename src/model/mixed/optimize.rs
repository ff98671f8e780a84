//! Maximising a smooth function with an exact gradient: quasi-Newton (BFGS on the negative
//! Hessian, started from a finite-difference Hessian) with a backtracking line search, and
//! the central-difference Hessian of the gradient for standard errors.
//! See docs/mixed-models.md, "Maximisation".

use crate::model::linalg::SpdFactor;

/// Stop when the predicted increase ½ gᵀB⁻¹g falls below this (log-likelihood units): the
/// estimates are then within 1.5·10⁻⁶ standard errors of the maximum ...
pub const DECREMENT_TOL: f64 = 1e-12;

/// ... or below this fraction of |f|, the rounding noise of a sum over many records, below
/// which no line search can see an ascent.
pub const DECREMENT_RTOL: f64 = 1e-14;

/// A failed line search counts as convergence when the predicted increase is below this many
/// times the tolerance.
const NOISE_FACTOR: f64 = 1e3;

/// The convergence tolerance of the predicted increase at a function value `f`.
pub fn decrement_tolerance(f: f64) -> f64 {
    DECREMENT_TOL.max(DECREMENT_RTOL * f.abs())
}

/// Finite-difference steps are this many standard errors.
const FD_STEP_SE: f64 = 1e-3;

/// Armijo constant of the line search.
const ARMIJO: f64 = 1e-4;

/// Step halvings tried before the line search gives up.
const MAX_HALVINGS: usize = 40;

/// A function value with its gradient.
#[derive(Debug, Clone)]
pub struct Point {
    /// Where.
    pub x: Vec<f64>,
    /// f(x).
    pub value: f64,
    /// ∇f(x).
    pub gradient: Vec<f64>,
}

/// Why the maximisation stopped early.
#[derive(Debug, Clone)]
pub enum Failure<E> {
    /// The objective failed.
    Objective(E),
    /// No ascent along the search direction (the last point is returned).
    LineSearch(Point),
    /// The iteration limit was reached (the last point is returned).
    Iterations(Point),
}

/// The result: the maximum, the iterations used, and the negative Hessian approximation.
#[derive(Debug, Clone)]
pub struct Maximum {
    /// The last point.
    pub point: Point,
    /// Iterations taken.
    pub iterations: usize,
}

/// −(∂²f) by central differences of the gradient, steps `steps[k]`, symmetrised.
///
/// # Errors
/// The objective's error.
pub fn negative_hessian<E>(
    f: &mut dyn FnMut(&[f64]) -> Result<Point, E>,
    x: &[f64],
    steps: &[f64],
) -> Result<Vec<f64>, E> {
    let d = x.len();
    let mut h = vec![0.0; d * d];
    for k in 0..d {
        let mut up = x.to_vec();
        up[k] += steps[k];
        let mut dn = x.to_vec();
        dn[k] -= steps[k];
        let (gu, gd) = (f(&up)?.gradient, f(&dn)?.gradient);
        for r in 0..d {
            h[r * d + k] = -(gu[r] - gd[r]) / (2.0 * steps[k]);
        }
    }
    symmetrise(&mut h, d);
    Ok(h)
}

/// −(∂²f) by forward differences of the gradient from `at`, steps `steps[k]`, symmetrised
/// (d evaluations; a starting approximation for [`maximize`]).
///
/// # Errors
/// The objective's error.
pub fn negative_hessian_forward<E>(
    f: &mut dyn FnMut(&[f64]) -> Result<Point, E>,
    at: &Point,
    steps: &[f64],
) -> Result<Vec<f64>, E> {
    let d = at.x.len();
    let mut h = vec![0.0; d * d];
    for k in 0..d {
        let mut up = at.x.clone();
        up[k] += steps[k];
        let gu = f(&up)?.gradient;
        for r in 0..d {
            h[r * d + k] = -(gu[r] - at.gradient[r]) / steps[k];
        }
    }
    symmetrise(&mut h, d);
    Ok(h)
}

fn symmetrise(h: &mut [f64], d: usize) {
    for r in 0..d {
        for c in 0..r {
            let m = 0.5 * (h[r * d + c] + h[c * d + r]);
            h[r * d + c] = m;
            h[c * d + r] = m;
        }
    }
}

/// Finite-difference steps of 10⁻³ standard errors from a negative Hessian
/// (falling back to `fallback` where it is not positive definite).
pub fn steps_from(b: &[f64], fallback: &[f64]) -> Vec<f64> {
    let d = fallback.len();
    match SpdFactor::new(b, d) {
        Some(f) => {
            let inv = f.inverse();
            (0..d)
                .map(|k| FD_STEP_SE * inv[k][k].sqrt())
                .map(|s| if s.is_finite() && s > 0.0 { s } else { 1e-6 })
                .collect()
        }
        None => fallback.to_vec(),
    }
}

/// Factor B + λ·diag(B) for the smallest λ in 0, 1e-8, 1e-6, … that makes it positive
/// definite (Levenberg–Marquardt's damping, so that the step is an ascent direction).
fn damped(b: &[f64], d: usize) -> Option<SpdFactor> {
    let diag: Vec<f64> = (0..d).map(|k| b[k * d + k].abs().max(1e-12)).collect();
    for lambda in [0.0, 1e-8, 1e-6, 1e-4, 1e-2, 1.0, 1e2, 1e4] {
        let mut m = b.to_vec();
        for k in 0..d {
            m[k * d + k] += lambda * diag[k];
        }
        if let Some(f) = SpdFactor::new(&m, d) {
            return Some(f);
        }
    }
    None
}

/// Maximise f from `start` with the negative Hessian approximation `b` (row-major, updated
/// in place by BFGS), until the predicted increase is below [`decrement_tolerance`].
///
/// # Errors
/// [`Failure`] with the last point when the line search or the iteration limit fails.
pub fn maximize<E>(
    f: &mut dyn FnMut(&[f64]) -> Result<Point, E>,
    start: Point,
    b: &mut [f64],
    max_iterations: usize,
) -> Result<Maximum, Failure<E>> {
    let d = start.x.len();
    let mut at = start;
    for iteration in 0..max_iterations {
        let Some(factor) = damped(b, d) else {
            return Err(Failure::LineSearch(at));
        };
        let dir = factor.solve(&at.gradient);
        let slope: f64 = dir.iter().zip(&at.gradient).map(|(a, g)| a * g).sum();
        let tol = decrement_tolerance(at.value);
        if !(slope.is_finite()) || 0.5 * slope < tol {
            return Ok(Maximum {
                point: at,
                iterations: iteration,
            });
        }
        let mut alpha = 1.0;
        let mut next = None;
        let near = 0.5 * slope < NOISE_FACTOR * tol;
        for _ in 0..if near { 3 } else { MAX_HALVINGS } {
            let x: Vec<f64> = at.x.iter().zip(&dir).map(|(a, s)| a + alpha * s).collect();
            match f(&x) {
                Ok(pt) if pt.value >= at.value + ARMIJO * alpha * slope => {
                    next = Some(pt);
                    break;
                }
                Ok(_) => alpha *= 0.5,
                Err(e) if alpha < 1.0 => return Err(Failure::Objective(e)),
                Err(_) => alpha *= 0.5,
            }
        }
        let Some(next) = next else {
            if near {
                return Ok(Maximum {
                    point: at,
                    iterations: iteration,
                });
            }
            return Err(Failure::LineSearch(at));
        };
        bfgs_update(b, &at, &next);
        at = next;
    }
    Err(Failure::Iterations(at))
}

/// The BFGS update of the negative Hessian B from the step s and the gradient change:
/// with y = g_old − g_new (B s ≈ y), B ← B − B s sᵀ B / sᵀBs + y yᵀ / sᵀy, skipped when
/// sᵀy ≤ 0 (the curvature condition fails).
fn bfgs_update(b: &mut [f64], old: &Point, new: &Point) {
    let d = old.x.len();
    let s: Vec<f64> = new.x.iter().zip(&old.x).map(|(a, c)| a - c).collect();
    let y: Vec<f64> = old
        .gradient
        .iter()
        .zip(&new.gradient)
        .map(|(a, c)| a - c)
        .collect();
    let sy: f64 = s.iter().zip(&y).map(|(a, c)| a * c).sum();
    let bs: Vec<f64> = (0..d)
        .map(|r| (0..d).map(|c| b[r * d + c] * s[c]).sum())
        .collect();
    let sbs: f64 = s.iter().zip(&bs).map(|(a, c)| a * c).sum();
    let curvature_holds = sy > 1e-12 * sbs.abs() && sbs > 0.0;
    if !curvature_holds {
        return;
    }
    for r in 0..d {
        for c in 0..d {
            b[r * d + c] += -bs[r] * bs[c] / sbs + y[r] * y[c] / sy;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// f(x) = −Σ (xᵢ − i)⁴/4 − Σ (xᵢ − i)²/2 + x₀x₁/10: a smooth concave function whose
    /// maximum solves ∇f = 0 (derived analytically below).
    fn objective(x: &[f64]) -> Result<Point, ()> {
        let mut value = 0.1 * x[0] * x[1];
        let mut gradient = vec![0.1 * x[1], 0.1 * x[0], 0.0];
        for (i, v) in x.iter().enumerate() {
            let e = v - i as f64;
            value -= e.powi(4) / 4.0 + e * e / 2.0;
            gradient[i] -= e.powi(3) + e;
        }
        Ok(Point {
            x: x.to_vec(),
            value,
            gradient,
        })
    }

    #[test]
    fn bfgs_finds_the_stationary_point() {
        let start = objective(&[3.0, -2.0, 5.0]).unwrap();
        let mut f = |x: &[f64]| objective(x);
        let mut b = negative_hessian(&mut f, &start.x, &[1e-4; 3]).unwrap();
        let m = maximize(&mut f, start, &mut b, 100).unwrap();
        // At the maximum every gradient component vanishes; x₂ = 2 exactly (its equation
        // decouples: −e³ − e = 0 ⇒ e = 0). The stopping rule ½gᵀB⁻¹g < 1e-12 (B ≈ identity
        // here) leaves |g| ≲ 1.5e-6.
        assert!(
            m.point.gradient.iter().all(|g| g.abs() < 2e-6),
            "{:?}",
            m.point
        );
        assert!((m.point.x[2] - 2.0).abs() < 2e-6);
        // Derived analytically: −∂²f/∂x₂² = 3e² + 1 = 1 at e = 0, and the central difference
        // of the cubic gradient adds exactly h² = 1e-8.
        let h = negative_hessian(&mut f, &m.point.x, &[1e-4; 3]).unwrap();
        assert!((h[8] - 1.0).abs() < 2e-8);
        assert!((h[1] + 0.1).abs() < 1e-9);
    }
}
