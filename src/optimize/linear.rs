//! Dense symmetric positive definite solves for the Newton systems of both interior-point solvers:
//! Cholesky factorisation with a growing diagonal shift where rounding leaves the matrix indefinite,
//! in one call or as a factor kept for several right-hand sides.

// Dense linear algebra reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

/// Factorisations tried before the system is called singular: no shift, then a shift of `1e-14`
/// times the largest diagonal entry, growing a hundredfold each try.
const TRIES: usize = 12;
const FIRST_SHIFT: f64 = 1e-14;
const SHIFT_GROWTH: f64 = 100.0;

/// Solve `a x = b` into `x` for a symmetric positive definite `a` (`n x n`, row-major, only its
/// lower triangle read) by Cholesky into `factor` (`n x n`), with a growing diagonal shift where
/// rounding leaves it indefinite. False when no shift gives a finite solution; `x` is then
/// meaningless.
pub(super) fn solve_spd(a: &[f64], b: &[f64], n: usize, factor: &mut [f64], x: &mut [f64]) -> bool {
    let largest = (0..n).map(|i| a[i * n + i].abs()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let mut shift = 0.0;
    for _ in 0..TRIES {
        factor.copy_from_slice(a);
        if cholesky(factor, n, shift) {
            invert_diagonal(factor, n);
            solve_factored(factor, b, n, x);
            if x.iter().all(|v| v.is_finite()) {
                return true;
            }
        }
        shift = if shift == 0.0 { largest * FIRST_SHIFT } else { shift * SHIFT_GROWTH };
    }
    false
}

/// Factorise a symmetric positive definite `a` (`n x n`, row-major, only its lower triangle read)
/// by Cholesky into `factor` (its diagonal held as reciprocals), with the growing diagonal shift of
/// [`solve_spd`] where rounding leaves it indefinite, for [`solve_factored`] to solve with as many
/// right-hand sides as wanted. False when no shift gives a factor with a finite, positive diagonal.
pub(super) fn factor_spd(a: &[f64], n: usize, factor: &mut [f64]) -> bool {
    let largest = (0..n).map(|i| a[i * n + i].abs()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let mut shift = 0.0;
    for _ in 0..TRIES {
        factor.copy_from_slice(a);
        if cholesky(factor, n, shift) && (0..n).all(|i| factor[i * n + i].is_finite()) {
            invert_diagonal(factor, n);
            return true;
        }
        shift = if shift == 0.0 { largest * FIRST_SHIFT } else { shift * SHIFT_GROWTH };
    }
    false
}

/// Solve `L L^T x = b` into `x` with the factor `L` (lower triangle of `factor`, its diagonal
/// held as reciprocals) of [`factor_spd`].
pub(super) fn solve_factored(factor: &[f64], b: &[f64], n: usize, x: &mut [f64]) {
    x.copy_from_slice(b);
    for i in 0..n {
        let row = &factor[i * n..i * n + i];
        let sum: f64 = row.iter().zip(&x[..i]).map(|(l, y)| l * y).sum();
        x[i] = (x[i] - sum) * factor[i * n + i];
    }
    // L^T x = y by columns of L^T, that is rows of L: contiguous.
    for i in (0..n).rev() {
        let value = x[i] * factor[i * n + i];
        x[i] = value;
        for (v, l) in x[..i].iter_mut().zip(&factor[i * n..i * n + i]) {
            *v -= l * value;
        }
    }
}

/// The diagonal of a factor as reciprocals, so that solving multiplies.
fn invert_diagonal(factor: &mut [f64], n: usize) {
    for i in 0..n {
        factor[i * n + i] = 1.0 / factor[i * n + i];
    }
}

/// In place: the lower triangle of `a` (with `shift` added to its diagonal) becomes `L` with
/// `L L^T = a`; false if it is not positive definite. The upper triangle is left as it was.
fn cholesky(a: &mut [f64], n: usize, shift: f64) -> bool {
    for j in 0..n {
        let sum: f64 = a[j * n..j * n + j].iter().map(|v| v * v).sum();
        let diagonal = a[j * n + j] + shift - sum;
        if diagonal.is_nan() || diagonal <= 0.0 {
            return false;
        }
        let pivot = diagonal.sqrt();
        a[j * n + j] = pivot;
        let (upper, lower) = a.split_at_mut((j + 1) * n);
        let row_j = &upper[j * n..j * n + j];
        for row_i in lower.chunks_exact_mut(n) {
            let dot: f64 = row_i[..j].iter().zip(row_j).map(|(a, b)| a * b).sum();
            row_i[j] = (row_i[j] - dot) / pivot;
        }
    }
    true
}
