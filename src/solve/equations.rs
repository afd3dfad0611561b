//! The reactor balance dy/dx = f(x, y) as the equations diffsol integrates, with the Jacobian
//! J = ∂f/∂y written straight into diffsol's matrix.
//!
//! The reactor model gives J as (row, col, value) triplets. They are summed into compressed
//! rows once per (x, y) and cached; from there the values are copied into the matrix diffsol
//! factorises (dense nalgebra or sparse faer CSC), one pass over the non-zeros. diffsol's own
//! route for closures rebuilds J from Jacobian–vector products J·v, one per colour of the
//! column-intersection graph; on generated networks that took 350 products per Jacobian at
//! 1,000 species and 870 at 3,000 (species that take part in many reactions make dense rows and
//! columns, which need many colours), and dominated the step cost at the larger size.
//!
//! The sparse matrix's structure is the set of (row, col) pairs the model emits at y0 (every
//! structural entry, also those whose value is zero there). An entry outside it later is
//! reported as [`OdeError::SparsityChanged`] rather than dropped.

use std::cell::{Cell, RefCell};
use std::rc::Rc;

use super::krylov::{KrylovStats, WeightSource};
use super::system::{OdeError, OdeSystem};
use diffsol::{
    ConstantOp, DiffsolError, FaerSparseMat, Matrix, NalgebraMat, NonLinearOp, NonLinearOpJacobian,
    OdeEquations, OdeEquationsRef, Op, ParameterisedOp, UnitCallable, Vector, VectorCommon,
};
use diffsol_la::MatrixSparsity;

/// Jacobian entries (row, col, value).
type Triplets = Vec<(usize, usize, f64)>;

/// The Jacobian in compressed-row form, built from the system's triplets with duplicates summed.
///
/// A system emits its triplets in the same order at every evaluation (the structure is fixed by
/// the network), so the place of each triplet in `values` is worked out once and reused while
/// the (row, column) sequence stays the same.
#[derive(Default)]
pub(super) struct Csr {
    /// (row, col) of each triplet of the last structure, in emission order.
    keys: Vec<(usize, usize)>,
    /// Index into `values` of each triplet.
    slot: Vec<usize>,
    pub(super) row_start: Vec<usize>,
    pub(super) cols: Vec<usize>,
    pub(super) values: Vec<f64>,
    /// Counts the structures built, so a placement into another matrix can tell it is stale.
    generation: u64,
}

impl Csr {
    /// Sum `trips` into the values; returns true when the structure had to be rebuilt.
    pub(super) fn load(&mut self, n: usize, trips: &[(usize, usize, f64)]) -> bool {
        let same = self.row_start.len() == n + 1
            && self.keys.len() == trips.len()
            && self
                .keys
                .iter()
                .zip(trips)
                .all(|(k, t)| k.0 == t.0 && k.1 == t.1);
        if !same {
            self.generation += 1;
            self.keys.clear();
            self.keys.extend(trips.iter().map(|&(r, c, _)| (r, c)));
            let mut order: Vec<usize> = (0..trips.len()).collect();
            order.sort_unstable_by_key(|&t| self.keys[t]);
            self.slot.clear();
            self.slot.resize(trips.len(), 0);
            self.cols.clear();
            self.row_start.clear();
            self.row_start.resize(n + 1, 0);
            let mut last = None;
            for &t in &order {
                let key = self.keys[t];
                if last != Some(key) {
                    self.cols.push(key.1);
                    self.row_start[key.0 + 1] += 1;
                    last = Some(key);
                }
                self.slot[t] = self.cols.len() - 1;
            }
            for r in 0..n {
                self.row_start[r + 1] += self.row_start[r];
            }
        }
        self.values.clear();
        self.values.resize(self.cols.len(), 0.0);
        for (t, &(_, _, v)) in trips.iter().enumerate() {
            self.values[self.slot[t]] += v;
        }
        !same
    }

    /// out = J v.
    pub(super) fn mul(&self, v: &[f64], out: &mut [f64]) {
        super::krylov::mul_rows(&self.row_start, &self.cols, &self.values, v, out);
    }

    /// The (row, col) of each stored entry, in compressed-row order.
    fn entries(&self) -> impl Iterator<Item = (usize, usize)> + '_ {
        (0..self.row_start.len().saturating_sub(1)).flat_map(move |r| {
            self.cols[self.row_start[r]..self.row_start[r + 1]]
                .iter()
                .map(move |&c| (r, c))
        })
    }
}

/// A fault seen inside a callback, which cannot return an error itself; it is reported after
/// the solver call that triggered it.
#[derive(Debug, Clone)]
enum Fault {
    Rhs { x: f64, index: usize },
    Jac { x: f64, row: usize, col: usize },
    Index { row: usize, col: usize },
    Pattern { x: f64, row: usize, col: usize },
}

/// Where each compressed-row entry of J goes in the values of diffsol's matrix, worked out for
/// one [`Csr`] structure (`generation`); `usize::MAX` marks an entry the matrix has no room for.
#[derive(Default)]
pub(super) struct Placement {
    generation: u64,
    place: Vec<usize>,
}

/// The system with counters, a Jacobian cache and the first fault, shared by the equations
/// handed to diffsol and by the stepping loop that reads the counters afterwards.
pub(super) struct Shared<'s> {
    sys: &'s dyn OdeSystem,
    pub(super) dim: usize,
    pub(super) rhs_evals: Cell<usize>,
    pub(super) jac_evals: Cell<usize>,
    fault: RefCell<Option<Fault>>,
    /// (x, y, triplets, compressed rows) of the last Jacobian evaluation.
    cache: RefCell<(f64, Vec<f64>, Triplets, Csr)>,
    placement: RefCell<Placement>,
    /// Krylov solver only: the latest state the right-hand side saw, for its error weights,
    /// and the solver's counters.
    pub(super) latest: Option<Rc<WeightSource>>,
    pub(super) krylov: Option<Rc<Cell<KrylovStats>>>,
}

impl<'s> Shared<'s> {
    pub(super) fn new(sys: &'s dyn OdeSystem) -> Self {
        Self {
            sys,
            dim: sys.dim(),
            rhs_evals: Cell::new(0),
            jac_evals: Cell::new(0),
            fault: RefCell::new(None),
            cache: RefCell::new((f64::NAN, Vec::new(), Vec::new(), Csr::default())),
            placement: RefCell::new(Placement::default()),
            latest: None,
            krylov: None,
        }
    }

    fn record(&self, fault: Fault) {
        let mut slot = self.fault.borrow_mut();
        if slot.is_none() {
            *slot = Some(fault);
        }
    }

    pub(super) fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        self.rhs_evals.set(self.rhs_evals.get() + 1);
        if let Some(w) = &self.latest {
            let mut latest = w.y.borrow_mut();
            latest.clear();
            latest.extend_from_slice(y);
        }
        self.sys.rhs(x, y, dydx);
        if let Some(index) = dydx.iter().position(|v| !v.is_finite()) {
            self.record(Fault::Rhs { x, index });
        }
    }

    /// Make the cached compressed rows hold J(x, y), evaluating the triplets only when (x, y)
    /// changed.
    fn refresh(&self, x: f64, y: &[f64]) {
        let mut cache = self.cache.borrow_mut();
        let (cx, cy, trips, csr) = &mut *cache;
        if *cx == x && cy.as_slice() == y {
            return;
        }
        trips.clear();
        self.sys.jacobian(x, y, trips);
        self.jac_evals.set(self.jac_evals.get() + 1);
        *cx = x;
        cy.clear();
        cy.extend_from_slice(y);
        let n = self.dim;
        // Drop out-of-range entries (reported), so nothing below can index out of bounds.
        trips.retain(|&(row, col, _)| {
            let ok = row < n && col < n;
            if !ok {
                self.record(Fault::Index { row, col });
            }
            ok
        });
        if let Some(&(row, col, _)) = trips.iter().find(|t| !t.2.is_finite()) {
            self.record(Fault::Jac { x, row, col });
        }
        csr.load(n, trips);
    }

    /// out = J(x, y)·v.
    pub(super) fn jac_mul(&self, x: f64, y: &[f64], v: &[f64], out: &mut [f64]) {
        self.refresh(x, y);
        self.cache.borrow().3.mul(v, out);
    }

    /// The (row, col) pairs of J at (x, y), in compressed-row order.
    fn structure(&self, x: f64, y: &[f64]) -> Vec<(usize, usize)> {
        self.refresh(x, y);
        self.cache.borrow().3.entries().collect()
    }

    /// Write J(x, y) into diffsol's matrix.
    fn assemble<M: AssembledJacobian>(&self, x: f64, y: &[f64], m: &mut M) {
        self.refresh(x, y);
        let cache = self.cache.borrow();
        let csr = &cache.3;
        let mut placement = self.placement.borrow_mut();
        if let Some((row, col)) = m.store(csr, &mut placement) {
            self.record(Fault::Pattern { x, row, col });
        }
    }

    pub(super) fn take_fault(&self) -> Option<OdeError> {
        let fault = self.fault.borrow_mut().take()?;
        Some(match fault {
            Fault::Rhs { x, index } => OdeError::NonFiniteRhs { x, index },
            Fault::Jac { x, row, col } => OdeError::NonFiniteJacobian { x, row, col },
            Fault::Index { row, col } => OdeError::JacobianIndexOutOfRange {
                row,
                col,
                dim: self.dim,
            },
            Fault::Pattern { x, row, col } => OdeError::SparsityChanged { x, row, col },
        })
    }
}

/// A diffsol matrix the Jacobian can be written into directly.
pub(super) trait AssembledJacobian: Matrix<T = f64> {
    /// The structure diffsol allocates its Jacobian with, from the (row, col) pairs of J at
    /// y0: `None` for a dense matrix.
    fn structure(n: usize, entries: Vec<(usize, usize)>) -> Result<Option<Self::Sparsity>, String>;

    /// Copy J into the matrix (every other entry zero); returns the first entry of J the matrix
    /// has no room for.
    fn store(&mut self, csr: &Csr, placement: &mut Placement) -> Option<(usize, usize)>;

    /// A state vector of this matrix type as one slice (one lane, no batching).
    fn state(v: &Self::V) -> &[f64];
}

impl AssembledJacobian for NalgebraMat<f64> {
    fn structure(_: usize, _: Vec<(usize, usize)>) -> Result<Option<Self::Sparsity>, String> {
        Ok(None)
    }

    fn store(&mut self, csr: &Csr, _: &mut Placement) -> Option<(usize, usize)> {
        let m = self.inner_mut();
        m.fill(0.0);
        for (k, (r, c)) in csr.entries().enumerate() {
            m[(r, c)] = csr.values[k];
        }
        None
    }

    fn state(v: &Self::V) -> &[f64] {
        v.inner().as_slice()
    }
}

impl AssembledJacobian for FaerSparseMat<f64> {
    fn structure(n: usize, entries: Vec<(usize, usize)>) -> Result<Option<Self::Sparsity>, String> {
        <Self::Sparsity as MatrixSparsity<Self>>::try_from_indices(n, n, entries)
            .map(Some)
            .map_err(|e| e.to_string())
    }

    fn store(&mut self, csr: &Csr, placement: &mut Placement) -> Option<(usize, usize)> {
        let m = &mut self.inner_mut()[0];
        if placement.generation != csr.generation || placement.place.len() != csr.values.len() {
            let sym = m.symbolic();
            let (col_ptr, row_idx) = (sym.col_ptr(), sym.row_idx());
            placement.place.clear();
            placement.place.extend(csr.entries().map(|(r, c)| {
                let (lo, hi) = (col_ptr[c], col_ptr[c + 1]);
                // Rows are sorted within each column of a faer CSC matrix.
                match row_idx[lo..hi].binary_search(&r) {
                    Ok(i) => lo + i,
                    Err(_) => usize::MAX,
                }
            }));
            placement.generation = csr.generation;
        }
        let vals = m.val_mut();
        vals.fill(0.0);
        let mut outside = None;
        for (k, &p) in placement.place.iter().enumerate() {
            if p == usize::MAX {
                outside = outside.or_else(|| csr.entries().nth(k));
            } else {
                vals[p] = csr.values[k];
            }
        }
        outside
    }

    fn state(v: &Self::V) -> &[f64] {
        v.inner().col_as_slice(0)
    }
}

/// The equations diffsol integrates: the right-hand side, its assembled Jacobian and y0; no
/// mass matrix, roots (found by [`super::ode`] itself), outputs or parameters.
pub(super) struct Equations<'s, M: AssembledJacobian> {
    sh: &'s Shared<'s>,
    y0: &'s [f64],
    sparsity: Option<M::Sparsity>,
    ctx: M::C,
}

impl<'s, M: AssembledJacobian> Equations<'s, M> {
    /// Fix the structure of J from its evaluation at (0, y0). Faults of that evaluation are
    /// left in `sh` for the caller to report; f(0, y0) is evaluated first, so that a state the
    /// model cannot evaluate is reported as such rather than through its Jacobian.
    pub(super) fn new(sh: &'s Shared<'s>, y0: &'s [f64]) -> Result<Self, DiffsolError> {
        sh.rhs(0.0, y0, &mut vec![0.0; sh.dim]);
        let entries = sh.structure(0.0, y0);
        let sparsity = M::structure(sh.dim, entries)
            .map_err(|e| DiffsolError::Other(format!("Jacobian structure: {e}")))?;
        Ok(Self {
            sh,
            y0,
            sparsity,
            ctx: M::C::default(),
        })
    }
}

/// The right-hand side operator of [`Equations`].
pub(super) struct Rhs<'a, 's, M: AssembledJacobian> {
    eqn: &'a Equations<'s, M>,
}

/// The initial state operator of [`Equations`].
pub(super) struct Init<'a, 's, M: AssembledJacobian> {
    eqn: &'a Equations<'s, M>,
}

impl<M: AssembledJacobian> Op for Equations<'_, M> {
    type T = f64;
    type V = M::V;
    type M = M;
    type C = M::C;
    fn context(&self) -> &M::C {
        &self.ctx
    }
    fn nstates(&self) -> usize {
        self.sh.dim
    }
    fn nout(&self) -> usize {
        self.sh.dim
    }
    fn nparams(&self) -> usize {
        0
    }
}

/// The operators share the size and context of their equations.
macro_rules! op_of_equations {
    ($($ty:ty),*) => {$(
        impl<M: AssembledJacobian> Op for $ty {
            type T = f64;
            type V = M::V;
            type M = M;
            type C = M::C;
            fn context(&self) -> &M::C {
                self.eqn.context()
            }
            fn nstates(&self) -> usize {
                self.eqn.nstates()
            }
            fn nout(&self) -> usize {
                self.eqn.nout()
            }
            fn nparams(&self) -> usize {
                0
            }
        }
    )*};
}
op_of_equations!(Rhs<'_, '_, M>, Init<'_, '_, M>);

impl<M: AssembledJacobian> NonLinearOp for Rhs<'_, '_, M> {
    fn call_inplace(&self, y: &M::V, x: f64, dydx: &mut M::V) {
        dydx.for_each_batch_host([y], |d, [y], _| self.eqn.sh.rhs(x, y, d));
    }
}

impl<M: AssembledJacobian> NonLinearOpJacobian for Rhs<'_, '_, M> {
    fn jac_mul_inplace(&self, y: &M::V, x: f64, v: &M::V, jv: &mut M::V) {
        jv.for_each_batch_host([y, v], |jv, [y, v], _| self.eqn.sh.jac_mul(x, y, v, jv));
    }

    fn jacobian_inplace(&self, y: &M::V, x: f64, jac: &mut M) {
        self.eqn.sh.assemble(x, M::state(y), jac);
    }

    fn jacobian_sparsity(&self) -> Option<M::Sparsity> {
        self.eqn.sparsity.clone()
    }
}

impl<M: AssembledJacobian> ConstantOp for Init<'_, '_, M> {
    fn call_inplace(&self, _x: f64, y: &mut M::V) {
        y.for_each_batch_host([], |y, [], _| y.copy_from_slice(self.eqn.y0));
    }
}

impl<'a, 's, M: AssembledJacobian> OdeEquationsRef<'a> for Equations<'s, M> {
    type Rhs = Rhs<'a, 's, M>;
    type Init = Init<'a, 's, M>;
    type Mass = ParameterisedOp<'a, UnitCallable<M>>;
    type Root = ParameterisedOp<'a, UnitCallable<M>>;
    type Out = ParameterisedOp<'a, UnitCallable<M>>;
    type Reset = ParameterisedOp<'a, UnitCallable<M>>;
}

impl<'s, M: AssembledJacobian> OdeEquations for Equations<'s, M> {
    fn rhs(&self) -> Rhs<'_, 's, M> {
        Rhs { eqn: self }
    }
    fn init(&self) -> Init<'_, 's, M> {
        Init { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn set_params(&mut self, _p: &M::V) {}
    fn get_params(&self, _p: &mut M::V) {}
}

#[cfg(test)]
mod tests {
    use super::*;
    use diffsol::{FaerVec, MatrixCommon, NalgebraVec};

    /// A 3-state system with a duplicate entry, an entry that is structurally present but zero
    /// at y0, and one off the diagonal in each direction.
    struct Small;

    impl OdeSystem for Small {
        fn dim(&self) -> usize {
            3
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -2.0 * y[0] * y[0] + y[2];
            d[1] = 3.0 * y[0] - y[1] * y[2];
            d[2] = y[1] - 4.0 * y[2];
        }
        fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.extend([
                (0, 0, -2.0 * y[0]),
                (0, 0, -2.0 * y[0]),
                (0, 2, 1.0),
                (1, 0, 3.0),
                (1, 1, -y[2]),
                (1, 2, -y[1]),
                (2, 1, 1.0),
                (2, 2, -4.0),
            ]);
        }
    }

    /// J of [`Small`] by hand (plain calculus, from memory).
    fn by_hand(y: &[f64]) -> [[f64; 3]; 3] {
        [
            [-4.0 * y[0], 0.0, 1.0],
            [3.0, -y[2], -y[1]],
            [0.0, 1.0, -4.0],
        ]
    }

    /// The matrix written straight into diffsol's storage equals J by hand, and equals the
    /// matrix diffsol builds itself from J·e_j products, column by column, for the dense and
    /// the sparse types; also at a second state, after the structure was fixed at y0 (where
    /// entry (1, 2) is zero).
    #[test]
    fn assembled_jacobian_matches_hand_and_column_products() {
        let y0 = [1.0, 0.0, 0.5];
        let y1 = [0.3, 2.0, -1.0];
        let sh = Shared::new(&Small);
        let dense = Equations::<NalgebraMat<f64>>::new(&sh, &y0).unwrap();
        let sparse = Equations::<FaerSparseMat<f64>>::new(&sh, &y0).unwrap();
        assert!(dense.rhs().jacobian_sparsity().is_none());
        assert_eq!(
            sparse.rhs().jacobian_sparsity().map(|s| s.row_idx().len()),
            Some(7)
        );
        for y in [&y0, &y1] {
            let want = by_hand(y);
            let yd = NalgebraVec::from_vec(y.to_vec(), Default::default());
            let mut m = dense.rhs().jacobian(&yd, 0.0);
            let mut cols = m.clone();
            dense.rhs()._default_jacobian_inplace(&yd, 0.0, &mut cols);
            for (r, row) in want.iter().enumerate() {
                for (c, &w) in row.iter().enumerate() {
                    assert_eq!(m.inner()[(r, c)], w, "dense ({r}, {c})");
                    assert_eq!(cols.inner()[(r, c)], w, "dense J·e ({r}, {c})");
                }
            }
            dense.rhs().jacobian_inplace(&yd, 0.0, &mut m);
            assert_eq!(m.inner()[(0, 0)], want[0][0]);

            let ys = FaerVec::from_vec(y.to_vec(), Default::default());
            let m = sparse.rhs().jacobian(&ys, 0.0);
            let mut cols = m.clone();
            sparse.rhs()._default_jacobian_inplace(&ys, 0.0, &mut cols);
            let (a, b) = (m.inner()[0].to_dense(), cols.inner()[0].to_dense());
            for (r, row) in want.iter().enumerate() {
                for (c, &w) in row.iter().enumerate() {
                    assert_eq!(a[(r, c)], w, "sparse ({r}, {c})");
                    assert_eq!(b[(r, c)], w, "sparse J·e ({r}, {c})");
                }
            }
        }
        assert!(sh.take_fault().is_none());
    }

    /// An entry outside the structure fixed at y0 is reported, not dropped.
    #[test]
    fn entry_outside_the_structure_is_a_fault() {
        struct Grows;
        impl OdeSystem for Grows {
            fn dim(&self) -> usize {
                2
            }
            fn rhs(&self, _x: f64, _y: &[f64], d: &mut [f64]) {
                d.fill(0.0);
            }
            fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
                out.push((0, 0, -1.0));
                if y[1] > 0.0 {
                    out.push((1, 0, 1.0));
                }
            }
        }
        let sh = Shared::new(&Grows);
        let eqn = Equations::<FaerSparseMat<f64>>::new(&sh, &[1.0, 0.0]).unwrap();
        let y = FaerVec::from_vec(vec![1.0, 1.0], Default::default());
        let _ = eqn.rhs().jacobian(&y, 2.0);
        assert_eq!(
            sh.take_fault(),
            Some(OdeError::SparsityChanged {
                x: 2.0,
                row: 1,
                col: 0
            })
        );
    }

    /// The compressed rows sum duplicate triplets and give the same J·v as the raw triplets
    /// (plain matrix–vector product, from memory), also after a change of structure.
    #[test]
    fn compressed_rows_sum_duplicates() {
        let mut csr = Csr::default();
        let v = [1.0, -2.0, 0.5];
        let naive = |trips: &[(usize, usize, f64)]| {
            let mut out = [0.0; 3];
            for &(r, c, x) in trips {
                out[r] += x * v[c];
            }
            out
        };
        let a = [
            (2, 0, 1.5),
            (0, 1, 2.0),
            (2, 0, -0.25),
            (1, 2, 4.0),
            (0, 1, 1.0),
        ];
        for trips in [&a[..], &a[..], &a[1..], &[][..]] {
            csr.load(3, trips);
            let mut out = [f64::NAN; 3];
            csr.mul(&v, &mut out);
            assert_eq!(out, naive(trips));
        }
        assert_eq!(csr.values.len(), 0);
    }
}
