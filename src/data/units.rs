//! Measurement units: metric (cm, per hectare) or imperial (inches, per acre), with the
//! constants that depend on them.

use std::fmt;
use std::str::FromStr;

/// The units of diameters and per-area values in a data file, a model or an output.
///
/// Metric: diameters in cm, expansion factors in stems per hectare, basal area in m²/ha.
/// Imperial: diameters in inches, stems per acre, basal area in ft²/acre.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Units {
    /// cm, m², per hectare.
    #[default]
    Metric,
    /// inches, ft², per acre.
    Imperial,
}

/// cm per inch (exact).
pub const CM_PER_INCH: f64 = 2.54;
/// Hectares per acre (exact from the definition of the acre and the inch).
pub const HA_PER_ACRE: f64 = 0.404_685_642_24;
/// Reineke's exponent of the stand density index (Reineke 1933).
pub const REINEKE_EXPONENT: f64 = 1.605;

impl Units {
    /// Basal area of one tree per squared diameter unit.
    ///
    /// # Formula
    /// Metric: g = π/40000 · d² m² (d in cm). Imperial: g = π/576 · d² ≈ 0.005454154 · d² ft²
    /// (d in inches).
    pub fn basal_area_constant(self) -> f64 {
        match self {
            Units::Metric => std::f64::consts::PI / 40_000.0,
            Units::Imperial => std::f64::consts::PI / 576.0,
        }
    }

    /// Basal area of one tree of diameter `dbh` (m² or ft²).
    pub fn tree_basal_area(self, dbh: f64) -> f64 {
        self.basal_area_constant() * dbh * dbh
    }

    /// The reference diameter of Reineke's stand density index: 25.4 cm or 10 in.
    pub fn sdi_reference_diameter(self) -> f64 {
        match self {
            Units::Metric => 25.4,
            Units::Imperial => 10.0,
        }
    }

    /// Centimetres per diameter unit (1 or 2.54), to convert diameters to cm.
    pub fn cm_per_diameter_unit(self) -> f64 {
        match self {
            Units::Metric => 1.0,
            Units::Imperial => CM_PER_INCH,
        }
    }

    /// Hectares per area unit (1 or 0.40468564…); a per-area value divided by this is per
    /// hectare.
    pub fn ha_per_area_unit(self) -> f64 {
        match self {
            Units::Metric => 1.0,
            Units::Imperial => HA_PER_ACRE,
        }
    }

    /// Suffix of diameter output names: `_cm` or `_in`.
    pub fn diameter_suffix(self) -> &'static str {
        match self {
            Units::Metric => "_cm",
            Units::Imperial => "_in",
        }
    }

    /// Suffix of basal-area output names: `_m2_ha` or `_ft2_ac`.
    pub fn basal_area_suffix(self) -> &'static str {
        match self {
            Units::Metric => "_m2_ha",
            Units::Imperial => "_ft2_ac",
        }
    }

    /// Name of the stand density output: `stems_per_ha` or `stems_per_ac`.
    pub fn stems_name(self) -> &'static str {
        match self {
            Units::Metric => "stems_per_ha",
            Units::Imperial => "stems_per_ac",
        }
    }

    /// Suffix of per-area counts: `_per_ha` or `_per_ac`.
    pub fn per_area_suffix(self) -> &'static str {
        match self {
            Units::Metric => "_per_ha",
            Units::Imperial => "_per_ac",
        }
    }

    /// The lowercase name used in files and on the command line.
    pub fn as_str(self) -> &'static str {
        match self {
            Units::Metric => "metric",
            Units::Imperial => "imperial",
        }
    }
}

impl fmt::Display for Units {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The error of parsing a [`Units`] name.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown units \"{0}\"; use metric or imperial")]
pub struct UnknownUnits(pub String);

impl FromStr for Units {
    type Err = UnknownUnits;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "metric" => Ok(Units::Metric),
            "imperial" => Ok(Units::Imperial),
            _ => Err(UnknownUnits(s.to_string())),
        }
    }
}

/// Reineke's stand density index from stems per area and quadratic mean diameter.
///
/// # Formula
/// SDI = N · (QMD / D₀)^1.605 with D₀ = 25.4 cm (metric) or 10 in (imperial) (Reineke 1933).
///
/// # Examples
/// ```
/// use stemcast::data::{reineke_sdi, Units};
/// let sdi = reineke_sdi(200.0, 12.3, Units::Imperial);
/// assert!((sdi - 278.822).abs() < 1e-3);
/// ```
pub fn reineke_sdi(stems: f64, qmd: f64, units: Units) -> f64 {
    stems * (qmd / units.sdi_reference_diameter()).powf(REINEKE_EXPONENT)
}

/// Quadratic mean diameter from stand basal area and stems per area unit.
///
/// # Formula
/// QMD = √(G / (k·N)) with k the basal-area constant of [`Units::basal_area_constant`].
///
/// # Examples
/// ```
/// use stemcast::data::{qmd_from_basal_area, Units};
/// assert!((qmd_from_basal_area(80.0, 200.0, Units::Imperial) - 8.56).abs() < 0.005);
/// ```
pub fn qmd_from_basal_area(basal_area: f64, stems: f64, units: Units) -> f64 {
    (basal_area / (units.basal_area_constant() * stems)).sqrt()
}
