//! Counter-based random numbers: every draw is a strong 64-bit mix of its key
//! (seed, purpose, stand, replicate, tree or coefficient, sub-step or period), so it depends on
//! nothing else: not on thread count, processing order or which other sources are switched on.

/// What a draw is for; each purpose has its own key space.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Purpose {
    Survival = 1,
    GrowthResidual = 2,
    Parameters = 3,
    Ingrowth = 4,
}

/// A 64-bit finaliser with full avalanche (Pelle Evensen's "moremur" constants for the
/// SplitMix64 structure).
#[inline(always)]
pub(crate) fn mix(mut z: u64) -> u64 {
    z ^= z >> 27;
    z = z.wrapping_mul(0x3C79_AC49_2BA7_B653);
    z ^= z >> 33;
    z = z.wrapping_mul(0x1C69_B3F7_4AC4_AE35);
    z ^ (z >> 27)
}

const GOLDEN: u64 = 0x9E37_79B9_7F4A_7C15;

/// Absorb one key field into a hash state.
#[inline(always)]
pub(crate) fn absorb(state: u64, field: u64) -> u64 {
    mix(state ^ field.wrapping_add(1).wrapping_mul(GOLDEN))
}

/// The stand component of the random key: a 64-bit hash of the stand id's bytes, so a stand
/// draws the same numbers whatever file, shard or position it comes in. It is offset so that
/// the default stand id `1` (a one-stand tree list without a stand column, a generated
/// cohort) keys as 0, as every `project` run did before stands were keyed by id.
pub(crate) fn stand_key(id: &str) -> u64 {
    fn hash(id: &str) -> u64 {
        let h = id
            .bytes()
            .fold(absorb(0, id.len() as u64), |h, b| absorb(h, u64::from(b)));
        mix(h)
    }
    hash(id) ^ hash("1")
}

/// The key prefix shared by all draws of one purpose in one replicate of one stand.
pub(crate) fn stream(seed: u64, purpose: Purpose, stand: u64, replicate: u64) -> u64 {
    let s = absorb(mix(seed ^ 0x5EED_0000_0000_0000), purpose as u64);
    absorb(absorb(s, stand), replicate)
}

/// The draw of `item` (tree or coefficient) at `tick` (sub-step or period) in a stream.
#[inline(always)]
pub(crate) fn draw(stream: u64, tick: u64, item: u64) -> u64 {
    absorb(absorb(stream, tick), item)
}

/// A uniform in the open interval (0, 1) from the top 53 bits.
#[inline(always)]
pub(crate) fn uniform(bits: u64) -> f64 {
    ((bits >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
}

/// A standard normal deviate from one uniform by inversion, so every draw consumes exactly
/// one uniform.
#[inline]
pub(crate) fn normal(bits: u64) -> f64 {
    acklam(uniform(bits))
}

/// Φ⁻¹(p) by Acklam's rational approximation (relative error below 1.2e-9): cheaper than
/// AS 241 and far more accurate than Monte Carlo needs.
#[inline]
pub(crate) fn acklam(p: f64) -> f64 {
    if p < ACKLAM_LOW {
        acklam_tail(p)
    } else if p > 1.0 - ACKLAM_LOW {
        -acklam_tail(1.0 - p)
    } else {
        acklam_central(p)
    }
}

/// Below this probability (and above one minus it) Acklam's approximation uses its tail form.
pub(crate) const ACKLAM_LOW: f64 = 0.02425;

/// Acklam's central rational function, for p in [ACKLAM_LOW, 1 − ACKLAM_LOW]; finite (but
/// meaningless) elsewhere in (0, 1), so it can run branch-free over a whole array.
#[inline(always)]
#[allow(clippy::excessive_precision)]
fn acklam_central(p: f64) -> f64 {
    const A: [f64; 6] = [
        -3.969683028665376e+01,
        2.209460984245205e+02,
        -2.759285104469687e+02,
        1.383577518672690e+02,
        -3.066479806614716e+01,
        2.506628277459239e+00,
    ];
    const B: [f64; 5] = [
        -5.447609879822406e+01,
        1.615858368580409e+02,
        -1.556989798598866e+02,
        6.680131188771972e+01,
        -1.328068155288572e+01,
    ];
    let q = p - 0.5;
    let r = q * q;
    (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
        / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1.0)
}

/// Acklam's lower-tail form at q = min(p, 1 − p) < ACKLAM_LOW (negative).
#[inline]
#[allow(clippy::excessive_precision)]
fn acklam_tail(q: f64) -> f64 {
    const C: [f64; 6] = [
        -7.784894002430293e-03,
        -3.223964580411365e-01,
        -2.400758277161838e+00,
        -2.549732539343734e+00,
        4.374664141464968e+00,
        2.938163982698783e+00,
    ];
    const D: [f64; 4] = [
        7.784695709041462e-03,
        3.224671290700398e-01,
        2.445134137142996e+00,
        3.754408661907416e+00,
    ];
    let t = (-2.0 * q.ln()).sqrt();
    (((((C[0] * t + C[1]) * t + C[2]) * t + C[3]) * t + C[4]) * t + C[5])
        / ((((D[0] * t + D[1]) * t + D[2]) * t + D[3]) * t + 1.0)
}

/// Replace each uniform in `u` by `sigma · Φ⁻¹(u)`, with exactly the values of
/// `sigma * acklam(u)`.
///
/// Why two passes: the central form covers 95 % of draws and, written without branches,
/// vectorises; the 5 % in the tails (which need a logarithm) are then patched one by one.
/// One loop with the branch inside would stay scalar.
pub(crate) fn scaled_normals(u: &[f64], sigma: f64, out: &mut [f64]) {
    for (z, &p) in out.iter_mut().zip(u) {
        *z = sigma * acklam_central(p);
    }
    for (z, &p) in out.iter_mut().zip(u) {
        if p < ACKLAM_LOW {
            *z = sigma * acklam_tail(p);
        } else if p > 1.0 - ACKLAM_LOW {
            *z = sigma * -acklam_tail(1.0 - p);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Reference for the fast generator: AS 241, accurate to about 1e-16.
    // Coefficients of AS 241 (PPND16), as published (Wichura 1988, Applied Statistics 37:477–484).
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const A: [f64; 8] = [
        3.3871328727963666080e0,
        1.3314166789178437745e+2,
        1.9715909503065514427e+3,
        1.3731693765509461125e+4,
        4.5921953931549871457e+4,
        6.7265770927008700853e+4,
        3.3430575583588128105e+4,
        2.5090809287301226727e+3,
    ];
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const B: [f64; 8] = [
        1.0,
        4.2313330701600911252e+1,
        6.8718700749205790830e+2,
        5.3941960214247511077e+3,
        2.1213794301586595867e+4,
        3.9307895800092710610e+4,
        2.8729085735721942674e+4,
        5.2264952788528545610e+3,
    ];
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const C: [f64; 8] = [
        1.42343711074968357734e0,
        4.63033784615654529590e0,
        5.76949722146069140550e0,
        3.64784832476320460504e0,
        1.27045825245236838258e0,
        2.41780725177450611770e-1,
        2.27238449892691845833e-2,
        7.74545014278341407640e-4,
    ];
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const D: [f64; 8] = [
        1.0,
        2.05319162663775882187e0,
        1.67638483018380384940e0,
        6.89767334985100004550e-1,
        1.48103976427480074590e-1,
        1.51986665636164571966e-2,
        5.47593808499534494600e-4,
        1.05075007164441684324e-9,
    ];
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const E: [f64; 8] = [
        6.65790464350110377720e0,
        5.46378491116411436990e0,
        1.78482653991729133580e0,
        2.96560571828504891230e-1,
        2.65321895265761230930e-2,
        1.24266094738807843860e-3,
        2.71155556874348757815e-5,
        2.01033439929228813265e-7,
    ];
    #[allow(clippy::excessive_precision, clippy::unreadable_literal)]
    const F: [f64; 8] = [
        1.0,
        5.99832206555887937690e-1,
        1.36929880922735805310e-1,
        1.48753612908506148525e-2,
        7.86869131145613259100e-4,
        1.84631831751005468180e-5,
        1.42151175831644588870e-7,
        2.04426310338993978564e-15,
    ];

    /// Σ c_k r^k by Horner's rule.
    #[inline(always)]
    fn poly(c: &[f64; 8], r: f64) -> f64 {
        c.iter().rev().fold(0.0, |acc, &k| acc * r + k)
    }

    /// Φ⁻¹(p) for p in (0, 1) (Wichura 1988, AS 241).
    #[inline]
    fn inverse_normal_cdf(p: f64) -> f64 {
        let q = p - 0.5;
        if q.abs() <= 0.425 {
            let r = 0.180625 - q * q;
            return q * poly(&A, r) / poly(&B, r);
        }
        let r = (-(if q < 0.0 { p } else { 1.0 - p }).ln()).sqrt();
        let x = if r <= 5.0 {
            poly(&C, r - 1.6) / poly(&D, r - 1.6)
        } else {
            poly(&E, r - 5.0) / poly(&F, r - 5.0)
        };
        if q < 0.0 {
            -x
        } else {
            x
        }
    }

    #[test]
    fn inverse_normal_matches_tabulated_quantiles() {
        // Standard normal table values (Abramowitz & Stegun 26.2, Table 26.5).
        assert!((inverse_normal_cdf(0.975) - 1.959_963_984_540_054).abs() < 1e-14);
        assert!((inverse_normal_cdf(0.05) + 1.644_853_626_951_472_2).abs() < 1e-14);
        assert!((inverse_normal_cdf(1e-10) + 6.361_340_902_404_056).abs() < 1e-12);
        assert_eq!(inverse_normal_cdf(0.5), 0.0);
    }

    #[test]
    fn acklam_agrees_with_as241_to_its_stated_accuracy() {
        // Acklam's published bound: relative error below 1.15e-9 over (0, 1).
        for k in 1..10_000 {
            let p = k as f64 / 10_000.0;
            let (a, w) = (acklam(p), inverse_normal_cdf(p));
            assert!(
                (a - w).abs() <= 1.2e-9 * w.abs().max(1e-3),
                "p {p}: {a} vs {w}"
            );
        }
        for p in [1e-12, 1e-6, 0.02, 0.03, 0.97, 0.999_999] {
            let (a, w) = (acklam(p), inverse_normal_cdf(p));
            assert!((a - w).abs() <= 1.2e-9 * w.abs(), "p {p}: {a} vs {w}");
        }
    }

    #[test]
    fn scaled_normals_equal_the_scalar_inversion_bit_for_bit() {
        // The two-pass array form must reproduce sigma * acklam(u) exactly, tails included
        // (derived: both evaluate the same expressions in the same order).
        let u: Vec<f64> = (0..20_000)
            .map(|i| uniform(draw(11, 0, i)))
            .chain([
                1e-12,
                0.02425,
                0.024_249_999,
                0.975_75,
                0.975_750_001,
                1.0 - 1e-12,
            ])
            .collect();
        let mut z = vec![0.0; u.len()];
        scaled_normals(&u, 0.4, &mut z);
        for (&p, &got) in u.iter().zip(&z) {
            assert_eq!(got.to_bits(), (0.4 * acklam(p)).to_bits(), "u {p}");
        }
    }

    #[test]
    fn uniforms_have_mean_one_half_and_normals_unit_variance() {
        // Derived analytically: E U = 1/2, Var Z = 1; 4 standard errors at n = 100 000.
        let s = stream(7, Purpose::Survival, 0, 0);
        let n = 100_000;
        let (mut su, mut sz, mut szz) = (0.0, 0.0, 0.0);
        for i in 0..n {
            su += uniform(draw(s, 0, i));
            let z = normal(draw(s, 1, i));
            sz += z;
            szz += z * z;
        }
        let n = n as f64;
        assert!((su / n - 0.5).abs() < 4.0 * (1.0 / 12.0f64 / n).sqrt());
        assert!((sz / n).abs() < 4.0 / n.sqrt());
        assert!((szz / n - 1.0).abs() < 4.0 * (2.0 / n).sqrt());
    }
}
