//! The column and row dependence of a sparse integer matrix by elimination over a prime field,
//! every answer then confirmed exactly over the rationals.
//!
//! # Method
//!
//! Columns are visited in order (left-looking LU factorisation, Gilbert & Peierls 1988; from
//! memory). Column `j` is reduced against the columns already found independent: a sparse
//! triangular solve `a_j = L y + ρ` mod p, with `L` unit lower triangular in the chosen pivot
//! rows. If the remainder `ρ` is zero, column `j` is dependent mod p and its combination of the
//! independent columns is `c = U⁻¹ y` (since `A_I = L U`). Otherwise `j` is independent mod p;
//! among the rows where `ρ` is non-zero, the one that occurs in the fewest columns still to
//! come becomes the pivot (a Markowitz-like rule, common practice), which keeps fill-in in `L`
//! small. Modulo p there is no rounding and no growth, so any non-zero is a good pivot.
//!
//! Each coefficient of `c` is lifted back to a rational `a/b` with `|a|, b ≤ √(p/2)` by
//! rational reconstruction (Wang 1981; from memory), and the identity `a_j = Σ c_i a_i` is then
//! checked exactly in integers. [`greedy_dependence`] gives up (returns `None`) when a
//! reconstruction or a check fails or an integer overflows; the caller then uses the exact
//! rational elimination. Why a confirmed answer is the exact one is argued in
//! docs/methods.md and in [`super::SparseQMatrix::dependence`].

use super::{Coef, Terms};
use num_integer::Integer;

/// Arithmetic modulo a prime `p < 2^63`, values kept in `0..p`.
pub(crate) trait PrimeField: Copy {
    fn p(self) -> u64;
    fn mul(self, a: u64, b: u64) -> u64;
    fn sub(self, a: u64, b: u64) -> u64 {
        if a >= b { a - b } else { a + self.p() - b }
    }
    /// `a^(p−2) = a⁻¹` for `a ≠ 0` (Fermat's little theorem).
    fn inv(self, a: u64) -> u64 {
        let mut base = a;
        let mut e = self.p() - 2;
        let mut out = 1;
        while e > 0 {
            if e & 1 == 1 {
                out = self.mul(out, base);
            }
            base = self.mul(base, base);
            e >>= 1;
        }
        out
    }
    fn reduce(self, v: i64) -> u64 {
        (v as i128).rem_euclid(self.p() as i128) as u64
    }
}

/// The Mersenne prime 2^61 − 1: products reduce with shifts and masks, no division.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Mersenne61;

const M61: u64 = (1 << 61) - 1;

impl PrimeField for Mersenne61 {
    fn p(self) -> u64 {
        M61
    }
    fn mul(self, a: u64, b: u64) -> u64 {
        // 2^61 ≡ 1 (mod p): fold the high bits onto the low ones.
        let z = a as u128 * b as u128;
        let s = (z as u64 & M61) + (z >> 61) as u64;
        let s = (s & M61) + (s >> 61);
        if s >= M61 { s - M61 } else { s }
    }
}

/// Any prime below 2^63 (used to test the fall-back with a deliberately small prime).
#[cfg(test)]
#[derive(Debug, Clone, Copy)]
pub(crate) struct Prime(pub u64);

#[cfg(test)]
impl PrimeField for Prime {
    fn p(self) -> u64 {
        self.0
    }
    fn mul(self, a: u64, b: u64) -> u64 {
        ((a as u128 * b as u128) % self.0 as u128) as u64
    }
}

/// Sparse integer columns (compressed sparse column form), rows increasing in each column.
#[derive(Debug, Clone, Default)]
pub(crate) struct IntColumns {
    pub nrows: usize,
    start: Vec<usize>,
    row: Vec<u32>,
    val: Vec<i64>,
}

impl IntColumns {
    pub fn new(nrows: usize) -> Self {
        IntColumns {
            nrows,
            start: vec![0],
            row: Vec::new(),
            val: Vec::new(),
        }
    }

    /// Appends a column given by its non-zero entries, rows increasing.
    pub fn push(&mut self, entries: impl IntoIterator<Item = (usize, i64)>) {
        for (r, v) in entries {
            self.row.push(r as u32);
            self.val.push(v);
        }
        self.start.push(self.row.len());
    }

    /// Appends a column given as its rows (increasing) and values.
    fn push_parts(&mut self, (rows, vals): (&[u32], &[i64])) {
        self.row.extend_from_slice(rows);
        self.val.extend_from_slice(vals);
        self.start.push(self.row.len());
    }

    pub fn ncols(&self) -> usize {
        self.start.len() - 1
    }

    /// The transpose: the rows as columns.
    pub fn transpose(&self) -> IntColumns {
        let mut count = vec![0usize; self.nrows + 1];
        for &r in &self.row {
            count[r as usize + 1] += 1;
        }
        for i in 0..self.nrows {
            count[i + 1] += count[i];
        }
        let mut next = count.clone();
        let mut row = vec![0u32; self.row.len()];
        let mut val = vec![0i64; self.row.len()];
        for j in 0..self.ncols() {
            for (r, v) in self.col(j) {
                row[next[r]] = j as u32;
                val[next[r]] = v;
                next[r] += 1;
            }
        }
        IntColumns {
            nrows: self.ncols(),
            start: count,
            row,
            val,
        }
    }

    /// The rows and values of column `j`.
    #[inline]
    fn col_parts(&self, j: usize) -> (&[u32], &[i64]) {
        let r = self.start[j]..self.start[j + 1];
        (&self.row[r.clone()], &self.val[r])
    }

    fn col(&self, j: usize) -> impl Iterator<Item = (usize, i64)> + '_ {
        let r = self.start[j]..self.start[j + 1];
        self.row[r.clone()]
            .iter()
            .zip(&self.val[r])
            .map(|(&r, &v)| (r as usize, v))
    }
}

/// A reduced fraction `num/den`, `den > 0`.
pub(crate) type Frac = (i64, i64);

/// The greedy column dependence of `cols`: the independent columns in order, and for each
/// dependent column `j` the `(column, coefficient)` pairs, columns increasing, with
/// `col_j = Σ c_i col_i` exactly. `None` when the prime field could not give a confirmed answer.
pub(crate) struct GreedyDependence {
    pub independent: Vec<usize>,
    pub dependent: Vec<(usize, Terms)>,
}

const NONE: u32 = u32::MAX;

/// The unit lower triangular factor `L` mod p of the independent columns `A_I = L U`: column
/// `k` is 1 in row `pivot_row[k]` (not stored) and holds the listed entries in rows that were
/// not pivots before step `k`.
pub(crate) struct LowerFactor {
    nrows: usize,
    pivot_row: Vec<u32>,
    l_start: Vec<usize>,
    l_row: Vec<u32>,
    l_val: Vec<u64>,
}

/// A set of indices below a bound, taken out smallest first or largest first: a bitset whose
/// occupied words lie between `lo` and `hi`. The sparse triangular solves visit the pivots a
/// column reaches in pivot order (increasing for `L`, decreasing for `U`); inserting and
/// taking out cost O(1) each, plus one scan of the words from the first to the last index
/// inserted (rank/64 words at most), instead of a binary heap's O(log n) comparisons and
/// moves per index. Inserting an index already present does nothing.
#[derive(Debug, Default)]
struct OrderedSet {
    words: Vec<u64>,
    /// The first and last word that may hold an index; `lo > hi` when empty.
    lo: usize,
    hi: usize,
}

impl OrderedSet {
    fn new() -> Self {
        OrderedSet {
            words: Vec::new(),
            lo: usize::MAX,
            hi: 0,
        }
    }

    /// Room for the indices `0..n`.
    fn reserve(&mut self, n: usize) {
        let w = n.div_ceil(64);
        if self.words.len() < w {
            self.words.resize(w, 0);
        }
    }

    #[inline(always)]
    fn insert(&mut self, k: usize) {
        let w = k >> 6;
        self.words[w] |= 1 << (k & 63);
        self.lo = self.lo.min(w);
        self.hi = self.hi.max(w);
    }

    /// Takes out the smallest index.
    #[inline(always)]
    fn pop_min(&mut self) -> Option<usize> {
        while self.lo <= self.hi {
            let word = self.words[self.lo];
            if word != 0 {
                self.words[self.lo] = word & (word - 1);
                return Some(self.lo * 64 + word.trailing_zeros() as usize);
            }
            self.lo += 1;
        }
        self.lo = usize::MAX;
        self.hi = 0;
        None
    }

    /// Takes out the largest index.
    #[inline(always)]
    fn pop_max(&mut self) -> Option<usize> {
        while self.lo <= self.hi {
            let word = self.words[self.hi];
            if word != 0 {
                let b = 63 - word.leading_zeros() as usize;
                self.words[self.hi] = word & !(1 << b);
                return Some(self.hi * 64 + b);
            }
            if self.hi == 0 {
                break;
            }
            self.hi -= 1;
        }
        self.lo = usize::MAX;
        self.hi = 0;
        None
    }
}

/// The factors `A_I = L U` mod p of the independent columns found so far, built column by
/// column: `L` as in [`LowerFactor`], `U` column `k` as its entries `(k', U_k'k)` above the
/// diagonal (`k' < k`), and `1/U_kk`.
struct Factors {
    /// `L` with its pivot rows, handed on as it is when the elimination ends.
    lower: LowerFactor,
    /// The pivot whose row this is, `NONE` for a row that is no pivot yet.
    k_of_row: Vec<u32>,
    u_start: Vec<usize>,
    u_k: Vec<u32>,
    u_val: Vec<u64>,
    diag_inv: Vec<u64>,
}

/// Work space of the triangular solves, reused from column to column.
struct Solver {
    /// The column being reduced, by row; zero outside the rows being worked on.
    x: Vec<u64>,
    /// `stamp[r] == tag` when row `r` (not a pivot) is in `rest` for the current column.
    stamp: Vec<u32>,
    /// The rows that are not pivots where the reduced column may be non-zero.
    rest: Vec<u32>,
    queue: OrderedSet,
    /// `y = L⁻¹ a` on the pivots, as `(k, y_k)`, `k` increasing, zeros left out.
    y: Vec<(u32, u64)>,
    /// The right-hand side of the back solve by pivot; zero between solves.
    w: Vec<u64>,
}

impl Factors {
    fn new(nrows: usize) -> Self {
        Factors {
            lower: LowerFactor {
                nrows,
                pivot_row: Vec::new(),
                l_start: vec![0],
                l_row: Vec::new(),
                l_val: Vec::new(),
            },
            k_of_row: vec![NONE; nrows],
            u_start: vec![0],
            u_k: Vec::new(),
            u_val: Vec::new(),
            diag_inv: Vec::new(),
        }
    }

    fn rank(&self) -> usize {
        self.lower.pivot_row.len()
    }
}

impl Solver {
    fn new(nrows: usize) -> Self {
        Solver {
            x: vec![0; nrows],
            stamp: vec![NONE; nrows],
            rest: Vec::new(),
            queue: OrderedSet::new(),
            y: Vec::new(),
            w: Vec::new(),
        }
    }

    /// Forward solve `a = L y + ρ` mod p, `ρ` zero in the pivot rows: `y` into `self.y`, `ρ`
    /// into `self.x` at the rows of `self.rest` (zero elsewhere). The pivots the column reaches
    /// are taken in increasing order (each `L` column only reaches later pivots). `tag` must
    /// differ from the previous call's; call [`Self::clear_rest`] before the next one.
    fn lower_solve<F: PrimeField>(
        &mut self,
        f: F,
        fac: &Factors,
        (rows, vals): (&[u32], &[i64]),
        tag: u32,
    ) {
        self.rest.clear();
        self.y.clear();
        self.queue.reserve(fac.rank());
        for (&r, &v) in rows.iter().zip(vals) {
            let ru = r as usize;
            self.x[ru] = f.reduce(v);
            self.reach(fac, r, tag);
        }
        while let Some(k) = self.queue.pop_min() {
            let r = fac.lower.pivot_row[k] as usize;
            let v = self.x[r];
            if v == 0 {
                continue;
            }
            self.x[r] = 0;
            self.y.push((k as u32, v));
            let span = fac.lower.l_start[k]..fac.lower.l_start[k + 1];
            for (&row, &l) in fac.lower.l_row[span.clone()]
                .iter()
                .zip(&fac.lower.l_val[span])
            {
                let ru = row as usize;
                self.x[ru] = f.sub(self.x[ru], f.mul(v, l));
                self.reach(fac, row, tag);
            }
        }
    }

    /// Row `row` now holds a value: a pivot row joins the queue, any other row the list of
    /// rows to clear (once per solve, by its stamp).
    #[inline(always)]
    fn reach(&mut self, fac: &Factors, row: u32, tag: u32) {
        let ru = row as usize;
        let k = fac.k_of_row[ru];
        if k != NONE {
            self.queue.insert(k as usize);
        } else if self.stamp[ru] != tag {
            self.stamp[ru] = tag;
            self.rest.push(row);
        }
    }

    /// Zeroes `x` at the rows of `rest` (the pivot rows are zeroed by the solve itself).
    fn clear_rest(&mut self) {
        for &r in &self.rest {
            self.x[r as usize] = 0;
        }
    }

    /// Back solve `U c = y` mod p for the `y` of the last [`Self::lower_solve`]: the non-zero
    /// `(k, c_k)` into `out`, `k` decreasing. The pivots are taken from the last one down (each
    /// `U` column only reaches earlier pivots).
    fn upper_solve<F: PrimeField>(&mut self, f: F, fac: &Factors, out: &mut Vec<(u32, u64)>) {
        out.clear();
        let rank = fac.rank();
        if self.w.len() < rank {
            self.w.resize(rank, 0);
        }
        self.queue.reserve(rank);
        for &(k, v) in &self.y {
            self.w[k as usize] = v;
            self.queue.insert(k as usize);
        }
        while let Some(k) = self.queue.pop_max() {
            let v = self.w[k];
            if v == 0 {
                continue;
            }
            self.w[k] = 0;
            let ck = f.mul(v, fac.diag_inv[k]);
            out.push((k as u32, ck));
            let span = fac.u_start[k]..fac.u_start[k + 1];
            for (&k2, &u) in fac.u_k[span.clone()].iter().zip(&fac.u_val[span]) {
                let k2 = k2 as usize;
                self.w[k2] = f.sub(self.w[k2], f.mul(u, ck));
                self.queue.insert(k2);
            }
        }
    }
}

/// See the module documentation.
///
/// `cols` are the integer columns `s_j a_j` of a matrix `A`; the coefficients returned are for
/// `A` itself: `c_i = c̃_i s_i / s_j` from those `c̃` found for the integer columns.
pub(crate) fn greedy_dependence<F: PrimeField>(
    f: F,
    cols: &IntColumns,
    scale: &[i64],
) -> Option<(GreedyDependence, LowerFactor)> {
    let nrows = cols.nrows;
    let ncols = cols.ncols();
    if nrows >= NONE as usize || ncols >= NONE as usize {
        return None;
    }
    // Columns to come that hold each row (the pivot choice prefers rows few of them hold).
    let mut future = vec![0u32; nrows];
    for &r in &cols.row {
        future[r as usize] += 1;
    }
    let mut fac = Factors::new(nrows);
    let mut solver = Solver::new(nrows);
    let mut independent: Vec<usize> = Vec::new();
    let mut dependent = Vec::new();
    let mut check = Checker::new(cols);
    // The independent columns again, in pivot order: the confirmations read them in that order
    // from a compact copy instead of from all over `cols`.
    let mut basis = IntColumns::new(nrows);
    let unscaled = scale.iter().all(|&s| s == 1);
    let bound = reconstruction_bound(f.p());
    let mut c_mod: Vec<(u32, u64)> = Vec::new();
    let mut combination: Vec<(usize, Frac)> = Vec::new();

    for j in 0..ncols {
        let col = cols.col_parts(j);
        for &r in col.0 {
            future[r as usize] -= 1;
        }
        solver.lower_solve(f, &fac, col, j as u32);
        // The remainder lives in rows that are not pivots yet.
        let x = &solver.x;
        let best = solver
            .rest
            .iter()
            .copied()
            .filter(|&r| x[r as usize] != 0)
            .min_by_key(|&r| (future[r as usize], r));
        match best {
            Some(pr) => {
                let pr_u = pr as usize;
                let inv = f.inv(x[pr_u]);
                for &r in &solver.rest {
                    let xr = x[r as usize];
                    if r != pr && xr != 0 {
                        fac.lower.l_row.push(r);
                        fac.lower.l_val.push(f.mul(xr, inv));
                    }
                }
                fac.lower.l_start.push(fac.lower.l_row.len());
                for &(k, v) in &solver.y {
                    fac.u_k.push(k);
                    fac.u_val.push(v);
                }
                fac.u_start.push(fac.u_k.len());
                fac.diag_inv.push(inv);
                fac.k_of_row[pr_u] = fac.lower.pivot_row.len() as u32;
                fac.lower.pivot_row.push(pr);
                independent.push(j);
                basis.push_parts(col);
                solver.clear_rest();
            }
            None => {
                solver.clear_rest();
                solver.upper_solve(f, &fac, &mut c_mod);
                // Pivots are numbered in column order: from the last pivot down is from the
                // last column down, so the reversed list is in column order.
                combination.clear();
                for &(k, ck) in c_mod.iter().rev() {
                    combination.push((k as usize, reconstruct_within(ck, f.p(), bound)?));
                }
                if !check.is_combination_in(col, &basis, &combination)? {
                    return None;
                }
                let mut terms = Terms::with_capacity(combination.len());
                for &(k, (a, b)) in &combination {
                    let i = independent[k];
                    // A reconstructed fraction is reduced with |a|, b < 2^31: unscaled
                    // columns (the common case) need no gcd.
                    match (i32::try_from(a), u32::try_from(b)) {
                        (Ok(a), Ok(b)) if unscaled => terms.push_small(i as u32, a, b),
                        _ => terms.push(
                            i,
                            Coef::from_ratio(
                                a as i128 * scale[i] as i128,
                                b as i128 * scale[j] as i128,
                            ),
                        ),
                    }
                }
                dependent.push((j, terms));
            }
        }
    }
    Some((
        GreedyDependence {
            independent,
            dependent,
        },
        fac.lower,
    ))
}

/// A conservation law: the row `f` it belongs to and its `(row, y_row)` entries, `y_f = 1`.
pub(crate) type Law = (usize, Vec<(usize, Frac)>);

/// At most this many conservation laws are sought mod p: putting the basis into the form with
/// one law per dependent row costs up to (laws)² sparse row operations.
const MAX_LAWS: usize = 2000;

/// The left null space `{y : yᵀ A = 0}` in the form the exact reduced echelon form of `Aᵀ`
/// gives: for each row `f` that is a combination of the rows before it (increasing), the
/// vector `y` with `y_f = 1`, zero in every later row and in every other such row, as
/// `(row, value)` pairs, rows increasing, each confirmed `yᵀ A = 0` exactly. `None` when an
/// answer cannot be confirmed.
///
/// Since every column of `A` is a combination of the independent ones, `yᵀ A = 0` exactly when
/// `yᵀ A_I = yᵀ L U = 0`, i.e. `yᵀ L = 0`. For each row `q` that is not a pivot, `y_q = 1`,
/// zero in the other non-pivot rows, and `y_{π_k} = −Σ_i y_i L_ik` from the last pivot up is
/// such a vector; together they are a basis. Elimination from the last row down then gives
/// each vector a different last row `f` and makes the vectors zero in each other's `f`.
pub(crate) fn left_null_space<F: PrimeField>(
    f: F,
    factor: &LowerFactor,
    cols: &IntColumns,
) -> Option<Vec<Law>> {
    let n = factor.nrows;
    let rank = factor.pivot_row.len();
    let laws = n - rank;
    if laws > MAX_LAWS {
        return None;
    }
    let mut is_pivot = vec![false; n];
    for &r in &factor.pivot_row {
        is_pivot[r as usize] = true;
    }
    // One basis vector per non-pivot row q.
    let mut y = vec![0u64; n];
    let mut basis: Vec<Vec<(u32, u64)>> = Vec::with_capacity(laws);
    for q in (0..n).filter(|&q| !is_pivot[q]) {
        y[q] = 1;
        for k in (0..rank).rev() {
            let mut s = 0u64;
            for idx in factor.l_start[k]..factor.l_start[k + 1] {
                let v = y[factor.l_row[idx] as usize];
                if v != 0 {
                    let t = s + f.mul(v, factor.l_val[idx]);
                    s = if t >= f.p() { t - f.p() } else { t };
                }
            }
            y[factor.pivot_row[k] as usize] = f.sub(0, s);
        }
        let mut v: Vec<(u32, u64)> = Vec::new();
        for (r, x) in y.iter_mut().enumerate() {
            if *x != 0 {
                v.push((r as u32, *x));
                *x = 0;
            }
        }
        basis.push(v);
    }
    // Echelon form by last row: each vector's last non-zero row is its own.
    let mut owner: std::collections::HashMap<u32, usize> = Default::default();
    for i in 0..basis.len() {
        loop {
            let &(c, a) = basis[i].last()?;
            let Some(&o) = owner.get(&c) else {
                owner.insert(c, i);
                break;
            };
            let factor_ = f.mul(a, f.inv(basis[o].last()?.1));
            basis[i] = axpy(f, &basis[i], factor_, &basis[o]);
        }
    }
    // Value 1 in its own last row, then zero in every other vector's last row.
    let mut order: Vec<usize> = (0..basis.len()).collect();
    order.sort_unstable_by_key(|&i| basis[i].last().map_or(0, |e| e.0));
    for &i in &order {
        let inv = f.inv(basis[i].last()?.1);
        for e in basis[i].iter_mut() {
            e.1 = f.mul(e.1, inv);
        }
    }
    for (pos, &i) in order.iter().enumerate() {
        let c = basis[i].last()?.0;
        for &o in &order[pos + 1..] {
            if let Ok(at) = basis[o].binary_search_by_key(&c, |e| e.0) {
                let a = basis[o][at].1;
                basis[o] = axpy(f, &basis[o], a, &basis[i]);
            }
        }
    }
    // Exact confirmation: row f = Σ_k (−y_k) row_k over the rows of A.
    let rows = cols.transpose();
    let mut check = Checker::new(&rows);
    let mut out = Vec::with_capacity(order.len());
    for &i in &order {
        let v = &basis[i];
        let (last, _) = *v.last()?;
        let mut entries: Vec<(usize, Frac)> = Vec::with_capacity(v.len());
        for &(r, x) in v {
            entries.push((r as usize, reconstruct(x, f.p())?));
        }
        let combination: Vec<(usize, Frac)> = entries[..entries.len() - 1]
            .iter()
            .map(|&(r, (a, b))| (r, (-a, b)))
            .collect();
        if !check.is_combination(&rows, last as usize, &combination)? {
            return None;
        }
        out.push((last as usize, entries));
    }
    Some(out)
}

/// `u − a v` for sparse vectors sorted by row.
fn axpy<F: PrimeField>(f: F, u: &[(u32, u64)], a: u64, v: &[(u32, u64)]) -> Vec<(u32, u64)> {
    let mut out = Vec::with_capacity(u.len() + v.len());
    let (mut i, mut k) = (0, 0);
    while i < u.len() || k < v.len() {
        let ci = u.get(i).map_or(u32::MAX, |e| e.0);
        let ck = v.get(k).map_or(u32::MAX, |e| e.0);
        let (c, x) = if ci < ck {
            i += 1;
            (ci, u[i - 1].1)
        } else if ck < ci {
            k += 1;
            (ck, f.sub(0, f.mul(a, v[k - 1].1)))
        } else {
            i += 1;
            k += 1;
            (ci, f.sub(u[i - 1].1, f.mul(a, v[k - 1].1)))
        };
        if x != 0 {
            out.push((c, x));
        }
    }
    out
}

/// The rational `a/b` with `|a|, b ≤ √(p/2)` and `a ≡ b·v (mod p)`, if there is one (it is then
/// unique): the extended Euclidean algorithm on `(p, v)` stopped at the first remainder not
/// above the bound (Wang 1981; from memory). The fraction is reduced, `b > 0`.
pub(crate) fn reconstruct(v: u64, p: u64) -> Option<Frac> {
    reconstruct_within(v, p, reconstruction_bound(p))
}

/// The bound `⌊√(p/2)⌋` of [`reconstruct`].
fn reconstruction_bound(p: u64) -> u64 {
    (p / 2).isqrt()
}

/// [`reconstruct`] with its bound computed once by the caller: integers (the common case)
/// are answered inline, the rest by [`reconstruct_fraction`].
#[inline(always)]
fn reconstruct_within(v: u64, p: u64, bound: u64) -> Option<Frac> {
    if v <= bound {
        return Some((v as i64, 1));
    }
    if p - v <= bound {
        return Some((-((p - v) as i64), 1));
    }
    reconstruct_fraction(v, p, bound)
}

/// The extended Euclidean part of [`reconstruct`], in 64-bit integers when `p < 2^62` (every
/// remainder is below `p` and every cofactor at most `p` in magnitude, so `q·r` and `q·t`
/// stay below 2^62), in 128-bit ones otherwise.
#[inline(never)]
fn reconstruct_fraction(v: u64, p: u64, bound: u64) -> Option<Frac> {
    // The same steps in either width: remainders r and cofactors t until r ≤ bound, then
    // r/t in lowest terms with 0 < |t| ≤ bound, the sign on the numerator.
    macro_rules! euclid {
        ($int:ty) => {{
            let bound = bound as $int;
            let (mut r0, mut r1) = (p as $int, v as $int);
            let (mut t0, mut t1): ($int, $int) = (0, 1);
            while r1 > bound {
                let q = r0 / r1;
                (r0, r1) = (r1, r0 - q * r1);
                (t0, t1) = (t1, t0 - q * t1);
            }
            if t1 == 0 || t1.abs() > bound || r1.gcd(&t1) != 1 {
                return None;
            }
            let (a, b) = if t1 < 0 { (-r1, -t1) } else { (r1, t1) };
            Some((a as i64, b as i64))
        }};
    }
    if p < 1 << 62 {
        euclid!(i64)
    } else {
        euclid!(i128)
    }
}

/// Exact integer check that a column equals a rational combination of others.
///
/// The identity `D col_j = Σ (D c_i) col_i` (`D` the lcm of the denominators) is summed row by
/// row. With `M` the largest entry of the matrix in magnitude, no partial or final row sum can
/// exceed `M (|D| + Σ |D c_i|)` in magnitude; when that bound is below 2^63 the sums run in
/// wrapping 64-bit integers, which are then exact (the common case: small coefficients and
/// entries). Otherwise they run in 128-bit integers: when every multiplier `D c_i` and `D` are
/// at most 2^62 in magnitude and every entry at most 2^31, each product is below 2^93 and a row
/// sums at most `terms + 1 ≤ 2^32` of them, so no sum can pass 2^125 and plain 128-bit
/// arithmetic is exact; otherwise every operation is checked and an overflow gives up (the
/// caller falls back).
struct Checker {
    acc: Vec<i128>,
    acc64: Vec<i64>,
    /// The multipliers `D c_i` of the combination being checked.
    mult: Vec<i128>,
    /// Every entry of the matrix is at most 2^31 in magnitude.
    small_entries: bool,
    /// The largest entry of the matrix in magnitude, `M`.
    max_entry: u64,
}

/// Bound on `D` and the multipliers for the unchecked sums (see [`Checker`]).
const MULT_BOUND: i128 = 1 << 62;

impl Checker {
    /// A checker for combinations of columns of `cols`, or of any columns whose entries are
    /// entries of `cols` (its independent columns stored apart).
    fn new(cols: &IntColumns) -> Self {
        let max_entry = cols.val.iter().map(|v| v.unsigned_abs()).max().unwrap_or(0);
        Checker {
            acc: vec![0; cols.nrows],
            acc64: vec![0; cols.nrows],
            mult: Vec::new(),
            small_entries: max_entry <= 1 << 31,
            max_entry,
        }
    }

    /// [`Self::is_combination_in`] of column `j` of `cols` and columns of `cols`.
    fn is_combination(
        &mut self,
        cols: &IntColumns,
        j: usize,
        combination: &[(usize, Frac)],
    ) -> Option<bool> {
        self.is_combination_in(cols.col_parts(j), cols, combination)
    }

    /// `Some(true)` when `D target − Σ (D c_i) basis_i = 0` with `D` the lcm of the
    /// denominators (summed as described at [`Checker`]), `Some(false)` when not, `None` on
    /// overflow. The entries of `target` and `basis` are entries of the matrix the checker
    /// was made for (their bound `M` is its).
    fn is_combination_in(
        &mut self,
        target: (&[u32], &[i64]),
        basis: &IntColumns,
        combination: &[(usize, Frac)],
    ) -> Option<bool> {
        let mut d: i128 = 1;
        let mut last_b = 1;
        for &(_, (_, b)) in combination {
            // Integer coefficients (the common case) leave d = 1 without a gcd, and a
            // denominator like the one before divides d already.
            if b != 1 && b != last_b {
                d = lcm(d, b)?;
                last_b = b;
            }
        }
        if let Some(ok) = self.try_64(target, basis, d, combination) {
            return Some(ok);
        }
        self.mult.clear();
        let mut small = self.small_entries && d <= MULT_BOUND;
        for &(_, (a, b)) in combination {
            let m = (a as i128).checked_mul(quotient(d, b))?;
            small &= m.abs() <= MULT_BOUND;
            self.mult.push(m);
        }
        let result = if small {
            self.accumulate_unchecked(target, basis, d, combination);
            Some(())
        } else {
            self.accumulate_checked(target, basis, d, combination)
        };
        // Read every row touched back (it is zero when the identity holds) and clear it.
        let mut ok = clear(&mut self.acc, target.0);
        for &(i, _) in combination {
            ok &= clear(&mut self.acc, basis.col_parts(i).0);
        }
        result.map(|()| ok)
    }

    /// The check in wrapping 64-bit sums when `D`, every multiplier `D c_i` and the bound
    /// `M (|D| + Σ |D c_i|)` fit below 2^63 (see [`Checker`]); `None` when they do not.
    fn try_64(
        &mut self,
        target: (&[u32], &[i64]),
        basis: &IntColumns,
        d: i128,
        combination: &[(usize, Frac)],
    ) -> Option<bool> {
        let d = i64::try_from(d).ok()?;
        let acc = &mut self.acc64;
        // The sums run first and the bound is checked after: when it fails, the (possibly
        // wrapped) sums are only cleared.
        scatter64(acc, target, d);
        let mut sum = d.unsigned_abs();
        let mut fits = true;
        let (mut last_b, mut last_q) = (1, d);
        for &(i, (a, b)) in combination {
            if b != last_b {
                (last_b, last_q) = (b, d / b);
            }
            let (m, over) = a.overflowing_mul(last_q);
            fits &= !over;
            sum = sum.saturating_add(m.unsigned_abs());
            scatter64(acc, basis.col_parts(i), m.wrapping_neg());
        }
        let mut ok = clear64(acc, target.0);
        for &(i, _) in combination {
            ok &= clear64(acc, basis.col_parts(i).0);
        }
        // Every partial sum was below 2^63 in magnitude: the 64-bit sums are exact.
        (fits && (sum as u128) * (self.max_entry as u128) < 1 << 63).then_some(ok)
    }

    fn accumulate_unchecked(
        &mut self,
        target: (&[u32], &[i64]),
        basis: &IntColumns,
        d: i128,
        combination: &[(usize, Frac)],
    ) {
        // |d|, |m| ≤ 2^62 here: as 64-bit factors each product is one widening multiply.
        let acc = &mut self.acc;
        scatter(acc, target, d as i64);
        for (&(i, _), &m) in combination.iter().zip(&self.mult) {
            scatter(acc, basis.col_parts(i), -(m as i64));
        }
    }

    fn accumulate_checked(
        &mut self,
        target: (&[u32], &[i64]),
        basis: &IntColumns,
        d: i128,
        combination: &[(usize, Frac)],
    ) -> Option<()> {
        let acc = &mut self.acc;
        let mut add = |(rows, vals): (&[u32], &[i64]), m: i128| -> Option<()> {
            for (&r, &v) in rows.iter().zip(vals) {
                let r = r as usize;
                acc[r] = acc[r].checked_add(m.checked_mul(v as i128)?)?;
            }
            Some(())
        };
        add(target, d)?;
        for (&(i, _), &m) in combination.iter().zip(&self.mult) {
            add(basis.col_parts(i), -m)?;
        }
        Some(())
    }
}

/// `acc += m · col` over the column's rows, in wrapping 64-bit integers (exact when the caller
/// has bounded every sum below 2^63).
#[inline(always)]
fn scatter64(acc: &mut [i64], (rows, vals): (&[u32], &[i64]), m: i64) {
    for (&r, &v) in rows.iter().zip(vals) {
        let a = &mut acc[r as usize];
        *a = a.wrapping_add(m.wrapping_mul(v));
    }
}

/// Whether `acc` is zero in every one of `rows`; leaves it zero there.
#[inline(always)]
fn clear64(acc: &mut [i64], rows: &[u32]) -> bool {
    let mut ok = true;
    for &r in rows {
        let a = &mut acc[r as usize];
        ok &= *a == 0;
        *a = 0;
    }
    ok
}

/// `acc += m · col` over the column's rows, in 128-bit integers (the caller rules out overflow).
#[inline(always)]
fn scatter(acc: &mut [i128], (rows, vals): (&[u32], &[i64]), m: i64) {
    for (&r, &v) in rows.iter().zip(vals) {
        acc[r as usize] += m as i128 * v as i128;
    }
}

/// Whether `acc` is zero in every one of `rows`; leaves it zero there.
#[inline(always)]
fn clear(acc: &mut [i128], rows: &[u32]) -> bool {
    let mut ok = true;
    for &r in rows {
        let a = &mut acc[r as usize];
        ok &= *a == 0;
        *a = 0;
    }
    ok
}

/// lcm(d, b) for `d, b > 0`, `None` on overflow; in 64 bits when `d` fits (a 128-bit division
/// costs several times a 64-bit one).
fn lcm(d: i128, b: i64) -> Option<i128> {
    if let Ok(d64) = u64::try_from(d) {
        let b = b as u64;
        let g = d64.gcd(&b);
        ((d64 / g) as i128).checked_mul(b as i128)
    } else {
        let b = b as i128;
        (d / d.gcd(&b)).checked_mul(b)
    }
}

/// `d / b` for `b` dividing `d > 0`, in 64 bits when `d` fits.
fn quotient(d: i128, b: i64) -> i128 {
    match u64::try_from(d) {
        Ok(d64) => (d64 / b as u64) as i128,
        Err(_) => d / b as i128,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mersenne_arithmetic_matches_u128_remainder() {
        let g = Prime(M61);
        let vals = [
            0,
            1,
            2,
            M61 - 1,
            M61 - 2,
            1 << 60,
            123_456_789_012_345,
            (1 << 61) - 7,
        ];
        for &a in &vals {
            for &b in &vals {
                let (a, b) = (a % M61, b % M61);
                assert_eq!(Mersenne61.mul(a, b), g.mul(a, b));
            }
            if a % M61 != 0 {
                assert_eq!(Mersenne61.mul(a % M61, Mersenne61.inv(a % M61)), 1);
            }
        }
        assert_eq!(Mersenne61.reduce(-1), M61 - 1);
    }

    /// The exact check on columns whose identities are known by hand (direct arithmetic):
    /// small entries and multipliers (the bounded 64-bit sums), entries small enough for the
    /// plain 128-bit sums with multipliers too large for 64 bits, entries beyond 2^31 that take
    /// the checked sums, and multipliers whose products pass 2^127, which must give up.
    #[test]
    fn combination_check_is_exact_on_both_paths() {
        let mut cols = IntColumns::new(3);
        cols.push([(0, 1), (1, 2)]); // a0
        cols.push([(0, 2), (1, 4)]); // a1 = 2 a0
        cols.push([(0, 3), (2, 1)]); // a2
        cols.push([(0, 5), (1, 4), (2, 1)]); // a3 = 2 a0 + a2
        cols.push([(0, 1 << 40), (1, 3)]); // a4
        cols.push([(0, 1 << 41), (1, 6)]); // a5 = 2 a4
        cols.push([(0, 1 << 40), (1, 1 << 40)]); // a6
        let mut check = Checker::new(&cols);
        assert!(!check.small_entries);
        assert_eq!(check.is_combination(&cols, 1, &[(0, (2, 1))]), Some(true));
        assert_eq!(check.is_combination(&cols, 1, &[(0, (3, 1))]), Some(false));
        assert_eq!(check.is_combination(&cols, 0, &[(1, (1, 2))]), Some(true));
        assert_eq!(
            check.is_combination(&cols, 3, &[(0, (2, 1)), (2, (1, 1))]),
            Some(true)
        );
        assert_eq!(
            check.is_combination(&cols, 3, &[(0, (2, 1)), (2, (1, 3))]),
            Some(false)
        );
        assert_eq!(check.is_combination(&cols, 5, &[(4, (2, 1))]), Some(true));
        assert_eq!(check.is_combination(&cols, 4, &[(5, (1, 2))]), Some(true));
        assert_eq!(check.is_combination(&cols, 5, &[(4, (-2, 1))]), Some(false));
        // 2^40 · 2^62 · 2^40 is beyond 2^127.
        assert_eq!(
            check.is_combination(&cols, 6, &[(4, (1 << 40, 1)), (5, (1, 1 << 62))]),
            None
        );
        // The accumulator is left clear whatever the outcome: the first check again.
        assert_eq!(check.is_combination(&cols, 1, &[(0, (2, 1))]), Some(true));

        // Entries beyond 2^31 with a bound M (D + Σ|m|) beyond 2^63: the checked sums answer.
        let mut huge = IntColumns::new(2);
        huge.push([(0, 1 << 40), (1, 3)]); // h0
        huge.push([(0, 1 << 62), (1, 3 << 22)]); // h1 = 2^22 h0
        let mut check = Checker::new(&huge);
        assert!(
            check
                .try_64(huge.col_parts(1), &huge, 1, &[(0, (1 << 22, 1))])
                .is_none()
        );
        assert_eq!(
            check.is_combination(&huge, 1, &[(0, (1 << 22, 1))]),
            Some(true)
        );
        assert_eq!(
            check.is_combination(&huge, 1, &[(0, ((1 << 22) + 1, 1))]),
            Some(false)
        );
        assert_eq!(
            check.is_combination(&huge, 0, &[(1, (1, 1 << 22))]),
            Some(true)
        );

        // Entries of 2^31 with multipliers of 2^33: each product fits 64 bits but the bound
        // M (D + Σ|m|) does not, so the plain 128-bit sums answer (and must be exact).
        let mut wide = IntColumns::new(2);
        wide.push([(0, 1 << 31), (1, 1)]); // b0
        wide.push([(0, 1 << 31), (1, -1)]); // b1
        wide.push([(0, 1 << 32), (1, 0)]); // b2 = b0 + b1
        let mut check = Checker::new(&wide);
        // An entry of 2^32: only the 64-bit sums (bounded) or the checked ones apply.
        assert!(!check.small_entries);
        assert!(
            check
                .try_64(wide.col_parts(2), &wide, 1, &[(0, (1 << 33, 1))])
                .is_none()
        );
        assert_eq!(
            check.is_combination(&wide, 2, &[(0, (1, 1)), (1, (1, 1))]),
            Some(true)
        );
        // b2 = (b0 + b1)/2 written with the unreduced 2^33/2^34: D = 2^34, multipliers 2^33,
        // so the 64-bit bound fails and the plain 128-bit sums answer.
        let mut big = IntColumns::new(2);
        big.push([(0, 1 << 31), (1, 1)]);
        big.push([(0, 1 << 31), (1, -1)]);
        big.push([(0, 1 << 31), (1, 0)]); // = (b0 + b1)/2
        let mut check = Checker::new(&big);
        assert_eq!(
            check.is_combination(&big, 2, &[(0, (1 << 33, 1 << 34)), (1, (1, 2))]),
            Some(true)
        );
        assert_eq!(
            check.is_combination(&big, 2, &[(0, (1 << 33, 1)), (1, (1 << 33, 1))]),
            Some(false)
        );
        assert!(check.acc.iter().all(|&a| a == 0) && check.acc64.iter().all(|&a| a == 0));

        let mut small = IntColumns::new(2);
        small.push([(0, 1), (1, 2)]);
        small.push([(0, 2), (1, 4)]);
        let mut check = Checker::new(&small);
        assert!(check.small_entries);
        assert_eq!(check.is_combination(&small, 1, &[(0, (2, 1))]), Some(true));
        assert_eq!(check.is_combination(&small, 0, &[(1, (1, 2))]), Some(true));
        assert_eq!(check.is_combination(&small, 0, &[(1, (1, 3))]), Some(false));
    }

    /// The bitset queue against the standard library's ordered set (`BTreeSet`): random
    /// inserts (repeats included) taken out smallest or largest first, interleaved.
    #[test]
    fn ordered_set_pops_like_a_btree_set() {
        use std::collections::BTreeSet;
        let mut rng = crate::random::SplitMix64(0x5E7);
        let mut set = OrderedSet::new();
        for round in 0..200 {
            let n = 1 + rng.range(0, 300);
            set.reserve(n);
            let mut reference = BTreeSet::new();
            let from_top = round % 2 == 1;
            // Pop one from each (from the top on odd rounds), check they agree, say if empty.
            let pop_both = |set: &mut OrderedSet, reference: &mut BTreeSet<usize>| {
                let (got, want) = if from_top {
                    (set.pop_max(), reference.pop_last())
                } else {
                    (set.pop_min(), reference.pop_first())
                };
                assert_eq!(got, want);
                got.is_none()
            };
            for _ in 0..rng.range(0, 60) {
                let k = rng.range(0, n - 1);
                set.insert(k);
                reference.insert(k);
                if rng.range(0, 3) == 0 {
                    pop_both(&mut set, &mut reference);
                }
            }
            while !pop_both(&mut set, &mut reference) {}
        }
    }

    /// Random factors with the structure the elimination builds (pivot rows, `L` column `k`
    /// in rows that are not pivots up to step `k`, `U` column `k` above the diagonal).
    fn random_factors<F: PrimeField>(
        f: F,
        rng: &mut crate::random::SplitMix64,
        nrows: usize,
        rank: usize,
    ) -> Factors {
        let mut rows: Vec<u32> = (0..nrows as u32).collect();
        for i in (1..nrows).rev() {
            rows.swap(i, rng.range(0, i));
        }
        let mut fac = Factors::new(nrows);
        let nonzero = |rng: &mut crate::random::SplitMix64| 1 + rng.next_u64() % (f.p() - 1);
        for k in 0..rank {
            fac.k_of_row[rows[k] as usize] = k as u32;
            fac.lower.pivot_row.push(rows[k]);
            for &r in &rows[k + 1..] {
                if rng.range(0, 3) == 0 {
                    fac.lower.l_row.push(r);
                    fac.lower.l_val.push(nonzero(rng));
                }
            }
            fac.lower.l_start.push(fac.lower.l_row.len());
            for k2 in 0..k {
                if rng.range(0, 3) == 0 {
                    fac.u_k.push(k2 as u32);
                    fac.u_val.push(nonzero(rng));
                }
            }
            fac.u_start.push(fac.u_k.len());
            fac.diag_inv.push(nonzero(rng));
        }
        fac
    }

    /// The sparse triangular solves against plain dense substitution in pivot order, and
    /// their results put back into the equations by dense multiplication mod p:
    /// `L y + ρ = a` with `ρ` zero in the pivot rows, and `U c = y` (standard linear algebra).
    #[test]
    // The dense substitutions are written with indices, as the equations are.
    #[allow(clippy::needless_range_loop)]
    fn triangular_solves_match_dense_substitution() {
        fn run<F: PrimeField>(f: F, seed: u64) {
            let mut rng = crate::random::SplitMix64(seed);
            for round in 0..150 {
                let nrows = 1 + rng.range(0, 40);
                let rank = rng.range(0, nrows);
                let fac = random_factors(f, &mut rng, nrows, rank);
                let mut solver = Solver::new(nrows);
                let mut c = Vec::new();
                for (tag, _) in (0..5u32).zip(0..) {
                    // A sparse column, rows increasing, entries in [−5, 5] (zeros kept).
                    let (mut rows, mut vals) = (Vec::new(), Vec::new());
                    for r in 0..nrows as u32 {
                        if rng.range(0, 4) == 0 {
                            rows.push(r);
                            vals.push(rng.range(0, 10) as i64 - 5);
                        }
                    }
                    solver.lower_solve(f, &fac, (&rows, &vals), round * 5 + tag);
                    // Dense forward substitution.
                    let mut x = vec![0u64; nrows];
                    for (&r, &v) in rows.iter().zip(&vals) {
                        x[r as usize] = f.reduce(v);
                    }
                    let mut y = vec![0u64; rank];
                    for k in 0..rank {
                        let r = fac.lower.pivot_row[k] as usize;
                        y[k] = x[r];
                        x[r] = 0;
                        for idx in fac.lower.l_start[k]..fac.lower.l_start[k + 1] {
                            let row = fac.lower.l_row[idx] as usize;
                            x[row] = f.sub(x[row], f.mul(y[k], fac.lower.l_val[idx]));
                        }
                    }
                    let mut y_sparse = vec![0u64; rank];
                    let mut last = None;
                    for &(k, v) in &solver.y {
                        assert!(last < Some(k) && v != 0);
                        last = Some(k);
                        y_sparse[k as usize] = v;
                    }
                    assert_eq!(y_sparse, y);
                    let mut rho = vec![0u64; nrows];
                    for &r in &solver.rest {
                        rho[r as usize] = solver.x[r as usize];
                    }
                    assert_eq!(rho, x);
                    solver.clear_rest();
                    assert!(solver.x.iter().all(|&v| v == 0));
                    // L y + ρ = a.
                    let mut ly = rho.clone();
                    for k in 0..rank {
                        let r = fac.lower.pivot_row[k] as usize;
                        ly[r] = (ly[r] + y[k]) % f.p();
                        for idx in fac.lower.l_start[k]..fac.lower.l_start[k + 1] {
                            let row = fac.lower.l_row[idx] as usize;
                            ly[row] = (ly[row] + f.mul(y[k], fac.lower.l_val[idx])) % f.p();
                        }
                    }
                    let mut a = vec![0u64; nrows];
                    for (&r, &v) in rows.iter().zip(&vals) {
                        a[r as usize] = f.reduce(v);
                    }
                    assert_eq!(ly, a);

                    solver.upper_solve(f, &fac, &mut c);
                    // Dense back substitution.
                    let mut w = y.clone();
                    let mut c_dense = vec![0u64; rank];
                    for k in (0..rank).rev() {
                        c_dense[k] = f.mul(w[k], fac.diag_inv[k]);
                        for idx in fac.u_start[k]..fac.u_start[k + 1] {
                            let k2 = fac.u_k[idx] as usize;
                            w[k2] = f.sub(w[k2], f.mul(fac.u_val[idx], c_dense[k]));
                        }
                    }
                    let mut c_sparse = vec![0u64; rank];
                    let mut last = None;
                    for &(k, v) in &c {
                        assert!(last.is_none_or(|l| l > k) && v != 0);
                        last = Some(k);
                        c_sparse[k as usize] = v;
                    }
                    assert_eq!(c_sparse, c_dense);
                    assert!(solver.w.iter().all(|&v| v == 0));
                    // U c = y, with U_kk = 1/diag_inv[k].
                    let mut uc = vec![0u64; rank];
                    for k in 0..rank {
                        let diag = f.inv(fac.diag_inv[k]);
                        uc[k] = (uc[k] + f.mul(diag, c_dense[k])) % f.p();
                        for idx in fac.u_start[k]..fac.u_start[k + 1] {
                            let k2 = fac.u_k[idx] as usize;
                            uc[k2] = (uc[k2] + f.mul(fac.u_val[idx], c_dense[k])) % f.p();
                        }
                    }
                    assert_eq!(uc, y);
                }
            }
        }
        run(Prime(1_000_003), 0x7A1);
        run(Mersenne61, 0x7A2);
    }

    #[test]
    fn reconstruction_recovers_small_fractions() {
        let f = Mersenne61;
        for (a, b) in [
            (0, 1),
            (1, 1),
            (-1, 1),
            (7, 3),
            (-22, 7),
            (1_000_000, 999_999),
            (-5, 1 << 29),
        ] {
            let v = f.mul(f.reduce(a), f.inv(f.reduce(b)));
            assert_eq!(reconstruct(v, M61), Some((a, b)), "{a}/{b}");
        }
        // Modulo 7 the bound is √3 → 1: 3 ≡ 1/5 ≡ −4 has no small form.
        assert_eq!(reconstruct(3, 7), None);
        assert_eq!(reconstruct(6, 7), Some((-1, 1)));
    }
}
