//! Species-restricted actions (`docs/scenario.md#species`): a thinning that sees only the trees
//! of some species, and the removal of every tree of some species.
//!
//! A restricted thinning runs the ordinary thinning ([`super::actions::thin`]) on the stand
//! made of the selected records alone, in the same order, so its targets (stems, basal area,
//! fraction) count the selected species only; the thinned weights are then written back and
//! the other species are untouched.

use super::actions::{thin, Removal};
use super::stand::{Stand, M2_PER_CM2};
use crate::scenario::{ThinFrom, ThinTarget};

/// Thin only the records whose tree-list record is flagged in `only` (indexed by record).
pub(crate) fn thin_only(
    stand: &mut Stand,
    only: &[bool],
    from: ThinFrom,
    target: ThinTarget,
    ranks: &[u32],
    whole_records: bool,
) -> Removal {
    let picked: Vec<usize> = (0..stand.len())
        .filter(|&i| only[stand.tree[i] as usize])
        .collect();
    if picked.is_empty() {
        return Removal::default();
    }
    let mut part = Stand::default();
    part.dbh = picked.iter().map(|&i| stand.dbh[i]).collect();
    part.stems = picked.iter().map(|&i| stand.stems[i]).collect();
    part.tree = picked.iter().map(|&i| stand.tree[i]).collect();
    part.bal = vec![0.0; picked.len()];
    let removed = thin(&mut part, from, target, ranks, whole_records);
    // Whole records leave `part` compacted (order kept): walk both lists together.
    let mut k = 0;
    for &i in &picked {
        if k < part.len() && part.tree[k] == stand.tree[i] {
            stand.stems[i] = part.stems[k];
            k += 1;
        } else {
            stand.stems[i] = 0.0;
        }
    }
    if whole_records {
        stand.compact();
    }
    removed
}

/// Remove every record flagged in `only` (indexed by record), whatever the driver. As in a
/// thinning, whole records leave the stand and exact weights stay as records of no stems.
pub(crate) fn remove(stand: &mut Stand, only: &[bool], whole_records: bool) -> Removal {
    let mut removed = Removal::default();
    for i in 0..stand.len() {
        if only[stand.tree[i] as usize] {
            let (e, d) = (stand.stems[i], stand.dbh[i]);
            removed.stems += e;
            removed.basal_area_m2_ha += e * d * d * M2_PER_CM2;
            stand.stems[i] = 0.0;
        }
    }
    if whole_records && removed.stems > 0.0 {
        stand.compact();
    }
    removed
}
