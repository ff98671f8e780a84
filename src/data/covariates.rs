//! Per-stand derived covariates: basal area, basal area in larger trees, quadratic mean
//! diameter, relative diameter and stem density.

use std::fmt;
use std::str::FromStr;

use super::units::Units;

/// A covariate computed per stand from the tree list rather than read from a column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum DerivedCovariate {
    /// Stand basal area per area unit (m²/ha or ft²/acre).
    Ba,
    /// Basal area per area unit of the trees strictly larger than this one.
    Bal,
    /// Quadratic mean diameter of the stand (cm or in).
    Qmd,
    /// This tree's diameter divided by the stand's quadratic mean diameter.
    RelDbh,
    /// Stems per area unit.
    Stems,
}

impl DerivedCovariate {
    /// Every derived covariate, in a fixed order.
    pub const ALL: [DerivedCovariate; 5] = [
        DerivedCovariate::Ba,
        DerivedCovariate::Bal,
        DerivedCovariate::Qmd,
        DerivedCovariate::RelDbh,
        DerivedCovariate::Stems,
    ];

    /// The name used in terms and frames: `ba`, `bal`, `qmd`, `rel_dbh`, `stems`.
    pub fn name(self) -> &'static str {
        match self {
            DerivedCovariate::Ba => "ba",
            DerivedCovariate::Bal => "bal",
            DerivedCovariate::Qmd => "qmd",
            DerivedCovariate::RelDbh => "rel_dbh",
            DerivedCovariate::Stems => "stems",
        }
    }

    /// The derived covariate called `name`, if any.
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|d| d.name() == name)
    }

    /// True for covariates that are zero for some trees (the largest tree's `bal`) or for an
    /// empty stand, so `ln(x)` and negative powers of them are not defined.
    pub fn can_be_zero(self) -> bool {
        matches!(
            self,
            DerivedCovariate::Ba | DerivedCovariate::Bal | DerivedCovariate::Stems
        )
    }
}

impl fmt::Display for DerivedCovariate {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for DerivedCovariate {
    type Err = String;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Self::from_name(s.trim()).ok_or_else(|| {
            format!("\"{s}\" is not a derived covariate; use ba, bal, qmd, rel_dbh or stems")
        })
    }
}

/// The derived covariates of one stand. Per-tree values are in the order of the input slices.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StandCovariates {
    /// Stand basal area per area unit (m²/ha or ft²/acre).
    pub ba: f64,
    /// Quadratic mean diameter (cm or in); `NaN` when the stand has no stems.
    pub qmd: f64,
    /// Stems per area unit (the sum of the expansion factors).
    pub stems: f64,
    /// Basal area per area unit in trees with a strictly larger diameter, per tree.
    pub bal: Vec<f64>,
    /// Diameter divided by the quadratic mean diameter, per tree (`NaN` without stems).
    pub rel_dbh: Vec<f64>,
    /// Scratch: tree indices sorted by decreasing diameter (kept to avoid reallocation).
    order: Vec<u32>,
}

impl StandCovariates {
    /// The value of a stand-level covariate, or the per-tree value for tree `i`.
    pub fn value(&self, which: DerivedCovariate, i: usize) -> f64 {
        match which {
            DerivedCovariate::Ba => self.ba,
            DerivedCovariate::Bal => self.bal[i],
            DerivedCovariate::Qmd => self.qmd,
            DerivedCovariate::RelDbh => self.rel_dbh[i],
            DerivedCovariate::Stems => self.stems,
        }
    }

    /// Recompute in place for a new set of trees, reusing the buffers (for projection loops).
    /// Same contract as [`stand_covariates`].
    ///
    /// # Panics
    /// When `dbh` and `expansion` have different lengths.
    pub fn compute_into(&mut self, dbh: &[f64], expansion: &[f64], units: Units) {
        assert_eq!(dbh.len(), expansion.len(), "dbh and expansion lengths");
        let n = dbh.len();
        let k = units.basal_area_constant();
        let mut sum_d2 = 0.0;
        let mut stems = 0.0;
        for (&d, &e) in dbh.iter().zip(expansion) {
            sum_d2 += e * d * d;
            stems += e;
        }
        self.stems = stems;
        self.ba = k * sum_d2;
        self.qmd = if stems > 0.0 {
            (sum_d2 / stems).sqrt()
        } else {
            f64::NAN
        };

        // BAL: walk the trees from the largest down; a group of equal diameters gets the basal
        // area accumulated before the group, so equal diameters do not count as larger.
        self.order.clear();
        self.order.extend(0..n as u32);
        self.order
            .sort_unstable_by(|&a, &b| dbh[b as usize].total_cmp(&dbh[a as usize]));
        self.bal.clear();
        self.bal.resize(n, 0.0);
        let mut larger = 0.0;
        let mut start = 0;
        while start < n {
            let d = dbh[self.order[start] as usize];
            let mut end = start;
            let mut group = 0.0;
            while end < n && dbh[self.order[end] as usize] == d {
                let i = self.order[end] as usize;
                self.bal[i] = larger;
                group += expansion[i] * d * d;
                end += 1;
            }
            larger += k * group;
            start = end;
        }

        self.rel_dbh.clear();
        let qmd = self.qmd;
        self.rel_dbh.extend(dbh.iter().map(|&d| d / qmd));
    }
}

/// Derived covariates of one stand from its trees' diameters and expansion factors (stems per
/// area unit each tree represents). Pure; O(n log n).
///
/// # Formula
/// With g(d) = k·d² (k = π/40000 metric, π/576 imperial):
/// stems = Σ eᵢ; ba = Σ eᵢ g(dᵢ); qmd = √(Σ eᵢ dᵢ² / Σ eᵢ); rel_dbhᵢ = dᵢ / qmd;
/// balᵢ = Σ_{j : dⱼ > dᵢ} eⱼ g(dⱼ) (strictly larger; equal diameters are not larger).
///
/// # Examples
/// ```
/// use stemcast::data::{stand_covariates, Units};
/// let c = stand_covariates(&[10.0, 20.0, 30.0], &[100.0; 3], Units::Metric);
/// assert!((c.ba - 10.99557).abs() < 1e-5);
/// assert!((c.bal[0] - 10.21018).abs() < 1e-5);
/// assert_eq!(c.bal[2], 0.0);
/// ```
///
/// # Panics
/// When `dbh` and `expansion` have different lengths.
pub fn stand_covariates(dbh: &[f64], expansion: &[f64], units: Units) -> StandCovariates {
    let mut out = StandCovariates::default();
    out.compute_into(dbh, expansion, units);
    out
}
