//! The walk over each tree's measurements that [`History::pair`] makes: one interval per
//! tree alive at a measurement that is not its plot's last, new trees, ingrowth, trees alive
//! again after their death, and trees missing at a remeasurement (docs/histories.md,
//! "Pairing").

use super::history::{History, MissingAs};
use super::pairing::{Fate, NewTree, PairingCounts, Reappearance};
use super::status::Status;

/// The walk over each tree's measurements.
pub(super) struct Walk<'a> {
    pub(super) history: &'a History,
    pub(super) occ: &'a [u32],
    pub(super) occ_start: &'a [usize],
    pub(super) threshold: f64,
    /// (anchor row, next row, fate).
    pub(super) records: Vec<(usize, Option<usize>, Fate)>,
    pub(super) new_trees: Vec<NewTree>,
    pub(super) reappearances: Vec<Reappearance>,
    /// (row alive, occasion without a record).
    pub(super) missing: Vec<(usize, usize)>,
    pub(super) counts: PairingCounts,
}

impl Walk<'_> {
    /// One tree's rows in time order.
    pub(super) fn tree(&mut self, rows: &[usize]) {
        let h = self.history;
        // The interval whose fate ended the tree: (anchor, death row).
        let mut ended: Option<(usize, Option<usize>)> = None;
        for (j, &r) in rows.iter().enumerate() {
            let o = self.occ[r] as usize;
            let p = h.plot[r] as usize;
            let alive = h.status[r] == Status::Alive;
            if j == 0 && o > self.occ_start[p] {
                // First recorded at a remeasurement: new in the period that ends here.
                let ingrowth = alive && h.dbh[r] >= self.threshold;
                match (alive, ingrowth) {
                    (true, true) => self.counts.ingrowth += 1,
                    (true, false) => self.counts.new_below_threshold += 1,
                    (false, _) => self.counts.new_not_alive += 1,
                }
                self.new_trees.push(NewTree {
                    row: r,
                    period: o - 1 - p,
                    ingrowth,
                });
            } else if alive {
                if let Some((anchor, death)) = ended.take() {
                    self.counts.reappeared += 1;
                    self.reappearances.push(Reappearance {
                        anchor,
                        death,
                        row: r,
                    });
                }
            } else {
                let fate_of_previous = j > 0
                    && h.status[rows[j - 1]] == Status::Alive
                    && self.occ[rows[j - 1]] as usize + 1 == o;
                if !fate_of_previous {
                    self.counts.ignored_rows += 1;
                }
            }
            if alive && o + 1 < self.occ_start[p + 1] {
                let next = rows
                    .get(j + 1)
                    .copied()
                    .filter(|&q| self.occ[q] as usize == o + 1);
                let fate = match next.map(|q| h.status[q]) {
                    Some(Status::Alive) => Fate::Alive,
                    Some(Status::Dead) => Fate::Dead,
                    Some(Status::Censored) => Fate::Cut,
                    None => match h.spec.missing_as {
                        MissingAs::Error => {
                            self.missing.push((r, o + 1));
                            continue;
                        }
                        MissingAs::Dead => {
                            self.counts.missing_dead += 1;
                            Fate::Dead
                        }
                        MissingAs::Drop => {
                            self.counts.missing_dropped += 1;
                            Fate::Missing
                        }
                    },
                };
                match fate {
                    Fate::Alive => self.counts.alive += 1,
                    Fate::Dead => self.counts.dead += 1,
                    Fate::Cut => self.counts.cut += 1,
                    Fate::Missing => {}
                }
                if matches!(fate, Fate::Dead | Fate::Cut) {
                    ended = Some((r, next));
                }
                self.records.push((r, next, fate));
            }
        }
    }
}
