//! Time waveforms rebuilt from harmonic phasors.
//!
//! With peak phasors P_k of orders k of a fundamental, the ripple over one
//! period is p(θ) = Σ_k Re{P_k e^{jkθ}}, θ = 2π f_1 t (methods.md §7.3). The
//! peak-to-peak value must be found on the waveform: it is not the sum of the
//! harmonic amplitudes, because the harmonics do not peak together.

use super::search::golden_section_max;
use num_complex::Complex64 as C64;

/// p(θ) = Σ Re{P_k e^{jkθ}} for (order k, P_k) pairs.
pub fn evaluate(harmonics: &[(u32, C64)], theta: f64) -> f64 {
    let mut turns = Turns::new(theta);
    harmonics.iter().map(|&(k, p)| (p * turns.at(k)).re).sum()
}

/// The factors e^{jkθ} of increasing orders k at one angle θ, each the
/// one before times e^{jΔkθ} (a sine and a cosine when the step Δk
/// changes, a complex product otherwise): for consecutive orders one sine
/// and cosine in all instead of one per order. Each product adds a
/// relative error of a few ulps, so order k is within about k·4ε of
/// e^{jkθ}, far below what a waveform's value needs (the golden-section
/// comparisons of [`Period`] allow 64ε per order). An order not above the
/// one before is computed directly.
struct Turns {
    theta: f64,
    order: u32,
    factor: C64,
    step: u32,
    step_factor: C64,
}

impl Turns {
    fn new(theta: f64) -> Self {
        Turns {
            theta,
            order: 0,
            factor: C64::new(1.0, 0.0),
            step: 0,
            step_factor: C64::new(1.0, 0.0),
        }
    }

    /// e^{jkθ}, k the next order.
    fn at(&mut self, k: u32) -> C64 {
        if k <= self.order {
            return C64::from_polar(1.0, f64::from(k) * self.theta);
        }
        let step = k - self.order;
        if step != self.step {
            self.step = step;
            self.step_factor = C64::from_polar(1.0, f64::from(step) * self.theta);
        }
        self.order = k;
        self.factor *= self.step_factor;
        self.factor
    }
}

/// The highest and lowest points of p(θ) over one period: (θ, p(θ)) each,
/// θ in 0..2π of the fundamental.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extremes {
    /// The maximum: (θ, value).
    pub max: (f64, f64),
    /// The minimum: (θ, value).
    pub min: (f64, f64),
}

/// The extremes of p(θ) over one period.
///
/// Samples 64 points per period of the highest order (at least 1024), then
/// refines the largest and smallest samples by golden-section search on the
/// exact sum, so the values are accurate to round-off. The same bits as
/// [`extremes_by_scan`], found with far fewer evaluations ([`Period`]).
pub fn extremes(harmonics: &[(u32, C64)]) -> Extremes {
    let orders: Vec<u32> = harmonics.iter().map(|h| h.0).collect();
    let phasors: Vec<C64> = harmonics.iter().map(|h| h.1).collect();
    Period::new(&orders).extremes(&phasors)
}

/// The plain form of [`extremes`], kept as its reference: every one of the
/// samples evaluated, then two golden-section searches of [`GOLDEN_STEPS`] steps.
pub fn extremes_by_scan(harmonics: &[(u32, C64)]) -> Extremes {
    let max_order = harmonics.iter().map(|h| h.0).max().unwrap_or(0);
    if max_order == 0 {
        return Extremes {
            max: (0.0, 0.0),
            min: (0.0, 0.0),
        };
    }
    let n = samples(max_order);
    let step = std::f64::consts::TAU / n as f64;
    let (mut i_max, mut i_min) = (0, 0);
    let (mut v_max, mut v_min) = (f64::NEG_INFINITY, f64::INFINITY);
    for i in 0..n {
        let v = evaluate(harmonics, i as f64 * step);
        if v > v_max {
            (v_max, i_max) = (v, i);
        }
        if v < v_min {
            (v_min, i_min) = (v, i);
        }
    }
    let centre_max = i_max as f64 * step;
    let centre_min = i_min as f64 * step;
    let hi = golden_section_max(
        |t| evaluate(harmonics, t),
        centre_max - step,
        centre_max + step,
        GOLDEN_STEPS,
    );
    let lo = golden_section_max(
        |t| -evaluate(harmonics, t),
        centre_min - step,
        centre_min + step,
        GOLDEN_STEPS,
    );
    finish(step, (i_max, v_max), (i_min, v_min), hi, (lo.0, -lo.1))
}

/// Golden-section steps of each refinement: the bracket, two sample steps
/// 4π/(64K) wide for highest order K, shrinks to 0.618³² of that, under
/// 4.1e-8/K, where p(θ) is within ½·max|p''|·(2.1e-8/K)² ≤ 2.1e-16·Σ|P_k|
/// of its extreme (|p''| ≤ K²Σ|P_k|): below the round-off of the sum itself
/// (a few ε·Σ|P_k|), so more steps change nothing but the last bits.
const GOLDEN_STEPS: usize = 32;

/// Samples per period: 64 per period of the highest order, at least 1024.
fn samples(max_order: u32) -> usize {
    (64 * max_order as usize).max(1024)
}

/// Samples × orders up to which [`Period`] keeps a table of e^{jkθ_i}.
const MAX_TABLE: usize = 1 << 20;

/// The extremes from the best samples and the refined points (θ, p(θ)).
fn finish(
    step: f64,
    (i_max, v_max): (usize, f64),
    (i_min, v_min): (usize, f64),
    hi: (f64, f64),
    lo: (f64, f64),
) -> Extremes {
    let centre_max = i_max as f64 * step;
    let centre_min = i_min as f64 * step;
    let tau = std::f64::consts::TAU;
    Extremes {
        max: if hi.1 >= v_max {
            (hi.0.rem_euclid(tau), hi.1)
        } else {
            (centre_max, v_max)
        },
        min: if lo.1 <= v_min {
            (lo.0.rem_euclid(tau), lo.1)
        } else {
            (centre_min, v_min)
        },
    }
}

/// The extremes of many waveforms of the same orders (every point of a
/// circuit), the same bits as [`extremes_by_scan`] at a fraction of its
/// cost:
///
/// * the factors e^{jkθ_i} at the samples are computed once for all
///   waveforms (a table, the very values the scan computes), so a sample
///   costs a few multiply-adds per order instead of a sine and a cosine;
/// * the golden-section steps compare p at two points by its Taylor
///   polynomial about the best sample (degree [`TAYLOR_DEGREE`], remainder
///   below 1e-18 of Σ|P_k| there) whenever the two values differ by more
///   than both error bounds, and evaluate the sum exactly otherwise (the
///   last steps, where round-off decides, and the point returned); points
///   met again once the bracket has shrunk to a few ulps are not evaluated
///   twice. Every comparison, and so every point, comes out as in the
///   scan's search.
#[derive(Debug, Clone)]
pub struct Period {
    orders: Vec<u32>,
    n: usize,
    step: f64,
    /// e^{jk_jθ_i} at sample i, order j: real parts `cos[j * n + i]`,
    /// imaginary parts `sin[j * n + i]`, order by order so that a
    /// waveform's samples add up order by order, many samples at once
    /// (empty when they would exceed [`MAX_TABLE`]; computed as needed
    /// then).
    cos: Vec<f64>,
    /// See `cos`.
    sin: Vec<f64>,
    /// The factors at every [`SCREEN_STRIDE`]-th sample, laid out as `cos`
    /// and `sin` (empty with them).
    coarse_cos: Vec<f64>,
    /// See `coarse_cos`.
    coarse_sin: Vec<f64>,
}

/// The largest and smallest samples met so far, (index, value) each,
/// the first of equals kept.
struct Best {
    max: (usize, f64),
    min: (usize, f64),
}

impl Best {
    fn new() -> Self {
        Best {
            max: (0, f64::NEG_INFINITY),
            min: (0, f64::INFINITY),
        }
    }

    fn max(&mut self, i: usize, v: f64) {
        if v > self.max.1 {
            self.max = (i, v);
        }
    }

    fn min(&mut self, i: usize, v: f64) {
        if v < self.min.1 {
            self.min = (i, v);
        }
    }
}

/// Every this many samples are taken first to screen the period's blocks
/// ([`Period::screened_samples`]).
const SCREEN_STRIDE: usize = 8;

/// Degree of the Taylor polynomial of the golden-section comparisons.
const TAYLOR_DEGREE: usize = 10;

impl Period {
    /// The samples and their factors for waveforms of `orders`.
    pub fn new(orders: &[u32]) -> Self {
        let max_order = orders.iter().copied().max().unwrap_or(0);
        let n = if max_order == 0 {
            0
        } else {
            samples(max_order)
        };
        let step = if n == 0 {
            0.0
        } else {
            std::f64::consts::TAU / n as f64
        };
        let (mut cos, mut sin) = (Vec::new(), Vec::new());
        if n * orders.len() <= MAX_TABLE {
            // the factors as `evaluate` forms them at each sample
            cos = vec![0.0; n * orders.len()];
            sin = vec![0.0; n * orders.len()];
            for i in 0..n {
                let mut turns = Turns::new(i as f64 * step);
                for (j, &k) in orders.iter().enumerate() {
                    let c = turns.at(k);
                    cos[j * n + i] = c.re;
                    sin[j * n + i] = c.im;
                }
            }
        }
        // (n is a multiple of 64, so every order's samples start on the stride)
        debug_assert_eq!(n % SCREEN_STRIDE, 0);
        let every = |v: &[f64]| -> Vec<f64> { v.iter().step_by(SCREEN_STRIDE).copied().collect() };
        let (coarse_cos, coarse_sin) = (every(&cos), every(&sin));
        Period {
            orders: orders.to_vec(),
            n,
            step,
            cos,
            sin,
            coarse_cos,
            coarse_sin,
        }
    }

    /// The orders it was built for.
    pub fn orders(&self) -> &[u32] {
        &self.orders
    }

    /// p at every sample, exactly as [`evaluate`] computes it there (no
    /// table: each factor computed).
    fn samples(&self, harmonics: &[(u32, C64)]) -> Vec<f64> {
        (0..self.n)
            .map(|i| evaluate(harmonics, i as f64 * self.step))
            .collect()
    }

    /// p at the samples of a table `(cos, sin)` of `len` samples per order
    /// (the period's or its screening samples), from index `from`, into
    /// `out`: exactly as [`Period::samples`] computes them (each sample's
    /// terms in the order of the orders, from the neutral element of
    /// `f64`'s sum), order by order over the samples.
    fn table_samples(
        table: (&[f64], &[f64]),
        len: usize,
        phasors: &[C64],
        from: usize,
        out: &mut [f64],
    ) {
        out.fill(std::iter::empty::<f64>().sum());
        let count = out.len();
        for (j, p) in phasors.iter().enumerate() {
            let at = j * len + from;
            let cos = &table.0[at..at + count];
            let sin = &table.1[at..at + count];
            for ((v, &c), &s) in out.iter_mut().zip(cos).zip(sin) {
                *v += p.re * c - p.im * s;
            }
        }
    }

    /// The largest and smallest of the table's samples, (index, value)
    /// each, the first of equals: the same as scanning every sample, from
    /// a fraction of them. Every [`SCREEN_STRIDE`]-th sample is taken
    /// first; a block of samples between two of them lies within half a
    /// block of one, where p differs from it by at most
    /// max|p'|·(stride/2)·step ≤ Σ k|P_k|·(stride/2)·step (and the
    /// round-off of both sums), so a block whose ends plus that bound stay
    /// below the largest screening sample cannot hold the largest sample
    /// (likewise the smallest). The other blocks are scanned in full, in
    /// increasing order.
    fn screened_samples(&self, phasors: &[C64], total: f64) -> ((usize, f64), (usize, f64)) {
        let (n, m) = (self.n, SCREEN_STRIDE);
        let mut best = Best::new();
        let table = (self.cos.as_slice(), self.sin.as_slice());
        let slope: f64 = self
            .orders
            .iter()
            .zip(phasors)
            .map(|(&k, p)| f64::from(k) * p.norm())
            .sum();
        // the round-off of both sums, their factors' (k·4ε, `Turns`)
        // included, with a wide margin
        let max_order = f64::from(self.orders.iter().copied().max().unwrap_or(0));
        let reach = slope * (m / 2) as f64 * self.step
            + total * 128.0 * f64::EPSILON * (self.orders.len() as f64 + max_order + 8.0)
            + 1e-290;
        let blocks = n / m;
        let mut coarse = vec![0.0; blocks];
        let coarse_table = (self.coarse_cos.as_slice(), self.coarse_sin.as_slice());
        Self::table_samples(coarse_table, blocks, phasors, 0, &mut coarse);
        let top = coarse.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let bottom = coarse.iter().copied().fold(f64::INFINITY, f64::min);
        let mut block = [0.0; SCREEN_STRIDE];
        for b in 0..blocks {
            // the block's ends: its first sample and the next block's
            // (the period's first after the last)
            let (a, z) = (coarse[b], coarse[(b + 1) % blocks]);
            let may_max = a.max(z) + reach >= top;
            let may_min = a.min(z) - reach <= bottom;
            if !(may_max || may_min) {
                continue;
            }
            Self::table_samples(table, n, phasors, b * m, &mut block);
            for (t, &v) in block.iter().enumerate() {
                if may_max {
                    best.max(b * m + t, v);
                }
                if may_min {
                    best.min(b * m + t, v);
                }
            }
        }
        (best.max, best.min)
    }

    /// The extremes of p(θ) = Σ Re{P_j e^{jk_jθ}} for `phasors` P_j in the
    /// order of the orders given to [`Period::new`]: the same as
    /// [`extremes_by_scan`] bit for bit.
    ///
    /// # Panics
    /// If `phasors` does not have one value per order.
    pub fn extremes(&self, phasors: &[C64]) -> Extremes {
        assert_eq!(phasors.len(), self.orders.len(), "one phasor per order");
        let harmonics: Vec<(u32, C64)> = self
            .orders
            .iter()
            .copied()
            .zip(phasors.iter().copied())
            .collect();
        if self.n == 0 {
            return extremes_by_scan(&harmonics);
        }
        if !phasors.iter().all(|p| p.re.is_finite() && p.im.is_finite()) {
            return extremes_by_scan(&harmonics);
        }
        let total: f64 = phasors.iter().map(|p| p.norm()).sum();
        let max_order = f64::from(self.orders.iter().copied().max().unwrap_or(0));
        // the largest and smallest samples, the first of equals kept, as
        // the scan does
        let ((i_max, v_max), (i_min, v_min)) = if self.cos.is_empty() {
            let mut best = Best::new();
            for (i, v) in self.samples(&harmonics).into_iter().enumerate() {
                best.max(i, v);
                best.min(i, v);
            }
            (best.max, best.min)
        } else {
            self.screened_samples(phasors, total)
        };
        let hi = self.refine(&harmonics, phasors, i_max, -1.0, max_order, total);
        let lo = self.refine(&harmonics, phasors, i_min, 1.0, max_order, total);
        finish(self.step, (i_max, v_max), (i_min, v_min), hi, lo)
    }

    /// The golden-section search of [`extremes_by_scan`] about sample `i`
    /// for the minimum of g = sign·p (sign −1: the maximum of p): the same
    /// steps, its comparisons decided by the Taylor polynomial where that
    /// is certain (type docs). Returns (θ, p(θ)) of its result.
    fn refine(
        &self,
        harmonics: &[(u32, C64)],
        phasors: &[C64],
        i: usize,
        sign: f64,
        max_order: f64,
        total: f64,
    ) -> (f64, f64) {
        let centre = i as f64 * self.step;
        // Taylor coefficients of p(centre + δ): a_m = Σ Re{Q (jk)^m}/m!,
        // Q = P e^{jkθ_i} (the table's factor at the sample).
        let mut coeffs = [0.0; TAYLOR_DEGREE + 1];
        for (j, (&k, &p)) in self.orders.iter().zip(phasors).enumerate() {
            let factor = if self.cos.is_empty() {
                C64::from_polar(1.0, f64::from(k) * centre)
            } else {
                C64::new(self.cos[j * self.n + i], self.sin[j * self.n + i])
            };
            let q = p * factor;
            let k = f64::from(k);
            let mut power = 1.0;
            for (m, c) in coeffs.iter_mut().enumerate() {
                let part = match m % 4 {
                    0 => q.re,
                    1 => -q.im,
                    2 => -q.re,
                    _ => q.im,
                };
                *c += power * part;
                power *= k;
            }
        }
        let mut factorial = 1.0;
        for (m, c) in coeffs.iter_mut().enumerate() {
            if m > 0 {
                factorial *= m as f64;
            }
            *c *= sign / factorial;
        }
        // |Taylor value − computed sum| below this at |δ| ≤ one sample step
        // (k|δ| ≤ 2π/64): the remainder (k|δ|)^(D+1)/(D+1)! and the
        // round-off of both, with a wide margin.
        let reach = max_order * self.step;
        let remainder = reach.powi(TAYLOR_DEGREE as i32 + 1)
            / (1..=TAYLOR_DEGREE + 1).map(|m| m as f64).product::<f64>();
        // (the absolute term keeps the bound where the phasors are
        // subnormal and round-off is no longer relative)
        let tolerance = total
            * (2.0 * remainder
                + 64.0
                    * f64::EPSILON
                    * (max_order + self.orders.len() as f64 + TAYLOR_DEGREE as f64 + 8.0))
            + 1e-290;
        let approx = |x: f64| {
            let d = x - centre;
            coeffs.iter().rev().fold(0.0, |acc, &c| acc * d + c)
        };
        let mut known: Vec<(u64, f64)> = Vec::new();
        let mut exact = |x: f64| -> f64 {
            if let Some(&(_, v)) = known.iter().find(|e| e.0 == x.to_bits()) {
                return v;
            }
            let v = sign * evaluate(harmonics, x);
            known.push((x.to_bits(), v));
            v
        };
        // A point of the search: x, its Taylor value, its exact value once
        // known.
        #[derive(Clone, Copy)]
        struct Pt {
            x: f64,
            approx: f64,
            exact: Option<f64>,
        }
        let point = |x: f64| Pt {
            x,
            approx: approx(x),
            exact: None,
        };
        // g(c) <= g(d), as the exact values compare.
        let mut le = |c: &mut Pt, d: &mut Pt| -> bool {
            if c.exact.is_none() || d.exact.is_none() {
                if c.approx + tolerance < d.approx - tolerance {
                    return true;
                }
                if c.approx - tolerance > d.approx + tolerance {
                    return false;
                }
            }
            let fc = *c.exact.get_or_insert_with(|| exact(c.x));
            let fd = *d.exact.get_or_insert_with(|| exact(d.x));
            fc <= fd
        };
        // golden_section_min(g, centre − step, centre + step, 0, GOLDEN_STEPS)
        let (mut a, mut b) = (centre - self.step, centre + self.step);
        let r = (5f64.sqrt() - 1.0) / 2.0;
        let mut c = point(b - r * (b - a));
        let mut d = point(a + r * (b - a));
        for _ in 0..GOLDEN_STEPS {
            if b - a <= 0.0 * b.abs() {
                break;
            }
            if le(&mut c, &mut d) {
                b = d.x;
                d = c;
                c = point(b - r * (b - a));
            } else {
                a = c.x;
                c = d;
                d = point(a + r * (b - a));
            }
        }
        let best = if le(&mut c, &mut d) { c } else { d };
        let v = best.exact.unwrap_or_else(|| exact(best.x));
        (best.x, sign * v)
    }
}

/// The peak-to-peak value of p(θ) over one period (see [`extremes`]).
pub fn peak_to_peak(harmonics: &[(u32, C64)]) -> f64 {
    let e = extremes(harmonics);
    e.max.1 - e.min.1
}

#[cfg(test)]
mod tests {
    use super::*;

    // Gear pump kinematic ripple (methods.md §5.1): a parabola in shaft angle
    // with ΔQ = 6.160327046218468e-5 m³/s; its first 10 harmonics are
    // a_k = (−1)^{k+1} 4ΔQ/(π²k²) on cos(kθ). The rebuilt waveform's
    // peak-to-peak is 5.911479321806250e-5 m³/s: mpmath 1.3 (mp.dps = 30,
    // extrema at θ = 0 and π) and scipy.optimize.minimize_scalar agree
    // (tests/oracles/line_refs.py item 8).
    #[test]
    fn gear_parabola_peak_to_peak() {
        let dq = 6.160_327_046_218_468e-5;
        let h: Vec<(u32, C64)> = (1..=10)
            .map(|k| {
                let sign = if k % 2 == 1 { 1.0 } else { -1.0 };
                let a = sign * 4.0 * dq / (std::f64::consts::PI.powi(2) * f64::from(k * k));
                (k, C64::new(a, 0.0))
            })
            .collect();
        let pp = peak_to_peak(&h);
        assert!(
            (pp - 5.911_479_321_806_25e-5).abs() < 1e-9 * 5.9e-5,
            "{pp:e}"
        );
    }

    // A cos(θ + φ) peaks at θ = −φ (mod 2π) with value A and dips at
    // θ = π − φ with −A (the cosine's extremes).
    #[test]
    fn extremes_of_one_harmonic_sit_where_the_cosine_peaks() {
        let e = extremes(&[(1, C64::from_polar(2.0, 0.5))]);
        let tau = std::f64::consts::TAU;
        assert!((e.max.0 - (tau - 0.5)).abs() < 1e-6, "{e:?}");
        assert!((e.max.1 - 2.0).abs() < 1e-12);
        assert!(
            (e.min.0 - (std::f64::consts::PI - 0.5)).abs() < 1e-6,
            "{e:?}"
        );
        assert!((e.min.1 + 2.0).abs() < 1e-12);
    }

    /// The shared table, the screened samples and the Taylor-decided search
    /// give the plain scan's extremes bit for bit: random waveforms of 1 to 40 orders (gaps
    /// included), amplitudes falling, flat or dominated by a high order,
    /// and waveforms with equal samples (a constant-amplitude comb).
    #[test]
    fn period_search_matches_the_plain_scan_bit_for_bit() {
        let mut seed = 0x9e37_79b9_7f4a_7c15_u64;
        let mut rand = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        let mut cases: Vec<Vec<(u32, C64)>> = Vec::new();
        for case in 0..400 {
            let count = 1 + (rand() * 40.0) as u32;
            let gaps = case % 3 == 0;
            let mut h = Vec::new();
            let mut k = 0;
            for j in 0..count {
                k += if gaps { 1 + (rand() * 3.0) as u32 } else { 1 };
                let amplitude = match case % 4 {
                    0 => 1.0 / f64::from(k),
                    1 => rand(),
                    2 => {
                        if j + 1 == count {
                            5.0
                        } else {
                            0.1 * rand()
                        }
                    }
                    _ => 1e5 * rand() / f64::from(k * k),
                };
                h.push((
                    k,
                    C64::from_polar(amplitude, std::f64::consts::TAU * rand()),
                ));
            }
            cases.push(h);
        }
        cases.push((1..=10).map(|k| (k, C64::new(1.0, 0.0))).collect());
        cases.push(vec![(3, C64::new(0.0, 0.0)), (6, C64::new(0.0, 0.0))]);
        // equal peaks at several samples, and a waveform nearly flat
        // against its size
        cases.push(vec![(4, C64::new(1.0, 0.0))]);
        cases.push(vec![(8, C64::new(0.0, 3.0)), (16, C64::new(0.0, -3.0))]);
        cases.push(vec![(1, C64::new(1e-300, 0.0)), (2, C64::new(0.0, 1e-300))]);
        for h in &cases {
            let want = extremes_by_scan(h);
            let got = extremes(h);
            let bits = |e: Extremes| [e.max.0, e.max.1, e.min.0, e.min.1].map(f64::to_bits);
            assert_eq!(bits(got), bits(want), "{h:?}");
        }
    }

    #[test]
    fn single_harmonic_is_twice_its_amplitude() {
        let pp = peak_to_peak(&[(3, C64::from_polar(2.5, 0.7))]);
        assert!((pp - 5.0).abs() < 1e-12);
    }
}
