//! Sparse LU over a fixed pattern: ordered and analysed once, factorised
//! numerically per frequency.
//!
//! * **Ordering** ([`Symbolic::new`]): minimum degree on the graph of the
//!   symmetrised pattern (Tinney & Walker 1967, "Direct solutions of sparse
//!   network equations by optimally ordered triangular factorization",
//!   Proc. IEEE 55(11); the greedy rule behind approximate minimum degree,
//!   Amestoy, Davis & Duff 1996). A tree's leaves have degree one and go
//!   first, which produces no fill at all: a tree is a chordal graph and
//!   leaves-first is a perfect elimination ordering (Rose 1970,
//!   "Triangulated graphs and the elimination process"). Ties go to the
//!   lower index, so the order is deterministic. A vertex whose diagonal
//!   entry is structurally zero (a modified-nodal row of a lossless line,
//!   or a junction of lossless lines only) waits until fill makes it
//!   non-zero.
//! * **Symbolic factorisation**: the elimination above also gives the
//!   pattern of L and U (that of the symmetrised pattern with its fill), and
//!   for every pivot the storage slot of every entry its update touches, so
//!   the numeric factorisation is one pass over precomputed index lists.
//! * **Numeric factorisation, static pivots** ([`factor_static`]): Gaussian
//!   elimination in the fixed order, pivots on the diagonal. Each entry's
//!   updates are summed in magnitude as they are applied; that sum over the
//!   entry's final magnitude is its growth (the componentwise backward error
//!   of LU is bounded by |L||U|, Higham 2002, *Accuracy and Stability of
//!   Numerical Algorithms*, Thm 9.3, and these sums are the entries of
//!   |L||U| that exceed |A|). A growth above [`MAX_GROWTH`], a zero or
//!   non-finite pivot, rejects the static order for this frequency.
//! * **Pivoted fallback** ([`PivotedLu`]): left-looking LU with threshold
//!   partial pivoting (Gilbert & Peierls 1988, "Sparse partial pivoting in
//!   time proportional to arithmetic operations", SIAM J. Sci. Stat. Comput.
//!   9(5)): the same column order, each column's pattern found by a
//!   depth-first search, the diagonal kept as pivot when it is at least
//!   [`PIVOT_THRESHOLD`] of the column's largest candidate, otherwise the
//!   largest.
//!
//! Both factorisations solve with A and with its adjoint Aᴴ, which the
//! condition estimate needs.
//!
//! Magnitudes in the growth check and the pivot search use |re| + |im|
//! (within √2 of the modulus, as LAPACK's CABS1), which needs no square root.

use num_complex::Complex64 as C64;
use std::collections::{BTreeMap, BTreeSet};

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };
const NONE: u32 = u32::MAX;

/// Growth of a factor entry (the magnitudes of the updates it received over
/// its final magnitude) above which the static order is rejected: fewer
/// than about 12 of the 16 significant digits would be certain to survive
/// in that entry. (A threshold of this order is common practice in sparse
/// direct solvers that pivot statically.)
pub const MAX_GROWTH: f64 = 1e2;

/// Threshold partial pivoting of the fallback: the diagonal stays the pivot
/// while its magnitude is at least this fraction of the column's largest
/// candidate (0.1 is the customary default of threshold pivoting, e.g.
/// Duff, Erisman & Reid, *Direct Methods for Sparse Matrices*, §5.4).
pub const PIVOT_THRESHOLD: f64 = 0.1;

/// Most factor entries (L and U off the diagonal) a circuit's loops may
/// produce: 4 million, about 200 MB of working storage with the values,
/// their copies and the update lists.
pub const MAX_FACTOR_ENTRIES: u64 = 4_000_000;

/// Most multiply-adds of one numeric factorisation (the length of the
/// precomputed update list): 16 million.
pub const MAX_UPDATES: u64 = 16_000_000;

/// The circuit's pattern would fill in beyond [`MAX_FACTOR_ENTRIES`] or
/// [`MAX_UPDATES`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FillTooLarge {
    /// What was reached when the analysis stopped.
    pub reached: u64,
    /// The limit it passed.
    pub limit: u64,
}

fn abs1(z: C64) -> f64 {
    z.re.abs() + z.im.abs()
}

/// The result of ordering and symbolic factorisation of one pattern.
#[derive(Debug, Clone)]
pub struct Symbolic {
    n: usize,
    /// `iperm[i]`: the step at which original index i is eliminated.
    iperm: Vec<u32>,
    /// For step k, `wing_idx[wing_ptr[k]..wing_ptr[k + 1]]` are the later
    /// steps j > k with an entry (k, j) in U and (j, k) in L, increasing.
    wing_ptr: Vec<u32>,
    wing_idx: Vec<u32>,
    /// For step k, `targets[upd_ptr[k]..upd_ptr[k + 1]]` are the slots of
    /// (wing p, wing q) for every pair, p-major.
    upd_ptr: Vec<u32>,
    targets: Vec<u32>,
    /// Whether every pivot of the static order is structurally non-zero.
    static_ok: bool,
    /// The pattern's own entries by permuted column: rows (permuted) and
    /// slots, for the pivoted factorisation.
    col_ptr: Vec<u32>,
    col_row: Vec<u32>,
    col_slot: Vec<u32>,
}

impl Symbolic {
    /// Orders and analyses an n×n pattern given as its structurally
    /// non-zero entries (row, column) in original numbering (duplicates
    /// allowed). `group[i]` ranks index i: every index of a lower group is
    /// eliminated before any of a higher one (the network puts branch flows
    /// first and the pumps' nodes, where flow is injected, last), and
    /// within a group the minimum-degree rule decides.
    ///
    /// # Errors
    /// [`FillTooLarge`] when the factors would exceed the storage limits.
    pub fn new(n: usize, entries: &[(usize, usize)], group: &[u8]) -> Result<Self, FillTooLarge> {
        Self::with_limits(n, entries, group, MAX_FACTOR_ENTRIES, MAX_UPDATES)
    }

    fn with_limits(
        n: usize,
        entries: &[(usize, usize)],
        group: &[u8],
        max_entries: u64,
        max_updates: u64,
    ) -> Result<Self, FillTooLarge> {
        assert!(n < NONE as usize, "pattern too large to index");
        // Elimination graph: for vertex v, neighbour u ↦ bits (OUT: entry
        // (v, u) non-zero; IN: entry (u, v) non-zero); a pair with neither
        // bit is an explicit zero of the symmetrised pattern.
        const OUT: u8 = 1;
        const IN: u8 = 2;
        let mut adj: Vec<BTreeMap<u32, u8>> = vec![BTreeMap::new(); n];
        let mut diag = vec![false; n];
        for &(r, c) in entries {
            if r == c {
                diag[r] = true;
            } else {
                *adj[r].entry(c as u32).or_insert(0) |= OUT;
                *adj[c].entry(r as u32).or_insert(0) |= IN;
            }
        }
        // Queue of remaining vertices by (structurally zero diagonal, group,
        // degree, index): eligible pivots first, then by group, fewest
        // neighbours first.
        let key = |v: usize, adj: &[BTreeMap<u32, u8>], diag: &[bool]| {
            (!diag[v], group[v], adj[v].len() as u32, v as u32)
        };
        let mut queue: BTreeSet<(bool, u8, u32, u32)> =
            (0..n).map(|v| key(v, &adj, &diag)).collect();
        let mut perm = Vec::with_capacity(n);
        let mut wings: Vec<Vec<u32>> = Vec::with_capacity(n);
        let mut static_ok = true;
        let mut entries_total: u64 = 0;
        let mut updates_total: u64 = 0;
        while let Some((zero_diag, _, _, v)) = queue.pop_first() {
            static_ok &= !zero_diag;
            let v = v as usize;
            let neighbours: Vec<(u32, u8)> = std::mem::take(&mut adj[v]).into_iter().collect();
            let m = neighbours.len() as u64;
            entries_total += 2 * m;
            updates_total += m * m;
            if entries_total > max_entries {
                return Err(FillTooLarge {
                    reached: entries_total,
                    limit: max_entries,
                });
            }
            if updates_total > max_updates {
                return Err(FillTooLarge {
                    reached: updates_total,
                    limit: max_updates,
                });
            }
            for &(u, _) in &neighbours {
                let u = u as usize;
                queue.remove(&key(u, &adj, &diag));
                adj[u].remove(&(v as u32));
            }
            for &(u, bu) in &neighbours {
                // (u, v) non-zero is bit IN of u in v's map; (v, w) is OUT of w.
                let u_to_v = bu & IN != 0;
                if u_to_v && bu & OUT != 0 {
                    diag[u as usize] = true;
                }
                for &(w, bw) in &neighbours {
                    if w == u {
                        continue;
                    }
                    let fill = u_to_v && bw & OUT != 0;
                    let e = adj[u as usize].entry(w).or_insert(0);
                    if fill {
                        *e |= OUT;
                    }
                    let e = adj[w as usize].entry(u).or_insert(0);
                    if fill {
                        *e |= IN;
                    }
                }
            }
            for &(u, _) in &neighbours {
                queue.insert(key(u as usize, &adj, &diag));
            }
            perm.push(v as u32);
            wings.push(neighbours.into_iter().map(|(u, _)| u).collect());
        }
        let mut iperm = vec![0u32; n];
        for (k, &v) in perm.iter().enumerate() {
            iperm[v as usize] = k as u32;
        }
        let mut wing_ptr = Vec::with_capacity(n + 1);
        let mut wing_idx = Vec::with_capacity(entries_total as usize / 2);
        wing_ptr.push(0u32);
        for wing in &wings {
            let start = wing_idx.len();
            wing_idx.extend(wing.iter().map(|&u| iperm[u as usize]));
            wing_idx[start..].sort_unstable();
            wing_ptr.push(wing_idx.len() as u32);
        }
        drop(wings);
        let mut sym = Symbolic {
            n,
            iperm,
            wing_ptr,
            wing_idx,
            upd_ptr: Vec::new(),
            targets: Vec::new(),
            static_ok,
            col_ptr: Vec::new(),
            col_row: Vec::new(),
            col_slot: Vec::new(),
        };
        let mut targets = Vec::with_capacity(updates_total as usize);
        let mut upd_ptr = Vec::with_capacity(n + 1);
        upd_ptr.push(0);
        for k in 0..n {
            let wing = sym.wing(k);
            for &i in wing {
                for &j in wing {
                    targets.push(sym.slot_permuted(i as usize, j as usize));
                }
            }
            upd_ptr.push(targets.len() as u32);
        }
        sym.targets = targets;
        sym.upd_ptr = upd_ptr;
        // The pattern's own entries by permuted column.
        let mut cols: Vec<(u32, u32)> = entries
            .iter()
            .map(|&(r, c)| (sym.iperm[c], sym.iperm[r]))
            .collect();
        cols.sort_unstable();
        cols.dedup();
        sym.col_ptr = vec![0; n + 1];
        for &(c, _) in &cols {
            sym.col_ptr[c as usize + 1] += 1;
        }
        for k in 0..n {
            sym.col_ptr[k + 1] += sym.col_ptr[k];
        }
        sym.col_row = cols.iter().map(|&(_, r)| r).collect();
        sym.col_slot = cols
            .iter()
            .map(|&(c, r)| sym.slot_permuted(r as usize, c as usize))
            .collect();
        Ok(sym)
    }

    /// Order n of the matrix.
    pub fn n(&self) -> usize {
        self.n
    }

    /// Number of value slots (diagonal, U and L).
    pub fn slots(&self) -> usize {
        self.n + 2 * self.wing_idx.len()
    }

    /// Whether the static order has structurally non-zero pivots.
    pub fn static_ok(&self) -> bool {
        self.static_ok
    }

    /// The step at which original index `i` is eliminated (its position in
    /// the permuted vectors).
    pub fn position(&self, i: usize) -> usize {
        self.iperm[i] as usize
    }

    /// Calls `f(slot, row, column)` for every value slot with its row and
    /// column in the permuted order.
    pub fn for_each_entry(&self, mut f: impl FnMut(usize, usize, usize)) {
        let (n, w) = (self.n, self.wing_idx.len());
        for k in 0..n {
            f(k, k, k);
            for e in self.wing_range(k) {
                let j = self.wing_idx[e] as usize;
                f(n + e, k, j);
                f(n + w + e, j, k);
            }
        }
    }

    fn wing(&self, k: usize) -> &[u32] {
        &self.wing_idx[self.wing_ptr[k] as usize..self.wing_ptr[k + 1] as usize]
    }

    fn wing_range(&self, k: usize) -> std::ops::Range<usize> {
        self.wing_ptr[k] as usize..self.wing_ptr[k + 1] as usize
    }

    /// The value slot of entry (row, column) in original numbering; the
    /// entry must be in the pattern given to [`Symbolic::new`].
    pub fn slot(&self, row: usize, col: usize) -> u32 {
        self.slot_permuted(self.iperm[row] as usize, self.iperm[col] as usize)
    }

    fn slot_permuted(&self, i: usize, j: usize) -> u32 {
        if i == j {
            return i as u32;
        }
        let (k, x) = (i.min(j), i.max(j) as u32);
        let offset = self
            .wing(k)
            .binary_search(&x)
            .expect("entry in the symbolic pattern");
        let e = self.wing_ptr[k] as usize + offset;
        if i < j {
            (self.n + e) as u32
        } else {
            (self.n + self.wing_idx.len() + e) as u32
        }
    }
}

/// Factorises `vals` (laid out by `sym`'s slots) in place in the static
/// order: afterwards the diagonal slots hold the reciprocals of U's
/// diagonal (so that the substitutions multiply rather than divide), the
/// upper slots U and the lower slots L's multipliers (unit diagonal). `mass` (one per
/// slot, any contents) is scratch for the growth check.
///
/// Returns the smallest over the largest pivot magnitude (|.|², square-
/// rooted) when every pivot is non-zero and finite and no entry grew beyond
/// [`MAX_GROWTH`]; `None` otherwise (then `vals` is spoiled).
pub fn factor_static(sym: &Symbolic, vals: &mut [C64], mass: &mut [f64]) -> Option<f64> {
    if !sym.static_ok {
        return None;
    }
    let n = sym.n;
    let w = sym.wing_idx.len();
    mass.fill(0.0);
    let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
    // NaN-safe throughout: a NaN fails every comparison.
    let mut ok = true;
    for k in 0..n {
        let d = vals[k];
        let size = abs1(d);
        ok &= size > 0.0 && size.is_finite() && mass[k] <= MAX_GROWTH * size;
        if !ok {
            return None;
        }
        let d2 = d.norm_sqr();
        lo = lo.min(d2);
        hi = hi.max(d2);
        let r = 1.0 / d2;
        let inv = C64::new(d.re * r, -d.im * r);
        vals[k] = inv;
        let (b, e) = (sym.wing_ptr[k] as usize, sym.wing_ptr[k + 1] as usize);
        if b == e {
            continue;
        }
        let t0 = sym.upd_ptr[k] as usize;
        if e - b == 1 {
            // one later neighbour (every step of a tree): one update
            let (u, l) = (vals[n + b], vals[n + w + b]);
            ok &= mass[n + b] <= MAX_GROWTH * abs1(u) && mass[n + w + b] <= MAX_GROWTH * abs1(l);
            let l = l * inv;
            vals[n + w + b] = l;
            let target = sym.targets[t0] as usize;
            vals[target] -= l * u;
            mass[target] += abs1(l) * abs1(u);
            continue;
        }
        // this pivot's row of U and column of L are final: check them,
        // then scale L
        for p in b..e {
            let (u, l) = (vals[n + p], vals[n + w + p]);
            ok &= mass[n + p] <= MAX_GROWTH * abs1(u) && mass[n + w + p] <= MAX_GROWTH * abs1(l);
            vals[n + w + p] = l * inv;
        }
        let mut t = t0;
        for p in b..e {
            let l = vals[n + w + p];
            let l_size = abs1(l);
            for q in b..e {
                let u = vals[n + q];
                let target = sym.targets[t] as usize;
                vals[target] -= l * u;
                mass[target] += l_size * abs1(u);
                t += 1;
            }
        }
    }
    if !ok {
        return None;
    }
    Some((lo / hi).sqrt())
}

/// Solves A·x = b with the static factors (b and x in permuted order).
///
/// With `monitor` (n scratch values), every substitution step also sums the
/// magnitudes of the terms it adds, as [`factor_static`] does for the
/// factors, and the result says whether every computed value kept its
/// cancellation within [`MAX_GROWTH`] (a value formed as a small difference
/// of large terms carries their round-off; one step of iterative refinement
/// repairs it, Skeel 1980, "Iterative refinement implies numerical
/// stability for Gaussian elimination", Math. Comp. 35). Without, `true`.
pub fn solve_static(
    sym: &Symbolic,
    vals: &[C64],
    x: &mut [C64],
    monitor: Option<&mut [f64]>,
) -> bool {
    let (n, w) = (sym.n, sym.wing_idx.len());
    let Some(mass) = monitor else {
        for k in 0..n {
            let xk = x[k];
            if xk != ZERO {
                for e in sym.wing_range(k) {
                    x[sym.wing_idx[e] as usize] -= vals[n + w + e] * xk;
                }
            }
        }
        for k in (0..n).rev() {
            let mut s = x[k];
            for e in sym.wing_range(k) {
                s -= vals[n + e] * x[sym.wing_idx[e] as usize];
            }
            x[k] = s * vals[k];
        }
        return true;
    };
    for (m, &v) in mass.iter_mut().zip(x.iter()) {
        *m = abs1(v);
    }
    let mut clean = true;
    for k in 0..n {
        let xk = x[k];
        // x[k] is final here: check its cancellation
        clean &= mass[k] <= MAX_GROWTH * abs1(xk);
        if xk != ZERO {
            let size = abs1(xk);
            for e in sym.wing_range(k) {
                let j = sym.wing_idx[e] as usize;
                let l = vals[n + w + e];
                x[j] -= l * xk;
                mass[j] += abs1(l) * size;
            }
        }
    }
    for k in (0..n).rev() {
        let mut s = x[k];
        let mut size = abs1(s);
        for e in sym.wing_range(k) {
            let t = vals[n + e] * x[sym.wing_idx[e] as usize];
            s -= t;
            size += abs1(t);
        }
        clean &= size <= MAX_GROWTH * abs1(s);
        x[k] = s * vals[k];
    }
    clean
}

/// Solves Aᴴ·x = b with the static factors (Aᴴ = Uᴴ Lᴴ; permuted order).
pub fn solve_static_adjoint(sym: &Symbolic, vals: &[C64], x: &mut [C64]) {
    let (n, w) = (sym.n, sym.wing_idx.len());
    for k in 0..n {
        x[k] *= vals[k].conj();
        let xk = x[k];
        if xk != ZERO {
            for e in sym.wing_range(k) {
                x[sym.wing_idx[e] as usize] -= vals[n + e].conj() * xk;
            }
        }
    }
    for k in (0..n).rev() {
        let mut s = x[k];
        for e in sym.wing_range(k) {
            s -= vals[n + w + e].conj() * x[sym.wing_idx[e] as usize];
        }
        x[k] = s;
    }
}

/// LU with threshold partial pivoting (the fallback), P·A = L·U with A in
/// the symbolic order; storage reused across factorisations.
#[derive(Debug, Clone, Default)]
pub struct PivotedLu {
    n: usize,
    /// L by column (unit diagonal not stored): rows in A's (permuted) row
    /// numbering, multipliers.
    l_ptr: Vec<usize>,
    l_row: Vec<u32>,
    l_val: Vec<C64>,
    /// U by column, strictly above the diagonal: pivot steps and values.
    u_ptr: Vec<usize>,
    u_row: Vec<u32>,
    u_val: Vec<C64>,
    u_diag: Vec<C64>,
    /// `row_step[r]`: the step at which row r became pivot row, or NONE.
    row_step: Vec<u32>,
    /// `step_row[k]`: the pivot row of step k.
    step_row: Vec<u32>,
    work: Vec<C64>,
    mark: Vec<u32>,
    reach: Vec<u32>,
    stack: Vec<(u32, usize)>,
    scratch: Vec<C64>,
}

impl PivotedLu {
    /// Factorises the matrix whose values sit in `vals` (laid out by
    /// `sym`). Returns the smallest over the largest pivot magnitude, 0 when
    /// a column has no non-zero candidate (a singular matrix) or a value is
    /// not finite.
    pub fn factor(&mut self, sym: &Symbolic, vals: &[C64]) -> f64 {
        let n = sym.n;
        self.n = n;
        for v in [&mut self.l_ptr, &mut self.u_ptr] {
            v.clear();
            v.push(0);
        }
        self.l_row.clear();
        self.l_val.clear();
        self.u_row.clear();
        self.u_val.clear();
        self.u_diag.clear();
        self.row_step.clear();
        self.row_step.resize(n, NONE);
        self.step_row.clear();
        self.work.clear();
        self.work.resize(n, ZERO);
        self.mark.clear();
        self.mark.resize(n, NONE);
        let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
        for k in 0..n {
            // The pattern of column k of L⁻¹A: rows reachable from A's
            // column k through the columns of L found so far, in an order
            // where every row comes after the rows it depends on.
            self.reach.clear();
            for p in sym.col_ptr[k] as usize..sym.col_ptr[k + 1] as usize {
                let r = sym.col_row[p];
                if self.mark[r as usize] != k as u32 {
                    self.depth_first(r, k as u32);
                }
            }
            for p in sym.col_ptr[k] as usize..sym.col_ptr[k + 1] as usize {
                self.work[sym.col_row[p] as usize] = vals[sym.col_slot[p] as usize];
            }
            // reach holds rows in post-order; dependencies come last.
            for idx in (0..self.reach.len()).rev() {
                let r = self.reach[idx] as usize;
                let step = self.row_step[r];
                if step == NONE {
                    continue;
                }
                let xr = self.work[r];
                if xr == ZERO {
                    continue;
                }
                let s = step as usize;
                for p in self.l_ptr[s]..self.l_ptr[s + 1] {
                    self.work[self.l_row[p] as usize] -= self.l_val[p] * xr;
                }
            }
            // Pivot: the diagonal row k if it is still free and large
            // enough, else the largest free candidate.
            let mut best = NONE;
            let mut best_size = 0.0;
            for &r in &self.reach {
                if self.row_step[r as usize] == NONE {
                    let size = abs1(self.work[r as usize]);
                    if size > best_size {
                        (best, best_size) = (r, size);
                    }
                }
            }
            let diag_free = self.row_step[k] == NONE && self.mark[k] == k as u32;
            if diag_free && abs1(self.work[k]) >= PIVOT_THRESHOLD * best_size {
                best = k as u32;
            }
            let finite = best_size.is_finite()
                && self
                    .reach
                    .iter()
                    .all(|&r| self.work[r as usize].is_finite());
            // best_size is never NaN (NaN loses every comparison above)
            if best_size == 0.0 || !finite {
                for &r in &self.reach {
                    self.work[r as usize] = ZERO;
                }
                return 0.0;
            }
            let pivot = self.work[best as usize];
            let p2 = pivot.norm_sqr();
            lo = lo.min(p2);
            hi = hi.max(p2);
            let inv = pivot.inv();
            for idx in 0..self.reach.len() {
                let r = self.reach[idx];
                let x = std::mem::replace(&mut self.work[r as usize], ZERO);
                let step = self.row_step[r as usize];
                if step != NONE {
                    if x != ZERO {
                        self.u_row.push(step);
                        self.u_val.push(x);
                    }
                } else if r != best && x != ZERO {
                    self.l_row.push(r);
                    self.l_val.push(x * inv);
                }
            }
            self.u_diag.push(pivot);
            self.row_step[best as usize] = k as u32;
            self.step_row.push(best);
            self.l_ptr.push(self.l_row.len());
            self.u_ptr.push(self.u_row.len());
        }
        (lo / hi).sqrt()
    }

    /// Depth-first search from row `start` through the L columns of pivot
    /// rows, appending rows to `reach` in post-order (marking them with `k`).
    fn depth_first(&mut self, start: u32, k: u32) {
        self.stack.clear();
        self.stack.push((start, 0));
        self.mark[start as usize] = k;
        while let Some(&mut (r, ref mut next)) = self.stack.last_mut() {
            let step = self.row_step[r as usize];
            let children = if step == NONE {
                0..0
            } else {
                self.l_ptr[step as usize]..self.l_ptr[step as usize + 1]
            };
            let mut pushed = false;
            while children.start + *next < children.end {
                let child = self.l_row[children.start + *next];
                *next += 1;
                if self.mark[child as usize] != k {
                    self.mark[child as usize] = k;
                    self.stack.push((child, 0));
                    pushed = true;
                    break;
                }
            }
            if !pushed {
                self.stack.pop();
                self.reach.push(r);
            }
        }
    }

    /// Solves A·x = b (permuted order).
    pub fn solve(&mut self, x: &mut [C64]) {
        let n = self.n;
        for k in 0..n {
            let t = x[self.step_row[k] as usize];
            if t != ZERO {
                for p in self.l_ptr[k]..self.l_ptr[k + 1] {
                    x[self.l_row[p] as usize] -= self.l_val[p] * t;
                }
            }
        }
        self.scratch.clear();
        self.scratch
            .extend(self.step_row.iter().map(|&r| x[r as usize]));
        let y = &mut self.scratch;
        for k in (0..n).rev() {
            y[k] /= self.u_diag[k];
            let yk = y[k];
            if yk != ZERO {
                for p in self.u_ptr[k]..self.u_ptr[k + 1] {
                    y[self.u_row[p] as usize] -= self.u_val[p] * yk;
                }
            }
        }
        x.copy_from_slice(y);
    }

    /// Solves Aᴴ·x = b (permuted order): Aᴴ = Uᴴ Lᴴ P.
    pub fn solve_adjoint(&mut self, x: &mut [C64]) {
        let n = self.n;
        for k in 0..n {
            let mut s = x[k];
            for p in self.u_ptr[k]..self.u_ptr[k + 1] {
                s -= self.u_val[p].conj() * x[self.u_row[p] as usize];
            }
            x[k] = s / self.u_diag[k].conj();
        }
        for k in (0..n).rev() {
            let mut s = x[k];
            for p in self.l_ptr[k]..self.l_ptr[k + 1] {
                s -= self.l_val[p].conj() * x[self.row_step[self.l_row[p] as usize] as usize];
            }
            x[k] = s;
        }
        self.scratch.clear();
        self.scratch.resize(n, ZERO);
        for (&row, &v) in self.step_row.iter().zip(x.iter()) {
            self.scratch[row as usize] = v;
        }
        x.copy_from_slice(&self.scratch);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{DMatrix, DVector};

    fn rng(seed: &mut u64) -> f64 {
        *seed ^= *seed << 13;
        *seed ^= *seed >> 7;
        *seed ^= *seed << 17;
        (*seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    }

    /// A random sparse pattern: a random tree, some extra entries, some
    /// unsymmetric ones; full diagonal unless `holes`.
    fn random_pattern(n: usize, seed: &mut u64, holes: bool) -> Vec<(usize, usize)> {
        let mut e = Vec::new();
        for i in 1..n {
            let p = ((rng(seed) + 0.5) * i as f64) as usize;
            e.push((i, p));
            e.push((p, i));
        }
        for _ in 0..n / 3 {
            let a = ((rng(seed) + 0.5) * n as f64) as usize;
            let b = ((rng(seed) + 0.5) * n as f64) as usize;
            e.push((a, b));
        }
        for i in 0..n {
            if !holes || rng(seed) > 0.0 {
                e.push((i, i));
            }
        }
        e
    }

    fn dense_of(n: usize, entries: &[(usize, usize)], values: &[C64]) -> DMatrix<C64> {
        let mut a = DMatrix::zeros(n, n);
        for (&(r, c), &v) in entries.iter().zip(values) {
            a[(r, c)] += v;
        }
        a
    }

    fn slots_of(sym: &Symbolic, entries: &[(usize, usize)], values: &[C64]) -> Vec<C64> {
        let mut vals = vec![ZERO; sym.slots()];
        for (&(r, c), &v) in entries.iter().zip(values) {
            vals[sym.slot(r, c) as usize] += v;
        }
        vals
    }

    fn permute(sym: &Symbolic, x: &DVector<C64>) -> Vec<C64> {
        let mut p = vec![ZERO; sym.n()];
        for i in 0..sym.n() {
            p[sym.position(i)] = x[i];
        }
        p
    }

    fn close(got: &[C64], want: &[C64]) -> bool {
        let scale: f64 = want.iter().map(|v| v.norm()).fold(0.0, f64::max);
        got.iter()
            .zip(want)
            .all(|(g, w)| (g - w).norm() <= 1e-11 * scale)
    }

    /// Static and pivoted factorisations solve A and Aᴴ as nalgebra's dense
    /// LU does (the reference), on random sparse patterns.
    #[test]
    fn solves_agree_with_dense_lu() {
        let mut seed = 0x1234_5678_9abc_def1_u64;
        for n in [1, 2, 3, 5, 9, 20, 60] {
            for holes in [false, true] {
                let entries = random_pattern(n, &mut seed, holes);
                let sym = Symbolic::new(n, &entries, &vec![0; n]).unwrap();
                // diagonally weighted values, so the static order is safe
                let values: Vec<C64> = entries
                    .iter()
                    .map(|&(r, c)| {
                        let w = if r == c { 4.0 } else { 1.0 };
                        C64::new(w * (1.0 + rng(&mut seed)), rng(&mut seed))
                    })
                    .collect();
                let a = dense_of(n, &entries, &values);
                let Some(want_lu) = a
                    .clone()
                    .lu()
                    .solve(&DVector::from_element(n, C64::new(1.0, 0.0)))
                else {
                    continue;
                };
                let b = DVector::from_fn(n, |i, _| C64::new(1.0 + i as f64, -0.5));
                let want = a.clone().lu().solve(&b).unwrap();
                let want_adj = a.adjoint().lu().solve(&b).unwrap();
                assert!(want_lu.iter().all(|v| v.is_finite()));
                let pb = permute(&sym, &b);

                let mut lu = PivotedLu::default();
                assert!(lu.factor(&sym, &slots_of(&sym, &entries, &values)) > 0.0);
                let mut x = pb.clone();
                lu.solve(&mut x);
                assert!(close(&x, &permute(&sym, &want)), "pivoted, n = {n}");
                let mut y = pb.clone();
                lu.solve_adjoint(&mut y);
                assert!(
                    close(&y, &permute(&sym, &want_adj)),
                    "pivoted adjoint, n = {n}"
                );

                if !holes {
                    let mut vals = slots_of(&sym, &entries, &values);
                    let mut mass = vec![0.0; vals.len()];
                    assert!(
                        factor_static(&sym, &mut vals, &mut mass).is_some(),
                        "n = {n}"
                    );
                    let mut x = pb.clone();
                    solve_static(&sym, &vals, &mut x, None);
                    assert!(close(&x, &permute(&sym, &want)), "static, n = {n}");
                    let mut y = pb.clone();
                    solve_static_adjoint(&sym, &vals, &mut y);
                    assert!(
                        close(&y, &permute(&sym, &want_adj)),
                        "static adjoint, n = {n}"
                    );
                }
            }
        }
    }

    /// A tree (here a path with side leaves) fills in nothing: the factors
    /// hold exactly the pattern's off-diagonal entries.
    #[test]
    fn a_tree_has_no_fill() {
        let n = 50;
        let mut entries: Vec<(usize, usize)> = (0..n).map(|i| (i, i)).collect();
        for i in 1..n {
            let parent = if i % 3 == 0 { i - 3 } else { i - 1 };
            entries.push((i, parent));
            entries.push((parent, i));
        }
        let sym = Symbolic::new(n, &entries, &vec![0; n]).unwrap();
        assert_eq!(sym.wing_idx.len(), n - 1);
        assert!(sym.static_ok());
        // every step updates at most its one remaining neighbour's diagonal
        assert_eq!(sym.targets.len(), n - 1);
    }

    /// A pivot that vanishes by cancellation in the static order is
    /// rejected, and the pivoted factorisation solves the system.
    #[test]
    fn cancelling_pivot_falls_back() {
        // [[1, 1], [1, 1 + δ]] eliminated in order: the second pivot is δ,
        // formed from 1 + δ − 1.
        let entries = [(0, 0), (0, 1), (1, 0), (1, 1)];
        let sym = Symbolic::new(2, &entries, &[0, 0]).unwrap();
        let one = C64::new(1.0, 0.0);
        let values = [one, one, one, C64::new(1.0 + 1e-6, 0.0)];
        let mut vals = slots_of(&sym, &entries, &values);
        let mut mass = vec![0.0; vals.len()];
        assert!(factor_static(&sym, &mut vals, &mut mass).is_none());
        let mut lu = PivotedLu::default();
        assert!(lu.factor(&sym, &slots_of(&sym, &entries, &values)) > 0.0);
    }

    /// A structurally singular column is reported as a zero pivot ratio.
    #[test]
    fn singular_matrix_gives_zero_ratio() {
        let entries = [(0, 0), (1, 0)];
        let sym = Symbolic::new(2, &entries, &[0, 0]).unwrap();
        let one = C64::new(1.0, 0.0);
        let mut lu = PivotedLu::default();
        assert_eq!(lu.factor(&sym, &slots_of(&sym, &entries, &[one, one])), 0.0);
    }

    /// Modified-nodal rows with zero diagonals: the ordering waits for fill,
    /// and the static factors still solve the system.
    #[test]
    fn structurally_zero_diagonals_wait_for_fill() {
        // The 3×3 system [[2, 1, 0], [1, 0, 1], [0, 1, 3]]: the middle
        // diagonal is zero until the first step fills it.
        let entries = [(0, 0), (0, 1), (1, 0), (1, 2), (2, 1), (2, 2)];
        let sym = Symbolic::new(3, &entries, &[0; 3]).unwrap();
        assert!(sym.static_ok());
        let v = |x: f64| C64::new(x, 0.0);
        let values = [v(2.0), v(1.0), v(1.0), v(1.0), v(1.0), v(3.0)];
        let mut vals = slots_of(&sym, &entries, &values);
        let mut mass = vec![0.0; vals.len()];
        assert!(factor_static(&sym, &mut vals, &mut mass).is_some());
        let a = dense_of(3, &entries, &values);
        let b = DVector::from_fn(3, |i, _| v(i as f64 + 1.0));
        let want = a.lu().solve(&b).unwrap();
        let mut x = permute(&sym, &b);
        assert!(solve_static(&sym, &vals, &mut x, Some(&mut [0.0; 3])));
        assert!(close(&x, &permute(&sym, &want)));
    }

    /// A full 40×40 pattern needs 1560 factor entries and 20,540 updates;
    /// limits below either are refused, limits above accepted.
    #[test]
    fn fill_beyond_the_limit_is_refused() {
        let n = 40;
        let entries: Vec<(usize, usize)> =
            (0..n).flat_map(|i| (0..n).map(move |j| (i, j))).collect();
        let full = Symbolic::with_limits(n, &entries, &[0; 40], 1560, 20_540).unwrap();
        assert_eq!(full.wing_idx.len(), 780);
        assert_eq!(full.targets.len(), 20_540);
        assert!(Symbolic::with_limits(n, &entries, &[0; 40], 1559, 1 << 30).is_err());
        assert!(Symbolic::with_limits(n, &entries, &[0; 40], 1 << 30, 20_539).is_err());
    }
}
