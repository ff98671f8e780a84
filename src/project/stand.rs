//! The live trees of one stand during a projection, as parallel arrays kept in descending
//! DBH order so that basal area in larger trees is one prefix sum.

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
            crate::data::reineke_sdi(self.stems, self.qmd, crate::data::Units::Metric)
        } else {
            0.0
        }
    }
}

/// The live records of one stand, in descending DBH order (equal diameters in a deterministic
/// order that depends only on the history of the replicate), plus scratch arrays. Nothing here allocates after [`Stand::reset`] has sized the vectors once.
#[derive(Debug, Clone, Default)]
pub(crate) struct Stand {
    pub dbh: Vec<f64>,
    pub stems: Vec<f64>,
    /// Record index in the input tree list (keys random draws and attribute look-ups).
    pub tree: Vec<u32>,
    pub bal: Vec<f64>,
    pub eta: Vec<f64>,
    pub tmp: Vec<f64>,
    /// Scratch: the uniforms behind the growth residuals.
    pub uniform: Vec<f64>,
    /// Expected driver: product of survival probabilities per record, indexed by record (not
    /// by position), so removals by thinning do not count as mortality.
    pub survival_by_record: Vec<f64>,
    /// Scratch of the counting sort.
    counts: Vec<u32>,
    key: Vec<u32>,
    spare_dbh: Vec<f64>,
    spare_stems: Vec<f64>,
    spare_tree: Vec<u32>,
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
        for v in [
            &mut self.bal,
            &mut self.eta,
            &mut self.tmp,
            &mut self.uniform,
        ] {
            v.clear();
            v.resize(n, 0.0);
        }
        self.survival_by_record.clear();
        self.survival_by_record.resize(n, 1.0);
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
            // Scaled here rather than in a second pass: the same product, one pass fewer.
            *bal = base * M2_PER_CM2;
            cum += e * d * d;
            stems += e;
        }
        let ba = cum * M2_PER_CM2;
        let qmd = if stems > 0.0 {
            (cum / stems).sqrt()
        } else {
            f64::NAN
        };
        Totals { stems, ba, qmd }
    }

    /// Totals without touching `bal`, summed with Kahan's compensation so that reported
    /// totals do not carry rounding noise from the summation order.
    pub fn totals(&self) -> Totals {
        // Four interleaved compensated sums hide the latency of the compensation chain. The
        // lanes are plain arrays (not an array of structs) so that pairs of lanes share SIMD
        // registers; each lane does exactly the operations of a scalar Kahan sum.
        let mut sq = KahanLanes::default();
        let mut stems = KahanLanes::default();
        let mut d4 = self.dbh.chunks_exact(4);
        let mut e4 = self.stems.chunks_exact(4);
        for (d, e) in (&mut d4).zip(&mut e4) {
            let d: [f64; 4] = [d[0], d[1], d[2], d[3]];
            let e: [f64; 4] = [e[0], e[1], e[2], e[3]];
            sq.add(std::array::from_fn(|k| e[k] * d[k] * d[k]));
            stems.add(e);
        }
        for (&d, &e) in d4.remainder().iter().zip(e4.remainder()) {
            sq.add_first(e * d * d);
            stems.add_first(e);
        }
        let (sq, stems) = (sq.total(), stems.total());
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
        // Branch-free: every record is written to slot j, which advances only for the living.
        let mut j = 0;
        for i in 0..self.dbh.len() {
            self.dbh[j] = self.dbh[i];
            self.stems[j] = self.stems[i];
            self.tree[j] = self.tree[i];
            self.bal[j] = self.bal[i];
            j += usize::from(self.stems[i] > 0.0);
        }
        self.truncate(j);
    }

    /// Keep the first `n` records (and scratch of that length).
    pub fn truncate(&mut self, n: usize) {
        for v in [&mut self.dbh, &mut self.stems, &mut self.bal] {
            v.truncate(n);
        }
        self.tree.truncate(n);
        self.eta.truncate(n);
        self.tmp.truncate(n);
        self.uniform.truncate(n);
    }

    /// Restore descending DBH order after growth, in O(n) whatever the growth noise: a
    /// counting sort into DBH buckets (four per record) followed by an insertion
    /// pass that fixes the order inside buckets. Equal diameters keep their previous relative
    /// order, so the result is deterministic. Nothing is allocated once the scratch vectors
    /// have grown to the stand size.
    pub fn restore_order(&mut self) {
        let n = self.dbh.len();
        if n < 2 || self.dbh.windows(2).all(|w| w[0] >= w[1]) {
            return;
        }
        let (mut lo, mut hi) = (self.dbh[0], self.dbh[0]);
        for &d in &self.dbh {
            lo = if d < lo { d } else { lo };
            hi = if d > hi { d } else { hi };
        }
        // Four buckets per record: fewer buckets execute fewer instructions (the prefix sum
        // is a serial chain over the buckets) but run slower, because the insertion pass
        // then meets more inversions and its branches mispredict (measured: n buckets about
        // 15 % slower overall on PROJECT-W2 than 4n; 8n no better than 4n).
        let buckets = 4 * n;
        let per_cm = (buckets - 1) as f64 / (hi - lo);
        let counts = &mut self.counts;
        counts.clear();
        counts.resize(buckets, 0);
        fit(&mut self.key, n, 0);
        for (key, &d) in self.key.iter_mut().zip(&self.dbh) {
            // Descending: the largest tree falls in bucket 0. Why not `as usize`: Rust's
            // saturating float-to-unsigned conversion costs about fifteen instructions on
            // x86-64; adding 2⁵² instead leaves round(x) in the low mantissa bits (x is in
            // [0, buckets − 1]), and any monotone bucketing is correct here.
            let x = (hi - d) * per_cm + TWO_52;
            let k = (x.to_bits().wrapping_sub(TWO_52.to_bits()) as usize).min(buckets - 1);
            counts[k] += 1;
            *key = k as u32;
        }
        // Exclusive prefix sum kept in a register (no store-to-load chain through memory).
        let mut start = 0;
        for c in counts.iter_mut() {
            let k = *c;
            *c = start;
            start += k;
        }
        fit(&mut self.spare_dbh, n, 0.0);
        fit(&mut self.spare_stems, n, 0.0);
        fit(&mut self.spare_tree, n, 0);
        for (((&k, &d), &e), &t) in self
            .key
            .iter()
            .zip(&self.dbh)
            .zip(&self.stems)
            .zip(&self.tree)
        {
            let slot = &mut counts[k as usize];
            let j = *slot as usize;
            *slot += 1;
            self.spare_dbh[j] = d;
            self.spare_stems[j] = e;
            self.spare_tree[j] = t;
        }
        std::mem::swap(&mut self.dbh, &mut self.spare_dbh);
        std::mem::swap(&mut self.stems, &mut self.spare_stems);
        std::mem::swap(&mut self.tree, &mut self.spare_tree);
        self.insertion_pass();
    }

    /// Insertion sort (descending, stable); linear on data sorted up to short runs. After the
    /// counting sort records move a position or two, so the shift is a plain loop rather than
    /// three `memmove` calls.
    fn insertion_pass(&mut self) {
        for i in 1..self.dbh.len() {
            let d = self.dbh[i];
            if self.dbh[i - 1] >= d {
                continue;
            }
            let (e, t) = (self.stems[i], self.tree[i]);
            let mut k = i;
            while k > 0 && self.dbh[k - 1] < d {
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

/// 2⁵²: for 0 ≤ x < 2⁵¹, the bits of x + 2⁵² minus those of 2⁵² are round(x).
const TWO_52: f64 = 4_503_599_627_370_496.0;

/// Resize `v` to `n` without touching the kept elements (they are all overwritten).
fn fit<T: Copy>(v: &mut Vec<T>, n: usize, fill: T) {
    if v.len() >= n {
        v.truncate(n);
    } else {
        v.resize(n, fill);
    }
}

/// Compensated summation (Kahan 1965); branch-free, exact enough for sums of positive terms.
#[derive(Debug, Default, Clone, Copy)]
struct Kahan {
    sum: f64,
    compensation: f64,
}

impl Kahan {
    #[inline]
    fn add(&mut self, x: f64) {
        let y = x - self.compensation;
        let t = self.sum + y;
        self.compensation = (t - self.sum) - y;
        self.sum = t;
    }

    fn value(self) -> f64 {
        self.sum
    }
}

/// Four independent Kahan sums, stored lane-wise.
#[derive(Debug, Default, Clone, Copy)]
struct KahanLanes {
    sum: [f64; 4],
    compensation: [f64; 4],
}

impl KahanLanes {
    #[inline(always)]
    fn add(&mut self, x: [f64; 4]) {
        for ((s, c), x) in self.sum.iter_mut().zip(&mut self.compensation).zip(x) {
            let y = x - *c;
            let t = *s + y;
            *c = (t - *s) - y;
            *s = t;
        }
    }

    #[inline]
    fn add_first(&mut self, x: f64) {
        let mut lane = Kahan {
            sum: self.sum[0],
            compensation: self.compensation[0],
        };
        lane.add(x);
        self.sum[0] = lane.sum;
        self.compensation[0] = lane.compensation;
    }

    /// The lanes' sums and compensations combined in lane order.
    fn total(self) -> f64 {
        let mut k = Kahan::default();
        for (s, c) in self.sum.into_iter().zip(self.compensation) {
            k.add(s);
            k.add(-c);
        }
        k.value()
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
    fn restore_order_sorts_descending_keeping_ties_in_place() {
        let mut s = Stand {
            dbh: vec![5.0, 9.0, 7.0, 9.0, 8.999, 0.5],
            stems: vec![1.0, 2.0, 3.0, 4.0, 5.0, 6.0],
            tree: vec![0, 3, 1, 2, 4, 5],
            ..Stand::default()
        };
        s.restore_order();
        assert_eq!(s.dbh, vec![9.0, 9.0, 8.999, 7.0, 5.0, 0.5]);
        assert_eq!(s.tree, vec![3, 2, 4, 1, 0, 5]);
        assert_eq!(s.stems, vec![2.0, 4.0, 5.0, 3.0, 1.0, 6.0]);
    }
}
