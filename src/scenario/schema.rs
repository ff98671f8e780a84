//! The scenario file exactly as written (`docs/scenario.md`). Every table refuses unknown keys;
//! [`super::Scenario`] is the validated value built from it.

use std::collections::BTreeMap;

use serde::Deserialize;

/// The scenario file as parsed, before validation.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Scenario name, written to every output row.
    pub name: String,
    /// Length of the projection in years.
    pub horizon_years: f64,
    /// Output interval in years.
    pub step_years: f64,
    /// Monte Carlo replicates (default 1000). Signed so that a negative value gets a clear
    /// message rather than a type error.
    #[serde(default)]
    pub replicates: Option<i64>,
    /// Seed of the random draws (default 1).
    #[serde(default)]
    pub seed: Option<u64>,
    /// Stand age at year 0, to label outputs by age.
    #[serde(default)]
    pub start_age_years: Option<f64>,
    /// Model files, relative to the scenario file.
    pub models: ModelsSection,
    /// Which sources of uncertainty the Monte Carlo driver draws.
    #[serde(default)]
    pub uncertainty: UncertaintySection,
    /// The trees at year 0.
    pub cohort: CohortSection,
    /// Management actions, applied in file order.
    #[serde(default)]
    pub actions: Vec<ActionEntry>,
}

/// One `[[actions]]` entry: a year and exactly one of `thin`, `set` or `density_limit`.
///
/// `year` is 0 or a step boundary (a whole multiple of `step_years`) within the horizon. An
/// action applies at the end of the sub-step that ends at its year (year 0: before the first
/// sub-step), after mortality and growth; actions of one year apply in file order, then the
/// density limit in force. A `density_limit` stays in force from its year to the horizon (a
/// later one replaces it) and is applied at the end of every sub-step. Summaries of a year
/// are taken after its actions.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ActionEntry {
    /// Years since the start, on a step boundary (0 applies before the first sub-step).
    pub year: f64,
    /// Thin to a target.
    #[serde(default)]
    pub thin: Option<ThinEntry>,
    /// Set attributes of every tree.
    #[serde(default)]
    pub set: Option<BTreeMap<String, toml::Value>>,
    /// A maximum stand density index, in force from `year` on.
    #[serde(default)]
    pub density_limit: Option<DensityLimitEntry>,
    /// Remove every tree of the listed species.
    #[serde(default)]
    pub remove: Option<RemoveEntry>,
}

/// `remove = { species = ["RA"] }`: every tree of these species leaves.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RemoveEntry {
    /// Species codes, as in the species column.
    pub species: Vec<String>,
}

/// `thin = { from = "below", to_stems_per_ha = 700 }`: a method and exactly one target,
/// optionally restricted to some species (`species = ["RA"]`).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ThinEntry {
    /// Which trees go first.
    pub from: ThinFrom,
    /// Stems per hectare to keep at most.
    #[serde(default)]
    pub to_stems_per_ha: Option<f64>,
    /// Basal area (m²/ha) to keep at most.
    #[serde(default)]
    pub to_basal_area_m2_ha: Option<f64>,
    /// Fraction of the stems to remove, in (0, 1).
    #[serde(default)]
    pub remove_fraction: Option<f64>,
    /// Only trees of these species are thinned, and the target refers to them alone.
    #[serde(default)]
    pub species: Option<Vec<String>>,
}

/// `density_limit = { max_sdi = 900 }`.
#[derive(Debug, Clone, Copy, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DensityLimitEntry {
    /// Largest Reineke stand density index allowed (metric, reference QMD 25.4 cm).
    pub max_sdi: f64,
}

/// Which trees a thinning removes first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ThinFrom {
    /// Smallest diameters first.
    Below,
    /// Largest diameters first.
    Above,
    /// Evenly across the diameter distribution.
    Proportional,
}

/// `[models]`.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelsSection {
    /// Survival model file.
    pub survival: String,
    /// Growth model file.
    pub growth: String,
    /// The tree-list column (or cohort attribute) holding species codes (default `species`).
    #[serde(default)]
    pub species_column: Option<String>,
}

/// `[uncertainty]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UncertaintySection {
    /// Random mortality (default true).
    #[serde(default = "yes")]
    pub process: bool,
    /// Coefficient draws from the model covariance (default false).
    #[serde(default)]
    pub parameters: bool,
    /// Growth residuals (default true).
    #[serde(default = "yes")]
    pub growth_residual: bool,
}

fn yes() -> bool {
    true
}

impl Default for UncertaintySection {
    fn default() -> Self {
        UncertaintySection {
            process: true,
            parameters: false,
            growth_residual: true,
        }
    }
}

/// `[cohort]`: a generated cohort or a tree list.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CohortSection {
    /// Total stems per hectare of a generated cohort.
    #[serde(default)]
    pub stems_per_ha: Option<f64>,
    /// Number of records of a generated cohort.
    #[serde(default)]
    pub records: Option<i64>,
    /// DBH distribution of a generated cohort.
    #[serde(default)]
    pub dbh: Option<DbhDistribution>,
    /// Attributes given to every tree.
    #[serde(default)]
    pub attributes: BTreeMap<String, toml::Value>,
    /// Stand area the records represent (binomial survival of whole stems).
    #[serde(default)]
    pub area_ha: Option<f64>,
    /// A tree list CSV instead of a generated cohort.
    #[serde(default)]
    pub trees: Option<String>,
    /// Units of the tree list's diameters and expansion factors: `metric` (cm, stems/ha, the
    /// default) or `imperial` (inches, trees per acre); converted to metric on reading.
    #[serde(default)]
    pub units: Option<String>,
    /// The tree list's column names where they differ from `stand`, `tree`, `dbh`, `expansion`.
    #[serde(default)]
    pub columns: Option<TreeColumns>,
    /// `[[cohort.components]]`: a generated cohort of several species, one part each.
    #[serde(default)]
    pub components: Vec<CohortComponent>,
}

/// `[cohort.columns]`: the names of a tree list's role columns.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TreeColumns {
    /// The stand (plot) id column.
    pub stand: Option<String>,
    /// The tree id column.
    pub tree: Option<String>,
    /// The diameter column.
    pub dbh: Option<String>,
    /// The expansion-factor column (stems per hectare, or trees per acre with imperial units).
    pub expansion: Option<String>,
}

/// One `[[cohort.components]]` entry: the trees of one species in a generated mixed cohort.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CohortComponent {
    /// Species code, given to every tree of the component in the species column.
    pub species: String,
    /// Stems per hectare of this component.
    pub stems_per_ha: f64,
    /// Number of records of this component.
    pub records: i64,
    /// DBH distribution of this component.
    pub dbh: DbhDistribution,
}

/// A DBH distribution (cm) for a generated cohort.
#[derive(Debug, Clone, Copy, PartialEq, Deserialize)]
#[serde(tag = "distribution", rename_all = "lowercase", deny_unknown_fields)]
pub enum DbhDistribution {
    /// ln DBH ~ N(ln median, ln gsd).
    Lognormal {
        /// Median DBH (cm).
        median: f64,
        /// Geometric standard deviation (> 1).
        gsd: f64,
    },
    /// DBH ~ N(mean, sd).
    Normal {
        /// Mean DBH (cm).
        mean: f64,
        /// Standard deviation (cm).
        sd: f64,
    },
    /// Two- or three-parameter Weibull.
    Weibull {
        /// Shape.
        shape: f64,
        /// Scale (cm).
        scale: f64,
        /// Location (cm), default 0.
        #[serde(default)]
        location: f64,
    },
    /// DBH ~ U(min, max).
    Uniform {
        /// Lower bound (cm).
        min: f64,
        /// Upper bound (cm).
        max: f64,
    },
    /// Every tree has the same DBH.
    Fixed {
        /// The DBH (cm).
        value: f64,
    },
}

/// The dotted key path at a byte offset of a TOML text: the innermost `[table]` header
/// before it plus the key on its line (best effort; used in error messages).
pub fn key_path_at(text: &str, offset: usize) -> String {
    let offset = offset.min(text.len());
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line_no = text[..offset].matches('\n').count() + 1;
    let mut table = String::new();
    // `[[name]]` opens the next element of an array of tables: name it `name[k]`.
    let mut arrays: BTreeMap<String, usize> = BTreeMap::new();
    for line in text[..line_start].lines() {
        let t = line.trim();
        if t.starts_with('[') {
            let name = t.trim_matches(|c| c == '[' || c == ']').trim().to_string();
            table = if t.starts_with("[[") {
                let k = arrays.entry(name.clone()).or_insert(0);
                *k += 1;
                format!("{name}[{}]", *k - 1)
            } else {
                name
            };
        }
    }
    let line = text[line_start..].lines().next().unwrap_or("");
    // Inside an inline table, the key is the last `name =` before the offset.
    let before = &text[line_start..offset];
    let key_of = |s: &str| -> Option<String> {
        let s = s.split('=').next()?.trim();
        let s = s.rsplit(['{', ',']).next()?.trim();
        (!s.is_empty() && !s.starts_with('[')).then(|| s.trim_matches('"').to_string())
    };
    let mut key = key_of(line).unwrap_or_default();
    if let Some(brace) = before.rfind('{') {
        let outer = key.clone();
        let inner = before[brace + 1..]
            .rsplit(',')
            .next()
            .and_then(key_of)
            .or_else(|| {
                let rest = &text[offset..];
                key_of(rest.split([',', '}']).next().unwrap_or(""))
            });
        if let Some(inner) = inner {
            key = format!("{outer}.{inner}");
        }
    }
    let path = match (table.is_empty(), key.is_empty()) {
        (true, _) => key,
        (false, true) => table,
        (false, false) => format!("{table}.{key}"),
    };
    if path.is_empty() {
        format!("line {line_no}")
    } else {
        format!("{path} (line {line_no})")
    }
}
