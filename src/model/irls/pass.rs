//! One IRLS pass over the rows, in blocks: the linear predictor of a block, then each row's
//! working weight and response (link-specific), then the accumulation of XᵀWX and XᵀWz with
//! fixed-size kernels for small designs.

use super::{unit_deviance, Pass, Problem};
use crate::model::link::{working_weight, Link, MU_EPS};
use crate::model::separation::EXTREME_MU;

/// Sums deviance contributions. Unit-weight 0/1 rows contribute −2 ln q, q the fitted
/// probability of the observed outcome; those q are multiplied into four independent lanes,
/// 16 factors per lane (each is at least `MU_EPS`, so 16 of them cannot underflow), and one
/// logarithm is taken per lane and block.
#[derive(Debug, Clone, Copy)]
struct DevianceSum {
    sum: f64,
    lanes: [f64; 4],
    count: u32,
}

impl DevianceSum {
    fn new() -> Self {
        DevianceSum {
            sum: 0.0,
            lanes: [1.0; 4],
            count: 0,
        }
    }

    #[inline(always)]
    fn add_probs(&mut self, q: &[f64]) {
        for (lane, &q) in self.lanes.iter_mut().zip(q) {
            *lane *= q.max(MU_EPS);
        }
        self.count += 1;
        if self.count == 16 {
            self.flush();
        }
    }

    fn flush(&mut self) {
        self.sum -= 2.0 * self.lanes.iter().map(|l| l.ln()).sum::<f64>();
        self.lanes = [1.0; 4];
        self.count = 0;
    }

    fn total(mut self) -> f64 {
        self.flush();
        self.sum
    }
}

/// Rows per block of a pass.
pub(super) const BLOCK: usize = 128;

/// The offset of rows without one.
const ZEROS: [f64; BLOCK] = [0.0; BLOCK];

/// The weights of unweighted rows (read from cache instead of memory).
const ONES: [f64; BLOCK] = [1.0; BLOCK];

/// Per-block buffers and running totals of a pass.
struct BlockAcc {
    eta: [f64; BLOCK],
    w: [f64; BLOCK],
    wz: [f64; BLOCK],
    q: [f64; BLOCK],
    dev: DevianceSum,
    extreme: bool,
}

impl BlockAcc {
    fn new() -> Self {
        BlockAcc {
            eta: [0.0; BLOCK],
            w: [0.0; BLOCK],
            wz: [0.0; BLOCK],
            q: [0.0; BLOCK],
            dev: DevianceSum::new(),
            extreme: false,
        }
    }

    fn finish(self, at_beta: bool, xtwx: Vec<f64>, xtwz: Vec<f64>) -> Pass {
        Pass {
            deviance: if at_beta {
                self.dev.total()
            } else {
                f64::INFINITY
            },
            xtwx,
            xtwz,
            extreme: self.extreme,
        }
    }
}

impl Problem<'_> {
    /// One pass at `beta`, or at the starting values μ = (wt·y + ½)/(wt + 1) when `beta` is
    /// None (then `deviance` is +∞: it is not needed).
    pub fn pass(&self, beta: Option<&[f64]>) -> Pass {
        // Fixed-size kernels let the compiler unroll the p×p accumulation for the usual
        // small designs; larger ones take the general loop.
        match self.p {
            1 => self.pass_fixed::<1>(beta),
            2 => self.pass_fixed::<2>(beta),
            3 => self.pass_fixed::<3>(beta),
            4 => self.pass_fixed::<4>(beta),
            5 => self.pass_fixed::<5>(beta),
            6 => self.pass_fixed::<6>(beta),
            7 => self.pass_fixed::<7>(beta),
            8 => self.pass_fixed::<8>(beta),
            _ => self.pass_general(beta),
        }
    }

    fn pass_fixed<const P: usize>(&self, beta: Option<&[f64]>) -> Pass {
        let mut a = [[0.0; P]; P];
        let mut b = [0.0; P];
        let mut acc = BlockAcc::new();
        // The block transposed to columns: the linear predictor and the cross products then
        // run over contiguous columns, which the compiler vectorises.
        let mut cols = [[0.0; BLOCK]; P];
        for (k, block) in self.x.chunks(P * BLOCK).enumerate() {
            let rows = block.len() / P;
            for (r, xi) in block.chunks_exact(P).enumerate() {
                for (col, &v) in cols.iter_mut().zip(xi) {
                    col[r] = v;
                }
            }
            if let Some(c) = beta {
                acc.eta[..rows].fill(0.0);
                for (col, &cj) in cols.iter().zip(c) {
                    for (e, &v) in acc.eta[..rows].iter_mut().zip(&col[..rows]) {
                        *e += cj * v;
                    }
                }
            }
            self.row_block(k * BLOCK, rows, beta.is_some(), &mut acc);
            accumulate_columns(&cols, rows, &acc.w, &acc.wz, &mut a, &mut b);
        }
        let xtwx = (0..P * P).map(|m| a[(m / P).max(m % P)][(m / P).min(m % P)]);
        acc.finish(beta.is_some(), xtwx.collect(), b.to_vec())
    }

    fn pass_general(&self, beta: Option<&[f64]>) -> Pass {
        let p = self.p;
        let mut xtwx = vec![0.0; p * p];
        let mut xtwz = vec![0.0; p];
        let mut acc = BlockAcc::new();
        for (k, block) in self.x.chunks(p * BLOCK).enumerate() {
            if let Some(c) = beta {
                for (e, xi) in acc.eta.iter_mut().zip(block.chunks_exact(p)) {
                    *e = xi.iter().zip(c).map(|(v, c)| v * c).sum();
                }
            }
            self.row_block(k * BLOCK, block.len() / p, beta.is_some(), &mut acc);
            for (xi, (&w, &wz)) in block.chunks_exact(p).zip(acc.w.iter().zip(&acc.wz)) {
                accumulate(&mut xtwx, &mut xtwz, xi, w, wz);
            }
        }
        for j in 0..p {
            for k in j + 1..p {
                xtwx[j * p + k] = xtwx[k * p + j];
            }
        }
        acc.finish(beta.is_some(), xtwx, xtwz)
    }

    /// Phase one of a pass over a block of rows: working weight w and w × working response
    /// (offset removed) per row into the block buffers (zero for rows left out), plus the
    /// deviance and the extreme-probability flag. Kept apart from the accumulation so that the
    /// accumulators stay in registers there (a call to `exp` clobbers every register).
    fn row_block(&self, first: usize, rows: usize, at_beta: bool, acc: &mut BlockAcc) {
        let wts = if self.response.unit_weights {
            &ONES[..rows]
        } else {
            &self.response.wt[first..first + rows]
        };
        let ys = &self.response.y[first..first + rows];
        let offs = self
            .offset
            .map_or(&ZEROS[..rows], |o| &o[first..first + rows]);
        // Running totals live in locals, not behind `acc`, so they stay in registers.
        let mut dev = acc.dev;
        let mut extreme = acc.extreme;
        let BlockAcc {
            eta,
            w: w_buf,
            wz: wz_buf,
            q: q_buf,
            ..
        } = acc;
        let data = eta[..rows].iter().zip(wts.iter().zip(ys).zip(offs));
        match at_beta {
            true if self.response.binary && self.link == Link::Logit => {
                // With s = 2y − 1 the probability of the observed outcome is q = 1/(1 + e),
                // e = exp(−s·η), and 1 − q = e·q without cancellation; y − μ = s(1 − q) and
                // μ(1 − μ) = q(1 − q). Three loops: the exponentials alone, then the
                // arithmetic (vectorisable), then the deviance and extreme flag (reductions).
                for (q, (&eta_lin, ((_, &y), &off))) in q_buf.iter_mut().zip(data) {
                    *q = ((1.0 - 2.0 * y) * (eta_lin + off)).min(700.0).exp();
                }
                let rest = eta[..rows].iter().zip(wts.iter().zip(ys));
                for (r, (&eta_lin, (&wt, &y))) in rest.enumerate() {
                    let e = q_buf[r];
                    let q = 1.0 / (1.0 + e);
                    let one_minus_q = e * q;
                    let w = wt * (q * one_minus_q).max(MU_EPS);
                    w_buf[r] = w;
                    wz_buf[r] = w * eta_lin + wt * (2.0 * y - 1.0) * one_minus_q;
                    q_buf[r] = q;
                }
                let is_extreme = |q: f64| !(EXTREME_MU..=1.0 - EXTREME_MU).contains(&q);
                let mut quads = q_buf[..rows].chunks_exact(4).zip(wts.chunks_exact(4));
                for (q4, w4) in quads.by_ref() {
                    if w4 == [1.0; 4] {
                        dev.add_probs(q4);
                        extreme |= q4.iter().fold(false, |e, &q| e | is_extreme(q));
                        continue;
                    }
                    for (&q, &wt) in q4.iter().zip(w4).filter(|(_, &wt)| wt > 0.0) {
                        dev.sum -= 2.0 * wt * q.max(MU_EPS).ln();
                        extreme |= is_extreme(q);
                    }
                }
                let done = rows - rows % 4;
                for (&q, &wt) in q_buf[done..rows].iter().zip(&wts[done..]) {
                    if wt > 0.0 {
                        dev.sum -= 2.0 * wt * q.max(MU_EPS).ln();
                        extreme |= is_extreme(q);
                    }
                }
            }
            true => {
                for (r, (&eta_lin, ((&wt, &y), &off))) in data.enumerate() {
                    if wt == 0.0 {
                        (w_buf[r], wz_buf[r]) = (0.0, 0.0);
                        continue;
                    }
                    let (mu, d) = self.link.inverse_and_derivative(eta_lin + off);
                    let w = working_weight(wt, mu, d);
                    w_buf[r] = w;
                    wz_buf[r] = w * (eta_lin + (y - mu) / d);
                    extreme |= !(EXTREME_MU..=1.0 - EXTREME_MU).contains(&mu);
                    dev.sum += wt * unit_deviance(y, mu);
                }
            }
            false => {
                // Unit-weight 0/1 rows (the common case) read a table indexed by y.
                let unit = [0.0, 1.0].map(|y| self.start_terms(y, 1.0));
                let unit_rows = self.response.binary;
                for (r, (_, ((&wt, &y), &off))) in data.enumerate() {
                    let (w, wz) = if unit_rows && wt == 1.0 {
                        unit[y as usize]
                    } else if wt == 0.0 {
                        (0.0, 0.0)
                    } else {
                        self.start_terms(y, wt)
                    };
                    w_buf[r] = w;
                    wz_buf[r] = wz - w * off;
                }
            }
        }
        acc.dev = dev;
        acc.extreme = extreme;
    }

    /// The working weight and w × working response (without offset) at the start
    /// μ = (wt·y + ½)/(wt + 1).
    fn start_terms(&self, y: f64, wt: f64) -> (f64, f64) {
        let mu = (wt * y + 0.5) / (wt + 1.0);
        let eta = self.link.link(mu);
        let d = self.link.mu_eta(eta);
        let w = working_weight(wt, mu, d);
        (w, w * (eta + (y - mu) / d))
    }
}

/// Adds Σ w·xxᵀ (lower triangle) and Σ wz·x over the first `rows` rows of a block held as
/// columns.
pub(super) fn accumulate_columns<const P: usize>(
    cols: &[[f64; BLOCK]; P],
    rows: usize,
    w: &[f64; BLOCK],
    wz: &[f64; BLOCK],
    a: &mut [[f64; P]; P],
    b: &mut [f64; P],
) {
    let mut wx = [0.0; BLOCK];
    for j in 0..P {
        for ((t, &wr), &v) in wx[..rows].iter_mut().zip(&w[..rows]).zip(&cols[j][..rows]) {
            *t = wr * v;
        }
        b[j] += dot(&wz[..rows], &cols[j][..rows]);
        for k in 0..=j {
            a[j][k] += dot(&wx[..rows], &cols[k][..rows]);
        }
    }
}

/// Σ xᵢyᵢ in eight interleaved partial sums (vectorisable; a fixed summation order).
#[inline(always)]
fn dot(x: &[f64], y: &[f64]) -> f64 {
    let mut lanes = [0.0; 8];
    let (xs, ys) = (x.chunks_exact(8), y.chunks_exact(8));
    let tail: f64 = xs
        .remainder()
        .iter()
        .zip(ys.remainder())
        .map(|(a, b)| a * b)
        .sum();
    for (a, b) in xs.zip(ys) {
        for l in 0..8 {
            lanes[l] += a[l] * b[l];
        }
    }
    lanes.iter().sum::<f64>() + tail
}

/// Adds w·xxᵀ (lower triangle) and wz·x for one row.
#[inline]
pub(super) fn accumulate(xtwx: &mut [f64], xtwz: &mut [f64], xi: &[f64], w: f64, wz: f64) {
    let p = xi.len();
    for (j, &xj) in xi.iter().enumerate() {
        let wxj = w * xj;
        xtwz[j] += wz * xj;
        let row = &mut xtwx[j * p..j * p + j + 1];
        for (a, &xk) in row.iter_mut().zip(&xi[..=j]) {
            *a += wxj * xk;
        }
    }
}
