//! Preconditioned GMRES for the Newton systems of large networks.
//!
//! Every BDF step solves (I − hγJ)Δ = r. For a large mechanism the complete LU of that matrix
//! fills in: the generated 1,000-species networks of docs/performance.md have 12,400
//! non-zeros in J and about 510,000 in L + U, so the "sparse" LU does near-dense work and
//! most of a solve goes into it. But the rate constants of such a network span ten decades,
//! so at any step size most entries of A = I − hγJ are tiny next to the diagonal terms they
//! couple. Dropping them leaves a matrix whose LU barely fills in (a few thousand to a few ten
//! thousand entries), and that LU is an excellent preconditioner for A itself.
//!
//! The solve is then GMRES(m) (Saad & Schultz, SIAM J. Sci. Stat. Comput. 7 (1986) 856) on the
//! left-preconditioned system P⁻¹A Δ = P⁻¹r, with P the LU of the dropped matrix. The
//! iteration runs on the state scaled by the integrator's error weights
//! w_i = 1/(atol_i + rtol·|y_i|), the norm in which the Newton iteration and the local error
//! test of the BDF method judge Δ, so a trace species is solved as carefully as a major one.
//! It stops once ‖W P⁻¹(r − AΔ)‖_rms, which for P ≈ A is the weighted error of Δ, is below
//! [`FORCING`] = 5 % of the Newton tolerance: an inexact Newton method, whose linear solves
//! are only as accurate as the Newton iteration can use (Brown & Hindmarsh, Appl. Math.
//! Comput. 31 (1989) 40, as used by CVODE's SPGMR, from memory; Eisenstat & Walker, SIAM J.
//! Sci. Comput. 17 (1996) 16).
//!
//! Dropping rule (the relative test of ILUT-like preconditioners, common practice): keep
//! a_ij when i = j or |a_ij| > δ·√(|a_ii|·|a_jj|). δ adapts to how hard the last systems
//! were: many iterations tighten δ (more of A kept), very few loosen it. Should GMRES still
//! not converge, or the dropped matrix be singular, the solver factorises the complete A, so
//! the worst case is the direct sparse LU, never a wrong Δ.

// The GMRES loops index several arrays of one length at once.
#![allow(clippy::needless_range_loop)]

use std::cell::{Cell, RefCell};
use std::rc::Rc;

use diffsol::{
    FaerContext, FaerSparseMat, FaerVec, LaError, LaLinearOp, Matrix, MatrixCommon, Vector,
};
use diffsol_la::LinearSolver;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::perm::PermRef;
use faer::sparse::linalg::lu::simplicial::{self, SimplicialLu};
use faer::sparse::linalg::lu::{
    LuRef, LuSymbolicParams, NumericLu, SymbolicLu, factorize_symbolic_lu,
};
use faer::sparse::linalg::{SupernodalThreshold, colamd};
use faer::sparse::{SparseColMat, SparseColMatRef, SymbolicSparseColMat};
use faer::{Conj, MatMut, Par};

/// Krylov subspace size before a restart.
const RESTART: usize = 30;
/// Most GMRES iterations for one solve before the complete LU is used instead.
const MAX_ITERATIONS: usize = 60;
/// Forcing term of the inexact Newton iteration: GMRES stops once the weighted RMS of the
/// preconditioned residual is below `FORCING` × the Newton tolerance (the tolerance the BDF
/// Newton iteration applies to the weighted RMS of its correction, [`WeightSource`]).
///
/// Newton judges a correction Δ by ‖Δ‖ (times its estimated convergence factor) against that
/// tolerance, and the local error test works at 1 in the same norm. A linear residual r
/// changes Δ by A⁻¹r ≈ P⁻¹r, so an error of 5 % of the Newton tolerance in Δ changes neither
/// the convergence decision nor the step noticeably, and solving further is work Newton never
/// sees. This is CVODE's choice ε_L = 0.05 × the nonlinear tolerance (Brown & Hindmarsh,
/// J. Appl. Math. Comput. 31 (1989) 40; Hindmarsh et al., ACM TOMS 31 (2005) 363, from
/// memory), a constant forcing term in the sense of the inexact Newton theory of Dembo,
/// Eisenstat & Steihaug (SIAM J. Numer. Anal. 19 (1982) 400) and Eisenstat & Walker (SIAM
/// J. Sci. Comput. 17 (1996) 16): the linear iteration is stopped relative to what the
/// nonlinear iteration needs rather than at a fixed small tolerance.
pub const FORCING: f64 = 0.05;
/// Stopping tolerance of a solver made without a Newton iteration behind it
/// ([`KrylovSolver::default`]): the weighted RMS of the preconditioned residual, far below any
/// tolerance an integrator applies in that norm.
const STANDALONE_TOLERANCE: f64 = 1e-5;
/// Also stop when the preconditioned residual has fallen by this factor.
const RELATIVE_TOLERANCE: f64 = 1e-12;
/// First drop tolerance δ, and its bounds. δ = 0 keeps every entry (the complete LU).
///
/// δ is never looser than 3e-3. With the solves stopped at [`FORCING`] × the Newton
/// tolerance almost every solve takes one to three iterations, so the rule "loosen after easy
/// solves" drove δ up to its old bound 0.1, where each solve took three to four iterations;
/// those cost more than the denser LU saves (on the generated 300/1000 network 4,232 GMRES
/// iterations and 0.89 × 10⁹ instructions for the integration with the bound 0.1, 2,729 and
/// 0.89 × 10⁹ with 3e-3, 2,075 and 0.87 × 10⁹ with 1e-3; at 1000/3000 5,010 / 3,167 / 2,535
/// iterations and 3.31 / 3.12 / 3.12 × 10⁹ instructions; callgrind, docs/performance.md).
/// The CVODE comparison there uses a fixed δ = 1e-3.
const FIRST_DROP: f64 = 1e-3;
const LOOSEST_DROP: f64 = 3e-3;
const TIGHTEST_DROP: f64 = 1e-7;
/// Tighten δ when a solve since the last factorisation needed more iterations than this;
/// loosen it (up to [`LOOSEST_DROP`]) when none needed more than `EASY`.
const HARD: usize = 12;
const EASY: usize = 3;
/// The preconditioner's column order is remade once the fill of its LU, entries of L + U per
/// kept entry of the dropped matrix, has grown by this factor over its value when the order
/// was made ([`Preconditioner`]).
const REORDER_GROWTH: f64 = 1.2;

/// What the linear solver needs to know of the integration: the error weights and the Newton
/// tolerance.
///
/// `y` is the latest state at which the right-hand side was evaluated (the current Newton
/// iterate), written by the ODE driver.
#[derive(Debug)]
pub struct WeightSource {
    /// The tolerance of the Newton iteration on the weighted RMS of its correction (diffsol's
    /// `nonlinear_solver_tolerance`); GMRES stops at [`FORCING`] times it.
    pub newton_tolerance: f64,
    pub rtol: f64,
    /// One value per state, or a single value for all.
    pub atol: Vec<f64>,
    pub y: RefCell<Vec<f64>>,
}

impl WeightSource {
    fn weights(&self, n: usize, out: &mut Vec<f64>) {
        out.clear();
        let y = self.y.borrow();
        for i in 0..n {
            let atol = if self.atol.len() == n {
                self.atol[i]
            } else {
                self.atol.first().copied().unwrap_or(1.0)
            };
            let yi = y.get(i).copied().unwrap_or(0.0);
            out.push(1.0 / (atol + self.rtol * yi.abs()));
        }
    }
}

/// Counters of the Krylov solver, for the report and the benchmarks.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct KrylovStats {
    /// Preconditioner factorisations (one per Newton matrix).
    pub factorizations: usize,
    /// Linear solves.
    pub solves: usize,
    /// GMRES iterations over all solves.
    pub iterations: usize,
    /// Solves that fell back to the complete LU.
    pub fallbacks: usize,
    /// Entries kept in the last preconditioner and in the last complete matrix.
    pub kept: usize,
    pub total: usize,
}

/// An LU factorisation of a sparse matrix with faer: the complete LU of the fallback.
struct Lu {
    symbolic: SymbolicLu<usize>,
    numeric: NumericLu<usize, f64>,
    scratch: RefCell<MemBuffer>,
}

impl Lu {
    /// Factorise `m`; `kind` picks faer's simplicial (column by column, sparse loops) or
    /// supernodal (dense blocks of columns) factorisation.
    fn factor(m: SparseColMatRef<'_, usize, f64>, kind: SupernodalThreshold) -> Option<Lu> {
        let symbolic = factorize_symbolic_lu(
            m.symbolic(),
            LuSymbolicParams {
                supernodal_flop_ratio_threshold: kind,
                ..Default::default()
            },
        )
        .ok()?;
        let mut numeric = NumericLu::new();
        let mut scratch = MemBuffer::new(
            symbolic.factorize_numeric_lu_scratch::<f64>(Par::Seq, Default::default()),
        );
        symbolic
            .factorize_numeric_lu(
                &mut numeric,
                m,
                Par::Seq,
                MemStack::new(&mut scratch),
                Default::default(),
            )
            .ok()?;
        let scratch = RefCell::new(MemBuffer::new(
            symbolic.solve_in_place_scratch::<f64>(1, Par::Seq),
        ));
        Some(Lu {
            symbolic,
            numeric,
            scratch,
        })
    }

    /// x ← M⁻¹x (or M⁻ᵀx); false if the result is not finite (a singular factor).
    fn solve(&self, x: &mut [f64], transpose: bool) -> bool {
        let n = x.len();
        let mut scratch = self.scratch.borrow_mut();
        let lu = LuRef::new_unchecked(&self.symbolic, &self.numeric);
        let rhs = MatMut::from_column_major_slice_mut(x, n, 1);
        let stack = MemStack::new(&mut scratch);
        if transpose {
            lu.solve_transpose_in_place_with_conj(Conj::No, rhs, Par::Seq, stack);
        } else {
            lu.solve_in_place_with_conj(Conj::No, rhs, Par::Seq, stack);
        }
        x.iter().all(|v| v.is_finite())
    }
}

/// The preconditioner: the LU of the dropped matrix P, Pᵣ P Q = L U with L unit lower and U
/// upper triangular, by faer's left-looking simplicial factorisation (Gilbert & Peierls, SIAM
/// J. Sci. Stat. Comput. 9 (1988) 862, from memory) with partial pivoting Pᵣ and a
/// fill-reducing column order Q (COLAMD; Davis et al., ACM TOMS 30 (2004) 353, from memory).
///
/// Two things are done here rather than through faer's general `SymbolicLu`/`LuRef`:
/// - The column order is kept from one factorisation to the next while it still gives a
///   sparse LU. The factorisation itself finds the pattern of L and U for any column order,
///   so a stale order costs only fill, never accuracy; it is recomputed once the factors'
///   fill per kept entry has grown by [`REORDER_GROWTH`] over what it was when the order was
///   made. faer's symbolic analysis also builds an elimination tree and column counts, which
///   the simplicial factorisation does not use.
/// - The solves run on copies of L and U in compressed rows, with the diagonal of U inverted
///   once and the row and column permutations applied while copying in and out (faer's
///   general routine permutes into a buffer and back, and walks the columns with a kernel
///   made for several right-hand sides). The arithmetic is the same, in the same order, so
///   the result is bit for bit faer's.
///
/// The dropped matrix is factorised with faer's simplicial LU. Its factors stay sparse, and
/// the supernodal variant, which faer's size heuristic picks for the larger networks, spent
/// the solve time in dense kernels on blocks that are mostly zero: on the generated
/// 3000/10000 network the whole run took 5.5–6.2 s with it and 2.6–2.7 s with the simplicial
/// LU (docs/performance.md). The complete LU of the fallback keeps faer's
/// choice.
struct Preconditioner {
    /// Column order Q: column j of the factorised matrix is column `col_perm[j]` of P.
    col_perm: Vec<usize>,
    col_perm_inv: Vec<usize>,
    /// Row pivoting: row j of the factorised matrix is row `row_perm[j]` of P.
    row_perm: Vec<usize>,
    row_perm_inv: Vec<usize>,
    /// (entries of L + U) / (entries of P) when the column order was made.
    ordered_fill: f64,
    /// The order is stale and is remade at the next factorisation.
    reorder: bool,
    lu: SimplicialLu<usize, f64>,
    /// Strictly lower part of L, in compressed rows.
    lower: TriangularRows,
    /// Strictly upper part of U, in compressed rows, and 1/u_ii.
    upper: TriangularRows,
    inv_diag: Vec<f64>,
    scratch: RefCell<Vec<f64>>,
}

/// A triangular factor without its diagonal, in compressed rows.
#[derive(Default)]
struct TriangularRows {
    row_ptr: Vec<usize>,
    col_idx: Vec<u32>,
    val: Vec<f64>,
}

impl TriangularRows {
    /// Rows of the compressed columns `cp`/`ri`/`v` of an n × n factor, without the entry of
    /// each column at position `skip(col_start, col_end)` (its diagonal).
    fn load(
        &mut self,
        n: usize,
        cp: &[usize],
        ri: &[usize],
        v: &[f64],
        skip: impl Fn(usize, usize) -> usize,
    ) {
        self.row_ptr.clear();
        self.row_ptr.resize(n + 1, 0);
        for j in 0..n {
            let d = skip(cp[j], cp[j + 1]);
            for k in cp[j]..cp[j + 1] {
                if k != d {
                    self.row_ptr[ri[k] + 1] += 1;
                }
            }
        }
        for i in 0..n {
            self.row_ptr[i + 1] += self.row_ptr[i];
        }
        let nnz = self.row_ptr[n];
        self.col_idx.resize(nnz, 0);
        self.val.resize(nnz, 0.0);
        let mut next = self.row_ptr[..n].to_vec();
        for j in 0..n {
            let d = skip(cp[j], cp[j + 1]);
            for k in cp[j]..cp[j + 1] {
                if k != d {
                    let slot = &mut next[ri[k]];
                    self.col_idx[*slot] = j as u32;
                    self.val[*slot] = v[k];
                    *slot += 1;
                }
            }
        }
    }

    /// The entries of row i: columns and values.
    #[inline]
    fn row(&self, i: usize) -> (&[u32], &[f64]) {
        let (a, b) = (self.row_ptr[i], self.row_ptr[i + 1]);
        (&self.col_idx[a..b], &self.val[a..b])
    }
}

impl Preconditioner {
    /// Factorise `p`, keeping `old`'s column order unless it has gone stale; `None` when `p`
    /// is singular (or too large for 32-bit indices).
    fn factor(p: SparseColMatRef<'_, usize, f64>, old: Option<Preconditioner>) -> Option<Self> {
        let n = p.ncols();
        if u32::try_from(n).is_err() {
            return None;
        }
        let nnz = p.val().len().max(1);
        let mut pre = match old {
            Some(o) if o.col_perm.len() == n && !o.reorder => o,
            _ => {
                let mut col_perm = vec![0usize; n];
                let mut col_perm_inv = vec![0usize; n];
                let mut mem = MemBuffer::new(colamd::order_scratch::<usize>(n, n, p.val().len()));
                colamd::order(
                    &mut col_perm,
                    &mut col_perm_inv,
                    p.symbolic(),
                    colamd::Control::default(),
                    MemStack::new(&mut mem),
                )
                .ok()?;
                Preconditioner {
                    col_perm,
                    col_perm_inv,
                    row_perm: vec![0; n],
                    row_perm_inv: vec![0; n],
                    ordered_fill: 0.0,
                    reorder: false,
                    lu: SimplicialLu::new(),
                    lower: TriangularRows::default(),
                    upper: TriangularRows::default(),
                    inv_diag: vec![0.0; n],
                    scratch: RefCell::new(vec![0.0; n]),
                }
            }
        };
        let mut mem = MemBuffer::new(simplicial::factorize_simplicial_numeric_lu_scratch::<
            usize,
            f64,
        >(n, n));
        simplicial::factorize_simplicial_numeric_lu(
            &mut pre.row_perm,
            &mut pre.row_perm_inv,
            &mut pre.lu,
            p,
            PermRef::new_checked(&pre.col_perm, &pre.col_perm_inv, n),
            MemStack::new(&mut mem),
        )
        .ok()?;
        let (l, u) = (pre.lu.l_factor_unsorted(), pre.lu.u_factor_unsorted());
        // L's unit diagonal is the first entry of each column, U's diagonal the last.
        let (lcp, lri, lv) = (l.symbolic().col_ptr(), l.symbolic().row_idx(), l.val());
        let (ucp, uri, uv) = (u.symbolic().col_ptr(), u.symbolic().row_idx(), u.val());
        pre.lower.load(n, lcp, lri, lv, |a, _| a);
        pre.upper.load(n, ucp, uri, uv, |_, b| b - 1);
        for j in 0..n {
            pre.inv_diag[j] = 1.0 / uv[ucp[j + 1] - 1];
        }
        let fill = (lv.len() + uv.len()) as f64 / nnz as f64;
        if pre.ordered_fill == 0.0 {
            pre.ordered_fill = fill;
        } else if fill > REORDER_GROWTH * pre.ordered_fill {
            pre.reorder = true;
        }
        Some(pre)
    }

    /// v ← W P⁻¹ v (W the diagonal `weights`); false if the result is not finite.
    fn solve_weighted(&self, v: &mut [f64], weights: &[f64]) -> bool {
        let n = v.len();
        let mut y = self.scratch.borrow_mut();
        let y = &mut y[..n];
        for (yi, &r) in y.iter_mut().zip(&self.row_perm) {
            *yi = v[r];
        }
        // L y = Pᵣ v, row by row from the top. Rows are short (a few entries), so a plain
        // loop; the subtractions come in the order of faer's column-oriented solve (columns
        // ascending), which makes the result the same to the last bit.
        for i in 0..n {
            let (cols, vals) = self.lower.row(i);
            let mut s = y[i];
            for (&c, &l) in cols.iter().zip(vals) {
                s -= l * y[c as usize];
            }
            y[i] = s;
        }
        // U z = y from the bottom, columns descending as in faer's solve.
        for i in (0..n).rev() {
            let (cols, vals) = self.upper.row(i);
            let mut s = y[i];
            for (&c, &u) in cols.iter().zip(vals).rev() {
                s -= u * y[c as usize];
            }
            y[i] = s * self.inv_diag[i];
        }
        let mut finite = true;
        for (&yj, &c) in y.iter().zip(&self.col_perm) {
            let x = yj * weights[c];
            finite &= x.is_finite();
            v[c] = x;
        }
        finite
    }
}

/// A square matrix in compressed-row form.
#[derive(Default)]
struct RowMatrix {
    row_ptr: Vec<usize>,
    col_idx: Vec<usize>,
    val: Vec<f64>,
}

impl RowMatrix {
    /// Transpose the compressed columns of `a` into rows.
    fn load(&mut self, a: SparseColMatRef<'_, usize, f64>) {
        let n = a.nrows();
        let sym = a.symbolic();
        let (cp, ri, val) = (sym.col_ptr(), sym.row_idx(), a.val());
        let nnz = val.len();
        self.row_ptr.clear();
        self.row_ptr.resize(n + 1, 0);
        for &i in ri {
            self.row_ptr[i + 1] += 1;
        }
        for i in 0..n {
            self.row_ptr[i + 1] += self.row_ptr[i];
        }
        self.col_idx.resize(nnz, 0);
        self.val.resize(nnz, 0.0);
        let mut next = self.row_ptr[..n].to_vec();
        for j in 0..a.ncols() {
            for k in cp[j]..cp[j + 1] {
                let slot = &mut next[ri[k]];
                self.col_idx[*slot] = j;
                self.val[*slot] = val[k];
                *slot += 1;
            }
        }
    }

    /// out = A·x.
    fn mul(&self, x: &[f64], out: &mut [f64]) {
        mul_rows(&self.row_ptr, &self.col_idx, &self.val, x, out);
    }
}

/// out = A·x for A in compressed rows (`row_ptr` of length n + 1, then column and value of
/// each entry); also the Jacobian products of [`super::equations`].
///
/// Each row is summed in four interleaved partial sums: one running sum makes every entry wait
/// for the previous addition, and this product is a fifth of the large solves' time.
pub(crate) fn mul_rows(
    row_ptr: &[usize],
    cols: &[usize],
    vals: &[f64],
    x: &[f64],
    out: &mut [f64],
) {
    for (i, o) in out.iter_mut().enumerate() {
        let (a, b) = (row_ptr[i], row_ptr[i + 1]);
        let (c, v) = (&cols[a..b], &vals[a..b]);
        let mut part = [0.0; 4];
        let (c4, v4) = (c.chunks_exact(4), v.chunks_exact(4));
        let (c_rest, v_rest) = (c4.remainder(), v4.remainder());
        for (cc, vv) in c4.zip(v4) {
            for k in 0..4 {
                part[k] += vv[k] * x[cc[k]];
            }
        }
        let mut sum = (part[0] + part[1]) + (part[2] + part[3]);
        for (&j, &vj) in c_rest.iter().zip(v_rest) {
            sum += vj * x[j];
        }
        *o = sum;
    }
}

/// a·b in four interleaved partial sums (see [`mul_rows`]); the Gram–Schmidt steps and norms
/// of GMRES are made of these.
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut part = [0.0; 4];
    let (a4, b4) = (a.chunks_exact(4), b.chunks_exact(4));
    let (a_rest, b_rest) = (a4.remainder(), b4.remainder());
    for (aa, bb) in a4.zip(b4) {
        for k in 0..4 {
            part[k] += aa[k] * bb[k];
        }
    }
    let mut sum = (part[0] + part[1]) + (part[2] + part[3]);
    for (x, y) in a_rest.iter().zip(b_rest) {
        sum += x * y;
    }
    sum
}

/// Work arrays of one GMRES solve, kept between solves.
#[derive(Default)]
struct Work {
    weights: Vec<f64>,
    /// Krylov basis, (RESTART + 1) vectors of length n, one after the other.
    basis: Vec<f64>,
    /// Hessenberg matrix, column-major (RESTART + 1) × RESTART.
    hess: Vec<f64>,
    cs: Vec<f64>,
    sn: Vec<f64>,
    g: Vec<f64>,
    tmp: Vec<f64>,
    x: Vec<f64>,
    residual: Vec<f64>,
    y: Vec<f64>,
}

/// GMRES preconditioned by the LU of A with its small entries dropped; a
/// [`diffsol::LinearSolver`] for [`FaerSparseMat`].
pub struct KrylovSolver {
    weights: Option<Rc<WeightSource>>,
    stats: Option<Rc<Cell<KrylovStats>>>,
    a: Option<FaerSparseMat<f64>>,
    /// A in compressed rows, for the products A·v of the iteration (a gather per row is
    /// faster than scattering the columns of the CSC matrix).
    rows: RowMatrix,
    pre: Option<Preconditioner>,
    /// The complete LU of A, made on demand when GMRES fails, for this linearisation.
    full: RefCell<Option<Lu>>,
    drop_tol: f64,
    /// Most iterations any solve needed since the last factorisation.
    hardest: Cell<usize>,
    /// A solve since the last factorisation fell back to the complete LU.
    failed: Cell<bool>,
    work: RefCell<Work>,
    /// [`MAX_ITERATIONS`], lowered by the tests to exercise the fallback.
    max_iterations: usize,
    /// GMRES stops when the weighted RMS of the preconditioned residual is below this:
    /// [`FORCING`] × the Newton tolerance, or [`STANDALONE_TOLERANCE`].
    tolerance: f64,
}

impl Default for KrylovSolver {
    fn default() -> Self {
        Self {
            weights: None,
            stats: None,
            a: None,
            rows: RowMatrix::default(),
            pre: None,
            full: RefCell::new(None),
            drop_tol: FIRST_DROP,
            hardest: Cell::new(0),
            failed: Cell::new(false),
            work: RefCell::new(Work::default()),
            max_iterations: MAX_ITERATIONS,
            tolerance: STANDALONE_TOLERANCE,
        }
    }
}

impl KrylovSolver {
    /// A solver that weighs the error as the integrator does, and counts into `stats`.
    pub fn new(weights: Rc<WeightSource>, stats: Rc<Cell<KrylovStats>>) -> Self {
        Self {
            tolerance: FORCING * weights.newton_tolerance,
            weights: Some(weights),
            stats: Some(stats),
            ..Self::default()
        }
    }

    fn count(&self, f: impl FnOnce(&mut KrylovStats)) {
        if let Some(s) = &self.stats {
            let mut v = s.get();
            f(&mut v);
            s.set(v);
        }
    }

    fn matrix(&self) -> Option<SparseColMatRef<'_, usize, f64>> {
        self.a.as_ref().map(|a| a.inner()[0].as_ref())
    }

    /// Next δ from how the solves of the last matrix went.
    fn adapt(&mut self) {
        let hardest = self.hardest.replace(0);
        if self.failed.replace(false) {
            self.drop_tol = (self.drop_tol * 1e-2).max(TIGHTEST_DROP);
        } else if hardest > HARD {
            self.drop_tol = (self.drop_tol * 0.1).max(TIGHTEST_DROP);
        } else if hardest <= EASY {
            self.drop_tol = (self.drop_tol * 3.0).min(LOOSEST_DROP);
        }
    }

    /// The LU of A with the entries |a_ij| ≤ δ·√(|a_ii||a_jj|), i ≠ j, left out; `None` when it
    /// is singular.
    fn precondition(
        &self,
        a: SparseColMatRef<'_, usize, f64>,
        old: Option<Preconditioner>,
    ) -> Option<Preconditioner> {
        let n = a.ncols();
        let sym = a.symbolic();
        let (cp, ri, val) = (sym.col_ptr(), sym.row_idx(), a.val());
        let mut diag = vec![0.0; n];
        for j in 0..n {
            for k in cp[j]..cp[j + 1] {
                if ri[k] == j {
                    diag[j] = val[k].abs();
                }
            }
        }
        let mut col_ptr = Vec::with_capacity(n + 1);
        let mut row_idx = Vec::new();
        let mut vals = Vec::new();
        col_ptr.push(0);
        for j in 0..n {
            for k in cp[j]..cp[j + 1] {
                let i = ri[k];
                if i == j || val[k].abs() > self.drop_tol * (diag[i] * diag[j]).sqrt() {
                    row_idx.push(i);
                    vals.push(val[k]);
                }
            }
            col_ptr.push(row_idx.len());
        }
        self.count(|s| {
            s.kept = row_idx.len();
            s.total = val.len();
        });
        let sym = SymbolicSparseColMat::new_checked(n, n, col_ptr, None, row_idx);
        let p = SparseColMat::new(sym, vals);
        let lu = Preconditioner::factor(p.as_ref(), old)?;
        // A singular or badly pivoted factor shows up as a non-finite solve of a unit vector.
        let mut probe = vec![1.0; n];
        let ones = vec![1.0; n];
        lu.solve_weighted(&mut probe, &ones).then_some(lu)
    }

    /// Solve with the complete LU of A, factorised on first use for this linearisation.
    fn solve_exact(&self, x: &mut [f64], transpose: bool) -> Result<(), LaError> {
        let a = self
            .matrix()
            .ok_or_else(|| LaError::Other("the Krylov solver has no matrix".into()))?;
        let mut full = self.full.borrow_mut();
        if full.is_none() {
            *full = Lu::factor(a, SupernodalThreshold::AUTO);
        }
        let lu = full
            .as_ref()
            .ok_or_else(|| LaError::Other("the Newton matrix is singular".into()))?;
        if lu.solve(x, transpose) {
            Ok(())
        } else {
            Err(LaError::Other("the Newton matrix is singular".into()))
        }
    }

    /// Left-preconditioned, restarted GMRES on the weighted system: `b` becomes Δ and the
    /// iterations used are returned, or `None` (with `b` unchanged) when it did not converge
    /// within [`MAX_ITERATIONS`].
    fn gmres(&self, b: &mut [f64]) -> Option<usize> {
        let pre = self.pre.as_ref()?;
        let n = b.len();
        let mut work = self.work.borrow_mut();
        let w = &mut *work;
        match &self.weights {
            Some(src) => src.weights(n, &mut w.weights),
            None => {
                w.weights.clear();
                w.weights.resize(n, 1.0);
            }
        }
        let m = RESTART;
        w.basis.resize((m + 1) * n, 0.0);
        w.hess.resize((m + 1) * m, 0.0);
        w.cs.resize(m, 0.0);
        w.sn.resize(m, 0.0);
        w.g.resize(m + 1, 0.0);
        w.tmp.resize(n, 0.0);
        w.x.clear();
        w.x.resize(n, 0.0);
        let rms = |v: &[f64]| (dot(v, v) / n as f64).sqrt();

        // r0 = W P⁻¹ b (x0 = 0); the iterate x is kept in the weighted space.
        w.tmp.copy_from_slice(b);
        if !weighted_preconditioned(pre, &w.weights, &mut w.tmp) {
            return None;
        }
        let r0 = rms(&w.tmp);
        if !r0.is_finite() {
            return None;
        }
        if r0 <= self.tolerance {
            // Δ within the tolerance of zero: the preconditioned solve is as good as any.
            b.copy_from_slice(&w.tmp);
            for i in 0..n {
                b[i] /= w.weights[i];
            }
            return Some(0);
        }
        let target = self.tolerance.max(RELATIVE_TOLERANCE * r0);
        let mut iterations = 0;
        w.residual.clear();
        w.residual.extend_from_slice(&w.tmp);
        loop {
            // Start a cycle from the current residual (in the weighted, preconditioned space).
            let beta = rms(&w.residual) * (n as f64).sqrt();
            for i in 0..n {
                w.basis[i] = w.residual[i] / beta;
            }
            w.g.iter_mut().for_each(|v| *v = 0.0);
            w.g[0] = beta;
            let mut k_used = 0;
            let mut converged = false;
            for k in 0..m {
                iterations += 1;
                k_used = k + 1;
                // v_{k+1} = W P⁻¹ A W⁻¹ v_k
                let (head, tail) = w.basis.split_at_mut((k + 1) * n);
                let vk = &head[k * n..];
                let next = &mut tail[..n];
                for i in 0..n {
                    w.tmp[i] = vk[i] / w.weights[i];
                }
                self.rows.mul(&w.tmp, next);
                if !weighted_preconditioned(pre, &w.weights, next) {
                    return None;
                }
                // Modified Gram–Schmidt against v_0..v_k.
                let col = &mut w.hess[k * (m + 1)..(k + 1) * (m + 1)];
                for (j, hj) in col.iter_mut().enumerate().take(k + 1) {
                    let vj = &head[j * n..(j + 1) * n];
                    let h = dot(vj, next);
                    for i in 0..n {
                        next[i] -= h * vj[i];
                    }
                    *hj = h;
                }
                let norm = dot(next, next).sqrt();
                col[k + 1] = norm;
                if norm > 0.0 {
                    next.iter_mut().for_each(|v| *v /= norm);
                }
                // Apply the earlier Givens rotations, then a new one to zero h_{k+1,k}.
                for j in 0..k {
                    let (c, s) = (w.cs[j], w.sn[j]);
                    let (h0, h1) = (col[j], col[j + 1]);
                    col[j] = c * h0 + s * h1;
                    col[j + 1] = -s * h0 + c * h1;
                }
                let (h0, h1) = (col[k], col[k + 1]);
                let r = h0.hypot(h1);
                if r == 0.0 || !r.is_finite() {
                    return None;
                }
                let (c, s) = (h0 / r, h1 / r);
                w.cs[k] = c;
                w.sn[k] = s;
                col[k] = r;
                col[k + 1] = 0.0;
                let gk = w.g[k];
                w.g[k] = c * gk;
                w.g[k + 1] = -s * gk;
                let res = w.g[k + 1].abs() / (n as f64).sqrt();
                if res <= target {
                    converged = true;
                    break;
                }
                if norm == 0.0 {
                    // Lucky breakdown: the Krylov space holds the exact solution.
                    converged = true;
                    break;
                }
                if iterations >= self.max_iterations {
                    break;
                }
            }
            // Back-substitute H y = g and add Σ y_j v_j to x.
            let k = k_used;
            w.y.clear();
            w.y.resize(k, 0.0);
            let yv = &mut w.y;
            for i in (0..k).rev() {
                let mut s = w.g[i];
                for j in i + 1..k {
                    s -= w.hess[j * (m + 1) + i] * yv[j];
                }
                yv[i] = s / w.hess[i * (m + 1) + i];
            }
            for (j, yj) in yv.iter().enumerate() {
                let vj = &w.basis[j * n..(j + 1) * n];
                for i in 0..n {
                    w.x[i] += yj * vj[i];
                }
            }
            if converged {
                break;
            }
            if iterations >= self.max_iterations {
                return None;
            }
            // New residual W P⁻¹ (b − A W⁻¹ x) for the restart.
            for i in 0..n {
                w.tmp[i] = w.x[i] / w.weights[i];
            }
            self.rows.mul(&w.tmp, &mut w.residual);
            for (r, bi) in w.residual.iter_mut().zip(b.iter()) {
                *r = bi - *r;
            }
            if !weighted_preconditioned(pre, &w.weights, &mut w.residual) {
                return None;
            }
        }
        // Back to the unweighted Δ; `b` is written only for a finite result, so a failed
        // solve leaves it for the fallback.
        for i in 0..n {
            w.x[i] /= w.weights[i];
        }
        if !w.x.iter().all(|v| v.is_finite()) {
            return None;
        }
        b.copy_from_slice(&w.x);
        Some(iterations)
    }
}

/// v ← W P⁻¹ v; false if the result is not finite.
fn weighted_preconditioned(pre: &Preconditioner, weights: &[f64], v: &mut [f64]) -> bool {
    pre.solve_weighted(v, weights)
}

impl LinearSolver<FaerSparseMat<f64>> for KrylovSolver {
    fn set_sparsity<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        let a =
            FaerSparseMat::new_from_sparsity(op.nrows(), op.ncols(), op.sparsity(), *op.context());
        self.a = Some(a);
        self.pre = None;
        *self.full.get_mut() = None;
    }

    fn set_linearisation<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        let Some(a) = self.a.as_mut() else {
            return;
        };
        op.matrix_inplace(a);
        self.adapt();
        *self.full.get_mut() = None;
        let old = self.pre.take();
        let a = self
            .a
            .as_ref()
            .map(|a| a.inner()[0].as_ref())
            .expect("matrix set above");
        self.rows.load(a);
        let mut pre = self.precondition(a, old);
        // A singular dropped matrix: keep more of A until it is not (δ = 0 is A itself).
        while pre.is_none() && self.drop_tol > TIGHTEST_DROP {
            self.drop_tol = (self.drop_tol * 1e-2).max(TIGHTEST_DROP);
            pre = self.precondition(a, None);
        }
        self.pre = pre;
        self.count(|s| s.factorizations += 1);
    }

    fn solve_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        let b = x.inner_mut().col_as_slice_mut(0);
        self.count(|s| s.solves += 1);
        // `gmres` leaves `b` as it was when it fails.
        if let Some(its) = self.gmres(b) {
            self.count(|s| s.iterations += its);
            self.hardest.set(self.hardest.get().max(its));
            return Ok(());
        }
        self.count(|s| {
            s.iterations += self.max_iterations;
            s.fallbacks += 1;
        });
        self.failed.set(true);
        self.solve_exact(b, false)
    }

    fn solve_transpose_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        let b = x.inner_mut().col_as_slice_mut(0);
        self.solve_exact(b, true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A given matrix as the linear operator diffsol would hand over.
    struct Given(FaerSparseMat<f64>);

    impl LaLinearOp for Given {
        type T = f64;
        type V = FaerVec<f64>;
        type M = FaerSparseMat<f64>;
        type C = FaerContext;
        fn nrows(&self) -> usize {
            self.0.nrows()
        }
        fn ncols(&self) -> usize {
            self.0.ncols()
        }
        fn context(&self) -> &FaerContext {
            self.0.context()
        }
        fn matrix_inplace(&self, y: &mut FaerSparseMat<f64>) {
            y.copy_from(&self.0);
        }
        fn sparsity(&self) -> Option<SymbolicSparseColMat<usize>> {
            self.0
                .sparsity()
                .map(|s| s.to_owned().expect("small test matrix"))
        }
    }

    fn given(n: usize, entries: &[(usize, usize, f64)]) -> Given {
        let idx = entries.iter().map(|&(i, j, _)| (i, j)).collect();
        let val = entries.iter().map(|&(_, _, v)| v).collect();
        Given(FaerSparseMat::try_from_triplets(n, n, idx, val, FaerContext::default()).unwrap())
    }

    /// Dense Gaussian elimination with partial pivoting, as the reference (nalgebra).
    fn reference(n: usize, entries: &[(usize, usize, f64)], b: &[f64]) -> Vec<f64> {
        let mut a = nalgebra::DMatrix::<f64>::zeros(n, n);
        for &(i, j, v) in entries {
            a[(i, j)] += v;
        }
        let x = a
            .lu()
            .solve(&nalgebra::DVector::from_column_slice(b))
            .unwrap();
        x.iter().copied().collect()
    }

    /// A = I − h·J for a stiff random mass-action-like J: rate constants over ten decades,
    /// each "reaction" a → b giving J_aa −= k, J_ba += k, plus a weak link a → c.
    fn stiff_newton_matrix(n: usize, h: f64, seed: u64) -> Vec<(usize, usize, f64)> {
        let mut state = seed;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        let mut e: Vec<(usize, usize, f64)> = (0..n).map(|i| (i, i, 1.0)).collect();
        for _ in 0..3 * n {
            let a = (next() * n as f64) as usize % n;
            let b = (next() * n as f64) as usize % n;
            if a == b {
                continue;
            }
            let k = 10f64.powf(-3.0 + 10.0 * next());
            e.push((a, a, h * k));
            e.push((b, a, -h * k));
        }
        e
    }

    fn solve_with(ls: &mut KrylovSolver, op: &Given, b: &[f64]) -> Vec<f64> {
        ls.set_sparsity(op);
        ls.set_linearisation(op);
        let mut x = FaerVec::from_slice(b, FaerContext::default());
        ls.solve_in_place(&mut x).unwrap();
        x.clone_as_vec()
    }

    fn weights(n: usize) -> Rc<WeightSource> {
        Rc::new(WeightSource {
            // GMRES stops at the standalone tolerance, as a direct solve would be judged
            newton_tolerance: STANDALONE_TOLERANCE / FORCING,
            rtol: 1e-8,
            atol: vec![1e-12],
            y: RefCell::new(vec![1.0; n]),
        })
    }

    /// |x − x_ref|_i within 1e-6·(atol/rtol + |x_ref|): the accuracy the weighted stopping test
    /// promises, STANDALONE_TOLERANCE = 1e-5 of a weight unit, with margin.
    fn assert_close(x: &[f64], r: &[f64]) {
        for (i, (a, b)) in x.iter().zip(r).enumerate() {
            let scale = 1e-12 + 1e-8 * 1.0;
            assert!(
                (a - b).abs() <= 1e-4 * scale + 1e-9 * b.abs(),
                "component {i}: {a} against {b}"
            );
        }
    }

    #[test]
    fn solves_stiff_newton_systems_like_a_direct_lu() {
        let n = 300;
        for (h, seed) in [(1e-9, 1), (1e-6, 2), (1e-3, 3), (1.0, 4)] {
            let e = stiff_newton_matrix(n, h, seed);
            let op = given(n, &e);
            let b: Vec<f64> = (0..n).map(|i| ((i * 37) % 11) as f64 - 5.0).collect();
            let stats = Rc::new(Cell::new(KrylovStats::default()));
            let mut ls = KrylovSolver::new(weights(n), stats.clone());
            let x = solve_with(&mut ls, &op, &b);
            let r = reference(n, &e, &b);
            assert_close(&x, &r);
            let s = stats.get();
            assert_eq!(s.fallbacks, 0, "h = {h}: {s:?}");
            assert!(s.kept <= s.total, "{s:?}");
        }
    }

    /// Inside a Newton iteration with tolerance 0.2, GMRES stops at the forcing term
    /// FORCING × 0.2 = 0.01 in the weighted RMS norm: Δ is then within that (with margin 2
    /// for P⁻¹A ≠ I) of the direct solution (nalgebra's dense LU) in the norm Newton judges
    /// it by, and the solve needs fewer iterations than one held to the standalone 1e-5.
    #[test]
    fn stops_relative_to_the_newton_tolerance() {
        let n = 300;
        for (h, seed) in [(1e-3, 3), (1.0, 4)] {
            let e = stiff_newton_matrix(n, h, seed);
            let op = given(n, &e);
            // a Newton right-hand side of a few weight units per component
            let b: Vec<f64> = (0..n)
                .map(|i| 3e-8 * (((i * 37) % 11) as f64 - 5.0))
                .collect();
            let r = reference(n, &e, &b);
            let newton = Rc::new(WeightSource {
                newton_tolerance: 0.2,
                rtol: 1e-8,
                atol: vec![1e-12],
                y: RefCell::new(vec![1.0; n]),
            });
            let w = 1.0 / (1e-12 + 1e-8);
            let loose = Rc::new(Cell::new(KrylovStats::default()));
            let mut ls = KrylovSolver::new(newton, loose.clone());
            let x = solve_with(&mut ls, &op, &b);
            let err = (x
                .iter()
                .zip(&r)
                .map(|(a, b)| ((a - b) * w).powi(2))
                .sum::<f64>()
                / n as f64)
                .sqrt();
            assert!(err <= 2.0 * FORCING * 0.2, "h = {h}: weighted error {err}");
            let tight = Rc::new(Cell::new(KrylovStats::default()));
            let mut ls = KrylovSolver::new(weights(n), tight.clone());
            solve_with(&mut ls, &op, &b);
            assert!(
                loose.get().iterations < tight.get().iterations,
                "h = {h}: {:?} against {:?}",
                loose.get(),
                tight.get()
            );
        }
    }

    /// The preconditioner's own factorisation and triangular solves give faer's complete
    /// simplicial LU solve of the same matrix to rounding (1e-12 relative), for a fresh column
    /// order and for one kept from an earlier matrix of another pattern (any column order
    /// gives an exact LU; only the fill differs).
    #[test]
    fn own_triangular_solves_match_faers_lu() {
        let n = 300;
        let mut old = None;
        for (h, seed) in [(1e-6, 21), (1e-3, 22), (1.0, 23)] {
            let e = stiff_newton_matrix(n, h, seed);
            let m = given(n, &e).0;
            let a = m.inner()[0].as_ref();
            let pre = Preconditioner::factor(a, old.take()).expect("regular matrix");
            let lu = Lu::factor(a, SupernodalThreshold::FORCE_SIMPLICIAL).expect("regular");
            let b: Vec<f64> = (0..n).map(|i| ((i * 13) % 7) as f64 - 3.0).collect();
            let w: Vec<f64> = (0..n).map(|i| 1.0 + (i % 5) as f64).collect();
            let mut x = b.clone();
            assert!(pre.solve_weighted(&mut x, &w));
            let mut r = b.clone();
            assert!(lu.solve(&mut r, false));
            let scale = r.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for i in 0..n {
                assert!(
                    (x[i] - w[i] * r[i]).abs() <= 1e-12 * w[i] * scale,
                    "h = {h}, component {i}: {} against {}",
                    x[i],
                    w[i] * r[i]
                );
            }
            old = Some(pre);
        }
    }

    #[test]
    fn drops_most_entries_of_a_stiff_matrix() {
        // At a small step most couplings are far below the unit diagonal.
        let n = 300;
        let e = stiff_newton_matrix(n, 1e-6, 7);
        let op = given(n, &e);
        let stats = Rc::new(Cell::new(KrylovStats::default()));
        let mut ls = KrylovSolver::new(weights(n), stats.clone());
        let b = vec![1.0; n];
        let x = solve_with(&mut ls, &op, &b);
        assert_close(&x, &reference(n, &e, &b));
        let s = stats.get();
        assert!(s.kept * 2 < s.total, "kept {} of {}", s.kept, s.total);
    }

    #[test]
    fn falls_back_to_the_complete_lu_when_gmres_stalls() {
        let n = 200;
        let e = stiff_newton_matrix(n, 1.0, 11);
        let op = given(n, &e);
        let stats = Rc::new(Cell::new(KrylovStats::default()));
        let mut ls = KrylovSolver::new(weights(n), stats.clone());
        ls.max_iterations = 1;
        ls.drop_tol = LOOSEST_DROP;
        let b: Vec<f64> = (0..n).map(|i| (i as f64).sin()).collect();
        let x = solve_with(&mut ls, &op, &b);
        assert_close(&x, &reference(n, &e, &b));
        assert_eq!(stats.get().fallbacks, 1);
        // and the next matrix is preconditioned with more of A kept
        ls.set_linearisation(&op);
        assert!(ls.drop_tol < LOOSEST_DROP);
    }

    #[test]
    fn transpose_solve_uses_the_complete_lu() {
        let n = 50;
        let e = stiff_newton_matrix(n, 1e-2, 5);
        let op = given(n, &e);
        let mut ls = KrylovSolver::default();
        ls.set_sparsity(&op);
        ls.set_linearisation(&op);
        let b: Vec<f64> = (0..n).map(|i| 1.0 + i as f64).collect();
        let mut x = FaerVec::from_slice(&b, FaerContext::default());
        ls.solve_transpose_in_place(&mut x).unwrap();
        let et: Vec<_> = e.iter().map(|&(i, j, v)| (j, i, v)).collect();
        let r = reference(n, &et, &b);
        for (a, b) in x.clone_as_vec().iter().zip(&r) {
            assert!((a - b).abs() <= 1e-10 * (1.0 + b.abs()), "{a} against {b}");
        }
    }

    /// The four-way partial sums give the plain sums (exactly, on integers, whose sums are exact
    /// in any order; from memory: f64 holds integers below 2^53 exactly) for every length
    /// around the unrolling, including rows with no entries.
    #[test]
    fn partial_sums_match_plain_sums() {
        for len in 0..11 {
            let a: Vec<f64> = (0..len).map(|k| (k as f64) - 3.0).collect();
            let b: Vec<f64> = (0..len).map(|k| 2.0 * (k as f64) + 1.0).collect();
            let plain: f64 = a.iter().zip(&b).map(|(x, y)| x * y).sum();
            assert_eq!(dot(&a, &b), plain, "length {len}");
        }
        // Rows of 0, 1, 4, 5 and 9 entries of a 6-column matrix.
        let lens = [0usize, 1, 4, 5, 9];
        let mut row_ptr = vec![0];
        let (mut cols, mut vals) = (Vec::new(), Vec::new());
        for (r, &l) in lens.iter().enumerate() {
            for k in 0..l {
                cols.push((r + 2 * k) % 6);
                vals.push((r * 10 + k) as f64);
            }
            row_ptr.push(cols.len());
        }
        let x = [1.0, -2.0, 3.0, 0.5, -1.5, 4.0];
        let mut out = vec![f64::NAN; lens.len()];
        mul_rows(&row_ptr, &cols, &vals, &x, &mut out);
        for r in 0..lens.len() {
            let plain: f64 = (row_ptr[r]..row_ptr[r + 1])
                .map(|k| vals[k] * x[cols[k]])
                .sum();
            assert_eq!(out[r], plain, "row {r}");
        }
    }

    #[test]
    fn singular_matrix_is_an_error_not_a_result() {
        // Rows 0 and 1 equal: no preconditioner and no complete LU exist.
        let e = vec![
            (0, 0, 1.0),
            (0, 1, 2.0),
            (1, 0, 1.0),
            (1, 1, 2.0),
            (2, 2, 1.0),
        ];
        let op = given(3, &e);
        let mut ls = KrylovSolver::default();
        ls.set_sparsity(&op);
        ls.set_linearisation(&op);
        let mut x = FaerVec::from_slice(&[1.0, 0.0, 1.0], FaerContext::default());
        assert!(ls.solve_in_place(&mut x).is_err());
    }
}
