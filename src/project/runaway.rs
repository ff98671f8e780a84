//! The physical-limit check of a projected stand (docs/scenario.md#limits): a growth model
//! that explodes, or a parameter draw far in its tail, must stop the run with a named error
//! instead of writing `inf`, NaN or blank cells or sizing diameter classes from a huge value.

use super::stand::Stand;
use crate::data::limits::{MAX_DBH_CM, MAX_STEMS_PER_HA};

/// A sentence naming the first diameter or density outside the limits, if any.
pub(super) fn find(stand: &Stand) -> Option<String> {
    if let Some(d) = stand
        .dbh
        .iter()
        .find(|d| !(d.is_finite() && **d <= MAX_DBH_CM))
    {
        return Some(format!("a diameter reached {d} cm (limit {MAX_DBH_CM} cm)"));
    }
    let total: f64 = stand.stems.iter().sum();
    if !(total.is_finite() && total <= MAX_STEMS_PER_HA) {
        return Some(format!(
            "the density reached {total} stems/ha (limit {MAX_STEMS_PER_HA})"
        ));
    }
    None
}
