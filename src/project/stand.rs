//! The live trees of one stand during a projection, as parallel arrays kept in descending
//! DBH order (ties by record index) so that basal area in larger trees is one prefix sum.

use crate::scenario::TreeList;

/// m² of basal area per cm² of DBH squared: π/40000.
pub(crate) const M2_PER_CM2: f64 = std::f64::consts::PI / 40_000.0;

/// Stand totals at the start of a sub-step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Totals {
    /// Stems per hectare.
    pub stems: f64,
    /// Basal area, m²/ha.
    pub ba: f64,
    /// Quadratic mean diameter, cm (NaN without stems).
    pub qmd: f64,
}

impl Totals {
    /// Reineke's stand density index, metric (reference 25.4 cm); 0 without stems.
    pub fn sdi(&self) -> f64 {
        if self.stems > 0.0 {
            self.stems * (self.qmd / 25.4).powf(1.605)
        } else {
            0.0
        }
    }
}

/// The live records of one stand, in descending DBH order, plus scratch arrays of the same
/// length. Nothing here allocates after [`Stand::reset`] has sized the vectors once.
#[derive(Debug, Clone, Default)]
pub(crate) struct Stand {
    pub dbh: Vec<f64>,
    pub stems: Vec<f64>,
    /// Record index in the input tree list (keys random draws and attribute look-ups).
    pub tree: Vec<u32>,
    pub bal: Vec<f64>,
    pub eta: Vec<f64>,
    pub tmp: Vec<f64>,
}

/// The year-0 trees in descending DBH order, shared by all replicates.
#[derive(Debug, Clone)]
pub(crate) struct Initial {
    dbh: Vec<f64>,
    stems: Vec<f64>,
    tree: Vec<u32>,
}

impl Initial {
    pub fn of(trees: &TreeList) -> Initial {
        let mut order: Vec<u32> = (0..trees.len() as u32).collect();
        order.sort_by(|&a, &b| {
            trees.dbh_cm[b as usize]
                .total_cmp(&trees.dbh_cm[a as usize])
                .then(a.cmp(&b))
        });
        Initial {
            dbh: order.iter().map(|&i| trees.dbh_cm[i as usize]).collect(),
            stems: order
                .iter()
                .map(|&i| trees.stems_per_ha[i as usize])
                .collect(),
            tree: order,
        }
    }
}

impl Stand {
    /// Load the year-0 trees, reusing the vectors' allocations.
    pub fn reset(&mut self, init: &Initial) {
        let n = init.dbh.len();
        self.dbh.clone_from(&init.dbh);
        self.stems.clone_from(&init.stems);
        self.tree.clone_from(&init.tree);
        for v in [&mut self.bal, &mut self.eta, &mut self.tmp] {
            v.clear();
            v.resize(n, 0.0);
        }
    }

    /// Number of live records.
    pub fn len(&self) -> usize {
        self.dbh.len()
    }

    /// Stand totals; also fills `bal` (m²/ha in strictly larger trees).
    ///
    /// # Formula
    /// `BAL_i = Σ_{j: d_j > d_i} e_j · π/40000 · d_j²`: with the records in descending order,
    /// the running sum is taken as the base whenever the diameter changes, so equal diameters
    /// share the basal area of the trees before their group.
    pub fn covariates(&mut self) -> Totals {
        let (mut cum, mut base, mut stems) = (0.0, 0.0, 0.0);
        let mut prev = f64::INFINITY;
        for ((&d, &e), bal) in self.dbh.iter().zip(&self.stems).zip(self.bal.iter_mut()) {
            if d != prev {
                base = cum;
                prev = d;
            }
            *bal = base;
            cum += e * d * d;
            stems += e;
        }
        let ba = cum * M2_PER_CM2;
        let qmd = if stems > 0.0 {
            (cum / stems).sqrt()
        } else {
            f64::NAN
        };
        for b in &mut self.bal {
            *b *= M2_PER_CM2;
        }
        Totals { stems, ba, qmd }
    }

    /// Totals without touching `bal`.
    pub fn totals(&self) -> Totals {
        let (mut sq, mut stems) = (0.0, 0.0);
        for (&d, &e) in self.dbh.iter().zip(&self.stems) {
            sq += e * d * d;
            stems += e;
        }
        Totals {
            stems,
            ba: sq * M2_PER_CM2,
            qmd: if stems > 0.0 {
                (sq / stems).sqrt()
            } else {
                f64::NAN
            },
        }
    }

    /// Drop records with no stems left, keeping the order (and `bal` aligned).
    pub fn compact(&mut self) {
        let mut j = 0;
        for i in 0..self.dbh.len() {
            if self.stems[i] > 0.0 {
                self.dbh[j] = self.dbh[i];
                self.stems[j] = self.stems[i];
                self.tree[j] = self.tree[i];
                self.bal[j] = self.bal[i];
                j += 1;
            }
        }
        for v in [&mut self.dbh, &mut self.stems, &mut self.bal] {
            v.truncate(j);
        }
        self.tree.truncate(j);
        self.eta.truncate(j);
        self.tmp.truncate(j);
    }

    /// Restore descending DBH order (ties by record index) after growth. Growth rarely
    /// reorders trees, so insertion sort is close to one pass.
    pub fn restore_order(&mut self) {
        for i in 1..self.dbh.len() {
            let (d, t) = (self.dbh[i], self.tree[i]);
            let before =
                |k: usize, dbh: &[f64], tree: &[u32]| dbh[k] < d || (dbh[k] == d && tree[k] > t);
            if !before(i - 1, &self.dbh, &self.tree) {
                continue;
            }
            let e = self.stems[i];
            let mut k = i;
            while k > 0 && before(k - 1, &self.dbh, &self.tree) {
                self.dbh[k] = self.dbh[k - 1];
                self.stems[k] = self.stems[k - 1];
                self.tree[k] = self.tree[k - 1];
                k -= 1;
            }
            self.dbh[k] = d;
            self.stems[k] = e;
            self.tree[k] = t;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bal_of_three_trees_matches_the_handbook() {
        // handbook-checks.md, "Basal area, QMD, BAL": d = 10, 20, 30 cm at 100 trees/ha each →
        // G = 10.99557 m²/ha, BAL = 10.21018, 7.06858, 0 (derived).
        let trees = TreeList {
            stand: "1".into(),
            tree_ids: vec!["a".into(), "b".into(), "c".into()],
            dbh_cm: vec![10.0, 20.0, 30.0],
            stems_per_ha: vec![100.0; 3],
            attributes: vec![],
        };
        let mut s = Stand::default();
        s.reset(&Initial::of(&trees));
        let t = s.covariates();
        assert!((t.ba - 10.99557).abs() < 1e-5);
        assert_eq!(s.tree, vec![2, 1, 0]);
        let want = [0.0, 7.06858, 10.21018];
        for (b, w) in s.bal.iter().zip(want) {
            assert!((b - w).abs() < 1e-5, "{b} vs {w}");
        }
    }

    #[test]
    fn restore_order_sorts_descending_with_ties_by_record() {
        let mut s = Stand {
            dbh: vec![5.0, 9.0, 7.0, 9.0],
            stems: vec![1.0, 2.0, 3.0, 4.0],
            tree: vec![0, 3, 1, 2],
            ..Stand::default()
        };
        s.restore_order();
        assert_eq!(s.dbh, vec![9.0, 9.0, 7.0, 5.0]);
        assert_eq!(s.tree, vec![2, 3, 1, 0]);
        assert_eq!(s.stems, vec![4.0, 2.0, 3.0, 1.0]);
    }
}
