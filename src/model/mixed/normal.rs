//! The standard normal distribution function on the log scale and the inverse Mills ratio,
//! to near full double precision in both tails (the probit record likelihood needs both; the
//! `erfc` of statrs is good to about 1e-10 relative only).

/// From this t on, the Mills ratio R(t) uses its continued fraction instead of Cody's
/// rational function.
const CONTINUED_FRACTION_T: f64 = 5.0;

/// ln Φ(x) and the inverse Mills ratio λ(x) = φ(x)/Φ(x), each to near full precision.
///
/// # Formula
/// With R(t) = Φ(−t)/φ(t) the Mills ratio: for x ≤ −x₀, Φ(x) = φ(x)R(−x) and λ = 1/R(−x);
/// for |x| < x₀ (x₀ = 0.67449), Φ(x) = ½ + x·A(x²)/B(x²); for x ≥ x₀,
/// ln Φ(x) = ln(1 − φ(x)R(x)). A/B and R on [x₀, 5] are W. J. Cody's rational
/// approximations (Cody 1969; the coefficients of his ANORM, as in R's `pnorm`); for t ≥ 5,
/// R(t) = 1/(t + 1/(t + 2/(t + 3/(t + …)))) (Laplace's continued fraction, bottom-up).
pub(crate) fn ln_phi_and_mills(x: f64) -> (f64, f64) {
    let ln_pdf = -0.5 * x * x - 0.5 * (2.0 * std::f64::consts::PI).ln();
    if x <= -CENTRAL_X {
        let r = mills_ratio(-x);
        return (ln_pdf + r.ln(), 1.0 / r);
    }
    let cdf = if x < CENTRAL_X {
        0.5 + central(x)
    } else {
        let upper = ln_pdf.exp() * mills_ratio(x);
        return ((-upper).ln_1p(), (ln_pdf - (-upper).ln_1p()).exp());
    };
    (cdf.ln(), ln_pdf.exp() / cdf)
}

/// |x| below which Φ(x) − ½ is Cody's central rational function.
const CENTRAL_X: f64 = 0.674_489_75;

/// Φ(x) − ½ for |x| < [`CENTRAL_X`] (Cody's first interval).
#[allow(clippy::excessive_precision)] // the published coefficients, as printed
fn central(x: f64) -> f64 {
    const A: [f64; 5] = [
        2.235_252_035_460_683_928_7,
        161.028_231_068_555_878_81,
        1_067.689_485_460_370_958_2,
        18_154.981_253_343_561_249,
        0.065_682_337_918_207_449_113,
    ];
    const B: [f64; 4] = [
        47.202_581_904_688_241_87,
        976.098_551_737_776_693_22,
        10_260.932_208_618_978_205,
        45_507.789_335_026_729_956,
    ];
    let xsq = x * x;
    let (mut num, mut den) = (A[4] * xsq, xsq);
    for i in 0..3 {
        num = (num + A[i]) * xsq;
        den = (den + B[i]) * xsq;
    }
    x * (num + A[3]) / (den + B[3])
}

/// The Mills ratio R(t) = Φ(−t)/φ(t) for t ≥ [`CENTRAL_X`].
#[allow(clippy::excessive_precision)] // the published coefficients, as printed
fn mills_ratio(t: f64) -> f64 {
    if t >= CONTINUED_FRACTION_T {
        // 60 terms reach full precision for t ≥ 5 (the fraction converges faster as t grows).
        let mut tail = t;
        for k in (1..=60).rev() {
            tail = t + k as f64 / tail;
        }
        return 1.0 / tail;
    }
    const C: [f64; 9] = [
        0.398_941_512_088_134_667_64,
        8.883_149_794_388_375_941_2,
        93.506_656_132_177_855_979,
        597.270_276_394_800_262_26,
        2_494.537_585_290_372_671_1,
        6_848.190_450_536_282_332_6,
        11_602.651_437_647_350_124,
        9_842.714_838_383_978_021_8,
        1.076_557_677_372_019_231_7e-8,
    ];
    const D: [f64; 8] = [
        22.266_688_044_328_115_691,
        235.387_901_782_624_998_61,
        1_519.377_599_407_554_805,
        6_485.558_298_266_760_755,
        18_615.571_640_885_098_091,
        34_900.952_721_145_977_266,
        38_912.003_286_093_271_411,
        19_685.429_676_859_990_727,
    ];
    let (mut num, mut den) = (C[8] * t, t);
    for i in 0..7 {
        num = (num + C[i]) * t;
        den = (den + D[i]) * t;
    }
    // Cody's ratio is Φ(−t)·e^(t²/2); R is that times √(2π).
    (num + C[7]) / (den + D[7]) * (2.0 * std::f64::consts::PI).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn probit_log_probability_and_mills_ratio_are_accurate() {
        // (x, ln Φ(x), φ(x)/Φ(x)) from mpmath 1.3.0 at 40 digits (log(ncdf(x)),
        // npdf(x)/ncdf(x)); R 4.2.2 pnorm(-40, log.p = TRUE) = -804.6084420137538 agrees.
        let table = [
            (-40.0, -804.6084420137538, 40.02496884720726),
            (-8.0, -35.01343715991455, 8.121368112236112),
            (-5.5, -17.77937635262526, 5.671410313897305),
            (-5.0, -15.064998393988725, 5.186503967125842),
            (-3.0, -6.607726221510349, 3.2830986549304364),
            (-1.0, -1.8410216450092636, 1.525135276160981),
            (-0.6, -1.293703811614028, 1.2150257602375434),
            (0.0, -std::f64::consts::LN_2, 0.7978845608028654),
            (0.3, -0.4814101615884812, 0.6172208536127345),
            (0.9, -0.2034146097557469, 0.32610889376111957),
            (2.0, -0.02301290932896349, 0.055247862678989956),
            (4.5, -3.397678896834466e-06, 1.5983795414617587e-05),
            (6.0, -9.865876455243758e-10, 6.075882855817676e-09),
            (9.0, -1.1285884059538405e-19, 1.0279773571668915e-18),
        ];
        for (x, ln_cdf, mills) in table {
            let (a, b) = ln_phi_and_mills(x);
            assert!(
                (a - ln_cdf).abs() <= 4e-15 * ln_cdf.abs(),
                "{x}: {a} vs {ln_cdf}"
            );
            assert!((b - mills).abs() <= 4e-15 * mills, "{x}: {b} vs {mills}");
        }
    }
}
