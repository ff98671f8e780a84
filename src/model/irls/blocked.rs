//! The blocked accumulation of a pass, for fits other than IRLS (the annualised Newton step):
//! the linear predictor of a block of rows, per-row weights from the caller, then Σ wᵢxᵢxᵢᵀ
//! and Σ vᵢxᵢ with the fixed-size kernels of the IRLS pass.

use super::pass::{accumulate, accumulate_columns, BLOCK};

/// Σ wᵢ xᵢxᵢᵀ (full p×p, row-major) and Σ vᵢ xᵢ over a row-major n×p design.
///
/// For each block of at most [`BLOCK`] rows starting at row `first`, `row_terms(first, eta, w,
/// v)` receives the linear predictor ηᵢ = xᵢᵀβ (without offset) of the block and fills `w` and
/// `v` (same length); it keeps any other totals (a log-likelihood) itself. Blocks are visited
/// in order, so sums are reproducible.
pub(crate) fn weighted_cross_products<F>(
    x: &[f64],
    p: usize,
    beta: &[f64],
    row_terms: F,
) -> (Vec<f64>, Vec<f64>)
where
    F: FnMut(usize, &[f64], &mut [f64], &mut [f64]),
{
    match p {
        1 => fixed::<1, F>(x, beta, row_terms),
        2 => fixed::<2, F>(x, beta, row_terms),
        3 => fixed::<3, F>(x, beta, row_terms),
        4 => fixed::<4, F>(x, beta, row_terms),
        5 => fixed::<5, F>(x, beta, row_terms),
        6 => fixed::<6, F>(x, beta, row_terms),
        7 => fixed::<7, F>(x, beta, row_terms),
        8 => fixed::<8, F>(x, beta, row_terms),
        _ => general(x, p, beta, row_terms),
    }
}

fn fixed<const P: usize, F>(x: &[f64], beta: &[f64], mut row_terms: F) -> (Vec<f64>, Vec<f64>)
where
    F: FnMut(usize, &[f64], &mut [f64], &mut [f64]),
{
    let mut a = [[0.0; P]; P];
    let mut b = [0.0; P];
    let mut cols = [[0.0; BLOCK]; P];
    let (mut eta, mut w, mut v) = ([0.0; BLOCK], [0.0; BLOCK], [0.0; BLOCK]);
    for (k, block) in x.chunks(P * BLOCK).enumerate() {
        let rows = block.len() / P;
        for (r, xi) in block.chunks_exact(P).enumerate() {
            for (col, &value) in cols.iter_mut().zip(xi) {
                col[r] = value;
            }
        }
        eta[..rows].fill(0.0);
        for (col, &c) in cols.iter().zip(beta) {
            for (e, &value) in eta[..rows].iter_mut().zip(&col[..rows]) {
                *e += c * value;
            }
        }
        row_terms(k * BLOCK, &eta[..rows], &mut w[..rows], &mut v[..rows]);
        accumulate_columns(&cols, rows, &w, &v, &mut a, &mut b);
    }
    let full = (0..P * P).map(|m| a[(m / P).max(m % P)][(m / P).min(m % P)]);
    (full.collect(), b.to_vec())
}

fn general<F>(x: &[f64], p: usize, beta: &[f64], mut row_terms: F) -> (Vec<f64>, Vec<f64>)
where
    F: FnMut(usize, &[f64], &mut [f64], &mut [f64]),
{
    let mut xtwx = vec![0.0; p * p];
    let mut xtv = vec![0.0; p];
    let (mut eta, mut w, mut v) = ([0.0; BLOCK], [0.0; BLOCK], [0.0; BLOCK]);
    for (k, block) in x.chunks(p * BLOCK).enumerate() {
        let rows = block.len() / p;
        for (e, xi) in eta.iter_mut().zip(block.chunks_exact(p)) {
            *e = xi.iter().zip(beta).map(|(a, b)| a * b).sum();
        }
        row_terms(k * BLOCK, &eta[..rows], &mut w[..rows], &mut v[..rows]);
        for (xi, (&wi, &vi)) in block.chunks_exact(p).zip(w.iter().zip(&v)) {
            accumulate(&mut xtwx, &mut xtv, xi, wi, vi);
        }
    }
    for j in 0..p {
        for k in j + 1..p {
            xtwx[j * p + k] = xtwx[k * p + j];
        }
    }
    (xtwx, xtv)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Derived analytically: the sums computed row by row, for a fixed-size (p = 2) and the
    // general (p = 9) kernel, over more than one block.
    #[test]
    fn matches_the_row_by_row_sums() {
        for p in [2usize, 9] {
            let n = 300;
            let x: Vec<f64> = (0..n * p)
                .map(|i| ((i * 7919) % 23) as f64 / 7.0 - 1.0)
                .collect();
            let beta: Vec<f64> = (0..p).map(|j| 0.1 * j as f64 - 0.3).collect();
            let weight = |i: usize, eta: f64| (1.0 + (i % 5) as f64, eta * 0.5);
            let (a, b) = weighted_cross_products(&x, p, &beta, |first, eta, w, v| {
                for (r, &e) in eta.iter().enumerate() {
                    (w[r], v[r]) = weight(first + r, e);
                }
            });
            let (mut a0, mut b0) = (vec![0.0; p * p], vec![0.0; p]);
            for (i, xi) in x.chunks_exact(p).enumerate() {
                let eta: f64 = xi.iter().zip(&beta).map(|(a, b)| a * b).sum();
                let (w, v) = weight(i, eta);
                for j in 0..p {
                    b0[j] += v * xi[j];
                    for k in 0..p {
                        a0[j * p + k] += w * xi[j] * xi[k];
                    }
                }
            }
            for (g, e) in a.iter().zip(&a0).chain(b.iter().zip(&b0)) {
                assert!(
                    (g - e).abs() <= 1e-10 * e.abs().max(1.0),
                    "p = {p}: {g} vs {e}"
                );
            }
        }
    }
}
