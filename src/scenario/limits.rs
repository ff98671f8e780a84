//! Size limits of a scenario (docs/scenario.md#limits), checked before anything is allocated
//! or looped over: sub-steps over the horizon, replicates against the memory budget, and the
//! stand area.

use super::schema::ScenarioFile;
use super::ScenarioError;
use crate::data::limits::{check_run_size, MAX_AREA_HA, MAX_SUB_STEPS};

/// Refuse a scenario whose horizon needs more than [`MAX_SUB_STEPS`] sub-steps of
/// `sub_step_years`, whose replicates break the memory budget, or whose `cohort.area_ha` is
/// above [`MAX_AREA_HA`].
pub(super) fn check(
    raw: &ScenarioFile,
    sub_step_years: f64,
    replicates: usize,
    err: &dyn Fn(&str, String) -> ScenarioError,
) -> Result<(), ScenarioError> {
    let sub_steps = raw.horizon_years / sub_step_years;
    if sub_steps.is_nan() || sub_steps > MAX_SUB_STEPS {
        return Err(err(
            "horizon_years",
            format!(
                "{} years in sub-steps of {sub_step_years} years (the shortest model period) is {sub_steps:.3e} sub-steps, more than the limit of {MAX_SUB_STEPS}",
                raw.horizon_years
            ),
        ));
    }
    let output_years = (raw.horizon_years / raw.step_years).round() as u64 + 1;
    check_run_size(replicates as u64, output_years).map_err(|m| err("replicates", m))?;
    if let Some(a) = raw.cohort.area_ha.filter(|a| *a > MAX_AREA_HA) {
        return Err(err(
            "cohort.area_ha",
            format!("{a} ha is above the limit of {MAX_AREA_HA} ha"),
        ));
    }
    Ok(())
}
