//! The events of `harvest.csv`: which sub-step ends can remove trees, and their summaries
//! across replicates.

use super::result::{HarvestAction, HarvestRow, Summary};
use super::summary::{summarise, Trace};
use crate::scenario::{ActionKind, Scenario};

/// The removal events of a run, in time order (thinning before the density limit at the same
/// sub-step end), each with a slot in [`Trace::harvest`].
#[derive(Debug, Clone, Default)]
pub(crate) struct HarvestPlan {
    /// (sub-step end, year, action) per slot.
    events: Vec<(u64, f64, HarvestAction)>,
}

impl HarvestPlan {
    /// Events of `s` over `sub_steps` sub-steps: each sub-step end (0 = before the first) with a
    /// thinning, and every sub-step end from the first density limit on.
    pub fn of(s: &Scenario, sub_steps: u64) -> HarvestPlan {
        let first_limit = s
            .actions
            .iter()
            .filter(|a| matches!(a.kind, ActionKind::DensityLimit { .. }))
            .map(|a| a.at)
            .min();
        let mut events = Vec::new();
        for at in 0..=sub_steps {
            let year = at as f64 * s.sub_step_years;
            if s.actions.iter().any(|a| {
                a.at == at && matches!(a.kind, ActionKind::Thin { .. } | ActionKind::Remove(_))
            }) {
                events.push((at, year, HarvestAction::Thin));
            }
            if first_limit.is_some_and(|f| at >= f) {
                events.push((at, year, HarvestAction::DensityLimit));
            }
        }
        HarvestPlan { events }
    }

    /// Number of slots.
    pub fn len(&self) -> usize {
        self.events.len()
    }

    /// The slot of `action` at sub-step end `at`, if it is an event.
    pub fn slot(&self, at: u64, action: HarvestAction) -> Option<usize> {
        // Events are sorted by `at`, at most two per sub-step end.
        let start = self.events.partition_point(|e| e.0 < at);
        self.events[start..]
            .iter()
            .take_while(|e| e.0 == at)
            .position(|e| e.2 == action)
            .map(|k| start + k)
    }

    /// One row per thinning year and per sub-step end at which the density limit removed
    /// stems in some replicate; `random` keeps SD and percentiles.
    pub fn rows(&self, traces: &[Trace], random: bool) -> Vec<HarvestRow> {
        let keep = |s: Summary| {
            if random {
                s
            } else {
                Summary {
                    mean: s.mean,
                    ..Summary::default()
                }
            }
        };
        let mut out = Vec::new();
        let mut column = Vec::with_capacity(traces.len());
        for (slot, &(_, year, action)) in self.events.iter().enumerate() {
            let mut of = |k: usize| {
                column.clear();
                column.extend(traces.iter().map(|t| t.harvest[slot][k]));
                (keep(summarise(&column)), column.iter().any(|&v| v > 0.0))
            };
            let (stems_per_ha, any) = of(0);
            if action == HarvestAction::DensityLimit && !any {
                continue;
            }
            let (basal_area_m2_ha, _) = of(1);
            out.push(HarvestRow {
                year,
                action,
                stems_per_ha,
                basal_area_m2_ha,
            });
        }
        out
    }
}
