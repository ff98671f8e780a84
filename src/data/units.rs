//! Units (interim minimal version; the full one lands from the data-layer work).

use serde::{Deserialize, Serialize};

/// Measurement system of diameters and per-area values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Units {
    /// cm, m²/ha, stems/ha.
    #[default]
    Metric,
    /// inches, ft²/acre, stems/acre.
    Imperial,
}

impl std::str::FromStr for Units {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "metric" => Ok(Units::Metric),
            "imperial" => Ok(Units::Imperial),
            _ => Err(format!("unknown units `{s}` (metric or imperial)")),
        }
    }
}
