//! Dense LU with partial pivoting for the Newton matrix of small networks (the `Dense` linear
//! algebra, up to [`crate::model::solver_settings::AUTO_KRYLOV_ABOVE`] states).
//!
//! The factorisation is Gaussian elimination with row pivoting on the largest magnitude in
//! the column (the first one on a tie), P A = L U with a unit lower-triangular L (Golub & Van
//! Loan, Matrix Computations, Algorithm 3.4.1, from memory), done column by column on the
//! column-major storage: for pivot column i, l_r = a_ri · (1/a_ii) for r > i, then for every
//! column k > i, a_rk ← a_rk − a_ik · l_r. The solve applies the row swaps, then
//! forward substitution with L and back substitution with U, each as column sweeps
//! b_r ← b_r − x_i · m_ri.
//!
//! Every operation, and its order, is that of the nalgebra elimination the diffsol default
//! (`NalgebraLU`) runs (`gauss_step`, `solve_lower_triangular_with_diag_mut`,
//! `solve_upper_triangular_mut`), so results are the same bit for bit (tested). What differs
//! is the machine code: the sweeps run on plain contiguous slices, with a copy unrolled for
//! each order up to 8 (a sweep's small reactor), and above that, on a processor with AVX2,
//! compiled for it (chosen at run time), four products and differences per instruction
//! instead of one. Each element still gets one rounded product and one rounded
//! difference, in the same order, with no fused multiply-add, so the widths cannot change a
//! bit of the result.

use diffsol::{LaError, LaLinearOp, Matrix, MatrixCommon, NalgebraContext, NalgebraMat};
use diffsol::{NalgebraVec, Vector};
use diffsol_la::LinearSolver;
use diffsol_la::error::LinearSolverError;

/// The LU factors of the Newton matrix, in place, and the row swaps made.
#[derive(Default)]
pub struct DenseLu {
    /// L below the diagonal (unit diagonal implied) and U on and above it, column-major.
    lu: Option<NalgebraMat<f64>>,
    /// (i, p): at step i, rows i and p were swapped (p > i).
    swaps: Vec<(usize, usize)>,
}

/// The error diffsol's own dense LU gives for a zero pivot met in the solve.
fn singular() -> LaError {
    LinearSolverError::LuSolveFailed.into()
}

/// The error diffsol's own dense LU gives when asked to solve before it has a matrix.
fn not_initialised() -> LaError {
    LinearSolverError::LuNotInitialized.into()
}

impl LinearSolver<NalgebraMat<f64>> for DenseLu {
    fn set_sparsity<
        C: LaLinearOp<T = f64, V = NalgebraVec<f64>, M = NalgebraMat<f64>, C = NalgebraContext>,
    >(
        &mut self,
        op: &C,
    ) {
        self.lu = Some(NalgebraMat::new_from_sparsity(
            op.nrows(),
            op.ncols(),
            op.sparsity(),
            *op.context(),
        ));
        self.swaps.clear();
    }

    fn set_linearisation<
        C: LaLinearOp<T = f64, V = NalgebraVec<f64>, M = NalgebraMat<f64>, C = NalgebraContext>,
    >(
        &mut self,
        op: &C,
    ) {
        let lu = self
            .lu
            .as_mut()
            .expect("set_sparsity comes before set_linearisation");
        op.matrix_inplace(lu);
        let m = lu.inner_mut();
        let n = m.nrows();
        factor(m.as_mut_slice(), n, &mut self.swaps);
    }

    fn solve_in_place(&self, b: &mut NalgebraVec<f64>) -> Result<(), LaError> {
        let lu = self.lu.as_ref().ok_or_else(not_initialised)?;
        let m = lu.inner();
        let n = m.nrows();
        let x = b.inner_mut().as_mut_slice();
        if x.len() != n {
            return Err(LaError::Other(format!(
                "dense LU: right-hand side of length {} for a {n}×{n} matrix",
                x.len()
            )));
        }
        if solve(m.as_slice(), n, &self.swaps, x) {
            Ok(())
        } else {
            Err(singular())
        }
    }

    /// Aᵀ x = b: Uᵀ z = b, Lᵀ w = z, then the swaps undone in reverse (the order of diffsol's
    /// own dense LU; only the adjoint sensitivities use it).
    fn solve_transpose_in_place(&self, b: &mut NalgebraVec<f64>) -> Result<(), LaError> {
        let lu = self.lu.as_ref().ok_or_else(not_initialised)?;
        let m = lu.inner();
        let n = m.nrows();
        let x = b.inner_mut();
        if !m.tr_solve_upper_triangular_mut(x) {
            return Err(singular());
        }
        for c in 0..x.ncols() {
            for i in (0..n.saturating_sub(1)).rev() {
                let s = m.view_range(i + 1.., i).dot(&x.view_range(i + 1.., c));
                x[(i, c)] -= s;
            }
        }
        for &(i, p) in self.swaps.iter().rev() {
            x.swap_rows(i, p);
        }
        Ok(())
    }
}

/// y_r ← y_r − c · x_r for every r: the one sweep of both the elimination and the solves.
/// Written as `y − c·x` it rounds exactly as nalgebra's `(−c)·x + 1·y` (negation and the
/// factor 1 are exact, and a − b is a + (−b) in IEEE 754).
#[inline(always)]
fn sweep(y: &mut [f64], c: f64, x: &[f64]) {
    for (yr, xr) in y.iter_mut().zip(x) {
        *yr -= c * xr;
    }
}

/// For an order `n` from 1 to 8 (a sweep's small reactor), returns `call` with `n` a literal:
/// one copy of the (inlined) body per order, its loops unrolled, the arithmetic the same.
/// Larger orders fall through to the code after it.
macro_rules! return_unrolled {
    ($n:ident => $call:expr) => {
        return_unrolled!(@ $n => $call; 1 2 3 4 5 6 7 8)
    };
    (@ $n:ident => $call:expr; $($k:literal)*) => {
        match $n {
            $($k => {
                let $n: usize = $k;
                return $call;
            })*
            _ => {}
        }
    };
}

/// Factor the n×n column-major `m` in place (see the module's equations); `swaps` receives
/// the row swaps. A zero pivot column is left as it is (the solve then reports it), as
/// nalgebra does.
pub fn factor(m: &mut [f64], n: usize, swaps: &mut Vec<(usize, usize)>) {
    assert_eq!(m.len(), n * n, "dense LU: matrix storage is not n×n");
    return_unrolled!(n => factor_body(m, n, swaps));
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above).
        unsafe { factor_avx2(m, n, swaps) };
        return;
    }
    factor_body(m, n, swaps);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn factor_avx2(m: &mut [f64], n: usize, swaps: &mut Vec<(usize, usize)>) {
    factor_body(m, n, swaps);
}

#[inline(always)]
fn factor_body(m: &mut [f64], n: usize, swaps: &mut Vec<(usize, usize)>) {
    swaps.clear();
    for i in 0..n {
        // Pivot: the first row of largest |a_ri|, r ≥ i (a NaN never wins a comparison).
        let col = &m[i * n..(i + 1) * n];
        let mut p = i;
        let mut largest = col[i].abs();
        for (r, v) in col.iter().enumerate().skip(i + 1) {
            let v = v.abs();
            if v > largest {
                largest = v;
                p = r;
            }
        }
        let diag = col[p];
        if diag == 0.0 {
            continue;
        }
        if p != i {
            swaps.push((i, p));
            for c in 0..=i {
                m.swap(c * n + i, c * n + p);
            }
        }
        let inv = 1.0 / diag;
        let (left, right) = m.split_at_mut((i + 1) * n);
        let l = &mut left[i * n + i + 1..(i + 1) * n];
        for v in l.iter_mut() {
            *v *= inv;
        }
        for k in 0..n - i - 1 {
            let colk = &mut right[k * n..(k + 1) * n];
            if p != i {
                colk.swap(i, p);
            }
            let u = colk[i];
            sweep(&mut colk[i + 1..], u, l);
        }
    }
}

/// Solve (P⁻¹ L U) x = b in place with the factors of [`factor`]; false at a zero pivot of U.
pub fn solve(m: &[f64], n: usize, swaps: &[(usize, usize)], b: &mut [f64]) -> bool {
    return_unrolled!(n => solve_body(m, n, swaps, b));
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above).
        return unsafe { solve_avx2(m, n, swaps, b) };
    }
    solve_body(m, n, swaps, b)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn solve_avx2(m: &[f64], n: usize, swaps: &[(usize, usize)], b: &mut [f64]) -> bool {
    solve_body(m, n, swaps, b)
}

#[inline(always)]
fn solve_body(m: &[f64], n: usize, swaps: &[(usize, usize)], b: &mut [f64]) -> bool {
    for &(i, p) in swaps {
        b.swap(i, p);
    }
    // L y = P b, unit diagonal: b_r ← b_r − b_i · l_ri for r > i. The next column's b_{i+1}
    // is updated first, so that the processor can go on along the chain of columns while the
    // rest of the sweep completes (each b_r still gets its updates in the same order).
    for i in 0..n.saturating_sub(1) {
        let (head, tail) = b.split_at_mut(i + 1);
        let l = &m[i * n + i + 1..(i + 1) * n];
        let c = head[i];
        tail[0] -= c * l[0];
        sweep(&mut tail[1..], c, &l[1..]);
    }
    // U x = y from the last row up: x_i = b_i / u_ii, then b_r ← b_r − x_i · u_ri for r < i.
    for i in (0..n).rev() {
        let d = m[i * n + i];
        if d == 0.0 {
            return false;
        }
        let (head, tail) = b.split_at_mut(i);
        let x = tail[0] / d;
        tail[0] = x;
        // b_{i−1} first, as in the forward sweep.
        if let Some((last, rest)) = head.split_last_mut() {
            let u = &m[i * n..i * n + i];
            *last -= x * u[i - 1];
            sweep(rest, x, &u[..i - 1]);
        }
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::random::SplitMix64;
    use nalgebra::DMatrix;

    /// nalgebra's own elimination steps and solves (the ones diffsol's default dense LU runs),
    /// as the reference for the bits.
    fn nalgebra_lu(a: &DMatrix<f64>) -> (DMatrix<f64>, Vec<(usize, usize)>) {
        let mut m = a.clone();
        let n = m.nrows();
        let mut swaps = Vec::new();
        for i in 0..n {
            let p = m.view_range(i.., i).icamax() + i;
            let diag = m[(p, i)];
            if diag == 0.0 {
                continue;
            }
            if p != i {
                swaps.push((i, p));
                m.columns_range_mut(..i).swap_rows(i, p);
                nalgebra::linalg::gauss_step_swap(&mut m, diag, i, p);
            } else {
                nalgebra::linalg::gauss_step(&mut m, diag, i);
            }
        }
        (m, swaps)
    }

    fn nalgebra_solve(m: &DMatrix<f64>, swaps: &[(usize, usize)], b: &[f64]) -> Option<Vec<f64>> {
        let mut x = DMatrix::from_column_slice(b.len(), 1, b);
        for &(i, p) in swaps {
            x.swap_rows(i, p);
        }
        let _ = m.solve_lower_triangular_with_diag_mut(&mut x, 1.0);
        m.solve_upper_triangular_mut(&mut x)
            .then(|| x.as_slice().to_vec())
    }

    fn bits(v: &[f64]) -> Vec<u64> {
        v.iter().map(|x| x.to_bits()).collect()
    }

    /// Random matrices from 1×1 to 70×70, some with zero, repeated and tiny entries (ties
    /// in the pivot search, zero pivots): factors, swaps and solutions equal nalgebra's bit for
    /// bit, on whichever code path this processor takes.
    #[test]
    fn factors_and_solutions_equal_nalgebra_bit_for_bit() {
        let mut rng = SplitMix64(16);
        for n in (1..=24).chain([31, 32, 33, 50, 64, 70]) {
            for trial in 0..6 {
                let a = DMatrix::from_fn(n, n, |_, _| {
                    let u = rng.unit();
                    match trial {
                        // ties and zeros: entries from a small set
                        0 => [0.0, 1.0, -1.0, 2.0][(u * 4.0) as usize % 4],
                        1 if u < 0.6 => 0.0,
                        _ => (u - 0.5) * 10f64.powi((rng.unit() * 12.0) as i32 - 6),
                    }
                });
                let (want, want_swaps) = nalgebra_lu(&a);
                let b: Vec<f64> = (0..n).map(|_| rng.unit() - 0.5).collect();
                let want_x = nalgebra_solve(&want, &want_swaps, &b);
                // The dispatched path (AVX2 where the processor has it) and the plain one.
                for plain in [false, true] {
                    let mut got = a.as_slice().to_vec();
                    let mut swaps = Vec::new();
                    if plain {
                        factor_body(&mut got, n, &mut swaps);
                    } else {
                        factor(&mut got, n, &mut swaps);
                    }
                    assert_eq!(swaps, want_swaps, "n={n} trial={trial} plain={plain}");
                    assert_eq!(bits(&got), bits(want.as_slice()), "n={n} trial={trial}");
                    let mut x = b.clone();
                    let ok = if plain {
                        solve_body(&got, n, &swaps, &mut x)
                    } else {
                        solve(&got, n, &swaps, &mut x)
                    };
                    assert_eq!(ok, want_x.is_some(), "n={n} trial={trial} plain={plain}");
                    if let Some(w) = &want_x {
                        assert_eq!(bits(&x), bits(w), "n={n} trial={trial} plain={plain}");
                    }
                }
            }
        }
    }

    /// Against a closed form: A = [[0, 2], [3, 1]] needs the row swap; x = A⁻¹ b for b = (4, 5)
    /// is (1, 2) (by hand: 3x₀ + x₁ = 5, 2x₁ = 4).
    #[test]
    fn two_by_two_with_a_swap() {
        let mut m = vec![0.0, 3.0, 2.0, 1.0];
        let mut swaps = Vec::new();
        factor(&mut m, 2, &mut swaps);
        assert_eq!(swaps, vec![(0, 1)]);
        let mut b = vec![4.0, 5.0];
        assert!(solve(&m, 2, &swaps, &mut b));
        assert_eq!(b, vec![1.0, 2.0]);
    }

    /// A singular matrix: the factorisation goes through, the solve says so.
    #[test]
    fn singular_matrix_is_refused_in_the_solve() {
        let mut m = vec![1.0, 2.0, 2.0, 4.0];
        let mut swaps = Vec::new();
        factor(&mut m, 2, &mut swaps);
        let mut b = vec![1.0, 2.0];
        assert!(!solve(&m, 2, &swaps, &mut b));
    }
}
