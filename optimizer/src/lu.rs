//! Dense LU factorisation with partial pivoting, shared by the DC solver
//! ([`crate::mna`], real numbers) and the AC solver ([`crate::mna_ac`],
//! complex numbers).
//!
//! The matrix is stored dense, row by row, and factored in place:
//! `P A = L U`, with the unit lower factor `L` below the diagonal and `U`
//! on and above it. Circuit matrices are mostly zeros, so the elimination
//! skips them: a row whose entry in the pivot column is zero is left as
//! it is, and the update of a row only touches the columns where the
//! pivot row is nonzero. Every skipped operation is a subtraction of an
//! exact zero, so the factors are the ones the full dense elimination
//! gives (up to the sign of a zero), at a fraction of the work.
//!
//! The workspace (matrix, pivots, the pivot row's nonzero columns) is
//! allocated once per size and reused: factoring and solving do not
//! allocate.
//!
//! Two paths do the same arithmetic: a general one whose bit sets span
//! as many 64-bit words as needed, and a small one for up to 64 unknowns
//! (every circuit spanfit builds) with one word per row and per column,
//! which finds the work faster and gives the same bits.

/// The arithmetic the factorisation needs from its numbers.
pub(crate) trait Scalar: Copy {
    /// The additive zero.
    const ZERO: Self;
    /// Whether the value is exactly zero.
    fn is_zero(self) -> bool;
    /// The magnitude that ranks pivots.
    fn magnitude(self) -> f64;
    /// The square of the magnitude, rounded (a cheap first test: only
    /// values it cannot rank by a wide margin are ranked by
    /// [`Scalar::magnitude`]).
    fn norm_sqr(self) -> f64;
    /// `self + y`.
    fn plus(self, y: Self) -> Self;
    /// `self - f x`.
    fn sub_product(self, f: Self, x: Self) -> Self;
    /// `self / d`.
    fn quotient(self, d: Self) -> Self;
}

impl Scalar for f64 {
    const ZERO: f64 = 0.0;
    #[inline]
    fn is_zero(self) -> bool {
        self == 0.0
    }
    #[inline]
    fn magnitude(self) -> f64 {
        self.abs()
    }
    #[inline]
    fn norm_sqr(self) -> f64 {
        self * self
    }
    #[inline]
    fn plus(self, y: f64) -> f64 {
        self + y
    }
    #[inline]
    fn sub_product(self, f: f64, x: f64) -> f64 {
        self - f * x
    }
    #[inline]
    fn quotient(self, d: f64) -> f64 {
        self / d
    }
}

/// Whether the squared magnitude `q` is below `best` by a margin far
/// wider than the rounding of either square and of the magnitudes
/// themselves (IEEE 754 `hypot` is within one unit in the last place), so
/// the magnitude of `q`'s value cannot exceed the one of `best`'s. A
/// subnormal, zero or non-finite square decides nothing.
#[inline]
fn clearly_below(q: f64, best: f64) -> bool {
    q.is_normal() && q < best * (1.0 - 1e-9)
}

/// The largest magnitude among the entries shown to [`Scale::take`]; the
/// squares rule out most entries without a magnitude.
#[derive(Debug, Clone, Copy, Default)]
struct Scale {
    val: f64,
    sq: f64,
}

impl Scale {
    /// Take the entry `v` into account.
    #[inline]
    fn take<T: Scalar>(&mut self, v: T) {
        let q = v.norm_sqr();
        if clearly_below(q, self.sq) {
            return;
        }
        self.val = self.val.max(v.magnitude());
        self.sq = self.sq.max(q);
    }
}

/// The best pivot found so far in one column: the first entry of largest
/// magnitude, the diagonal ranked first.
#[derive(Debug, Clone, Copy)]
struct Pivot {
    row: usize,
    val: f64,
    sq: f64,
}

impl Pivot {
    /// The diagonal entry `v` of column `col`, the first candidate.
    #[inline]
    fn diagonal<T: Scalar>(col: usize, v: T) -> Self {
        Pivot {
            row: col,
            val: v.magnitude(),
            sq: v.norm_sqr(),
        }
    }

    /// Consider the entry `v` in row `row` below the diagonal: it becomes
    /// the pivot when its magnitude is strictly larger.
    #[inline]
    fn consider<T: Scalar>(&mut self, row: usize, v: T) {
        if v.is_zero() {
            return;
        }
        let q = v.norm_sqr();
        if clearly_below(q, self.sq) {
            return;
        }
        let m = v.magnitude();
        if m > self.val {
            *self = Pivot { row, val: m, sq: q };
        }
    }

    /// Whether the pivot fails: not above `tiny`, or not finite.
    #[inline]
    fn fails(&self, tiny: f64) -> bool {
        self.val <= tiny || !self.val.is_finite()
    }
}

/// Eliminate column `col` from row `row` of the `n`-column matrix `a`
/// with the pivot `d` (the entry at `col`, `col`): the multiplier takes
/// the entry's place, and the columns `upper` of the pivot row (those
/// right of `col` that may be nonzero, in increasing order) update the
/// row. Whether the row changed (a nonzero multiplier): only then does
/// it gain the pivot row's columns.
#[inline]
fn eliminate<T: Scalar>(
    a: &mut [T],
    n: usize,
    col: usize,
    row: usize,
    d: T,
    upper: impl Iterator<Item = usize>,
) -> bool {
    let v = a[row * n + col];
    if v.is_zero() {
        return false;
    }
    let f = v.quotient(d);
    a[row * n + col] = f;
    if f.is_zero() {
        return false;
    }
    for j in upper {
        a[row * n + j] = a[row * n + j].sub_product(f, a[col * n + j]);
    }
    true
}

/// One triangular substitution on `x`: for each `i` in `order`, subtract
/// `entry(i, j) x[j]` for every `j` of `others(i)` in turn, then divide
/// by `entry(i, i)` unless the diagonal is a unit one.
#[inline]
fn substitute<T: Scalar, I: Iterator<Item = usize>>(
    x: &mut [T],
    order: impl Iterator<Item = usize>,
    others: impl Fn(usize) -> I,
    entry: impl Fn(usize, usize) -> T,
    unit_diagonal: bool,
) {
    for i in order {
        let mut s = x[i];
        for j in others(i) {
            s = s.sub_product(entry(i, j), x[j]);
        }
        x[i] = if unit_diagonal {
            s
        } else {
            s.quotient(entry(i, i))
        };
    }
}

/// The set bits of `words` (a bit set over columns) from `lo` up to, not
/// including, `hi`, in increasing order.
#[inline]
fn bits(words: &[u64], lo: usize, hi: usize) -> impl Iterator<Item = usize> + '_ {
    let (first, last) = (lo / 64, hi.div_ceil(64));
    words[first..last.max(first)]
        .iter()
        .enumerate()
        .flat_map(move |(w, &word)| {
            let base = (first + w) * 64;
            let mut m = word;
            if base < lo {
                m &= !0u64 << (lo - base);
            }
            if hi < base + 64 {
                m &= (1u64 << (hi - base)) - 1;
            }
            std::iter::from_fn(move || {
                if m == 0 {
                    return None;
                }
                let j = m.trailing_zeros() as usize;
                m &= m - 1;
                Some(base + j)
            })
        })
}

/// A dense square matrix and, after [`DenseLu::factor`], its LU factors.
#[derive(Debug, Clone)]
pub(crate) struct DenseLu<T> {
    n: usize,
    a: Vec<T>,
    pivot: Vec<usize>,
    /// 64-bit words per row of a bit set.
    words: usize,
    /// Per row, the columns that may be nonzero (a superset of the
    /// nonzero entries: fill-in is added as it is made).
    rows: Vec<u64>,
    /// After factoring, per column, the rows that may be nonzero (for
    /// the transposed solve).
    cols: Vec<u64>,
}

impl<T: Scalar> DenseLu<T> {
    /// A zero `n` by `n` matrix.
    pub(crate) fn new(n: usize) -> Self {
        let words = n.div_ceil(64).max(1);
        DenseLu {
            n,
            a: vec![T::ZERO; n * n],
            pivot: vec![0; n],
            words,
            rows: vec![0; n * words],
            cols: vec![0; n * words],
        }
    }

    /// Add `y` to the entry at `row`, `col` (the stamp of one element's
    /// contribution), marking the entry as one that may be nonzero.
    #[inline]
    pub(crate) fn add(&mut self, row: usize, col: usize, y: T) {
        let i = row * self.n + col;
        self.a[i] = self.a[i].plus(y);
        self.rows[row * self.words + col / 64] |= 1u64 << (col % 64);
    }

    /// Set every entry to zero, ready for a new stamp. Only the entries
    /// marked as maybe nonzero (stamped, or filled by the last
    /// factorisation) are touched.
    pub(crate) fn clear(&mut self) {
        let (n, w) = (self.n, self.words);
        if n <= 64 {
            for (r, mask) in self.rows.iter_mut().enumerate() {
                for c in ones(*mask) {
                    self.a[r * n + c] = T::ZERO;
                }
                *mask = 0;
            }
            return;
        }
        for r in 0..n {
            for c in bits(&self.rows[r * w..r * w + w], 0, n) {
                self.a[r * n + c] = T::ZERO;
            }
            self.rows[r * w..r * w + w].iter_mut().for_each(|m| *m = 0);
        }
    }

    /// Factor the matrix stamped by [`DenseLu::add`] since the last
    /// [`DenseLu::clear`], in place. On failure, the column where
    /// no pivot larger than `1e-14` of the largest entry (or no finite
    /// one) was found.
    pub(crate) fn factor(&mut self) -> Result<(), usize> {
        if self.n <= 64 {
            self.factor_small()
        } else {
            self.factor_wide()
        }
    }

    /// [`DenseLu::factor`] for any size, the bit sets in words.
    fn factor_wide(&mut self) -> Result<(), usize> {
        let (n, w) = (self.n, self.words);
        let a = &mut self.a;
        let rows = &mut self.rows;
        let mut scale = Scale::default();
        for r in 0..n {
            for c in bits(&rows[r * w..r * w + w], 0, n) {
                scale.take(a[r * n + c]);
            }
        }
        let tiny = scale.val * 1e-14;
        let has = |rows: &[u64], r: usize, c: usize| (rows[r * w + c / 64] >> (c % 64)) & 1 == 1;
        for col in 0..n {
            let mut pivot = Pivot::diagonal(col, a[col * n + col]);
            for row in col + 1..n {
                if has(rows, row, col) {
                    pivot.consider(row, a[row * n + col]);
                }
            }
            if pivot.fails(tiny) {
                return Err(col);
            }
            let best = pivot.row;
            self.pivot[col] = best;
            if best != col {
                for k in 0..w {
                    let both = rows[col * w + k] | rows[best * w + k];
                    for j in bits(&[both], 0, 64) {
                        let j = k * 64 + j;
                        a.swap(col * n + j, best * n + j);
                    }
                    rows.swap(col * w + k, best * w + k);
                }
            }
            let d = a[col * n + col];
            for row in col + 1..n {
                if !has(rows, row, col) {
                    continue;
                }
                let (upper, lower) = rows.split_at_mut(row * w);
                let pivot_row = &upper[col * w..col * w + w];
                if !eliminate(a, n, col, row, d, bits(pivot_row, col + 1, n)) {
                    continue;
                }
                // The fill-in: the pivot row's columns right of `col`.
                for (k, (m, p)) in lower[..w].iter_mut().zip(pivot_row).enumerate() {
                    let base = k * 64;
                    if base + 64 <= col + 1 {
                        continue;
                    }
                    *m |= if base < col + 1 {
                        *p & (!0u64 << (col + 1 - base))
                    } else {
                        *p
                    };
                }
            }
        }
        let cols = &mut self.cols;
        cols.iter_mut().for_each(|m| *m = 0);
        for r in 0..n {
            for c in bits(&rows[r * w..r * w + w], 0, n) {
                cols[c * w + r / 64] |= 1u64 << (r % 64);
            }
        }
        Ok(())
    }

    /// Solve `A x = b` in place with the current factors.
    pub(crate) fn solve_in_place(&self, x: &mut [T]) {
        if self.n <= 64 {
            self.solve_small(x);
        } else {
            self.solve_wide(x);
        }
    }

    /// [`DenseLu::solve_in_place`] for any size.
    fn solve_wide(&self, x: &mut [T]) {
        let (n, w) = (self.n, self.words);
        let a = &self.a;
        for i in 0..n {
            x.swap(i, self.pivot[i]);
        }
        let row = |i: usize| &self.rows[i * w..i * w + w];
        let entry = |i: usize, j: usize| a[i * n + j];
        substitute(x, 0..n, |i| bits(row(i), 0, i), entry, true);
        substitute(x, (0..n).rev(), |i| bits(row(i), i + 1, n), entry, false);
    }

    /// Solve `A^T y = c` in place with the current factors (the adjoint):
    /// `P A = L U`, so `A^T = U^T L^T P`; solve `U^T w = c`, `L^T z = w`,
    /// then `y = P^T z` (the swaps undone in reverse).
    pub(crate) fn solve_transposed_in_place(&self, y: &mut [T]) {
        if self.n <= 64 {
            self.solve_transposed_small(y);
        } else {
            self.solve_transposed_wide(y);
        }
    }

    /// [`DenseLu::solve_transposed_in_place`] for any size.
    fn solve_transposed_wide(&self, y: &mut [T]) {
        let (n, w) = (self.n, self.words);
        let a = &self.a;
        let col = |i: usize| &self.cols[i * w..i * w + w];
        let entry = |i: usize, j: usize| a[j * n + i];
        substitute(y, 0..n, |i| bits(col(i), 0, i), entry, false);
        substitute(y, (0..n).rev(), |i| bits(col(i), i + 1, n), entry, true);
        for i in (0..n).rev() {
            y.swap(i, self.pivot[i]);
        }
    }
}

/// The set bits of `m`, in increasing order.
#[inline]
fn ones(mut m: u64) -> impl Iterator<Item = usize> {
    std::iter::from_fn(move || {
        if m == 0 {
            return None;
        }
        let j = m.trailing_zeros() as usize;
        m &= m - 1;
        Some(j)
    })
}

/// The bits below `i` (`i` at most 64).
#[inline]
fn below(i: usize) -> u64 {
    if i >= 64 {
        !0
    } else {
        (1u64 << i) - 1
    }
}

/// The bits above `i` (`i` below 64).
#[inline]
fn above(i: usize) -> u64 {
    if i >= 63 {
        0
    } else {
        !0u64 << (i + 1)
    }
}

/// The small-system path (`n` at most 64): a row's or a column's bit set
/// is one `u64`, and the column sets are kept up to date through the
/// elimination, so the pivot search and the elimination visit only the
/// rows that may be nonzero in the pivot column. Every comparison and
/// every arithmetic operation is the one [`DenseLu::factor_wide`] does, in
/// the same order, so the factors and solutions are the same bits; the
/// saving is in finding the work, not in doing it.
impl<T: Scalar> DenseLu<T> {
    /// [`DenseLu::factor`] for `n` at most 64.
    fn factor_small(&mut self) -> Result<(), usize> {
        let n = self.n;
        let a = &mut self.a;
        let rows = &mut self.rows[..n];
        let cols = &mut self.cols[..n];
        let mut scale = Scale::default();
        for (r, &mask) in rows.iter().enumerate() {
            for c in ones(mask) {
                scale.take(a[r * n + c]);
            }
        }
        let tiny = scale.val * 1e-14;
        cols.iter_mut().for_each(|m| *m = 0);
        for (r, &mask) in rows.iter().enumerate() {
            for c in ones(mask) {
                cols[c] |= 1u64 << r;
            }
        }
        for col in 0..n {
            let right = above(col);
            let mut pivot = Pivot::diagonal(col, a[col * n + col]);
            for row in ones(cols[col] & right) {
                pivot.consider(row, a[row * n + col]);
            }
            if pivot.fails(tiny) {
                return Err(col);
            }
            let best = pivot.row;
            self.pivot[col] = best;
            if best != col {
                let swap = (1u64 << col) | (1u64 << best);
                for j in ones(rows[col] | rows[best]) {
                    a.swap(col * n + j, best * n + j);
                    // Rows `col` and `best` trade places in column `j`'s
                    // set: flip both bits when exactly one is set.
                    if (cols[j] & swap).count_ones() == 1 {
                        cols[j] ^= swap;
                    }
                }
                rows.swap(col, best);
            }
            let d = a[col * n + col];
            // The pivot row's columns right of `col`: the columns every
            // updated row gets (fill-in included).
            let upper = rows[col] & right;
            for row in ones(cols[col] & right) {
                if !eliminate(a, n, col, row, d, ones(upper)) {
                    continue;
                }
                for j in ones(upper & !rows[row]) {
                    cols[j] |= 1u64 << row;
                }
                rows[row] |= upper;
            }
        }
        Ok(())
    }

    /// [`DenseLu::solve_in_place`] for `n` at most 64.
    fn solve_small(&self, x: &mut [T]) {
        let n = self.n;
        let a = &self.a;
        for i in 0..n {
            x.swap(i, self.pivot[i]);
        }
        let rows = &self.rows;
        let entry = |i: usize, j: usize| a[i * n + j];
        substitute(x, 0..n, |i| ones(rows[i] & below(i)), entry, true);
        substitute(x, (0..n).rev(), |i| ones(rows[i] & above(i)), entry, false);
    }

    /// [`DenseLu::solve_transposed_in_place`] for `n` at most 64.
    fn solve_transposed_small(&self, y: &mut [T]) {
        let n = self.n;
        let a = &self.a;
        let cols = &self.cols;
        let entry = |i: usize, j: usize| a[j * n + i];
        substitute(y, 0..n, |i| ones(cols[i] & below(i)), entry, false);
        substitute(y, (0..n).rev(), |i| ones(cols[i] & above(i)), entry, true);
        for i in (0..n).rev() {
            y.swap(i, self.pivot[i]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mna_ac::Complex;

    /// A small deterministic generator (xorshift64*), so a failing case
    /// is reproduced by its seed.
    struct Rng(u64);

    impl Rng {
        fn next(&mut self) -> u64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
        }
        /// Uniform in [0, 1).
        fn unit(&mut self) -> f64 {
            (self.next() >> 11) as f64 / (1u64 << 53) as f64
        }
        fn below(&mut self, k: usize) -> usize {
            (self.next() % k as u64) as usize
        }
        /// A value of the kinds a circuit matrix holds: a conductance or
        /// susceptance over many decades, a unit entry of a source row,
        /// or an exact zero (a stamped zero such as `Ro g` with `Ro = 0`).
        fn value(&mut self) -> f64 {
            match self.below(6) {
                0 => 0.0,
                1 => 1.0,
                2 => -1.0,
                _ => (self.unit() - 0.5) * 10f64.powi(self.below(16) as i32 - 8),
            }
        }
    }

    /// A random sparse MNA-like system of size `n` stamped into both the
    /// given matrices alike: sparse off-diagonal entries, some zero
    /// diagonals (source rows), repeated stamps on one entry, and stamps
    /// that cancel to an exact zero.
    fn stamp_random<T: Scalar>(
        rng: &mut Rng,
        n: usize,
        mut make: impl FnMut(&mut Rng) -> T,
        neg: impl Fn(T) -> T,
        into: &mut [&mut DenseLu<T>],
    ) {
        let density = 0.05 + 0.4 * rng.unit();
        let mut stamp = |r: usize, c: usize, v: T| {
            for m in into.iter_mut() {
                m.add(r, c, v);
            }
        };
        for r in 0..n {
            for c in 0..n {
                let p = if r == c { 0.8 } else { density };
                if rng.unit() >= p {
                    continue;
                }
                let v = make(rng);
                stamp(r, c, v);
                match rng.below(8) {
                    0 => stamp(r, c, neg(v)),
                    1 => stamp(r, c, make(rng)),
                    _ => {}
                }
            }
        }
    }

    /// Factor `small` by the small-system path and `wide` by the general
    /// one, then solve both ways: every factor entry, pivot, bit set and
    /// solution must be the same bits (`bits` maps a value to its bits).
    /// Whether the matrix factored.
    fn assert_paths_agree<T: Scalar + std::fmt::Debug, B: PartialEq + std::fmt::Debug>(
        small: &mut DenseLu<T>,
        wide: &mut DenseLu<T>,
        rhs: &[T],
        bits: impl Fn(T) -> B,
        case: &str,
    ) -> bool {
        let got = small.factor_small();
        assert_eq!(got, wide.factor_wide(), "{case}: factor outcome");
        if got.is_err() {
            return false;
        }
        let same = |x: &[T], y: &[T], what: &str| {
            let x: Vec<B> = x.iter().map(|&v| bits(v)).collect();
            let y: Vec<B> = y.iter().map(|&v| bits(v)).collect();
            assert_eq!(x, y, "{case}: {what}");
        };
        same(&small.a, &wide.a, "factors");
        assert_eq!(small.pivot, wide.pivot, "{case}: pivots");
        assert_eq!(small.rows, wide.rows, "{case}: row sets");
        assert_eq!(small.cols, wide.cols, "{case}: column sets");
        let (mut x, mut y) = (rhs.to_vec(), rhs.to_vec());
        small.solve_small(&mut x);
        wide.solve_wide(&mut y);
        same(&x, &y, "forward solution");
        let (mut x, mut y) = (rhs.to_vec(), rhs.to_vec());
        small.solve_transposed_small(&mut x);
        wide.solve_transposed_wide(&mut y);
        same(&x, &y, "transposed solution");
        true
    }

    /// The small-system path is a faster way to the same arithmetic: on
    /// random sparse systems (real and complex, sizes 1 to 24 and 64,
    /// singular ones included) it gives the general path's factors,
    /// pivots and solutions bit for bit, and the same failing column.
    #[test]
    fn small_path_gives_the_general_paths_bits() {
        let mut singular = 0;
        for seed in 1..=3000u64 {
            let mut rng = Rng(seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1);
            let n = if seed % 50 == 0 {
                64
            } else {
                1 + rng.below(24)
            };
            let case = format!("seed {seed}, n {n}");
            if seed % 2 == 0 {
                let (mut s, mut w) = (DenseLu::<f64>::new(n), DenseLu::<f64>::new(n));
                stamp_random(&mut rng, n, Rng::value, |v| -v, &mut [&mut s, &mut w]);
                let rhs: Vec<f64> = (0..n).map(|_| rng.value()).collect();
                let factored = assert_paths_agree(&mut s, &mut w, &rhs, f64::to_bits, &case);
                singular += usize::from(!factored);
            } else {
                let (mut s, mut w) = (DenseLu::<Complex>::new(n), DenseLu::<Complex>::new(n));
                let make = |r: &mut Rng| Complex::new(r.value(), r.value());
                let neg = |v: Complex| Complex::new(-v.re, -v.im);
                stamp_random(&mut rng, n, make, neg, &mut [&mut s, &mut w]);
                let rhs: Vec<Complex> = (0..n).map(|_| make(&mut rng)).collect();
                let bits = |v: Complex| (v.re.to_bits(), v.im.to_bits());
                let factored = assert_paths_agree(&mut s, &mut w, &rhs, bits, &case);
                singular += usize::from(!factored);
            }
        }
        // Both outcomes are exercised (the random systems are not all
        // regular).
        assert!(singular > 0 && singular < 2000, "{singular} singular");
    }

    /// A 4x4 system that needs a row swap (zero on the first diagonal):
    /// the forward and the transposed solves reproduce their right-hand
    /// sides when multiplied back (the definition of a solution).
    #[test]
    fn forward_and_transposed_solves_satisfy_their_systems() {
        let m = [
            [0.0, 2.0, 0.0, 1.0],
            [3.0, 0.0, 1.0, 0.0],
            [0.0, 1.0, 4.0, 0.0],
            [1.0, 0.0, 0.0, 5.0],
        ];
        let mut lu = DenseLu::<f64>::new(4);
        for (r, row) in m.iter().enumerate() {
            for (c, &v) in row.iter().enumerate() {
                lu.add(r, c, v);
            }
        }
        lu.factor().unwrap();
        let b = [1.0, -2.0, 0.5, 3.0];
        let mut x = b;
        lu.solve_in_place(&mut x);
        for r in 0..4 {
            let got: f64 = (0..4).map(|c| m[r][c] * x[c]).sum();
            assert!((got - b[r]).abs() < 1e-12, "row {r}: {got}");
        }
        let mut y = b;
        lu.solve_transposed_in_place(&mut y);
        for c in 0..4 {
            let got: f64 = (0..4).map(|r| m[r][c] * y[r]).sum();
            assert!((got - b[c]).abs() < 1e-12, "column {c}: {got}");
        }
    }

    /// A matrix with a zero column is singular at that column.
    #[test]
    fn a_zero_column_is_reported() {
        let mut lu = DenseLu::<f64>::new(3);
        let m = [1.0, 0.0, 2.0, 3.0, 0.0, 1.0, 0.5, 0.0, 4.0];
        for (i, &v) in m.iter().enumerate() {
            lu.add(i / 3, i % 3, v);
        }
        assert_eq!(lu.factor(), Err(1));
    }
}
