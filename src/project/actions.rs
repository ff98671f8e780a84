//! Management actions applied to a stand at the end of a sub-step
//! (`docs/maths.md#management-actions`, `docs/scenario.md#actions`): thinning from
//! below, from above or proportionally to a target, the density limit, and setting attributes.
//!
//! Diameter order is ascending (descending for thinning from above) with ties broken by tree
//! id ([`tie_ranks`]). Two rules, one per driver:
//! - whole records (Monte Carlo with process noise): records leave whole, in diameter order,
//!   until the target is met (stems, basal area or SDI at or below it). A proportional thinning
//!   instead walks the records in ascending diameter order and removes a record when the
//!   quantity owed so far, `f · (quantity up to and including it) − quantity already removed`,
//!   reaches half of its own quantity (error diffusion). With equal records that removes every
//!   k-th record for f = 1/k, and the total removed is as close to `f` as whole records allow.
//! - exact weights (expected driver, or Monte Carlo without process noise): weight leaves in
//!   the same order and the boundary record is split exactly; proportional multiplies every
//!   weight by (1 − f).

use super::stand::{Stand, M2_PER_CM2};
use crate::scenario::{SetValue, ThinFrom, ThinTarget, TreeList};

/// Relative slack when comparing a running total with its target, so that rounding in the
/// running sums neither removes an extra record nor leaves a record that meets the target.
const TARGET_RTOL: f64 = 1e-12;

use crate::data::{Units, REINEKE_EXPONENT};

/// Stems and basal area taken out by one action.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct Removal {
    /// Stems per hectare.
    pub stems: f64,
    /// Basal area, m²/ha.
    pub basal_area_m2_ha: f64,
}

impl Removal {
    fn take(&mut self, stems: f64, dbh_cm: f64) {
        self.stems += stems;
        self.basal_area_m2_ha += stems * dbh_cm * dbh_cm * M2_PER_CM2;
    }

    /// Add another removal.
    pub fn add(&mut self, other: Removal) {
        self.stems += other.stems;
        self.basal_area_m2_ha += other.basal_area_m2_ha;
    }
}

/// Rank of every record's tree id (indexed by record): ids compare as whole numbers when all of
/// them are, otherwise in byte order. Used to break diameter ties.
pub(crate) fn tie_ranks(trees: &TreeList) -> Vec<u32> {
    let numbers: Option<Vec<u64>> = trees.tree_ids.iter().map(|t| t.parse().ok()).collect();
    let mut order: Vec<usize> = (0..trees.len()).collect();
    match numbers {
        Some(n) => order.sort_by_key(|&i| n[i]),
        None => order.sort_by(|&a, &b| trees.tree_ids[a].cmp(&trees.tree_ids[b])),
    }
    let mut rank = vec![0; trees.len()];
    for (r, i) in order.into_iter().enumerate() {
        rank[i] = r as u32;
    }
    rank
}

/// Positions of the live records in ascending (or descending) DBH order, ties by tree id.
/// The stand is kept in descending DBH order, so only runs of equal diameters need sorting.
fn diameter_order(stand: &Stand, ascending: bool, ranks: &[u32]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..stand.len()).filter(|&i| stand.stems[i] > 0.0).collect();
    if ascending {
        order.reverse();
    }
    let mut start = 0;
    while start < order.len() {
        let d = stand.dbh[order[start]];
        let end = start
            + order[start..]
                .iter()
                .take_while(|&&i| stand.dbh[i] == d)
                .count();
        if end - start > 1 {
            order[start..end].sort_by_key(|&i| ranks[stand.tree[i] as usize]);
        }
        start = end;
    }
    order
}

/// Thin `stand` towards `target`; see the module notes for the two rules.
pub(crate) fn thin(
    stand: &mut Stand,
    from: ThinFrom,
    target: ThinTarget,
    ranks: &[u32],
    whole_records: bool,
) -> Removal {
    let t = stand.totals();
    // The quantity the target is in, per stem of record i: 1 (stems) or its basal area.
    let (per_stem_is_ba, total, goal) = match target {
        ThinTarget::StemsPerHa(n) => (false, t.stems, n),
        ThinTarget::BasalAreaM2Ha(g) => (true, t.ba, g),
        ThinTarget::RemoveFraction(f) => (false, t.stems, (1.0 - f) * t.stems),
    };
    if total <= goal * (1.0 + TARGET_RTOL) || total <= 0.0 {
        return Removal::default();
    }
    let unit = |d: f64| {
        if per_stem_is_ba {
            d * d * M2_PER_CM2
        } else {
            1.0
        }
    };
    let mut removed = Removal::default();
    if from == ThinFrom::Proportional {
        let f = 1.0 - goal / total;
        if !whole_records {
            for (e, &d) in stand.stems.iter_mut().zip(&stand.dbh) {
                removed.take(*e * f, d);
                *e *= 1.0 - f;
            }
            return removed;
        }
        let mut owed = 0.0;
        for i in diameter_order(stand, true, ranks) {
            let q = stand.stems[i] * unit(stand.dbh[i]);
            owed += f * q;
            if owed >= 0.5 * q * (1.0 - TARGET_RTOL) {
                owed -= q;
                removed.take(stand.stems[i], stand.dbh[i]);
                stand.stems[i] = 0.0;
            }
        }
    } else {
        let mut left = total;
        for i in diameter_order(stand, from == ThinFrom::Below, ranks) {
            if left <= goal * (1.0 + TARGET_RTOL) {
                break;
            }
            let (e, d) = (stand.stems[i], stand.dbh[i]);
            let take = if whole_records {
                e
            } else {
                e.min((left - goal) / unit(d))
            };
            stand.stems[i] = e - take;
            left -= take * unit(d);
            removed.take(take, d);
        }
    }
    if whole_records {
        stand.compact();
    }
    removed
}

/// Reineke's SDI from stems N and Σ e·d² (cm²): `N·(√(S/N)/25.4)^1.605`; 0 without stems.
fn sdi(stems: f64, sum_sq: f64) -> f64 {
    if stems <= 0.0 {
        return 0.0;
    }
    crate::data::reineke_sdi(stems, (sum_sq / stems).sqrt(), Units::Metric)
}

/// Let the smallest trees die until the stand's SDI is at most `max_sdi`: whole records, or
/// (exact weights) the boundary record's weight solved so that SDI equals the limit.
///
/// # Formula
/// With `b = 1.605/2`, `SDI = N^(1−b)·S^b / 25.4^1.605` where `S = Σ e·d²`; removing weight `w`
/// of diameter `d` gives `N − w` and `S − w·d²`, so SDI falls with every stem removed. The
/// boundary weight solves `(1−b)·ln(N − w) + b·ln(S − w·d²) = ln(max_sdi·25.4^1.605)` by
/// Newton's method safeguarded with bisection on `[0, e]`.
pub(crate) fn density_limit(
    stand: &mut Stand,
    max_sdi: f64,
    ranks: &[u32],
    whole_records: bool,
) -> Removal {
    let t = stand.totals();
    let (mut n, mut s) = (t.stems, t.ba / M2_PER_CM2);
    let mut removed = Removal::default();
    if sdi(n, s) <= max_sdi * (1.0 + TARGET_RTOL) {
        return removed;
    }
    for i in diameter_order(stand, true, ranks) {
        let (e, d) = (stand.stems[i], stand.dbh[i]);
        let (n_after, s_after) = (n - e, s - e * d * d);
        let take = if whole_records || sdi(n_after, s_after) >= max_sdi {
            e
        } else {
            boundary_weight(n, s, e, d, max_sdi)
        };
        stand.stems[i] = e - take;
        n -= take;
        s -= take * d * d;
        removed.take(take, d);
        if sdi(n, s) <= max_sdi * (1.0 + TARGET_RTOL) {
            break;
        }
    }
    if whole_records {
        stand.compact();
    }
    removed
}

/// The weight `w ∈ (0, e)` of diameter `d` whose removal from (N, S) leaves SDI = `max_sdi`.
fn boundary_weight(n: f64, s: f64, e: f64, d: f64, max_sdi: f64) -> f64 {
    let b = REINEKE_EXPONENT / 2.0;
    let a = 1.0 - b;
    let goal = (max_sdi
        * Units::Metric
            .sdi_reference_diameter()
            .powf(REINEKE_EXPONENT))
    .ln();
    let d2 = d * d;
    // φ(w) = a·ln(N − w) + b·ln(S − w·d²) − goal, decreasing in w; φ(0) > 0 > φ(e).
    let phi = |w: f64| a * (n - w).ln() + b * (s - w * d2).ln() - goal;
    let slope = |w: f64| -a / (n - w) - b * d2 / (s - w * d2);
    let (mut lo, mut hi) = (0.0, e);
    let mut w = 0.0;
    for _ in 0..200 {
        let v = phi(w);
        if v == 0.0 {
            break;
        }
        if v > 0.0 {
            lo = w;
        } else {
            hi = w;
        }
        let newton = w - v / slope(w);
        let next = if newton > lo && newton < hi {
            newton
        } else {
            0.5 * (lo + hi)
        };
        let done = (next - w).abs() <= 4.0 * f64::EPSILON * e;
        w = next;
        if done {
            break;
        }
    }
    w.clamp(0.0, e)
}

/// Give every tree the values of a `set` action.
pub(crate) fn set(values: &[SetValue], numeric: &mut [Vec<f64>], codes: &mut [Vec<u32>]) {
    for v in values {
        match *v {
            SetValue::Number { column, value } => numeric[column].fill(value),
            SetValue::Level { column, code } => codes[column].fill(code),
        }
    }
}
