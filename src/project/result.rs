//! What a projection returns: per-year summaries across replicates, diameter classes, the
//! expected driver's tree trajectories, settings and warnings.

use crate::scenario::InputFile;

/// Which driver produced a result.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Driver {
    /// Random replicates (`docs/maths.md#monte-carlo-driver`).
    MonteCarlo,
    /// The deterministic expected-value trajectory.
    Expected,
}

impl Driver {
    /// Name as written in `summary.csv`.
    pub fn name(self) -> &'static str {
        match self {
            Driver::MonteCarlo => "monte_carlo",
            Driver::Expected => "expected",
        }
    }
}

/// The stand metrics of `summary.csv`, in output order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Metric {
    /// Stems per hectare.
    StemsPerHa,
    /// Product over sub-steps of stems after model mortality ÷ stems at the start.
    CumulativeSurvival,
    /// Basal area, m²/ha.
    BasalArea,
    /// Quadratic mean diameter, cm (no value when no stems remain).
    Qmd,
    /// Reineke's stand density index (reference 25.4 cm).
    Sdi,
    /// Stems per hectare removed by management actions.
    Removed,
    /// Stems per hectare removed by a density limit.
    DensityLimit,
}

impl Metric {
    /// All metrics in output order.
    pub const ALL: [Metric; 7] = [
        Metric::StemsPerHa,
        Metric::CumulativeSurvival,
        Metric::BasalArea,
        Metric::Qmd,
        Metric::Sdi,
        Metric::Removed,
        Metric::DensityLimit,
    ];

    /// Name as written in `summary.csv`.
    pub fn name(self) -> &'static str {
        match self {
            Metric::StemsPerHa => "stems_per_ha",
            Metric::CumulativeSurvival => "cumulative_survival",
            Metric::BasalArea => "basal_area_m2_ha",
            Metric::Qmd => "qmd_cm",
            Metric::Sdi => "sdi",
            Metric::Removed => "removed_stems_per_ha",
            Metric::DensityLimit => "density_limit_stems_per_ha",
        }
    }
}

/// One metric in one year across replicates. `sd` and the percentiles are `None` for the
/// expected driver; everything is `None` when no replicate has a value (QMD without stems).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Summary {
    /// Mean over replicates with a value.
    pub mean: Option<f64>,
    /// Standard deviation (n − 1).
    pub sd: Option<f64>,
    /// 5th percentile (type 7).
    pub p05: Option<f64>,
    /// Median (type 7).
    pub p50: Option<f64>,
    /// 95th percentile (type 7).
    pub p95: Option<f64>,
}

/// All metrics at one output year.
#[derive(Debug, Clone, PartialEq)]
pub struct YearSummary {
    /// Years since the start.
    pub year: f64,
    /// Stand age, when the scenario gives `start_age_years`.
    pub age: Option<f64>,
    /// One summary per [`Metric::ALL`] entry.
    pub metrics: [Summary; 7],
    /// Replicates with no stems left at this year.
    pub extinct_replicates: usize,
}

impl YearSummary {
    /// The summary of `metric`.
    pub fn get(&self, metric: Metric) -> &Summary {
        let i = Metric::ALL.iter().position(|&m| m == metric).unwrap_or(0);
        &self.metrics[i]
    }
}

/// Stems per hectare in one DBH class [lower, lower + width) at one year.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClassRow {
    /// Years since the start.
    pub year: f64,
    /// Lower class bound, cm.
    pub lower_cm: f64,
    /// Mean stems per hectare.
    pub mean: f64,
    /// 5th percentile across replicates (Monte Carlo only).
    pub p05: Option<f64>,
    /// 95th percentile across replicates (Monte Carlo only).
    pub p95: Option<f64>,
}

/// One record of the expected driver at one output year.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeRow {
    /// Tree id.
    pub tree: String,
    /// Years since the start.
    pub year: f64,
    /// DBH, cm.
    pub dbh_cm: f64,
    /// Product of the record's survival probabilities so far (removals by thinning are not
    /// mortality).
    pub cumulative_survival: f64,
    /// Expected stems per hectare.
    pub stems_per_ha: f64,
}

/// What took trees out in a row of `harvest.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HarvestAction {
    /// The `thin` actions of that year together.
    Thin,
    /// The density limit in force at the end of that sub-step.
    DensityLimit,
}

impl HarvestAction {
    /// Name as written in `harvest.csv`.
    pub fn name(self) -> &'static str {
        match self {
            HarvestAction::Thin => "thin",
            HarvestAction::DensityLimit => "density_limit",
        }
    }
}

/// Stems and basal area removed by one kind of action at one year, across replicates. `sd`
/// and the percentiles are `None` for the expected driver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HarvestRow {
    /// Years since the start (a sub-step end; 0 for actions before the first sub-step).
    pub year: f64,
    /// What removed the trees.
    pub action: HarvestAction,
    /// Stems per hectare removed.
    pub stems_per_ha: Summary,
    /// Basal area removed, m²/ha.
    pub basal_area_m2_ha: Summary,
}

/// The settings a run used (written to `run.json`).
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// Replicates (1 for the expected driver).
    pub replicates: usize,
    /// Projection length, years.
    pub horizon_years: f64,
    /// Output interval, years.
    pub step_years: f64,
    /// Engine sub-step, years.
    pub sub_step_years: f64,
    /// Random mortality.
    pub process: bool,
    /// Coefficient draws.
    pub parameters: bool,
    /// Growth residuals.
    pub growth_residual: bool,
    /// Stand area for binomial survival.
    pub area_ha: Option<f64>,
    /// Stand age at year 0.
    pub start_age_years: Option<f64>,
    /// Width of the DBH classes, cm.
    pub class_width_cm: f64,
    /// Management actions, described in file order.
    pub actions: Vec<String>,
}

/// A finished projection.
#[derive(Debug, Clone, PartialEq)]
pub struct ProjectionResult {
    /// Scenario name.
    pub scenario: String,
    /// Stand id.
    pub stand: String,
    /// The driver.
    pub driver: Driver,
    /// The seed of the random draws.
    pub seed: u64,
    /// Settings used.
    pub settings: Settings,
    /// Summaries at year 0 and every step boundary.
    pub years: Vec<YearSummary>,
    /// DBH classes per year.
    pub classes: Vec<ClassRow>,
    /// Expected driver: every record at every output year (empty for Monte Carlo).
    pub trees: Vec<TreeRow>,
    /// Removals per action event: every year with a `thin` (even when it removed nothing),
    /// and every sub-step end at which the density limit removed stems in some replicate.
    pub harvest: Vec<HarvestRow>,
    /// Input files and their hashes.
    pub inputs: Vec<InputFile>,
    /// Warnings (extrapolation, replicates without stems).
    pub warnings: Vec<String>,
}
