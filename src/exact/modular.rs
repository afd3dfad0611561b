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
    // L columns (unit diagonal left out), U columns above the diagonal, 1/diagonal.
    let mut l_start = vec![0usize];
    let mut l_row: Vec<u32> = Vec::new();
    let mut l_val: Vec<u64> = Vec::new();
    let mut u_start = vec![0usize];
    let mut u_k: Vec<u32> = Vec::new();
    let mut u_val: Vec<u64> = Vec::new();
    let mut diag_inv: Vec<u64> = Vec::new();
    let mut pivot_row: Vec<u32> = Vec::new();
    let mut k_of_row = vec![NONE; nrows];
    let mut independent: Vec<usize> = Vec::new();
    let mut dependent = Vec::new();

    let mut x = vec![0u64; nrows];
    let mut stamp = vec![NONE; nrows];
    let mut touched: Vec<u32> = Vec::new();
    let mut heap: std::collections::BinaryHeap<std::cmp::Reverse<u32>> = Default::default();
    let mut y: Vec<(u32, u64)> = Vec::new();
    let mut w: Vec<u64> = Vec::new();
    let mut wstamp: Vec<u32> = Vec::new();
    let mut up_heap: std::collections::BinaryHeap<u32> = Default::default();
    let mut check = Checker::new(cols);
    let mut combination: Vec<(usize, Frac)> = Vec::new();

    for j in 0..ncols {
        let tag = j as u32;
        touched.clear();
        heap.clear();
        y.clear();
        let mut touch =
            |row: u32, touched: &mut Vec<u32>, heap: &mut std::collections::BinaryHeap<_>| {
                let ru = row as usize;
                if stamp[ru] != tag {
                    stamp[ru] = tag;
                    touched.push(row);
                    if k_of_row[ru] != NONE {
                        heap.push(std::cmp::Reverse(k_of_row[ru]));
                    }
                }
            };
        for (r, v) in cols.col(j) {
            future[r] -= 1;
            touch(r as u32, &mut touched, &mut heap);
            x[r] = f.reduce(v);
        }
        // Forward solve L y = a_j over the pivot rows, in pivot order.
        while let Some(std::cmp::Reverse(k)) = heap.pop() {
            let r = pivot_row[k as usize] as usize;
            let v = x[r];
            if v == 0 {
                continue;
            }
            x[r] = 0;
            y.push((k, v));
            let k = k as usize;
            for idx in l_start[k]..l_start[k + 1] {
                let row = l_row[idx];
                touch(row, &mut touched, &mut heap);
                let ru = row as usize;
                x[ru] = f.sub(x[ru], f.mul(v, l_val[idx]));
            }
        }
        // The remainder lives in rows that are not pivots yet.
        let best = touched
            .iter()
            .copied()
            .filter(|&r| k_of_row[r as usize] == NONE && x[r as usize] != 0)
            .min_by_key(|&r| (future[r as usize], r));
        match best {
            Some(pr) => {
                let pr_u = pr as usize;
                let inv = f.inv(x[pr_u]);
                for &r in &touched {
                    let ru = r as usize;
                    if r != pr && k_of_row[ru] == NONE && x[ru] != 0 {
                        l_row.push(r);
                        l_val.push(f.mul(x[ru], inv));
                    }
                }
                l_start.push(l_row.len());
                for &(k, v) in &y {
                    u_k.push(k);
                    u_val.push(v);
                }
                u_start.push(u_k.len());
                diag_inv.push(inv);
                k_of_row[pr_u] = pivot_row.len() as u32;
                pivot_row.push(pr);
                independent.push(j);
                w.push(0);
                wstamp.push(NONE);
            }
            None => {
                // Back solve U c = y, from the last pivot up.
                up_heap.clear();
                for &(k, v) in &y {
                    w[k as usize] = v;
                    wstamp[k as usize] = tag;
                    up_heap.push(k);
                }
                combination.clear();
                while let Some(k) = up_heap.pop() {
                    let k = k as usize;
                    let v = w[k];
                    w[k] = 0;
                    if v == 0 {
                        continue;
                    }
                    let ck = f.mul(v, diag_inv[k]);
                    combination.push((independent[k], reconstruct(ck, f.p())?));
                    for idx in u_start[k]..u_start[k + 1] {
                        let k2 = u_k[idx] as usize;
                        if wstamp[k2] != tag {
                            wstamp[k2] = tag;
                            up_heap.push(k2 as u32);
                        }
                        w[k2] = f.sub(w[k2], f.mul(u_val[idx], ck));
                    }
                }
                combination.sort_unstable_by_key(|t| t.0);
                if !check.is_combination(cols, j, &combination)? {
                    return None;
                }
                let terms: Terms = combination
                    .iter()
                    .map(|&(i, (a, b))| {
                        // A reconstructed fraction is reduced with |a|, b < 2^31: unscaled
                        // columns (the common case) need no gcd.
                        let coef = match (scale[i], scale[j], i32::try_from(a), u32::try_from(b)) {
                            (1, 1, Ok(a), Ok(b)) => Coef::Small(a, b),
                            _ => Coef::from_ratio(
                                a as i128 * scale[i] as i128,
                                b as i128 * scale[j] as i128,
                            ),
                        };
                        (i, coef)
                    })
                    .collect();
                dependent.push((j, terms));
            }
        }
        for &r in &touched {
            x[r as usize] = 0;
        }
    }
    Some((
        GreedyDependence {
            independent,
            dependent,
        },
        LowerFactor {
            nrows,
            pivot_row,
            l_start,
            l_row,
            l_val,
        },
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
    let bound = (p / 2).isqrt() as i128;
    let v128 = v as i128;
    if v128 <= bound {
        return Some((v as i64, 1));
    }
    if p as i128 - v128 <= bound {
        return Some((-((p - v) as i64), 1));
    }
    let (mut r0, mut r1) = (p as i128, v128);
    let (mut t0, mut t1) = (0i128, 1i128);
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
}

/// Exact integer check that a column equals a rational combination of others.
///
/// The identity `D col_j = Σ (D c_i) col_i` (`D` the lcm of the denominators) is summed row by
/// row in 128-bit integers. When every multiplier `D c_i` and `D` are at most 2^62 in magnitude
/// and every matrix entry at most 2^31, each product is below 2^93 and a row sums at most
/// `terms + 1 ≤ 2^32` of them, so no sum can pass 2^125 and plain 128-bit arithmetic is exact;
/// otherwise every operation is checked and an overflow gives up (the caller falls back).
struct Checker {
    acc: Vec<i128>,
    /// The multipliers `D c_i` of the combination being checked.
    mult: Vec<i128>,
    /// Every entry of the matrix is at most 2^31 in magnitude.
    small_entries: bool,
}

/// Bound on `D` and the multipliers for the unchecked sums (see [`Checker`]).
const MULT_BOUND: i128 = 1 << 62;

impl Checker {
    fn new(cols: &IntColumns) -> Self {
        Checker {
            acc: vec![0; cols.nrows],
            mult: Vec::new(),
            small_entries: cols.val.iter().all(|v| v.unsigned_abs() <= 1 << 31),
        }
    }

    /// `Some(true)` when `D col_j − Σ (D c_i) col_i = 0` with `D` the lcm of the denominators
    /// (all in 128-bit integers, see [`Checker`]), `Some(false)` when not, `None` on overflow.
    fn is_combination(
        &mut self,
        cols: &IntColumns,
        j: usize,
        combination: &[(usize, Frac)],
    ) -> Option<bool> {
        let mut d: i128 = 1;
        for &(_, (_, b)) in combination {
            // Integer coefficients (the common case) leave d = 1 without a gcd.
            if b != 1 {
                d = lcm(d, b)?;
            }
        }
        self.mult.clear();
        let mut small = self.small_entries && d <= MULT_BOUND;
        for &(_, (a, b)) in combination {
            let m = if d == 1 {
                a as i128
            } else {
                (a as i128).checked_mul(quotient(d, b))?
            };
            small &= m.abs() <= MULT_BOUND;
            self.mult.push(m);
        }
        let result = if small {
            self.accumulate_unchecked(cols, j, d, combination);
            Some(())
        } else {
            self.accumulate_checked(cols, j, d, combination)
        };
        // Read every row touched back (it is zero when the identity holds) and clear it.
        let mut ok = clear(&mut self.acc, cols.col_parts(j).0);
        for &(i, _) in combination {
            ok &= clear(&mut self.acc, cols.col_parts(i).0);
        }
        result.map(|()| ok)
    }

    fn accumulate_unchecked(
        &mut self,
        cols: &IntColumns,
        j: usize,
        d: i128,
        combination: &[(usize, Frac)],
    ) {
        // |d|, |m| ≤ 2^62 here: as 64-bit factors each product is one widening multiply.
        let acc = &mut self.acc;
        scatter(acc, cols.col_parts(j), d as i64);
        for (&(i, _), &m) in combination.iter().zip(&self.mult) {
            scatter(acc, cols.col_parts(i), -(m as i64));
        }
    }

    fn accumulate_checked(
        &mut self,
        cols: &IntColumns,
        j: usize,
        d: i128,
        combination: &[(usize, Frac)],
    ) -> Option<()> {
        let acc = &mut self.acc;
        let mut add = |col: usize, m: i128| -> Option<()> {
            for (r, v) in cols.col(col) {
                acc[r] = acc[r].checked_add(m.checked_mul(v as i128)?)?;
            }
            Some(())
        };
        add(j, d)?;
        for (&(i, _), &m) in combination.iter().zip(&self.mult) {
            add(i, -m)?;
        }
        Some(())
    }
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
    /// entries small enough for the plain 128-bit sums, entries beyond 2^31 that take the
    /// checked sums, and multipliers whose products pass 2^127, which must give up.
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

        let mut small = IntColumns::new(2);
        small.push([(0, 1), (1, 2)]);
        small.push([(0, 2), (1, 4)]);
        let mut check = Checker::new(&small);
        assert!(check.small_entries);
        assert_eq!(check.is_combination(&small, 1, &[(0, (2, 1))]), Some(true));
        assert_eq!(check.is_combination(&small, 0, &[(1, (1, 2))]), Some(true));
        assert_eq!(check.is_combination(&small, 0, &[(1, (1, 3))]), Some(false));
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
