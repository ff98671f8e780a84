//! Reducing per-replicate stand totals to summaries, in replicate order so that the result
//! does not depend on how replicates were scheduled.

use super::result::{ClassRow, Summary, YearSummary};

/// What one replicate (or the expected run) records at each output year.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct Trace {
    /// Per output year: the values of `Metric::ALL` (QMD is NaN without stems).
    pub values: Vec<[f64; 7]>,
    /// Per output year: stems per hectare by DBH class, from class 0.
    pub classes: Vec<Vec<f64>>,
    /// (min, max) of each ranged model variable (survival's first, then growth's).
    pub ranges: Vec<[f64; 2]>,
    /// Per action: 1 when a thinning found the stand at or below its target.
    pub idle_thinnings: Vec<u32>,
    /// Per harvest event slot: stems/ha and basal area (m²/ha) removed.
    pub harvest: Vec<[f64; 2]>,
    /// Set when diameters or densities left the physical limits (docs/scenario.md#limits):
    /// the year and what was found; the replicate stopped there.
    pub runaway: Option<(f64, String)>,
}

/// Percentile of sorted data by linear interpolation between order statistics (type 7).
///
/// # Formula
/// `h = (n − 1)·p`, `x[⌊h⌋] + (h − ⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋])`.
pub fn percentile_type7(sorted: &[f64], p: f64) -> f64 {
    let n = sorted.len();
    if n == 1 {
        return sorted[0];
    }
    let h = (n - 1) as f64 * p;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Mean, SD (n − 1) and type-7 percentiles of the finite values, in the order given.
pub fn summarise(values: &[f64]) -> Summary {
    let mut x: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if x.is_empty() {
        return Summary::default();
    }
    let n = x.len() as f64;
    let first = x.iter().sum::<f64>() / n;
    // One refinement step, so that identical values give exactly that value and SD 0.
    let mean = first + x.iter().map(|v| v - first).sum::<f64>() / n;
    let sd = (x.len() > 1)
        .then(|| (x.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n - 1.0)).sqrt());
    x.sort_by(f64::total_cmp);
    Summary {
        mean: Some(mean),
        sd,
        p05: Some(percentile_type7(&x, 0.05)),
        p50: Some(percentile_type7(&x, 0.50)),
        p95: Some(percentile_type7(&x, 0.95)),
    }
}

/// Summaries per year and class rows across `traces` (one per replicate, in order).
/// `random` keeps SD and percentiles; otherwise only means.
pub(crate) fn reduce(
    traces: &[Trace],
    years: &[f64],
    ages: &[Option<f64>],
    class_width_cm: f64,
    random: bool,
) -> (Vec<YearSummary>, Vec<ClassRow>) {
    let mut out = Vec::with_capacity(years.len());
    let mut classes = Vec::new();
    let mut column = Vec::with_capacity(traces.len());
    for (y, (&year, &age)) in years.iter().zip(ages).enumerate() {
        let mut metrics = [Summary::default(); 7];
        for (m, slot) in metrics.iter_mut().enumerate() {
            column.clear();
            column.extend(traces.iter().map(|t| t.values[y][m]));
            let mut s = summarise(&column);
            if !random {
                s = Summary {
                    mean: s.mean,
                    ..Summary::default()
                };
            }
            *slot = s;
        }
        let extinct = traces.iter().filter(|t| t.values[y][0] <= 0.0).count();
        out.push(YearSummary {
            year,
            age,
            metrics,
            extinct_replicates: extinct,
        });
        let n_classes = traces.iter().map(|t| t.classes[y].len()).max().unwrap_or(0);
        for c in 0..n_classes {
            column.clear();
            column.extend(
                traces
                    .iter()
                    .map(|t| t.classes[y].get(c).copied().unwrap_or(0.0)),
            );
            if column.iter().all(|&v| v == 0.0) {
                continue;
            }
            let s = summarise(&column);
            classes.push(ClassRow {
                year,
                lower_cm: c as f64 * class_width_cm,
                mean: s.mean.unwrap_or(0.0),
                p05: s.p05.filter(|_| random),
                p95: s.p95.filter(|_| random),
            });
        }
    }
    (out, classes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn type7_matches_r_quantile() {
        // R 4.x: quantile(c(1, 2, 4, 8, 16), c(.05, .5, .95), type = 7) → 1.2, 4, 14.4.
        let x = [1.0, 2.0, 4.0, 8.0, 16.0];
        assert!((percentile_type7(&x, 0.05) - 1.2).abs() < 1e-12);
        assert_eq!(percentile_type7(&x, 0.5), 4.0);
        assert!((percentile_type7(&x, 0.95) - 14.4).abs() < 1e-12);
        // Derived analytically: mean 6.2, Σ(x − 6.2)² = 148.8, SD = √(148.8/4) = √37.2.
        assert!((summarise(&x).sd.unwrap() - 37.2f64.sqrt()).abs() < 1e-12);
    }
}
