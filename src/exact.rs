//! Exact linear algebra over the rationals for stoichiometric analysis.
//!
//! A stoichiometric matrix `S` has one row per species and one column per reaction, with
//! entry `ν_ij` the (signed) coefficient of species `i` in reaction `j`. The questions asked
//! of it — how many reactions are independent (`rank S`), which reactions are combinations of
//! which (`col_j = Σ_k c_k col_{p_k}`), and which linear combinations of species amounts are
//! conserved (`yᵀ S = 0`) — are exact, combinatorial questions. A floating tolerance can turn a
//! dependent reaction into an independent one (or back), so everything here is computed with
//! arbitrary-precision rationals and integers and no rounding at all.
//!
//! # Method
//!
//! Each row is first scaled by the least common multiple of its denominators, which leaves the
//! row space unchanged and gives a sparse integer row. Gaussian elimination then runs
//! fraction-free on those sparse rows: eliminating column `c` from row `r` with pivot row `p`
//! forms `r' = (p_c / g) r − (r_c / g) p`, with `g = gcd(p_c, r_c)`, and divides `r'` by the gcd
//! of its entries (its content) so that numbers stay small. Columns are visited left to right
//! and, among the rows that lead in the current column, the sparsest becomes the pivot, which
//! limits fill-in on the very sparse matrices that reaction networks give (common practice).
//! Rows are kept in buckets by leading column, so zeros are never visited.
//!
//! The forward pass alone gives the rank. Back-substitution (clearing every pivot column above
//! its pivot) gives the reduced row echelon form `R = E S` with `E` invertible; because `E`
//! preserves every linear relation among columns, a non-pivot column `j` of `S` satisfies
//! `col_j(S) = Σ_k R_kj col_{p_k}(S)`, and the null space `{x : S x = 0}` has one basis vector per
//! free column `f`: `x_f = 1`, `x_{p_k} = −R_kf`, all other entries zero (standard linear algebra,
//! from memory).

use num_bigint::BigInt;
use num_integer::Integer;
use num_rational::Ratio;
use num_traits::{One, Signed, ToPrimitive, Zero};

pub(crate) mod modular;

/// An exact rational number.
pub type Q = num_rational::BigRational;

/// Exact dense-ish matrix of rationals, row-major.
///
/// Zero entries of a `BigRational` hold no heap memory, so a large, very sparse stoichiometric
/// matrix costs little more than its shape; the algorithms below skip zeros entirely.
#[derive(Debug, Clone, PartialEq)]
pub struct QMatrix {
    rows: usize,
    cols: usize,
    data: Vec<Q>,
}

impl QMatrix {
    /// The `rows × cols` matrix of zeros.
    pub fn zeros(rows: usize, cols: usize) -> Self {
        QMatrix {
            rows,
            cols,
            data: vec![Q::zero(); rows * cols],
        }
    }

    /// The `rows × cols` matrix whose entry `(r, c)` is `f(r, c)`, evaluated in row-major order.
    pub fn from_fn(rows: usize, cols: usize, mut f: impl FnMut(usize, usize) -> Q) -> Self {
        let mut data = Vec::with_capacity(rows * cols);
        for r in 0..rows {
            for c in 0..cols {
                data.push(f(r, c));
            }
        }
        QMatrix { rows, cols, data }
    }

    /// Number of rows (species, for a stoichiometric matrix).
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Number of columns (reactions, for a stoichiometric matrix).
    pub fn cols(&self) -> usize {
        self.cols
    }

    /// The entry in row `r`, column `c`.
    ///
    /// # Panics
    /// If `r >= rows()` or `c >= cols()`, like slice indexing: an index out of range is a bug in
    /// the caller, not bad input.
    pub fn get(&self, r: usize, c: usize) -> &Q {
        &self.data[self.index(r, c)]
    }

    /// Sets the entry in row `r`, column `c` to `v`.
    ///
    /// # Panics
    /// If `r >= rows()` or `c >= cols()`, like slice indexing.
    pub fn set(&mut self, r: usize, c: usize, v: Q) {
        let i = self.index(r, c);
        self.data[i] = v;
    }

    /// The transpose `Mᵀ`, with `(Mᵀ)_cr = M_rc`.
    pub fn transpose(&self) -> Self {
        QMatrix::from_fn(self.cols, self.rows, |r, c| self.get(c, r).clone())
    }

    fn index(&self, r: usize, c: usize) -> usize {
        assert!(
            r < self.rows && c < self.cols,
            "QMatrix index ({r}, {c}) out of range for a {}x{} matrix",
            self.rows,
            self.cols
        );
        r * self.cols + c
    }
}

/// An exact sparse matrix of rationals: per row, the non-zero entries sorted by column.
///
/// Stoichiometric matrices of large networks are very sparse (a reaction touches a handful of
/// species), so the analysis works on this form throughout; memory is proportional to the
/// non-zero entries, not to species × reactions.
#[derive(Debug, Clone, PartialEq)]
pub struct SparseQMatrix {
    rows: usize,
    cols: usize,
    entries: Vec<Vec<(usize, Q)>>,
}

impl SparseQMatrix {
    /// The `rows × cols` matrix with the given `(row, column, value)` entries. Repeated
    /// positions are summed and zero values dropped.
    ///
    /// # Panics
    /// If an entry lies outside the shape: a bug in the caller, like slice indexing.
    pub fn from_entries(
        rows: usize,
        cols: usize,
        entries: impl IntoIterator<Item = (usize, usize, Q)>,
    ) -> Self {
        let mut by_row: Vec<Vec<(usize, Q)>> = vec![Vec::new(); rows];
        for (r, c, v) in entries {
            assert!(
                r < rows && c < cols,
                "SparseQMatrix entry ({r}, {c}) out of range for a {rows}x{cols} matrix"
            );
            by_row[r].push((c, v));
        }
        for row in by_row.iter_mut() {
            row.sort_by_key(|(c, _)| *c);
            let mut merged: Vec<(usize, Q)> = Vec::with_capacity(row.len());
            for (c, v) in row.drain(..) {
                match merged.last_mut() {
                    Some((lc, lv)) if *lc == c => *lv += v,
                    _ => merged.push((c, v)),
                }
            }
            merged.retain(|(_, v)| !v.is_zero());
            *row = merged;
        }
        SparseQMatrix {
            rows,
            cols,
            entries: by_row,
        }
    }

    /// Number of rows (species, for a stoichiometric matrix).
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Number of columns (reactions, for a stoichiometric matrix).
    pub fn cols(&self) -> usize {
        self.cols
    }

    /// The non-zero entries of row `r`, sorted by column.
    pub fn row(&self, r: usize) -> &[(usize, Q)] {
        &self.entries[r]
    }

    /// Number of non-zero entries.
    pub fn nnz(&self) -> usize {
        self.entries.iter().map(Vec::len).sum()
    }

    /// Rank: see [`rank`].
    pub fn rank(&self) -> usize {
        let transpose = self.cols > self.rows;
        rank_of_rows(integer_rows(self, transpose), self.shape_along(transpose))
    }

    /// Column dependence: see [`column_dependence`].
    pub fn column_dependence(&self) -> ColumnDependence {
        dependence_of_rows(integer_rows(self, false), self.cols)
    }

    /// Sparse basis of the null space {x : m x = 0}: see [`null_space`]. Each vector is given
    /// by its non-zero entries `(column, value)`, sorted by column.
    pub fn null_space(&self) -> Vec<SparseRow> {
        null_space_of_rows(integer_rows(self, false), self.cols)
    }

    /// Sparse basis of the left null space {y : yᵀ m = 0}: see [`left_null_space`]. Each
    /// vector is given by its non-zero entries `(row, value)`, sorted by row.
    pub fn left_null_space(&self) -> Vec<SparseRow> {
        null_space_of_rows(integer_rows(self, true), self.rows)
    }

    /// Number of columns of the rows [`integer_rows`] gives for this orientation.
    fn shape_along(&self, transpose: bool) -> usize {
        if transpose { self.rows } else { self.cols }
    }
}

impl From<&QMatrix> for SparseQMatrix {
    fn from(m: &QMatrix) -> Self {
        let entries = (0..m.rows)
            .map(|r| {
                (0..m.cols)
                    .filter_map(|c| {
                        let v = &m.data[r * m.cols + c];
                        (!v.is_zero()).then(|| (c, v.clone()))
                    })
                    .collect()
            })
            .collect();
        SparseQMatrix {
            rows: m.rows,
            cols: m.cols,
            entries,
        }
    }
}

/// A sparse integer row: `(column, value)` pairs sorted by column, no zero values.
pub type SparseRow = Vec<(usize, BigInt)>;

/// The rows of `m` (or of `mᵀ` when `transpose` is set), each scaled by the lcm of its
/// denominators and divided by its content, as sparse integer rows. Scaling a row by a non-zero
/// constant leaves the row space, the pivots and the null space unchanged.
fn integer_rows(m: &SparseQMatrix, transpose: bool) -> Vec<SparseRow> {
    let transposed: Vec<Vec<(usize, &Q)>>;
    let rows: Vec<Vec<(usize, &Q)>> = if transpose {
        let mut t: Vec<Vec<(usize, &Q)>> = vec![Vec::new(); m.cols];
        for (r, row) in m.entries.iter().enumerate() {
            for (c, v) in row {
                t[*c].push((r, v));
            }
        }
        transposed = t;
        transposed
    } else {
        m.entries
            .iter()
            .map(|row| row.iter().map(|(c, v)| (*c, v)).collect())
            .collect()
    };
    rows.into_iter()
        .map(|entries| {
            let lcm = entries
                .iter()
                .fold(BigInt::one(), |acc, (_, q)| acc.lcm(q.denom()));
            let mut row: SparseRow = entries
                .iter()
                .map(|(j, q)| (*j, q.numer() * (&lcm / q.denom())))
                .collect();
            remove_content(&mut row);
            row
        })
        .collect()
}

/// Divides a sparse integer row by the gcd of its entries (keeps numbers small).
fn remove_content(row: &mut SparseRow) {
    let mut g = BigInt::zero();
    for (_, v) in row.iter() {
        g = g.gcd(v);
        if g.is_one() {
            return;
        }
    }
    if g > BigInt::one() {
        for (_, v) in row.iter_mut() {
            *v /= &g;
        }
    }
}

/// The value of `row` in column `c`, if non-zero.
fn entry(row: &SparseRow, c: usize) -> Option<&BigInt> {
    row.binary_search_by_key(&c, |(j, _)| *j)
        .ok()
        .map(|i| &row[i].1)
}

/// Eliminates column `c` from `row` using `pivot` (both non-zero there):
/// `row' = (p_c / g) row − (r_c / g) pivot` with `g = gcd(p_c, r_c)`, then content removed.
fn eliminate(row: &SparseRow, pivot: &SparseRow, c: usize) -> SparseRow {
    let (Some(rc), Some(pc)) = (entry(row, c), entry(pivot, c)) else {
        return row.clone();
    };
    let g = rc.gcd(pc);
    let a = pc / &g; // multiplies row
    let b = rc / &g; // multiplies pivot
    let mut out = Vec::with_capacity(row.len() + pivot.len());
    let (mut i, mut k) = (0, 0);
    while i < row.len() || k < pivot.len() {
        let ci = row.get(i).map_or(usize::MAX, |e| e.0);
        let ck = pivot.get(k).map_or(usize::MAX, |e| e.0);
        let (col, v) = if ci < ck {
            i += 1;
            (ci, &a * &row[i - 1].1)
        } else if ck < ci {
            k += 1;
            (ck, -(&b * &pivot[k - 1].1))
        } else {
            i += 1;
            k += 1;
            (ci, &a * &row[i - 1].1 - &b * &pivot[k - 1].1)
        };
        if !v.is_zero() {
            out.push((col, v));
        }
    }
    remove_content(&mut out);
    out
}

/// Forward fraction-free elimination: returns the pivot rows (in pivot order) and their pivot
/// columns, strictly increasing. Row `k` is zero in every column before `pivots[k]`.
fn forward(rows: Vec<SparseRow>, ncols: usize) -> (Vec<SparseRow>, Vec<usize>) {
    let mut buckets: Vec<Vec<SparseRow>> = vec![Vec::new(); ncols];
    for r in rows {
        if let Some(&(c, _)) = r.first() {
            buckets[c].push(r);
        }
    }
    let mut echelon = Vec::new();
    let mut pivots = Vec::new();
    for c in 0..ncols {
        let mut bucket = std::mem::take(&mut buckets[c]);
        if bucket.is_empty() {
            continue;
        }
        // Sparsest row first, then smallest leading entry: least fill-in and growth.
        let best = (0..bucket.len())
            .min_by_key(|&i| (bucket[i].len(), bucket[i][0].1.bits()))
            .unwrap_or(0);
        let pivot = bucket.swap_remove(best);
        for row in bucket {
            let reduced = eliminate(&row, &pivot, c);
            if let Some(&(lead, _)) = reduced.first() {
                buckets[lead].push(reduced);
            }
        }
        echelon.push(pivot);
        pivots.push(c);
    }
    (echelon, pivots)
}

/// Integer reduced echelon form: like [`forward`], and in addition each pivot column is zero in
/// every row but its own. Row `k` is `a_k` times the corresponding row of the rational RREF,
/// with `a_k` its entry in column `pivots[k]`.
///
/// Back-substitution runs from the last pivot up. Row `k` then holds entries only in its own
/// pivot column and in columns to its right that are not pivots of rows above it, so clearing
/// column `pivots[k]` from a row above never puts an entry into a pivot column still to be
/// cleared. The rows holding each pivot column can therefore be listed once, after the forward
/// pass, and only those rows are visited: the work follows the non-zeros, not rank².
fn integer_rref(rows: Vec<SparseRow>, ncols: usize) -> (Vec<SparseRow>, Vec<usize>) {
    let (mut echelon, pivots) = forward(rows, ncols);
    let mut pivot_row_of = vec![usize::MAX; ncols];
    for (k, &p) in pivots.iter().enumerate() {
        pivot_row_of[p] = k;
    }
    // For each pivot row k, the rows above it with an entry in column pivots[k].
    let mut holders: Vec<Vec<usize>> = vec![Vec::new(); echelon.len()];
    for (r, row) in echelon.iter().enumerate() {
        for (c, _) in row.iter().skip(1) {
            let k = pivot_row_of[*c];
            if k != usize::MAX {
                holders[k].push(r);
            }
        }
    }
    for k in (0..echelon.len()).rev() {
        let (upper, lower) = echelon.split_at_mut(k);
        let pivot_row = &lower[0];
        for &r in &holders[k] {
            let row = &mut upper[r];
            if entry(row, pivots[k]).is_some() {
                *row = eliminate(row, pivot_row, pivots[k]);
            }
        }
    }
    // Positive pivots, so that the integer rows read naturally.
    for row in echelon.iter_mut() {
        if row.first().is_some_and(|(_, v)| v.is_negative()) {
            for (_, v) in row.iter_mut() {
                *v = -&*v;
            }
        }
    }
    (echelon, pivots)
}

/// Reduced row echelon form: returns (rref, pivot column indices in increasing order).
///
/// `rref` has the shape of `m`; its first `rank` rows have a leading 1 in the pivot columns,
/// each pivot column is zero elsewhere, and the remaining rows are zero.
pub fn rref(m: &QMatrix) -> (QMatrix, Vec<usize>) {
    let (rows, pivots) = integer_rref(integer_rows(&SparseQMatrix::from(m), false), m.cols);
    let mut out = QMatrix::zeros(m.rows, m.cols);
    for (k, row) in rows.iter().enumerate() {
        let lead = row[0].1.clone();
        for (c, v) in row {
            out.set(k, *c, Ratio::new(v.clone(), lead.clone()));
        }
    }
    (out, pivots)
}

/// Rank of `m`: the number of independent rows (equal to the number of independent columns).
/// For a stoichiometric matrix it is the number of independent reactions.
///
/// The rank does not depend on the order of rows or columns, so unlike [`rref`] it is free to
/// pick the cheaper orientation (`rank M = rank Mᵀ`, eliminating along the shorter side) and
/// to eliminate the sparsest columns first, both of which limit fill-in (common practice).
pub fn rank(m: &QMatrix) -> usize {
    SparseQMatrix::from(m).rank()
}

/// Rank of the matrix with the given integer rows over `ncols` columns, eliminating the
/// sparsest columns first.
fn rank_of_rows(mut rows: Vec<SparseRow>, ncols: usize) -> usize {
    let mut count = vec![0usize; ncols];
    for row in &rows {
        for (c, _) in row {
            count[*c] += 1;
        }
    }
    let mut order: Vec<usize> = (0..ncols).collect();
    order.sort_by_key(|&c| count[c]);
    let mut new_index = vec![0usize; ncols];
    for (new, &old) in order.iter().enumerate() {
        new_index[old] = new;
    }
    for row in rows.iter_mut() {
        for (c, _) in row.iter_mut() {
            *c = new_index[*c];
        }
        row.sort_unstable_by_key(|(c, _)| *c);
    }
    forward(rows, ncols).1.len()
}

/// How the columns of a matrix depend on each other.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnDependence {
    /// Pivot columns: a maximal independent set, chosen greedily in column order.
    pub independent: Vec<usize>,
    /// Each non-pivot column `j` with its non-zero coefficients `c_k` such that
    /// `col_j = Σ_k c_k col_k` over independent columns `k` (increasing). A zero column has an
    /// empty list.
    pub dependent: Vec<(usize, Vec<(usize, Q)>)>,
}

/// Column dependence: for columns of m (reactions), the pivot columns (independent set, greedy
/// in column order: earliest columns chosen first) and for every non-pivot column j the
/// coefficients c such that `col_j = Σ_k c_k col_{pivot_k}`.
///
/// The coefficients are column `j` of the RREF `R = E m`: since `E` is invertible, the relation
/// `col_j(R) = Σ_k R_kj e_k = Σ_k R_kj col_{p_k}(R)` holds for `m` as well.
pub fn column_dependence(m: &QMatrix) -> ColumnDependence {
    SparseQMatrix::from(m).column_dependence()
}

fn dependence_of_rows(rows: Vec<SparseRow>, ncols: usize) -> ColumnDependence {
    let (rows, pivots) = integer_rref(rows, ncols);
    let mut is_pivot = vec![false; ncols];
    for &p in &pivots {
        is_pivot[p] = true;
    }
    let mut coeffs: Vec<Vec<(usize, Q)>> = vec![Vec::new(); ncols];
    for (k, row) in rows.iter().enumerate() {
        let lead = &row[0].1;
        for (c, v) in row.iter().skip(1) {
            coeffs[*c].push((pivots[k], Ratio::new(v.clone(), lead.clone())));
        }
    }
    let dependent = coeffs
        .into_iter()
        .enumerate()
        .filter(|(j, _)| !is_pivot[*j])
        .collect();
    ColumnDependence {
        independent: pivots,
        dependent,
    }
}

/// An exact rational coefficient stored compactly: a reduced fraction of 32-bit integers when
/// it fits (16 bytes with its tag, no heap), an arbitrary-precision one otherwise. Large
/// networks have millions of combination coefficients, nearly all small integers.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Coef {
    /// `num/den`, reduced, `den > 0`.
    Small(i32, u32),
    Big(Box<Q>),
}

impl Coef {
    /// The coefficient equal to `q`.
    pub fn from_q(q: Q) -> Coef {
        match (q.numer().to_i32(), q.denom().to_u32()) {
            (Some(a), Some(b)) => Coef::Small(a, b),
            _ => Coef::Big(Box::new(q)),
        }
    }

    /// The coefficient `num/den` (`den ≠ 0`), reduced.
    pub fn from_ratio(num: i128, den: i128) -> Coef {
        // The common case, an integer that fits, needs no gcd.
        if den == 1
            && let Ok(a) = i32::try_from(num)
        {
            return Coef::Small(a, 1);
        }
        // Then fractions of 64-bit integers: a 64-bit gcd and division are several times
        // cheaper than 128-bit ones.
        if let (Ok(n), Ok(d)) = (i64::try_from(num), i64::try_from(den))
            && n != i64::MIN
            && d != i64::MIN
        {
            // d ≠ 0, so g ≥ 1, and g ≤ |d| < 2^63.
            let g = n.unsigned_abs().gcd(&d.unsigned_abs()) as i64;
            let (a, b) = if d < 0 {
                (-n / g, -d / g)
            } else {
                (n / g, d / g)
            };
            if let (Ok(a), Ok(b)) = (i32::try_from(a), u32::try_from(b)) {
                return Coef::Small(a, b);
            }
        }
        let g = num.gcd(&den);
        let (mut a, mut b) = (num / g, den / g);
        if b < 0 {
            (a, b) = (-a, -b);
        }
        match (i32::try_from(a), u32::try_from(b)) {
            (Ok(a), Ok(b)) => Coef::Small(a, b),
            _ => Coef::Big(Box::new(Ratio::new(BigInt::from(a), BigInt::from(b)))),
        }
    }

    /// The same value as a [`Q`].
    pub fn to_q(&self) -> Q {
        match self {
            Coef::Small(a, b) => Ratio::new_raw(BigInt::from(*a), BigInt::from(*b)),
            Coef::Big(q) => (**q).clone(),
        }
    }

    /// The f64 nearest to the value, exactly as [`to_f64`] rounds it.
    pub fn to_f64(&self) -> f64 {
        match self {
            // Both parts are exact f64s, and IEEE 754 division rounds the true quotient to
            // nearest: the same f64 as the correctly rounded conversion of the fraction.
            Coef::Small(a, b) => f64::from(*a) / f64::from(*b),
            Coef::Big(q) => to_f64(q),
        }
    }

    pub fn is_integer(&self) -> bool {
        match self {
            Coef::Small(_, b) => *b == 1,
            Coef::Big(q) => q.is_integer(),
        }
    }

    pub fn is_negative(&self) -> bool {
        match self {
            Coef::Small(a, _) => *a < 0,
            Coef::Big(q) => q.is_negative(),
        }
    }

    pub fn is_one(&self) -> bool {
        matches!(self, Coef::Small(1, 1))
    }

    pub fn is_zero(&self) -> bool {
        match self {
            Coef::Small(a, _) => *a == 0,
            Coef::Big(q) => q.is_zero(),
        }
    }

    /// |c|.
    pub fn abs(&self) -> Coef {
        match self {
            Coef::Small(a, b) if *a != i32::MIN => Coef::Small(a.abs(), *b),
            _ => Coef::from_q(self.to_q().abs()),
        }
    }
}

/// "n" for an integer, "n/d" otherwise (like [`Q`]).
impl std::fmt::Display for Coef {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Coef::Small(a, 1) => write!(f, "{a}"),
            Coef::Small(a, b) => write!(f, "{a}/{b}"),
            Coef::Big(q) => write!(f, "{q}"),
        }
    }
}

/// An exact sparse combination `Σ c_k col_k`: its terms `(column, c_k)`, 12 bytes each (column,
/// numerator, denominator as 32-bit integers), coefficients too large for that kept aside.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Terms {
    /// (column, numerator, denominator); a denominator of 0 marks `big[numerator]`.
    terms: Vec<(u32, i32, u32)>,
    big: Vec<Q>,
}

impl Terms {
    pub fn with_capacity(n: usize) -> Self {
        Terms {
            terms: Vec::with_capacity(n),
            big: Vec::new(),
        }
    }

    /// Appends the term `c · col_column`.
    #[inline]
    pub fn push(&mut self, column: usize, c: Coef) {
        let column = u32::try_from(column).expect("fewer than 2^32 columns");
        match c {
            Coef::Small(a, b) => self.terms.push((column, a, b)),
            Coef::Big(q) => {
                let at = i32::try_from(self.big.len()).expect("fewer than 2^31 large coefficients");
                self.big.push(*q);
                self.terms.push((column, at, 0));
            }
        }
    }

    /// Appends the term `(a/b) · col_column` for a reduced fraction that fits (`b > 0`).
    #[inline]
    pub(crate) fn push_small(&mut self, column: u32, a: i32, b: u32) {
        debug_assert!(b > 0);
        self.terms.push((column, a, b));
    }

    pub fn len(&self) -> usize {
        self.terms.len()
    }

    pub fn is_empty(&self) -> bool {
        self.terms.is_empty()
    }

    /// The `n`-th term.
    pub fn get(&self, n: usize) -> (usize, Coef) {
        let (c, a, b) = self.terms[n];
        let coef = if b == 0 {
            Coef::Big(Box::new(self.big[a as usize].clone()))
        } else {
            Coef::Small(a, b)
        };
        (c as usize, coef)
    }

    /// The terms in their order.
    pub fn iter(&self) -> impl Iterator<Item = (usize, Coef)> + '_ {
        (0..self.terms.len()).map(|n| self.get(n))
    }

    /// The column of each term, in order.
    pub fn columns(&self) -> impl Iterator<Item = usize> + Clone + '_ {
        self.terms.iter().map(|t| t.0 as usize)
    }

    /// Reorders the terms by a key of their column.
    pub fn sort_by_column_key<K: Ord>(&mut self, mut key: impl FnMut(usize) -> K) {
        self.terms.sort_unstable_by_key(|t| key(t.0 as usize));
    }
}

impl FromIterator<(usize, Coef)> for Terms {
    fn from_iter<I: IntoIterator<Item = (usize, Coef)>>(iter: I) -> Self {
        let iter = iter.into_iter();
        let mut t = Terms::with_capacity(iter.size_hint().0);
        for (c, q) in iter {
            t.push(c, q);
        }
        t
    }
}

/// The column dependence of a matrix and the basis of its left null space, all exact.
#[derive(Debug, Clone, PartialEq)]
pub struct Dependence {
    /// Independent columns, greedy in column order: column `j` is independent when it is not a
    /// combination of the columns before it.
    pub independent: Vec<usize>,
    /// Each other column `j` with its non-zero coefficients `c_k` over the independent columns
    /// `k < j` (increasing) such that `col_j = Σ_k c_k col_k`; a zero column has an empty list.
    pub dependent: Vec<(usize, Terms)>,
    /// Basis of `{y : yᵀ m = 0}`, as in [`left_null_space`]: one vector per row that is a
    /// combination of the rows before it, sparse, coprime integers, first entry positive.
    pub left_null_space: Vec<SparseRow>,
}

/// The column dependence of a matrix, exact: [`Dependence`] without the left null space.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnDependenceExact {
    /// As [`Dependence::independent`].
    pub independent: Vec<usize>,
    /// As [`Dependence::dependent`].
    pub dependent: Vec<(usize, Terms)>,
}

impl SparseQMatrix {
    /// Column dependence and left null space (see [`Dependence`]), exact.
    ///
    /// First by elimination modulo the prime p = 2^61 − 1 with every answer confirmed over
    /// the rationals ([`modular`]); if any confirmation fails (an unlucky prime, a coefficient
    /// too large to reconstruct, an integer overflow), by the exact rational elimination
    /// ([`Self::dependence_rational`]). The result is the same either way; only the time
    /// differs.
    ///
    /// Why a confirmed modular answer is exact. Let `I` be the columns found independent mod p
    /// and suppose every other column `j` was confirmed, in exact integer arithmetic, to equal
    /// `Σ c_i col_i` over columns `i ∈ I`, `i < j`. (a) A set of integer columns that is
    /// independent mod p is independent over ℚ: a rational relation, scaled to coprime integers,
    /// would reduce to a non-trivial relation mod p. (b) So for `i ∈ I`, `col_i` is not in the
    /// span of the earlier columns of `I`, and by the confirmations the earlier columns outside
    /// `I` add nothing to that span: `i` is independent of all earlier columns over ℚ. (c) Each
    /// confirmed `j` is a combination of earlier columns over ℚ. Hence `I` is exactly the greedy
    /// independent set over ℚ, `rank = |I|`, and each confirmed combination is the unique one
    /// (the columns of `I` are independent). The same argument on the rows gives the rows that
    /// are combinations of earlier rows, and each confirmed relation `row_f = Σ d_k row_{p_k}` is
    /// the left null vector `e_f − Σ d_k e_{p_k}`, the same vector (after scaling) as the exact
    /// reduced echelon form gives.
    pub fn dependence(&self) -> Dependence {
        self.dependence_modular(modular::Mersenne61)
            .unwrap_or_else(|| self.dependence_rational())
    }

    /// The independent columns and the combination of each dependent one, as in
    /// [`Self::dependence`], without the left null space: what the consistency findings need.
    /// By the elimination modulo 2^61 − 1 with every combination confirmed exactly, else by
    /// the exact rational elimination; the same answer either way (the argument of
    /// [`Self::dependence`] uses the confirmed combinations only, not the left null space).
    pub fn column_dependence_exact(&self) -> ColumnDependenceExact {
        self.column_dependence_modular(modular::Mersenne61)
            .unwrap_or_else(|| self.column_dependence_rational())
    }

    /// [`Self::column_dependence_exact`] by the exact rational elimination alone.
    pub fn column_dependence_rational(&self) -> ColumnDependenceExact {
        let dep = self.column_dependence();
        ColumnDependenceExact {
            independent: dep.independent,
            dependent: dep
                .dependent
                .into_iter()
                .map(|(j, c)| {
                    (
                        j,
                        c.into_iter().map(|(k, q)| (k, Coef::from_q(q))).collect(),
                    )
                })
                .collect(),
        }
    }

    /// [`Self::column_dependence_exact`] over the prime field `f`, `None` when a combination
    /// cannot be confirmed.
    pub(crate) fn column_dependence_modular<F: modular::PrimeField>(
        &self,
        f: F,
    ) -> Option<ColumnDependenceExact> {
        let (cols, col_scale) = self.integer_columns()?;
        let (by_col, _) = modular::greedy_dependence(f, &cols, &col_scale)?;
        Some(ColumnDependenceExact {
            independent: by_col.independent,
            dependent: by_col.dependent,
        })
    }

    /// [`Self::dependence`] by the exact rational elimination alone (fraction-free, sparse).
    pub fn dependence_rational(&self) -> Dependence {
        let ColumnDependenceExact {
            independent,
            dependent,
        } = self.column_dependence_rational();
        Dependence {
            independent,
            dependent,
            left_null_space: self.left_null_space(),
        }
    }

    /// [`Self::dependence`] over the prime field `f`, `None` when an answer cannot be confirmed.
    pub(crate) fn dependence_modular<F: modular::PrimeField>(&self, f: F) -> Option<Dependence> {
        let (cols, col_scale) = self.integer_columns()?;
        let (by_col, factor) = modular::greedy_dependence(f, &cols, &col_scale)?;
        // Scaling columns leaves {y : yᵀ m = 0} unchanged. Each vector as coprime integers,
        // first entry positive; when they cannot be confirmed, the exact elimination of mᵀ.
        let left_null_space = match modular::left_null_space(f, &factor, &cols) {
            Some(laws) => laws
                .into_iter()
                .map(|(_, y)| {
                    let lcm = y
                        .iter()
                        .fold(BigInt::one(), |l, (_, (_, b))| l.lcm(&BigInt::from(*b)));
                    let v: SparseRow = y
                        .iter()
                        .map(|&(k, (a, b))| (k, BigInt::from(a) * (&lcm / BigInt::from(b))))
                        .collect();
                    primitive(v)
                })
                .collect(),
            None => self.left_null_space(),
        };
        Some(Dependence {
            independent: by_col.independent,
            dependent: by_col.dependent,
            left_null_space,
        })
    }

    /// The columns of the matrix as sparse `i64` columns, each scaled by the lcm of its
    /// denominators, with those scales; `None` when a number does not fit in an `i64`.
    fn integer_columns(&self) -> Option<(modular::IntColumns, Vec<i64>)> {
        let mut lists: Vec<Vec<(usize, &Q)>> = vec![Vec::new(); self.cols];
        for (r, row) in self.entries.iter().enumerate() {
            for (c, v) in row {
                lists[*c].push((r, v));
            }
        }
        let mut cols = modular::IntColumns::new(self.rows);
        let mut scales = Vec::with_capacity(lists.len());
        for list in &lists {
            if list.iter().all(|(_, q)| q.is_integer()) {
                let ints: Option<Vec<(usize, i64)>> = list
                    .iter()
                    .map(|(r, q)| Some((*r, q.numer().to_i64()?)))
                    .collect();
                cols.push(ints?);
                scales.push(1);
            } else {
                let lcm = list
                    .iter()
                    .fold(BigInt::one(), |acc, (_, q)| acc.lcm(q.denom()));
                let ints: Option<Vec<(usize, i64)>> = list
                    .iter()
                    .map(|(r, q)| Some((*r, (q.numer() * (&lcm / q.denom())).to_i64()?)))
                    .collect();
                cols.push(ints?);
                scales.push(lcm.to_i64()?);
            }
        }
        Some((cols, scales))
    }
}

/// Scales a sparse integer vector to coprime entries with the first non-zero entry positive.
fn primitive(mut v: SparseRow) -> SparseRow {
    let g = v.iter().fold(BigInt::zero(), |g, (_, x)| g.gcd(x));
    let negative = v.first().is_some_and(|(_, x)| x.is_negative());
    if g.is_zero() {
        return v;
    }
    let g = if negative { -g } else { g };
    if !g.is_one() {
        for (_, x) in v.iter_mut() {
            *x /= &g;
        }
    }
    v
}

/// Sparse null-space basis from sparse integer rows of a matrix with `ncols` columns.
fn null_space_of_rows(rows: Vec<SparseRow>, ncols: usize) -> Vec<SparseRow> {
    let (rows, pivots) = integer_rref(rows, ncols);
    let mut is_pivot = vec![false; ncols];
    for &p in &pivots {
        is_pivot[p] = true;
    }
    // For each free column f: the rows k with a non-zero b_kf, as (k, b_kf).
    let mut by_free: Vec<Vec<(usize, &BigInt)>> = vec![Vec::new(); ncols];
    for (k, row) in rows.iter().enumerate() {
        for (c, v) in row.iter().skip(1) {
            by_free[*c].push((k, v));
        }
    }
    let mut basis = Vec::with_capacity(ncols - pivots.len());
    for f in (0..ncols).filter(|&f| !is_pivot[f]) {
        // Row k reads a_k x_{p_k} + Σ_f b_kf x_f = 0. With x_f = L = lcm(a_k), x_{p_k} = −b_kf L / a_k.
        let l = by_free[f]
            .iter()
            .fold(BigInt::one(), |acc, (k, _)| acc.lcm(&rows[*k][0].1));
        let mut x: SparseRow = by_free[f]
            .iter()
            .map(|(k, b)| (pivots[*k], -(*b * (&l / &rows[*k][0].1))))
            .collect();
        x.push((f, l));
        x.sort_unstable_by_key(|(c, _)| *c);
        basis.push(primitive(x));
    }
    basis
}

/// The dense form of a sparse vector of length `n`.
fn dense(v: SparseRow, n: usize) -> Vec<BigInt> {
    let mut out = vec![BigInt::zero(); n];
    for (c, x) in v {
        out[c] = x;
    }
    out
}

/// Basis of the null space {x : m x = 0}, each vector scaled to coprime integers with the first
/// non-zero entry positive. There are `cols − rank` vectors, one per free column `f` (`x_f ≠ 0`,
/// zero in every other free column). For a stoichiometric matrix these are the reaction
/// combinations with no net change of any species.
pub fn null_space(m: &QMatrix) -> Vec<Vec<BigInt>> {
    let s = SparseQMatrix::from(m);
    s.null_space()
        .into_iter()
        .map(|v| dense(v, m.cols))
        .collect()
}

/// Basis of the left null space {y : yᵀ m = 0} (conservation laws when m is species x
/// reactions), same scaling. There are `rows − rank` vectors: `yᵀ S = 0` means
/// `d(yᵀ n)/dt = yᵀ S r = 0` for every rate vector `r`, so `yᵀ n` is conserved (from memory).
pub fn left_null_space(m: &QMatrix) -> Vec<Vec<BigInt>> {
    let s = SparseQMatrix::from(m);
    s.left_null_space()
        .into_iter()
        .map(|v| dense(v, m.rows))
        .collect()
}

/// Decimal exponents beyond this magnitude are refused: `10^100000` already takes about 41 kB,
/// and a stoichiometric coefficient never needs more.
const MAX_DECIMAL_EXPONENT: i64 = 100_000;

/// Exact rational from a decimal literal string like "0.5", "2", "1.25e-1", "-3"; None if not a
/// finite decimal.
///
/// Accepted: optional sign, digits with at most one `.` (at least one digit in all), then
/// optionally `e`/`E`, an optional sign and digits; surrounding whitespace is ignored. The value
/// is `digits × 10^(exponent − fraction digits)` exactly, so "0.1" is 1/10, not the nearest
/// binary float. A non-zero value whose decimal exponent exceeds ±100000 gives None.
pub fn rational_from_decimal(s: &str) -> Option<Q> {
    let s = s.trim();
    let (negative, rest) = match s.as_bytes().first()? {
        b'-' => (true, &s[1..]),
        b'+' => (false, &s[1..]),
        _ => (false, s),
    };
    let (mantissa, exponent) = match rest.find(['e', 'E']) {
        Some(i) => {
            let e = &rest[i + 1..];
            let digits = e.strip_prefix(['+', '-']).unwrap_or(e);
            if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            // Exponents too long for i64 are far past the limit anyway.
            (&rest[..i], e.parse::<i64>().ok())
        }
        None => (rest, Some(0)),
    };
    let (int_part, frac_part) = mantissa.split_once('.').unwrap_or((mantissa, ""));
    let all_digits = |p: &str| p.bytes().all(|b| b.is_ascii_digit());
    if (int_part.is_empty() && frac_part.is_empty())
        || !all_digits(int_part)
        || !all_digits(frac_part)
    {
        return None;
    }
    let digits = format!("{int_part}{frac_part}");
    let numer = BigInt::parse_bytes(digits.as_bytes(), 10)?;
    if numer.is_zero() {
        return Some(Q::zero());
    }
    let scale = exponent?.checked_sub(i64::try_from(frac_part.len()).ok()?)?;
    if scale.abs() > MAX_DECIMAL_EXPONENT {
        return None;
    }
    let numer = if negative { -numer } else { numer };
    let power = num_traits::pow(BigInt::from(10u32), scale.unsigned_abs() as usize);
    Some(if scale >= 0 {
        Q::from_integer(numer * power)
    } else {
        Ratio::new(numer, power)
    })
}

/// Exact rational equal to an f64 (every finite f64 is a dyadic rational `m · 2^e`, IEEE 754);
/// None for NaN/inf.
pub fn rational_from_f64(x: f64) -> Option<Q> {
    Q::from_float(x)
}

/// The f64 nearest to `q` (±inf beyond the f64 range).
pub fn to_f64(q: &Q) -> f64 {
    q.to_f64().unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn q(n: i64) -> Q {
        Q::from_integer(BigInt::from(n))
    }

    fn qd(s: &str) -> Q {
        rational_from_decimal(s).expect("valid decimal")
    }

    /// Matrix from rows of decimal strings.
    fn mat(rows: &[&[&str]]) -> QMatrix {
        let cols = rows.first().map_or(0, |r| r.len());
        QMatrix::from_fn(rows.len(), cols, |r, c| qd(rows[r][c]))
    }

    fn mat_i(rows: &[&[i64]]) -> QMatrix {
        let cols = rows.first().map_or(0, |r| r.len());
        QMatrix::from_fn(rows.len(), cols, |r, c| q(rows[r][c]))
    }

    /// m x, exactly, skipping zero entries of x.
    fn mul_q(m: &QMatrix, x: &[Q]) -> Vec<Q> {
        let mut out = vec![Q::zero(); m.rows()];
        for (c, xc) in x.iter().enumerate().filter(|(_, v)| !v.is_zero()) {
            for (r, acc) in out.iter_mut().enumerate() {
                let a = m.get(r, c);
                if !a.is_zero() {
                    *acc += a * xc;
                }
            }
        }
        out
    }

    /// The non-zero entries of each column of an integer matrix m, for fast products.
    fn sparse_integer_columns(m: &QMatrix) -> Vec<Vec<(usize, BigInt)>> {
        (0..m.cols())
            .map(|c| {
                (0..m.rows())
                    .filter(|&r| !m.get(r, c).is_zero())
                    .map(|r| {
                        assert!(m.get(r, c).is_integer());
                        (r, m.get(r, c).numer().clone())
                    })
                    .collect()
            })
            .collect()
    }

    /// True when Σ_c x_c col_c = 0 (x given by its non-zero entries, scaled by the lcm of their
    /// denominators so that only integer arithmetic is needed).
    fn combination_is_zero(cols: &[Vec<(usize, BigInt)>], nrows: usize, x: &[(usize, Q)]) -> bool {
        let l = x.iter().fold(BigInt::one(), |l, (_, v)| l.lcm(v.denom()));
        let mut out = vec![BigInt::zero(); nrows];
        for (c, xc) in x {
            let xc = xc.numer() * (&l / xc.denom());
            for (r, a) in &cols[*c] {
                out[*r] += a * &xc;
            }
        }
        out.iter().all(Zero::is_zero)
    }

    /// m x for an integer vector x.
    fn mul_vec(m: &QMatrix, x: &[BigInt]) -> Vec<Q> {
        let x: Vec<Q> = x.iter().map(|v| Q::from_integer(v.clone())).collect();
        mul_q(m, &x)
    }

    /// yᵀ m, exactly.
    fn vec_mul(y: &[BigInt], m: &QMatrix) -> Vec<Q> {
        mul_vec(&m.transpose(), y)
    }

    fn is_primitive(v: &[BigInt]) -> bool {
        let g = v.iter().fold(BigInt::zero(), |g, x| g.gcd(x));
        let first = v.iter().find(|x| !x.is_zero());
        g.is_one() && first.is_some_and(|x| x.is_positive())
    }

    /// Matrix whose rows are the given integer vectors.
    fn rows_matrix(vs: &[Vec<BigInt>], cols: usize) -> QMatrix {
        QMatrix::from_fn(vs.len(), cols, |r, c| Q::from_integer(vs[r][c].clone()))
    }

    /// Independent reference: plain dense rational Gauss elimination (no scaling, no buckets).
    fn dense_rank(m: &QMatrix) -> usize {
        let mut a: Vec<Vec<Q>> = (0..m.rows())
            .map(|r| (0..m.cols()).map(|c| m.get(r, c).clone()).collect())
            .collect();
        let mut rank = 0;
        for c in 0..m.cols() {
            let Some(p) = (rank..a.len()).find(|&r| !a[r][c].is_zero()) else {
                continue;
            };
            a.swap(rank, p);
            let (done, rest) = a.split_at_mut(rank + 1);
            let pivot = &done[rank];
            for row in rest.iter_mut() {
                if !row[c].is_zero() {
                    let f = &row[c] / &pivot[c];
                    for (x, y) in row.iter_mut().zip(pivot).skip(c) {
                        *x -= &f * y;
                    }
                }
            }
            rank += 1;
        }
        rank
    }

    /// Checks every stated property of rank, rref, null spaces and column dependence.
    fn check_all(m: &QMatrix) {
        let r = rank(m);
        assert_eq!(r, dense_rank(m));
        assert_eq!(r, rank(&m.transpose()));

        let (rr, pivots) = rref(m);
        assert_eq!((rr.rows(), rr.cols()), (m.rows(), m.cols()));
        assert_eq!(pivots.len(), r);
        assert!(pivots.windows(2).all(|w| w[0] < w[1]));
        for (k, &p) in pivots.iter().enumerate() {
            for i in 0..m.rows() {
                assert_eq!(rr.get(i, p), &if i == k { q(1) } else { q(0) });
            }
            for c in 0..p {
                assert!(rr.get(k, c).is_zero());
            }
        }
        for i in r..m.rows() {
            assert!((0..m.cols()).all(|c| rr.get(i, c).is_zero()));
        }
        assert_eq!(rref(&rr), (rr.clone(), pivots.clone()));

        let ns = null_space(m);
        assert_eq!(ns.len(), m.cols() - r);
        for x in &ns {
            assert_eq!(x.len(), m.cols());
            assert!(is_primitive(x));
            assert!(mul_vec(m, x).iter().all(Zero::is_zero));
        }
        assert_eq!(rank(&rows_matrix(&ns, m.cols())), ns.len());

        let lns = left_null_space(m);
        assert_eq!(lns.len(), m.rows() - r);
        for y in &lns {
            assert_eq!(y.len(), m.rows());
            assert!(is_primitive(y));
            assert!(vec_mul(y, m).iter().all(Zero::is_zero));
        }
        assert_eq!(rank(&rows_matrix(&lns, m.rows())), lns.len());

        let dep = column_dependence(m);
        assert_eq!(dep.independent, pivots);
        assert_eq!(dep.independent.len() + dep.dependent.len(), m.cols());
        for (j, coeffs) in &dep.dependent {
            assert!(!pivots.contains(j));
            for i in 0..m.rows() {
                let combo = coeffs
                    .iter()
                    .fold(Q::zero(), |acc, (k, c)| acc + c * m.get(i, *k));
                assert!(
                    coeffs
                        .iter()
                        .all(|(k, c)| pivots.contains(k) && !c.is_zero())
                );
                assert_eq!(&combo, m.get(i, *j));
            }
        }
    }

    /// The crate's SplitMix64, with the draws the random test matrices need.
    struct Rng(crate::random::SplitMix64);
    impl Rng {
        fn seeded(seed: u64) -> Self {
            Rng(crate::random::SplitMix64(seed))
        }
        fn below(&mut self, n: u64) -> u64 {
            self.0.next_u64() % n
        }
        /// Up to `max_dim − 1` rows and columns of integers in [−spread, spread], each entry
        /// non-zero with probability about (1 + U{0..3})/4 for the whole matrix.
        fn integer_matrix(&mut self, max_dim: u64, spread: i64) -> QMatrix {
            let rows = self.below(max_dim) as usize;
            let cols = self.below(max_dim) as usize;
            let density = 1 + self.below(4); // out of 4
            QMatrix::from_fn(rows, cols, |_, _| {
                if self.below(4) < density {
                    q(self.below(2 * spread as u64 + 1) as i64 - spread)
                } else {
                    q(0)
                }
            })
        }
        /// 1 to `max_dim` rows and columns of fractions a/b, |a| ≤ 4, 1 ≤ b ≤ `max_den`.
        fn rational_matrix(&mut self, max_dim: u64, max_den: u64) -> QMatrix {
            let rows = 1 + self.below(max_dim) as usize;
            let cols = 1 + self.below(max_dim) as usize;
            QMatrix::from_fn(rows, cols, |_, _| {
                Ratio::new(
                    BigInt::from(self.below(9) as i64 - 4),
                    BigInt::from(1 + self.below(max_den)),
                )
            })
        }
    }

    /// Steam reforming, species (CH4, H2O, CO, CO2, H2) x reactions
    /// R1: CH4 + H2O -> CO + 3H2, R2: CO + H2O -> CO2 + H2, R3: CH4 + 2H2O -> CO2 + 4H2.
    fn steam_reforming() -> QMatrix {
        mat_i(&[
            &[-1, 0, -1],
            &[-1, -1, -2],
            &[1, -1, 0],
            &[0, 1, 1],
            &[3, 1, 4],
        ])
    }

    #[test]
    fn steam_reforming_has_two_independent_reactions() {
        let s = steam_reforming();
        // Denbigh, The Principles of Chemical Equilibrium (from memory): at most
        // species − rank(element matrix) = 5 − 3 = 2 independent reactions; R3 = R1 + R2.
        assert_eq!(rank(&s), 2);
        let dep = column_dependence(&s);
        assert_eq!(dep.independent, vec![0, 1]);
        assert_eq!(dep.dependent, vec![(2, vec![(0, q(1)), (1, q(1))])]);
        // Null space: R1 + R2 − R3 = 0, scaled with the first entry positive.
        let ns = null_space(&s);
        assert_eq!(
            ns,
            vec![vec![BigInt::from(1), BigInt::from(1), BigInt::from(-1)]]
        );
        check_all(&s);
    }

    #[test]
    fn steam_reforming_conservation_laws_are_the_elements() {
        let s = steam_reforming();
        // Element matrix, rows C, H, O over species (CH4, H2O, CO, CO2, H2) (common practice).
        let elements = mat_i(&[&[1, 0, 1, 1, 0], &[4, 2, 0, 0, 2], &[0, 1, 1, 2, 0]]);
        assert_eq!(rank(&elements), 3);
        // Left null space dimension = species − rank S = 5 − 2 = 3 (from memory).
        let lns = left_null_space(&s);
        assert_eq!(lns.len(), 3);
        for y in &lns {
            assert!(vec_mul(y, &s).iter().all(Zero::is_zero));
        }
        // Each element balance yᵀ S = 0, and the element rows span the same space as the basis.
        for e in 0..3 {
            let y: Vec<BigInt> = (0..5).map(|i| elements.get(e, i).numer().clone()).collect();
            assert!(vec_mul(&y, &s).iter().all(Zero::is_zero));
        }
        let mut stacked = lns.clone();
        for e in 0..3 {
            stacked.push((0..5).map(|i| elements.get(e, i).numer().clone()).collect());
        }
        assert_eq!(rank(&rows_matrix(&stacked, 5)), 3);
    }

    #[test]
    fn half_coefficients() {
        // H2 + 0.5 O2 -> H2O, species (H2, O2, H2O): one reaction, rank 1 (common practice).
        let s = mat(&[&["-1"], &["-0.5"], &["1"]]);
        assert_eq!(rank(&s), 1);
        assert!(null_space(&s).is_empty());
        let (rr, piv) = rref(&s);
        assert_eq!(piv, vec![0]);
        assert_eq!(rr.get(0, 0), &q(1));
        // H and O balances (rows H: 2,0,2; O: 0,2,1) are conservation laws (common practice).
        let lns = left_null_space(&s);
        assert_eq!(lns.len(), 2);
        let mut stacked = lns.clone();
        stacked.push([2, 0, 2].map(BigInt::from).to_vec());
        stacked.push([0, 2, 1].map(BigInt::from).to_vec());
        assert_eq!(rank(&rows_matrix(&stacked, 3)), 2);
        check_all(&s);
    }

    #[test]
    fn zero_matrix() {
        let z = QMatrix::zeros(3, 4);
        assert_eq!(rank(&z), 0);
        let (rr, piv) = rref(&z);
        assert_eq!(rr, z);
        assert!(piv.is_empty());
        // Null space of the zero map is everything: the unit vectors e_0..e_3.
        let ns = null_space(&z);
        let unit = |n: usize, i: usize| -> Vec<BigInt> {
            (0..n).map(|k| BigInt::from(u8::from(k == i))).collect()
        };
        assert_eq!(ns, (0..4).map(|i| unit(4, i)).collect::<Vec<_>>());
        assert_eq!(
            left_null_space(&z),
            (0..3).map(|i| unit(3, i)).collect::<Vec<_>>()
        );
        let dep = column_dependence(&z);
        assert!(dep.independent.is_empty());
        assert_eq!(
            dep.dependent,
            (0..4).map(|j| (j, vec![])).collect::<Vec<_>>()
        );
        check_all(&z);
    }

    #[test]
    fn duplicate_reaction_column() {
        // Columns: A -> B, B -> C, A -> B again (species A, B, C).
        let s = mat_i(&[&[-1, 0, -1], &[1, -1, 1], &[0, 1, 0]]);
        assert_eq!(rank(&s), 2);
        let dep = column_dependence(&s);
        assert_eq!(dep.independent, vec![0, 1]);
        assert_eq!(dep.dependent, vec![(2, vec![(0, q(1))])]);
        // Total amount A + B + C is conserved for isomerisations (common practice).
        assert_eq!(
            left_null_space(&s),
            vec![[1, 1, 1].map(BigInt::from).to_vec()]
        );
        check_all(&s);
    }

    #[test]
    fn empty_matrices_do_not_panic() {
        for (r, c) in [(0, 0), (0, 3), (3, 0)] {
            let m = QMatrix::zeros(r, c);
            assert_eq!(rank(&m), 0);
            assert_eq!(m.transpose(), QMatrix::zeros(c, r));
            assert_eq!(rref(&m), (m.clone(), vec![]));
            assert_eq!(null_space(&m).len(), c);
            assert_eq!(left_null_space(&m).len(), r);
            let dep = column_dependence(&m);
            assert!(dep.independent.is_empty());
            assert_eq!(dep.dependent.len(), c);
            check_all(&m);
        }
    }

    #[test]
    fn random_small_integer_matrices() {
        let mut rng = Rng::seeded(0x5EED);
        for _ in 0..300 {
            check_all(&rng.integer_matrix(7, 3));
        }
    }

    #[test]
    fn random_small_rational_matrices() {
        let mut rng = Rng::seeded(0xBEEF);
        for _ in 0..100 {
            check_all(&rng.rational_matrix(5, 4));
        }
    }

    /// A generated network whose rank is known by construction: species have positive integer
    /// "masses" w_i; reactions are chain steps w_{i+1} A_i -> w_i A_{i+1} (independent, triangular)
    /// plus random mass-balanced reactions. Every column satisfies Σ_i w_i ν_ij = 0, so
    /// rank = species − 1 exactly, and w spans the left null space (common practice: mass balance).
    fn mass_balanced_network(species: usize, reactions: usize, seed: u64) -> (QMatrix, Vec<i64>) {
        let mut rng = Rng::seeded(seed);
        let w: Vec<i64> = (0..species).map(|_| 1 + rng.below(4) as i64).collect();
        let mut cols: Vec<Vec<(usize, i64)>> = (0..species - 1)
            .map(|i| vec![(i, -w[i + 1]), (i + 1, w[i])])
            .collect();
        while cols.len() < reactions {
            // a A_i + b A_j -> c A_k with a w_i + b w_j = c w_k: take a = w_k, b = w_k, c = w_i + w_j.
            let i = rng.below(species as u64) as usize;
            let j = rng.below(species as u64) as usize;
            let k = rng.below(species as u64) as usize;
            if i == j || j == k || i == k {
                continue;
            }
            cols.push(vec![(i, -w[k]), (j, -w[k]), (k, w[i] + w[j])]);
        }
        // Shuffle the reaction order (Fisher–Yates).
        for n in (1..cols.len()).rev() {
            let r = rng.below(n as u64 + 1) as usize;
            cols.swap(n, r);
        }
        let mut m = QMatrix::zeros(species, reactions);
        for (j, col) in cols.iter().enumerate() {
            for &(i, v) in col {
                m.set(i, j, q(v));
            }
        }
        (m, w)
    }

    fn check_mass_balanced(species: usize, reactions: usize, seed: u64, full: bool) {
        let (m, w) = mass_balanced_network(species, reactions, seed);
        let r = rank(&m);
        assert_eq!(r, species - 1);
        assert_eq!(rank(&m.transpose()), r);
        let lns = left_null_space(&m);
        assert_eq!(lns.len(), 1);
        let g = w.iter().fold(0i64, |g, x| g.gcd(x));
        let expected: Vec<BigInt> = w.iter().map(|&x| BigInt::from(x / g)).collect();
        assert_eq!(lns[0], expected);
        if full {
            let cols = sparse_integer_columns(&m);
            let ns = null_space(&m);
            assert_eq!(ns.len(), reactions - r);
            for x in &ns {
                assert!(is_primitive(x));
                let x: Vec<(usize, Q)> = x
                    .iter()
                    .enumerate()
                    .filter(|(_, v)| !v.is_zero())
                    .map(|(c, v)| (c, Q::from_integer(v.clone())))
                    .collect();
                assert!(combination_is_zero(&cols, species, &x));
            }
            // Each dependence col_j = Σ c_k col_k is the null vector e_j − Σ c_k e_k.
            let dep = column_dependence(&m);
            assert_eq!(dep.independent.len(), r);
            assert_eq!(dep.dependent.len(), reactions - r);
            for (j, coeffs) in &dep.dependent {
                let mut x = vec![(*j, q(1))];
                x.extend(coeffs.iter().map(|(k, c)| (*k, -c)));
                assert!(combination_is_zero(&cols, species, &x));
            }
        }
    }

    #[test]
    fn sparse_200_by_600() {
        check_mass_balanced(200, 600, 42, true);
    }

    /// Network-size case (1000 species x 3000 reactions): rank and conservation law only.
    #[test]
    fn sparse_1000_by_3000_rank() {
        check_mass_balanced(1000, 3000, 7, false);
    }

    /// The primes the fall-back tests use: tiny ones make unlucky columns common.
    const SMALL_PRIMES: [u64; 6] = [2, 3, 5, 7, 101, 65_537];

    /// The prime-field answer, when it is given, is the exact rational one; the combined
    /// answer always is.
    fn check_modular(m: &QMatrix) {
        let s = SparseQMatrix::from(m);
        let exact = s.dependence_rational();
        assert_eq!(s.dependence(), exact);
        // The column-only path (what the findings use) gives the same columns, by either route.
        let columns = ColumnDependenceExact {
            independent: exact.independent.clone(),
            dependent: exact.dependent.clone(),
        };
        assert_eq!(s.column_dependence_exact(), columns);
        assert_eq!(s.column_dependence_rational(), columns);
        for p in SMALL_PRIMES {
            if let Some(d) = s.dependence_modular(modular::Prime(p)) {
                assert_eq!(d, exact, "mod {p}");
            }
            if let Some(d) = s.column_dependence_modular(modular::Prime(p)) {
                assert_eq!(d, columns, "columns mod {p}");
            }
        }
        // The rational path itself agrees with the dense reference.
        assert_eq!(exact.independent.len(), dense_rank(m));
        assert_eq!(exact.left_null_space.len(), m.rows() - dense_rank(m));
    }

    #[test]
    fn unlucky_prime_falls_back_to_the_exact_answer() {
        // Columns (1, 1) and (1, 4): det = 3, so they are independent over ℚ but equal mod 3.
        let m = mat_i(&[&[1, 1], &[1, 4]]);
        let s = SparseQMatrix::from(&m);
        assert!(s.dependence_modular(modular::Prime(3)).is_none());
        assert!(s.column_dependence_modular(modular::Prime(3)).is_none());
        let d = s.dependence();
        assert_eq!(d.independent, vec![0, 1]);
        assert!(d.dependent.is_empty());
        let c = s.column_dependence_exact();
        assert_eq!((c.independent, c.dependent), (vec![0, 1], vec![]));
        assert!(d.left_null_space.is_empty());
        assert_eq!(s.dependence_modular(modular::Prime(5)), Some(d));
    }

    #[test]
    fn unreconstructible_coefficient_falls_back_to_the_exact_answer() {
        // col1 = 1/5 col0; modulo 7 the only fractions that reconstruct are 0 and ±1.
        let m = mat_i(&[&[5, 1], &[10, 2]]);
        let s = SparseQMatrix::from(&m);
        assert!(s.dependence_modular(modular::Prime(7)).is_none());
        assert!(s.column_dependence_modular(modular::Prime(7)).is_none());
        let d = s.dependence();
        assert_eq!(d.independent, vec![0]);
        let c = s.column_dependence_exact();
        assert_eq!(c.independent, d.independent);
        assert_eq!(c.dependent, d.dependent);
        assert_eq!(
            d.dependent,
            vec![(1, [(0, Coef::Small(1, 5))].into_iter().collect())]
        );
        // 2 N_0 − N_1 is conserved: (2, −1)·(5, 10) = 0.
        assert_eq!(
            d.left_null_space,
            vec![vec![(0, BigInt::from(2)), (1, BigInt::from(-1))]]
        );
        assert_eq!(s.dependence_modular(modular::Mersenne61), Some(d));
    }

    #[test]
    fn modular_agrees_with_rational_on_random_matrices() {
        let mut rng = Rng::seeded(0xFA57);
        for _ in 0..300 {
            check_modular(&rng.integer_matrix(8, 4));
        }
        for _ in 0..100 {
            check_modular(&rng.rational_matrix(6, 6));
        }
        // Rank-deficient by construction: every column a combination of three random ones.
        for _ in 0..100 {
            let rows = 2 + rng.below(6) as usize;
            let cols = 4 + rng.below(6) as usize;
            let base: Vec<Vec<i64>> = (0..3)
                .map(|_| (0..rows).map(|_| rng.below(7) as i64 - 3).collect())
                .collect();
            let mix: Vec<[i64; 3]> = (0..cols)
                .map(|_| [0; 3].map(|_| rng.below(5) as i64 - 2))
                .collect();
            let m = QMatrix::from_fn(rows, cols, |r, c| {
                q((0..3).map(|k| mix[c][k] * base[k][r]).sum())
            });
            check_modular(&m);
        }
    }

    #[test]
    fn coefficients_beyond_one_prime_fall_back_to_the_exact_answer() {
        // The chain-built mass-balanced network has combination coefficients of about 70
        // bits, more than reconstruction modulo 2^61 − 1 can recover (|a|, b ≤ 2^30): the
        // prime field declines and the rational elimination answers, with the known
        // conservation law (the masses w).
        let (m, w) = mass_balanced_network(200, 600, 42);
        let s = SparseQMatrix::from(&m);
        assert!(s.dependence_modular(modular::Mersenne61).is_none());
        assert!(s.column_dependence_modular(modular::Mersenne61).is_none());
        let d = s.dependence();
        assert_eq!(d, s.dependence_rational());
        assert_eq!(d.independent.len(), 199);
        let c = s.column_dependence_exact();
        assert_eq!(c.independent, d.independent);
        assert_eq!(c.dependent, d.dependent);
        let g = w.iter().fold(0i64, |g, x| g.gcd(x));
        let expected: SparseRow = w
            .iter()
            .enumerate()
            .map(|(i, &x)| (i, BigInt::from(x / g)))
            .collect();
        assert_eq!(d.left_null_space, vec![expected]);
    }

    #[test]
    fn compact_coefficients_round_like_rationals() {
        let mut rng = Rng::seeded(0xC0EF);
        for _ in 0..2000 {
            let a = (rng.0.next_u64() as i64 >> (1 + rng.below(62))) as i128;
            let b = 1 + (rng.0.next_u64() >> (1 + rng.below(62))) as i128;
            let c = Coef::from_ratio(a, b);
            let qv = Ratio::new(BigInt::from(a), BigInt::from(b));
            assert_eq!(c.to_q(), qv);
            assert_eq!(c.to_f64(), to_f64(&qv), "{a}/{b}");
            assert_eq!(c.to_string(), qv.to_string());
            assert_eq!(Coef::from_q(qv.clone()), c);
            assert_eq!(c.abs().to_q(), qv.abs());
            assert_eq!(c.is_negative(), qv.is_negative());
            assert_eq!(c.is_integer(), qv.is_integer());
        }
        // Negative denominators and the ends of the 64-bit range, against num-rational.
        let edges = [
            (6, -4),
            (-6, -4),
            (0, -5),
            (i64::MIN as i128, 2),
            (i64::MAX as i128, -(i64::MAX as i128)),
            (i64::MIN as i128, i64::MIN as i128),
            (1, i64::MIN as i128),
            (i64::MAX as i128 + 1, 3),
            (-(1 << 40), -(1 << 38)),
        ];
        for (a, b) in edges {
            let qv = Ratio::new(BigInt::from(a), BigInt::from(b));
            assert_eq!(Coef::from_ratio(a, b).to_q(), qv, "{a}/{b}");
            assert_eq!(Coef::from_ratio(a, b), Coef::from_q(qv), "{a}/{b}");
        }
        let big = qd("12345678901234567890.5");
        let mut t = Terms::default();
        t.push(3, Coef::Small(-1, 2));
        t.push(7, Coef::from_q(big.clone()));
        t.push(1, Coef::Small(4, 1));
        t.sort_by_column_key(|c| c);
        let got: Vec<(usize, Q)> = t.iter().map(|(c, v)| (c, v.to_q())).collect();
        assert_eq!(got, vec![(1, q(4)), (3, qd("-0.5")), (7, big)]);
    }

    #[test]
    fn decimals_are_exact() {
        assert_eq!(qd("0.5"), Ratio::new(BigInt::from(1), BigInt::from(2)));
        assert_eq!(qd("2"), q(2));
        assert_eq!(qd("1.25e-1"), Ratio::new(BigInt::from(1), BigInt::from(8)));
        assert_eq!(qd("-3"), q(-3));
        assert_eq!(qd("+.5E1"), q(5));
        assert_eq!(qd("3."), q(3));
        assert_eq!(qd("0e999999999999"), q(0));
        // 0.1 is exactly 1/10 as a decimal (unlike binary floating point).
        assert_eq!(qd("0.1"), Ratio::new(BigInt::from(1), BigInt::from(10)));
        for bad in [
            "",
            "-",
            ".",
            "e5",
            "1e",
            "1e+",
            "1.2.3",
            "1,5",
            "inf",
            "NaN",
            "0x10",
            "1 2",
            "--1",
            "1e100001",
            "1e99999999999999999999",
        ] {
            assert_eq!(rational_from_decimal(bad), None, "{bad:?}");
        }
    }

    #[test]
    fn floats_convert_exactly() {
        // IEEE 754 binary64: 0.1 is stored as 3602879701896397 / 2^55 (from memory).
        assert_eq!(
            rational_from_f64(0.1),
            Some(Ratio::new(
                BigInt::from(3_602_879_701_896_397u64),
                BigInt::from(1u64 << 55)
            ))
        );
        assert_eq!(rational_from_f64(-0.5), Some(qd("-0.5")));
        assert_eq!(rational_from_f64(0.0), Some(q(0)));
        assert_eq!(rational_from_f64(f64::NAN), None);
        assert_eq!(rational_from_f64(f64::INFINITY), None);
        assert_eq!(rational_from_f64(f64::NEG_INFINITY), None);
        for x in [1.0e-300, 3.5, -7.25e10, f64::MAX, f64::MIN_POSITIVE, 5e-324] {
            assert_eq!(to_f64(&rational_from_f64(x).unwrap()), x);
        }
        assert_eq!(
            to_f64(&Ratio::new(BigInt::from(1), BigInt::from(3))),
            1.0 / 3.0
        );
        assert_eq!(to_f64(&qd("1e400")), f64::INFINITY);
    }

    #[test]
    fn matrix_accessors() {
        let mut m = QMatrix::from_fn(2, 3, |r, c| q((10 * r + c) as i64));
        assert_eq!((m.rows(), m.cols()), (2, 3));
        assert_eq!(m.get(1, 2), &q(12));
        m.set(0, 1, qd("0.25"));
        assert_eq!(m.get(0, 1), &qd("0.25"));
        let t = m.transpose();
        assert_eq!((t.rows(), t.cols()), (3, 2));
        assert_eq!(t.get(2, 1), &q(12));
        assert_eq!(t.transpose(), m);
    }
}
