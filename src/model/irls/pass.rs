//! One IRLS pass over the rows, in blocks: the linear predictor of a block, then each row's
//! working weight and response (link-specific), then the accumulation of XᵀWX and XᵀWz with
//! fixed-size kernels for small designs.

use super::{unit_deviance, Pass, Problem};
use crate::model::link::{variance, Link, MU_EPS};

/// Sums deviance contributions. Unit-weight 0/1 rows contribute −2 ln q, q the fitted
/// probability of the observed outcome; those q are multiplied 16 at a time (each is at least
/// `MU_EPS`, so 16 of them cannot underflow) and one logarithm is taken per block.
#[derive(Debug, Clone, Copy)]
struct DevianceSum {
    sum: f64,
    prod: f64,
    count: u32,
}

impl DevianceSum {
    fn new() -> Self {
        DevianceSum {
            sum: 0.0,
            prod: 1.0,
            count: 0,
        }
    }

    #[inline(always)]
    fn add_prob(&mut self, q: f64) {
        self.prod *= q;
        self.count += 1;
        if self.count == 16 {
            self.sum -= 2.0 * self.prod.ln();
            self.prod = 1.0;
            self.count = 0;
        }
    }

    fn total(self) -> f64 {
        self.sum - 2.0 * self.prod.ln()
    }
}

/// Rows per block of a pass.
const BLOCK: usize = 128;

/// The offset of rows without one.
const ZEROS: [f64; BLOCK] = [0.0; BLOCK];

/// Per-block buffers and running totals of a pass.
struct BlockAcc {
    eta: [f64; BLOCK],
    w: [f64; BLOCK],
    wz: [f64; BLOCK],
    q: [f64; BLOCK],
    dev: DevianceSum,
    min_tail: f64,
}

impl BlockAcc {
    fn new() -> Self {
        BlockAcc {
            eta: [0.0; BLOCK],
            w: [0.0; BLOCK],
            wz: [0.0; BLOCK],
            q: [0.0; BLOCK],
            dev: DevianceSum::new(),
            min_tail: 0.5,
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
            min_tail: self.min_tail,
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
        let coef: [f64; P] = std::array::from_fn(|j| beta.map_or(0.0, |c| c[j]));
        for (k, block) in self.x.chunks(P * BLOCK).enumerate() {
            if beta.is_some() {
                for (e, xi) in acc.eta.iter_mut().zip(block.chunks_exact(P)) {
                    let xi: [f64; P] = std::array::from_fn(|j| xi[j]);
                    *e = (0..P).map(|j| xi[j] * coef[j]).sum();
                }
            }
            self.row_block(k * BLOCK, block.len() / P, beta.is_some(), &mut acc);
            (a, b) = accumulate_fixed(block, &acc.w, &acc.wz, a, b);
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
    /// deviance and the smallest min(μ, 1 − μ). Kept apart from the accumulation so that the
    /// accumulators stay in registers there (a call to `exp` clobbers every register).
    fn row_block(&self, first: usize, rows: usize, at_beta: bool, acc: &mut BlockAcc) {
        let wts = &self.response.wt[first..first + rows];
        let ys = &self.response.y[first..first + rows];
        let offs = self
            .offset
            .map_or(&ZEROS[..rows], |o| &o[first..first + rows]);
        // Running totals live in locals, not behind `acc`, so they stay in registers.
        let mut dev = acc.dev;
        let mut tail = acc.min_tail;
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
                // arithmetic (vectorisable), then the deviance and tail (reductions).
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
                for (&q, &wt) in q_buf[..rows].iter().zip(wts) {
                    if wt == 1.0 {
                        dev.add_prob(q.max(MU_EPS));
                    } else if wt > 0.0 {
                        dev.sum -= 2.0 * wt * q.max(MU_EPS).ln();
                    } else {
                        continue;
                    }
                    tail = tail.min(q.min(1.0 - q));
                }
            }
            true => {
                for (r, (&eta_lin, ((&wt, &y), &off))) in data.enumerate() {
                    if wt == 0.0 {
                        (w_buf[r], wz_buf[r]) = (0.0, 0.0);
                        continue;
                    }
                    let (mu, d) = self.link.inverse_and_derivative(eta_lin + off);
                    let w = wt * d * d / variance(mu);
                    w_buf[r] = w;
                    wz_buf[r] = w * (eta_lin + (y - mu) / d);
                    tail = tail.min(mu.min(1.0 - mu));
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
        acc.min_tail = tail;
    }

    /// The working weight and w × working response (without offset) at the start
    /// μ = (wt·y + ½)/(wt + 1).
    fn start_terms(&self, y: f64, wt: f64) -> (f64, f64) {
        let mu = (wt * y + 0.5) / (wt + 1.0);
        let eta = self.link.link(mu);
        let d = self.link.mu_eta(eta);
        let w = wt * d * d / variance(mu);
        (w, w * (eta + (y - mu) / d))
    }
}

/// Adds Σ w·xxᵀ (lower triangle) and Σ wz·x over a block of rows to `a` and `b`. A separate
/// function taking and returning the accumulators by value, so that they live in registers
/// (inlined into the pass loop, LLVM stores them back to memory on every row).
#[inline(never)]
fn accumulate_fixed<const P: usize>(
    block: &[f64],
    w: &[f64],
    wz: &[f64],
    mut a: [[f64; P]; P],
    mut b: [f64; P],
) -> ([[f64; P]; P], [f64; P]) {
    let rows = || block.chunks_exact(P).zip(w.iter().zip(wz));
    // XᵀWz and the first two rows of the triangle, then two triangle rows per sweep: few
    // enough accumulators per sweep to stay in registers (the block is in L1).
    for (xi, (&w, &wz)) in rows() {
        for j in 0..P {
            b[j] += wz * xi[j];
        }
        for j in 0..P.min(2) {
            let wxj = w * xi[j];
            for k in 0..=j {
                a[j][k] += wxj * xi[k];
            }
        }
    }
    for j0 in (2..P).step_by(2) {
        let mut lo = [0.0; P];
        let mut hi = [0.0; P];
        for (xi, &w) in block.chunks_exact(P).zip(w) {
            let xi: [f64; P] = std::array::from_fn(|j| xi[j]);
            let wx0 = w * xi[j0];
            for k in 0..=j0 {
                lo[k] += wx0 * xi[k];
            }
            if j0 + 1 < P {
                let wx1 = w * xi[j0 + 1];
                for k in 0..=j0 + 1 {
                    hi[k] += wx1 * xi[k];
                }
            }
        }
        for k in 0..P {
            a[j0][k] += lo[k];
            if j0 + 1 < P {
                a[j0 + 1][k] += hi[k];
            }
        }
    }
    (a, b)
}

/// Adds w·xxᵀ (lower triangle) and wz·x for one row.
#[inline]
fn accumulate(xtwx: &mut [f64], xtwz: &mut [f64], xi: &[f64], w: f64, wz: f64) {
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
