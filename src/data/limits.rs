//! Physical and size limits on inputs (docs/scenario.md#limits): values beyond them are not
//! measurements but typing or unit errors, and they would overflow counts or allocations.

/// Largest plausible diameter at breast height, cm (the largest living stems measure about
/// 11 m in girth, under 4 m in diameter; 1,000 cm leaves room for any unit slip to be caught
/// while no real tree is refused).
pub const MAX_DBH_CM: f64 = 1000.0;

/// Largest plausible expansion factor, stems per hectare (100 stems on every square metre).
pub const MAX_STEMS_PER_HA: f64 = 1.0e6;

/// Largest stand area, ha (`cohort.area_ha`).
pub const MAX_AREA_HA: f64 = 1.0e6;

/// Most Monte Carlo replicates a scenario or `--replicates` may ask for.
pub const MAX_REPLICATES: u64 = 1_000_000;

/// Most model sub-steps over the horizon (horizon ÷ shortest model period).
pub const MAX_SUB_STEPS: f64 = 100_000.0;

/// Memory the per-replicate traces of one projection may take, bytes (4 GiB).
pub const MEMORY_BUDGET_BYTES: f64 = 4.0 * 1024.0 * 1024.0 * 1024.0;

/// Diameter classes per output year at most: 0 to [`MAX_DBH_CM`] in 5 cm classes.
pub const MAX_CLASSES: f64 = 201.0;

/// The bytes one projection's traces take (replicates × output years × classes × 8), and an
/// error sentence when that is above [`MEMORY_BUDGET_BYTES`] or the replicates above
/// [`MAX_REPLICATES`].
pub fn check_run_size(replicates: u64, output_years: u64) -> Result<f64, String> {
    if replicates > MAX_REPLICATES {
        return Err(format!(
            "{replicates} replicates is more than the limit of {MAX_REPLICATES}"
        ));
    }
    let bytes = replicates as f64 * output_years as f64 * MAX_CLASSES * 8.0;
    if bytes > MEMORY_BUDGET_BYTES {
        return Err(format!(
            "{replicates} replicates × {output_years} output years × {MAX_CLASSES} diameter classes × 8 bytes = {:.1} GiB, above the memory budget of {:.0} GiB; use fewer replicates or a longer step",
            bytes / 1024f64.powi(3),
            MEMORY_BUDGET_BYTES / 1024f64.powi(3)
        ));
    }
    Ok(bytes)
}
