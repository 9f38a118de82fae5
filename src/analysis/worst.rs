//! The true worst speed: the largest ripple at a measurement point over a
//! speed range, found to a stated tolerance rather than sampled.
//!
//! A pump harmonic k meets a resonance f_r of the circuit at the speed where
//! k·f_1(n) = f_r, and there its pressure rises in a peak that may be much
//! narrower than the step of a speed grid: sampling the ripple at a few
//! dozen speeds misses most of it. [`worst_speed`] starts from a grid of
//! solved speeds and
//!
//! 1. takes as candidates every local maximum along the grid of every
//!    order's amplitude |P_k(n)| (its **resonance crossings**, as `sweep`
//!    finds them) and of the measure itself (rms, peak-to-peak or one
//!    harmonic), ends of the range included;
//! 2. predicts each crossing's peak from its three grid samples (a
//!    resonance is Lorentzian, so 1/|P|² is a parabola in speed) and skips
//!    those that could not reach the best found so far even with their peak
//!    far above the prediction ([`PREDICTION_SCREEN_DB`]);
//! 3. solves each other crossing once at its predicted peak and predicts
//!    the peak again from the samples there, skipping it when even a peak
//!    well above that could not win ([`PROBE_SCREEN_DB`]);
//! 4. refines each remaining crossing on that order's amplitude alone (one
//!    network solve per step) between the neighbouring grid speeds, then
//!    evaluates the measure there with every order solved (unless its
//!    estimate stays below the best, [`SCREEN_DB`]);
//! 5. refines the best candidate once more on the measure itself (the other
//!    orders move it slightly off the crossing);
//! 6. refines every maximum of the measure on the grid where every order at
//!    its largest known amplitude on one side of it (between it and a grid
//!    neighbour) could beat the best (several orders rising together, or a
//!    crossing's skirt).
//!
//! [`worst_speeds`] does this for several points of one grid with one set
//! of solves: a solve gives every point's phasor, so a point's search of a
//! crossing starts from the samples the points before it took there (a
//! resonance peaks at nearly the same speed at every point).
//!
//! A refinement is a safeguarded parabolic search on 1/v² (after Brent's
//! method, with golden-section steps when a parabolic step would not make
//! progress): on a Lorentzian peak its first parabolic step lands on the
//! peak. It stops when the parabola through the best point and its
//! neighbours predicts less than [`WorstSettings::tolerance_db`] more and
//! that parabola can be trusted: the bracket is narrower than
//! [`WorstSettings::min_bracket`] of the speed, or the best point is the
//! vertex of the last parabola and holds the value it predicted (to
//! `tolerance_db`: the peak is Lorentzian and found), or, on one order's
//! amplitude, the neighbours lie within the peak's half-power width; or it
//! stops when the bracket is narrower than
//! [`WorstSettings::speed_tolerance`] (a sharp or undamped peak). The
//! measure is then within a few times `tolerance_db` of its true maximum;
//! with the default 0.001 dB, within 0.01 dB. An undamped resonance (a
//! network that cannot be solved) ends the search: the ripple is unbounded
//! there.

use super::waveform;
use num_complex::Complex64 as C64;

/// Crossings whose estimated measure (their refined amplitude with the
/// other orders interpolated from the grid) lies more than this many dB
/// below the best measure found so far are not evaluated in full. The other
/// orders vary slowly across a crossing, so the estimate is close.
pub const SCREEN_DB: f64 = 0.5;

/// A crossing is not refined when, even with its peak this many dB above
/// the one predicted from the grid (a Lorentzian peak through the three
/// grid samples around it, [`lorentzian_peak`]) and the other orders at
/// their largest on the grid around it, the measure would stay below the
/// best found so far. The prediction is exact for a single Lorentzian
/// resonance, but between coarse grid speeds the skirts of neighbouring
/// resonances and anti-resonances skew it: on the drilling-rig demo it fell
/// 4.7 dB short of a peak between 41 log-spaced speeds. 20 dB leaves a wide
/// margin and still spares most of the refinements.
pub const PREDICTION_SCREEN_DB: f64 = 20.0;

/// A crossing that passes the first screen ([`PREDICTION_SCREEN_DB`]) is
/// solved once at its predicted peak (unless a speed near it is already
/// solved, for another point) and the peak predicted again from the samples
/// around the highest one; it is refined only when the measure could reach
/// the best found so far with its peak this many dB above that closer
/// prediction. The samples then lie within the peak's width, where the
/// Lorentzian shape holds far better than between grid speeds. Checked
/// against brute-force grids (tests/envelope.rs).
pub const PROBE_SCREEN_DB: f64 = 6.0;

/// A refinement's bracket resolves its peak when the best point's
/// neighbours lie less than this many dB below it: within the half-power
/// width, where a resonance is Lorentzian and its parabola on 1/v² exact.
const HALF_POWER_DB: f64 = 3.0;

/// What is maximised over the speed range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Measure {
    /// Overall rms ripple √(Σ_k |P_k|²/2 + other sources' mean square).
    Rms,
    /// Peak-to-peak of the waveform rebuilt from the orders (the other
    /// sources, unrelated in phase, are not included).
    PeakToPeak,
    /// The peak amplitude |P_k| of one order (an index into the orders).
    Order(usize),
}

/// How closely the maximum is found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WorstSettings {
    /// A refinement stops when a parabola predicts less than this gain (dB).
    pub tolerance_db: f64,
    /// ... and its bracket is narrower than this fraction of the speed (or
    /// the parabola is trusted otherwise: module documentation).
    pub min_bracket: f64,
    /// A refinement always stops when its bracket is narrower than this
    /// fraction of the speed.
    pub speed_tolerance: f64,
    /// Most golden-section steps of one refinement.
    pub max_steps: usize,
}

impl Default for WorstSettings {
    /// 0.001 dB predicted gain with a bracket under 0.1 % of the speed, or a
    /// bracket under 1e-9 of the speed; at most 60 steps (0.618⁶⁰ ≈ 3e-13
    /// of the first bracket).
    fn default() -> Self {
        WorstSettings {
            tolerance_db: 1e-3,
            min_bracket: 1e-3,
            speed_tolerance: 1e-9,
            max_steps: 60,
        }
    }
}

/// The ripple solved at a grid of speeds, one point.
#[derive(Debug, Clone, Copy)]
pub struct SpeedGrid<'a> {
    /// Shaft speeds in rev/s, strictly increasing (at least one).
    pub speeds_rev_s: &'a [f64],
    /// Orders of the shaft fundamental solved at every speed.
    pub orders: &'a [u32],
    /// Pressure phasors (peak, Pa) by speed, then order.
    pub phasors: &'a [C64],
    /// Mean square ripple (Pa²) of other sources at each speed (added to
    /// the rms; linear between grid speeds); empty for none.
    pub other_ms_pa2: &'a [f64],
}

/// Where the measure is largest.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstSpeed {
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// The measure there, in Pa.
    pub value_pa: f64,
    /// The orders' phasors there (peak, Pa), in the grid's order.
    pub phasors: Vec<C64>,
    /// Network solves spent beyond the grid.
    pub solves: usize,
}

impl WorstSpeed {
    /// The index of the order with the largest amplitude there.
    pub fn dominant_order(&self) -> usize {
        (0..self.phasors.len())
            .max_by(|&a, &b| self.phasors[a].norm().total_cmp(&self.phasors[b].norm()))
            .unwrap_or(0)
    }
}

/// The search met a speed where the network cannot be solved: an undamped
/// resonance, where the ripple is unbounded.
#[derive(Debug, Clone, PartialEq)]
pub struct Unbounded<E> {
    /// The shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// The solver's failure.
    pub error: E,
}

/// The measure of a set of phasors.
pub fn measure_value(measure: Measure, orders: &[u32], phasors: &[C64], other_ms_pa2: f64) -> f64 {
    measure_with(measure, orders, None, phasors, other_ms_pa2)
}

/// [`measure_value`], a peak-to-peak with `period`, the orders' waveform
/// period, when one is built already (its table of e^{jkθ} costs as much
/// as several searches of a waveform); the same bits.
fn measure_with(
    measure: Measure,
    orders: &[u32],
    period: Option<&waveform::Period>,
    phasors: &[C64],
    other_ms_pa2: f64,
) -> f64 {
    match measure {
        Measure::Rms => {
            (phasors.iter().map(|p| p.norm_sqr()).sum::<f64>() / 2.0 + other_ms_pa2).sqrt()
        }
        Measure::PeakToPeak => {
            let e = match period {
                Some(period) => period.extremes(phasors),
                None => waveform::Period::new(orders).extremes(phasors),
            };
            e.max.1 - e.min.1
        }
        Measure::Order(o) => phasors[o].norm(),
    }
}

/// |p| as √(re² + im²): the searches compare many magnitudes, and this is
/// several times cheaper than `norm` (hypot), whose guard against overflow
/// pressures in pascals never need.
pub(crate) fn magnitude(p: C64) -> f64 {
    p.norm_sqr().sqrt()
}

fn level_db(v: f64) -> f64 {
    if v > 0.0 { 20.0 * v.log10() } else { -400.0 }
}

/// Linear interpolation of grid values `v` (one per speed) at `speed`.
fn interpolate(speeds: &[f64], v: &[f64], speed: f64) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    let i = speeds
        .partition_point(|&s| s <= speed)
        .clamp(1, speeds.len().max(2) - 1);
    if speeds.len() < 2 {
        return v[0];
    }
    let (s0, s1) = (speeds[i - 1], speeds[i]);
    let t = ((speed - s0) / (s1 - s0)).clamp(0.0, 1.0);
    v[i - 1] + t * (v[i] - v[i - 1])
}

/// The indices of the local maxima of `v`: interior samples above their
/// left neighbour and not below their right one (a flat top counts once, at
/// its middle), and an end sample above its neighbour.
fn local_maxima(v: &[f64]) -> Vec<usize> {
    let n = v.len();
    let mut out = Vec::new();
    if n == 1 {
        return vec![0];
    }
    if v[0] > v[1] {
        out.push(0);
    }
    let mut i = 1;
    while i + 1 < n {
        if v[i] > v[i - 1] {
            let mut j = i;
            while j + 1 < n && v[j + 1] == v[i] {
                j += 1;
            }
            if j + 1 == n || v[j + 1] < v[i] {
                out.push(if j + 1 == n { n - 1 } else { (i + j) / 2 });
            }
            i = j + 1;
        } else {
            i += 1;
        }
    }
    if n >= 2 && v[n - 1] > v[n - 2] && out.last() != Some(&(n - 1)) {
        out.push(n - 1);
    }
    out
}

/// The vertex (x, y) of the parabola through three points, or `None` when
/// they are collinear or the parabola opens downwards.
fn parabola_min(p: [(f64, f64); 3]) -> Option<(f64, f64)> {
    let [(x0, y0), (x1, y1), (x2, y2)] = p;
    let d01 = (y1 - y0) / (x1 - x0);
    let d12 = (y2 - y1) / (x2 - x1);
    let a = (d12 - d01) / (x2 - x0);
    if a.is_nan() || a <= 0.0 {
        return None;
    }
    let b = d01 - a * (x0 + x1);
    let xv = -b / (2.0 * a);
    Some((xv, y1 + d01 * (xv - x1) + a * (xv - x0) * (xv - x1)))
}

/// The amplitude of a resonance peak predicted from three samples
/// (x, v) around it, the middle one highest: near a resonance the response
/// is Lorentzian, |H|² = a/(1 + ((f − f0)/γ)²), so 1/v² is a parabola in
/// f (and in speed, f being proportional to it). Its vertex is the peak;
/// `None` when the samples do not bound one (the peak is then unbounded, or
/// the shape is not a resonance's).
pub(crate) fn lorentzian_peak(p: [(f64, f64); 3]) -> Option<(f64, f64)> {
    let (x, g) = parabola_min(p.map(|(x, v)| (x, 1.0 / (v * v))))?;
    (g > 0.0 && x > p[0].0 && x < p[2].0).then(|| (x, 1.0 / g.sqrt()))
}

/// What a refined function is near its maximum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Shape {
    /// One response's amplitude near a resonance peak: Lorentzian within
    /// its half-power width ([`HALF_POWER_DB`]).
    Resonance,
    /// Anything else (a measure summing several orders).
    Any,
}

/// The maximum of a resonance peak `f` from its samples `pts` (increasing
/// in x; the bracket's ends, whose values are known, first and last; at
/// least two): a safeguarded parabolic search (after Brent's method) on
/// g = 1/f², which is a parabola near a resonance peak (see
/// [`lorentzian_peak`]), so that a resonance is found in a few steps; a
/// golden-section step is taken instead whenever the parabola's vertex is
/// outside the bracket or too close to the best point, or two steps have
/// not halved the bracket. The bracket is always the best point's two
/// neighbours among the points evaluated. It stops by the rule of the
/// module documentation. Returns the best point (x, f(x)), ends included,
/// and leaves every sample taken in `pts`, so that a search stopped at a
/// loose tolerance continues from where it stopped with a tighter one.
/// `response` refines its resonance peaks with it
/// (`super::response::find_resonances`, on |H| against frequency).
pub(crate) fn refine<E>(
    f: impl FnMut(f64) -> Result<f64, E>,
    pts: &mut Vec<(f64, f64)>,
    settings: &WorstSettings,
) -> Result<(f64, f64), (f64, E)> {
    refine_among(f, pts, Shape::Resonance, settings)
}

/// [`refine`] from known samples `pts` (increasing in x, the bracket's ends
/// first and last, at least two), to which it adds its own: samples taken
/// earlier inside the bracket (by another point's search of the same
/// crossing) shorten the search.
fn refine_among<E>(
    mut f: impl FnMut(f64) -> Result<f64, E>,
    pts: &mut Vec<(f64, f64)>,
    shape: Shape,
    settings: &WorstSettings,
) -> Result<(f64, f64), (f64, E)> {
    const GOLD: f64 = 0.381_966_011_250_105_1; // (3 − √5)/2
    let (a, b) = (pts[0], pts[pts.len() - 1]);
    let mut eval = |x: f64, pts: &mut Vec<(f64, f64)>| -> Result<(), (f64, E)> {
        let v = f(x).map_err(|e| (x, e))?;
        let i = pts.partition_point(|p| p.0 < x);
        pts.insert(i, (x, v));
        Ok(())
    };
    // no interior point yet: golden from the better end
    if pts.len() == 2 {
        let x = if a.1 >= b.1 {
            a.0 + GOLD * (b.0 - a.0)
        } else {
            b.0 - GOLD * (b.0 - a.0)
        };
        eval(x, pts)?;
    }
    let mut widths: Vec<f64> = Vec::new();
    // the peak value the last parabolic step predicted, and at which x
    let mut predicted: Option<(f64, f64)> = None;
    for _ in 0..settings.max_steps {
        let ib = (0..pts.len()).fold(0, |m, i| if pts[i].1 > pts[m].1 { i } else { m });
        let (xb, vb) = pts[ib];
        let lo = pts[ib.saturating_sub(1)];
        let hi = pts[(ib + 1).min(pts.len() - 1)];
        let width = (hi.0 - lo.0) / xb.abs().max(f64::MIN_POSITIVE);
        if width < settings.speed_tolerance {
            break;
        }
        let interior = ib > 0 && ib + 1 < pts.len();
        let vertex = if interior {
            parabola_min([lo, (xb, vb), hi].map(|(x, v)| (x, 1.0 / (v * v))))
        } else {
            None
        };
        // The parabola is trusted to predict the rest of the peak when the
        // bracket is narrow, when its last vertex held the value it
        // predicted (a Lorentzian peak, found), or when the best point's
        // neighbours lie within its half-power width.
        let confirmed = predicted.is_some_and(|(x, v)| {
            x == xb && (level_db(vb) - level_db(v)).abs() < settings.tolerance_db
        });
        let resolved =
            shape == Shape::Resonance && level_db(vb) - level_db(lo.1.min(hi.1)) < HALF_POWER_DB;
        if interior && (width < settings.min_bracket || confirmed || resolved) {
            let gain = match vertex {
                Some((_, g)) if g > 0.0 => level_db(1.0 / g.sqrt()) - level_db(vb),
                Some(_) => f64::INFINITY,
                None => 0.0,
            };
            if gain < settings.tolerance_db {
                break;
            }
        }
        widths.push(hi.0 - lo.0);
        let stalled =
            widths.len() >= 3 && widths[widths.len() - 1] > 0.5 * widths[widths.len() - 3];
        let min_gap = 1e-3 * (hi.0 - lo.0);
        predicted = None;
        let x = match vertex {
            Some((xv, g))
                if !stalled
                    && xv > lo.0 + min_gap
                    && xv < hi.0 - min_gap
                    && (xv - xb).abs() > min_gap =>
            {
                predicted = (g > 0.0).then(|| (xv, 1.0 / g.sqrt()));
                xv
            }
            _ if !interior && ib == 0 => xb + GOLD * (hi.0 - xb),
            _ if !interior => xb - GOLD * (xb - lo.0),
            _ if hi.0 - xb > xb - lo.0 => xb + GOLD * (hi.0 - xb),
            _ => xb - GOLD * (xb - lo.0),
        };
        if stalled {
            widths.clear();
        }
        eval(x, pts)?;
    }
    Ok(pts
        .iter()
        .copied()
        .fold((a.0, f64::NEG_INFINITY), |best, p| {
            if p.1 > best.1 { p } else { best }
        }))
}

/// A solve of order `i` of a grid at speed `n`, writing every point's
/// phasor into the slice (one per point, in the order of the grids).
pub type SolveOrder<'a, E> = dyn FnMut(usize, f64, &mut [C64]) -> Result<(), E> + 'a;

/// Network solves shared by the searches of several points of one grid: a
/// solve of an order at a speed gives every point's phasor and is kept, so
/// that another point's search of the same crossing reuses it and starts
/// from the samples already taken near its peak.
struct SharedSolves<'s, E> {
    solve: &'s mut SolveOrder<'s, E>,
    /// Phasors per solve (one per point).
    points: usize,
    /// Per order: the speeds solved as their bits (increasing with a
    /// positive speed), increasing, each with where its phasors start in
    /// `phasors`.
    solved: Vec<Vec<(u64, usize)>>,
    /// Every solve's phasors, `points` per solve, in the order solved.
    phasors: Vec<C64>,
    /// The orders' waveform period, for a peak-to-peak measure.
    period: Option<waveform::Period>,
}

impl<E> SharedSolves<'_, E> {
    /// Every point's phasor of order `o` at speed `n`, if solved.
    fn get(&self, o: usize, n: f64) -> Option<&[C64]> {
        let key = n.to_bits();
        let solved = &self.solved[o];
        let i = solved.partition_point(|s| s.0 < key);
        solved
            .get(i)
            .filter(|s| s.0 == key)
            .map(|&(_, at)| &self.phasors[at..at + self.points])
    }

    /// Solves order `o` at speed `n` (not solved before) and keeps every
    /// point's phasor.
    fn solve(&mut self, o: usize, n: f64) -> Result<&[C64], E> {
        let at = self.phasors.len();
        self.phasors.resize(at + self.points, C64::new(0.0, 0.0));
        if let Err(e) = (self.solve)(o, n, &mut self.phasors[at..]) {
            self.phasors.truncate(at);
            return Err(e);
        }
        let key = n.to_bits();
        let i = self.solved[o].partition_point(|s| s.0 < key);
        self.solved[o].insert(i, (key, at));
        Ok(&self.phasors[at..at + self.points])
    }

    /// The speeds strictly between `lo` and `hi` where order `o` was solved,
    /// with the phasors there.
    fn solved_between(&self, o: usize, lo: f64, hi: f64) -> impl Iterator<Item = (f64, &[C64])> {
        let solved = &self.solved[o];
        let from = solved.partition_point(|s| s.0 <= lo.to_bits());
        let to = solved.partition_point(|s| s.0 < hi.to_bits()).max(from);
        solved[from..to]
            .iter()
            .map(|&(k, at)| (f64::from_bits(k), &self.phasors[at..at + self.points]))
    }
}

/// The search state of one point: the grid, the shared solves and the
/// solves this search spent.
struct Search<'g, 's, 'f, E> {
    grid: SpeedGrid<'g>,
    point: usize,
    measure: Measure,
    settings: &'s WorstSettings,
    shared: &'s mut SharedSolves<'f, E>,
    /// The measure at each grid speed.
    values: Vec<f64>,
    solves: usize,
}

impl<E> Search<'_, '_, '_, E> {
    fn phasors_at(&self, si: usize) -> &[C64] {
        let no = self.grid.orders.len();
        &self.grid.phasors[si * no..(si + 1) * no]
    }

    fn other(&self, n: f64) -> f64 {
        interpolate(self.grid.speeds_rev_s, self.grid.other_ms_pa2, n)
    }

    /// The measure of this point's phasors (one per order).
    fn measure_of(&self, phasors: &[C64], other_ms_pa2: f64) -> f64 {
        measure_with(
            self.measure,
            self.grid.orders,
            self.shared.period.as_ref(),
            phasors,
            other_ms_pa2,
        )
    }

    /// Order `o` at speed `n` at this point (solved unless already solved).
    fn order(&mut self, o: usize, n: f64) -> Result<C64, E> {
        if let Some(v) = self.shared.get(o, n) {
            return Ok(v[self.point]);
        }
        self.solves += 1;
        Ok(self.shared.solve(o, n)?[self.point])
    }

    /// Every order at speed `n` (the one in `known` reused) and the measure.
    fn full(&mut self, n: f64, known: Option<(usize, C64)>) -> Result<WorstSpeed, E> {
        let mut phasors = Vec::with_capacity(self.grid.orders.len());
        for o in 0..self.grid.orders.len() {
            phasors.push(match known {
                Some((k, p)) if k == o => p,
                _ => self.order(o, n)?,
            });
        }
        Ok(WorstSpeed {
            speed_rev_s: n,
            value_pa: self.measure_of(&phasors, self.other(n)),
            phasors,
            solves: 0,
        })
    }

    /// The most the measure can be between grid speeds `lo` and `hi` from
    /// what is known there: every order at its largest amplitude on the
    /// grid or at the speeds solved between (a crossing's peak once it is
    /// probed or refined), the other sources at their largest (rms: the
    /// square root of the sum of their squares over 2; peak-to-peak: twice
    /// their sum).
    fn combined_bound(&self, lo: usize, hi: usize) -> f64 {
        let speeds = self.grid.speeds_rev_s;
        let largest = |o: usize| {
            (lo..=hi)
                .map(|k| magnitude(self.phasors_at(k)[o]))
                .chain(
                    self.shared
                        .solved_between(o, speeds[lo], speeds[hi])
                        .map(|(_, v)| magnitude(v[self.point])),
                )
                .fold(0.0, f64::max)
        };
        let orders = 0..self.grid.orders.len();
        match self.measure {
            Measure::Rms => {
                let other = (lo..=hi).map(|k| self.other(speeds[k])).fold(0.0, f64::max);
                (orders.map(|o| largest(o).powi(2)).sum::<f64>() / 2.0 + other).sqrt()
            }
            Measure::PeakToPeak => 2.0 * orders.map(largest).sum::<f64>(),
            Measure::Order(o) => largest(o),
        }
    }

    /// Golden-section search of the measure itself between grid speeds
    /// `lo` and `hi`, from the speeds between them where every order is
    /// already solved; `best` takes any better point met.
    fn refine_measure(
        &mut self,
        lo: usize,
        hi: usize,
        start: Option<(f64, f64)>,
        best: &mut WorstSpeed,
    ) -> Result<(), (f64, E)> {
        let speeds = self.grid.speeds_rev_s;
        let no = self.grid.orders.len();
        let known: Vec<f64> = self
            .shared
            .solved_between(0, speeds[lo], speeds[hi])
            .map(|(n, _)| n)
            .filter(|&n| (1..no).all(|o| self.shared.get(o, n).is_some()))
            .collect();
        let mut pts = vec![(speeds[lo], self.values[lo])];
        for n in known {
            let at = self.full(n, None).map_err(|e| (n, e))?;
            pts.push((n, at.value_pa));
            if at.value_pa > best.value_pa {
                *best = at;
            }
        }
        if let Some(s) = start.filter(|s| s.0 > speeds[lo] && s.0 < speeds[hi]) {
            let i = pts.partition_point(|p| p.0 < s.0);
            if pts.get(i).is_none_or(|p| p.0 != s.0) {
                pts.insert(i, s);
            }
        }
        pts.push((speeds[hi], self.values[hi]));
        let settings = *self.settings;
        refine_among(
            |n| {
                let at = self.full(n, None)?;
                let v = at.value_pa;
                if v > best.value_pa {
                    *best = at;
                }
                Ok(v)
            },
            &mut pts,
            Shape::Any,
            &settings,
        )
        .map(|_| ())
    }

    /// Order `o` at this point at the grid speeds `lo`, `i` and `hi` and
    /// the speeds between them where it is already solved, increasing.
    fn order_samples(&self, o: usize, i: usize, (lo, hi): (usize, usize)) -> Vec<(f64, C64)> {
        let speeds = self.grid.speeds_rev_s;
        let point = self.point;
        let mut known: Vec<(f64, C64)> = vec![(speeds[lo], self.phasors_at(lo)[o])];
        known.extend(
            self.shared
                .solved_between(o, speeds[lo], speeds[hi])
                .map(|(n, v)| (n, v[point])),
        );
        if lo < i && i < hi {
            let at = known.partition_point(|p| p.0 < speeds[i]);
            known.insert(at, (speeds[i], self.phasors_at(i)[o]));
        }
        known.push((speeds[hi], self.phasors_at(hi)[o]));
        known
    }

    /// The peak amplitude of the crossing of order `o` whose grid peak is
    /// at interior index `i`, predicted from a sample near it: where no
    /// speed between the grid neighbours `lo` and `hi` is solved yet, one
    /// solve at the peak the grid predicts (`grid_peak`); then a Lorentzian
    /// through the highest sample and its neighbours ([`lorentzian_peak`]),
    /// not below that sample.
    fn probe(
        &mut self,
        o: usize,
        i: usize,
        (lo, hi): (usize, usize),
        grid_peak: f64,
    ) -> Result<f64, (f64, E)> {
        let mut known = self.order_samples(o, i, (lo, hi));
        if known.len() == 3 {
            let p = self.order(o, grid_peak).map_err(|e| (grid_peak, e))?;
            let at = known.partition_point(|k| k.0 < grid_peak);
            known.insert(at, (grid_peak, p));
        }
        let v: Vec<(f64, f64)> = known.iter().map(|&(n, p)| (n, magnitude(p))).collect();
        let ib = (0..v.len()).fold(0, |m, k| if v[k].1 > v[m].1 { k } else { m });
        if ib == 0 || ib + 1 == v.len() {
            return Ok(f64::INFINITY);
        }
        Ok(lorentzian_peak([v[ib - 1], v[ib], v[ib + 1]])
            .map_or(f64::INFINITY, |(_, a)| a.max(v[ib].1)))
    }

    /// The crossing of order `o` whose grid peak is at index `i`: refined
    /// on that order's amplitude alone between the grid speeds `lo` and
    /// `hi`, from the grid and the speeds between them where the order is
    /// already solved; its speed, amplitude and phasor.
    fn refine_order(
        &mut self,
        o: usize,
        i: usize,
        (lo, hi): (usize, usize),
    ) -> Result<(f64, f64, C64), (f64, E)> {
        let known = self.order_samples(o, i, (lo, hi));
        let mut peak = known.iter().fold((0.0, C64::new(0.0, 0.0)), |b, p| {
            if magnitude(p.1) > magnitude(b.1) {
                *p
            } else {
                b
            }
        });
        let settings = *self.settings;
        let (n, amp) = refine_among(
            |n| {
                let p = self.order(o, n)?;
                if magnitude(p) > magnitude(peak.1) {
                    peak = (n, p);
                }
                Ok(magnitude(p))
            },
            &mut known.iter().map(|&(n, p)| (n, magnitude(p))).collect(),
            Shape::Resonance,
            &settings,
        )?;
        Ok((n, amp, peak.1))
    }
}

/// A resonance crossing where the measure may peak: a grid index, the
/// order whose crossing it is, and what the grid says of its peak; the
/// measure there follows from a peak amplitude ([`Candidate::with_peak`]:
/// at the predicted peak for the order of the search, at the peak
/// [`PREDICTION_SCREEN_DB`] above it for the screen).
struct Candidate {
    index: usize,
    order: usize,
    /// The order's amplitude at the grid peak.
    grid_amplitude: f64,
    /// What the other orders add to the measure at most near the peak: the
    /// largest mean square (Pa², overall rms) or peak-to-peak (Pa) on the
    /// grid around it.
    rest: f64,
    /// The speed of the peak predicted from the grid, if it bounds one.
    peak_speed: Option<f64>,
    /// The order's peak amplitude predicted from the grid (+∞ when the
    /// grid samples bound no peak).
    peak: f64,
}

impl Candidate {
    /// The measure with the crossing's order peaking at amplitude `p`.
    fn with_peak(&self, measure: Measure, p: f64) -> f64 {
        match measure {
            Measure::Rms => (p * p / 2.0 + self.rest).sqrt(),
            // p-p ≤ 2 Σ|P_k|: the rise of one order adds at most twice its own
            Measure::PeakToPeak => self.rest + 2.0 * (p - self.grid_amplitude),
            Measure::Order(_) => p,
        }
    }
}

/// The speed of the range covered by `grid` where `measure` is largest, to
/// the tolerance of `settings` (see the module documentation). `solve(i, n)`
/// returns the phasor of order `grid.orders[i]` at speed `n` at the point.
///
/// # Errors
/// [`Unbounded`] when `solve` fails: the search met an undamped resonance.
///
/// # Panics
/// If the grid is empty or its arrays do not match.
pub fn worst_speed<E>(
    grid: SpeedGrid<'_>,
    measure: Measure,
    solve: &mut dyn FnMut(usize, f64) -> Result<C64, E>,
    settings: &WorstSettings,
) -> Result<WorstSpeed, Unbounded<E>> {
    let mut one = |o: usize, n: f64, out: &mut [C64]| solve(o, n).map(|p| out[0] = p);
    let mut worst = worst_speeds(&[grid], measure, &mut one, settings)?;
    Ok(worst.remove(0))
}

/// [`worst_speed`] at several points of one grid (the same speeds and
/// orders; one [`SpeedGrid`] per point): `solve(i, n, out)` writes the
/// phasors of order `grid.orders[i]` at speed `n` at every point into
/// `out`, in the order of `grids`. A solve serves every point: each one is
/// kept, and a point's search of a crossing starts from the samples the
/// searches of the points before it took there (a resonance peaks at nearly
/// the same speed at every point), so the points after the first cost a few
/// solves each.
/// Each [`WorstSpeed::solves`] counts the solves its own search added.
///
/// # Errors
/// [`Unbounded`] when `solve` fails: the search met an undamped resonance.
///
/// # Panics
/// If a grid is empty or its arrays do not match, or the grids' speeds or
/// orders differ.
pub fn worst_speeds<E>(
    grids: &[SpeedGrid<'_>],
    measure: Measure,
    solve: &mut SolveOrder<'_, E>,
    settings: &WorstSettings,
) -> Result<Vec<WorstSpeed>, Unbounded<E>> {
    let Some(first) = grids.first() else {
        return Ok(Vec::new());
    };
    assert!(
        grids
            .iter()
            .all(|g| g.speeds_rev_s == first.speeds_rev_s && g.orders == first.orders),
        "the points' grids differ"
    );
    let mut shared = SharedSolves {
        solve,
        points: grids.len(),
        solved: vec![Vec::new(); first.orders.len()],
        phasors: Vec::new(),
        period: (measure == Measure::PeakToPeak).then(|| waveform::Period::new(first.orders)),
    };
    grids
        .iter()
        .enumerate()
        .map(|(point, &grid)| {
            // no other sources: nothing to interpolate (the same sums)
            let grid = if grid.other_ms_pa2.iter().all(|&v| v == 0.0) {
                SpeedGrid {
                    other_ms_pa2: &[],
                    ..grid
                }
            } else {
                grid
            };
            let mut search = Search {
                grid,
                point,
                measure,
                settings,
                shared: &mut shared,
                values: Vec::new(),
                solves: 0,
            };
            search_point(&mut search)
        })
        .collect()
}

/// One point's search (see the module documentation).
fn search_point<E>(search: &mut Search<'_, '_, '_, E>) -> Result<WorstSpeed, Unbounded<E>> {
    let grid = search.grid;
    let measure = search.measure;
    let speeds = grid.speeds_rev_s;
    let (ns, no) = (speeds.len(), grid.orders.len());
    assert!(
        ns > 0 && grid.phasors.len() == ns * no,
        "grid arrays do not match"
    );
    search.values = (0..ns)
        .map(|si| search.measure_of(search.phasors_at(si), search.other(speeds[si])))
        .collect();
    let values = search.values.clone();
    let first = (0..ns).fold(0, |b, i| if values[i] > values[b] { i } else { b });
    let mut best = WorstSpeed {
        speed_rev_s: speeds[first],
        value_pa: values[first],
        phasors: search.phasors_at(first).to_vec(),
        solves: 0,
    };
    if ns < 2 {
        return Ok(best);
    }
    let unbounded = |(speed_rev_s, error)| Unbounded { speed_rev_s, error };
    let bracket = |i: usize| (i.saturating_sub(1), (i + 1).min(ns - 1));

    // The candidates: crossings of each order, each with the measure
    // predicted at its peak (a Lorentzian through its three grid samples,
    // the other orders as on the grid), and maxima of the measure away from
    // any crossing; the highest predicted first.
    let considered: Vec<usize> = match measure {
        Measure::Order(o) => vec![o],
        _ => (0..no).collect(),
    };
    let amps: Vec<Vec<f64>> = (0..no)
        .map(|o| {
            (0..ns)
                .map(|si| magnitude(search.phasors_at(si)[o]))
                .collect()
        })
        .collect();
    let screen = 10f64.powf(PREDICTION_SCREEN_DB / 20.0);
    let probe_screen = 10f64.powf(PROBE_SCREEN_DB / 20.0);
    let mut candidates: Vec<Candidate> = Vec::new();
    for &o in &considered {
        if amps[o].iter().all(|&a| a == 0.0) {
            continue; // no source flow at this order
        }
        for i in local_maxima(&amps[o]) {
            let (lo, hi) = bracket(i);
            let a_i = amps[o][i];
            let grid_peak = (lo < i && i < hi)
                .then(|| {
                    let sample = |k: usize| (speeds[k], amps[o][k]);
                    lorentzian_peak([sample(lo), sample(i), sample(hi)])
                })
                .flatten();
            let peak = match grid_peak {
                Some((_, a)) => a.max(a_i),
                None if lo < i && i < hi => f64::INFINITY,
                None => a_i,
            };
            // the other orders at their largest in the bracket
            let rest = match measure {
                Measure::Rms => (lo..=hi)
                    .map(|k| {
                        let sq: f64 = (0..no)
                            .filter(|&j| j != o)
                            .map(|j| amps[j][k].powi(2))
                            .sum();
                        sq / 2.0 + search.other(speeds[k])
                    })
                    .fold(0.0, f64::max),
                Measure::PeakToPeak => values[lo..=hi].iter().copied().fold(0.0, f64::max),
                Measure::Order(_) => 0.0,
            };
            candidates.push(Candidate {
                index: i,
                order: o,
                grid_amplitude: a_i,
                rest,
                peak_speed: grid_peak.map(|(n, _)| n),
                peak,
            });
        }
    }
    // the highest predicted measure first
    let mut ranked: Vec<(f64, Candidate)> = candidates
        .into_iter()
        .map(|c| (c.with_peak(measure, c.peak), c))
        .collect();
    ranked.sort_by(|a, b| b.0.total_cmp(&a.0));
    let candidates = ranked.into_iter().map(|(_, c)| c);

    // the other orders' squared amplitudes, interpolated at refined peaks
    let squares: Vec<Vec<f64>> = amps
        .iter()
        .map(|a| a.iter().map(|a| a * a).collect())
        .collect();
    let mut polish: Option<(usize, usize)> = None;
    for c in candidates {
        if c.with_peak(measure, screen * c.peak) < best.value_pa {
            continue;
        }
        let (i, o) = (c.index, c.order);
        let (lo, hi) = bracket(i);
        // a closer look before the refinement, when the grid bounds a peak
        if let Some(n) = c.peak_speed {
            let peak = search.probe(o, i, (lo, hi), n).map_err(unbounded)?;
            if c.with_peak(measure, probe_screen * peak) < best.value_pa {
                continue;
            }
        }
        let (n, amp, phasor) = search.refine_order(o, i, (lo, hi)).map_err(unbounded)?;
        if measure == Measure::Rms {
            let others: f64 = (0..no)
                .filter(|&k| k != o)
                .map(|k| interpolate(speeds, &squares[k], n))
                .sum();
            let estimate = ((amp * amp + others) / 2.0 + search.other(n)).sqrt();
            if level_db(estimate) < level_db(best.value_pa) - SCREEN_DB {
                continue;
            }
        }
        let at = search
            .full(n, Some((o, phasor)))
            .map_err(|e| unbounded((n, e)))?;
        if at.value_pa > best.value_pa {
            best = at;
            polish = Some((lo, hi));
        }
    }
    if matches!(measure, Measure::Order(_)) {
        best.solves = search.solves;
        return Ok(best);
    }
    // The measure peaks slightly off the crossing that set it.
    if let Some((lo, hi)) = polish {
        let start = Some((best.speed_rev_s, best.value_pa));
        search
            .refine_measure(lo, hi, start, &mut best)
            .map_err(unbounded)?;
    }
    // Maxima of the measure itself (several orders rising together, or a
    // crossing's skirt), highest first, where every order at its largest
    // known amplitude on one side of it could beat the best: one order
    // rising and another falling across the maximum do not both count at
    // their largest.
    let mut maxima = local_maxima(&values);
    maxima.sort_by(|&a, &b| values[b].total_cmp(&values[a]));
    for i in maxima {
        let (lo, hi) = bracket(i);
        if search
            .combined_bound(lo, i)
            .max(search.combined_bound(i, hi))
            < best.value_pa
        {
            continue;
        }
        search
            .refine_measure(lo, hi, Some((speeds[i], values[i])), &mut best)
            .map_err(unbounded)?;
    }
    best.solves = search.solves;
    Ok(best)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn local_maxima_with_ends_and_flat_tops() {
        assert_eq!(
            local_maxima(&[3.0, 1.0, 2.0, 2.0, 2.0, 0.0, 5.0]),
            vec![0, 3, 6]
        );
        assert_eq!(local_maxima(&[1.0, 2.0, 3.0]), vec![2]);
        assert_eq!(local_maxima(&[1.0, 1.0]), Vec::<usize>::new());
        assert_eq!(local_maxima(&[4.0]), vec![0]);
    }

    // y = (x − 0.3)² + 2: the vertex (0.3, 2) from any three points; a
    // Lorentzian peak is found from three samples (1/v² is a parabola).
    #[test]
    fn parabola_vertex_and_lorentzian_peak() {
        let f = |x: f64| (x - 0.3) * (x - 0.3) + 2.0;
        let (x, y) = parabola_min([(0.0, f(0.0)), (0.5, f(0.5)), (1.0, f(1.0))]).unwrap();
        assert!((x - 0.3).abs() < 1e-12 && (y - 2.0).abs() < 1e-12);
        assert_eq!(parabola_min([(0.0, 0.0), (1.0, 1.0), (2.0, 2.0)]), None);
        let l = |x: f64| 3.0 / (1.0 + ((x - 10.2) / 0.05).powi(2)).sqrt();
        let (x, v) = lorentzian_peak([(9.8, l(9.8)), (10.3, l(10.3)), (10.8, l(10.8))]).unwrap();
        assert!((x - 10.2).abs() < 1e-9 && (v - 3.0).abs() < 1e-9, "{x} {v}");
    }

    // A single order whose amplitude is a Lorentzian resonance
    // 1/√(1 + (2Q(n/n0 − 1))²) of quality Q = 200 at n0 = 23.27 rev/s,
    // sampled on a grid whose step (0.5 rev/s) is far wider than the peak
    // (half-power width n0/Q ≈ 0.12 rev/s): the grid sees a fraction of the
    // peak; the search finds it to within 0.01 dB (its value is 1 at n0).
    #[test]
    fn a_narrow_peak_between_grid_speeds_is_found() {
        let (n0, q) = (23.27, 200.0);
        let lorentz =
            |n: f64| C64::new(1.0 / (1.0 + (2.0 * q * (n / n0 - 1.0)).powi(2)).sqrt(), 0.0);
        let speeds: Vec<f64> = (0..21).map(|i| 15.0 + 0.5 * f64::from(i)).collect();
        let phasors: Vec<C64> = speeds.iter().map(|&n| lorentz(n)).collect();
        let grid = SpeedGrid {
            speeds_rev_s: &speeds,
            orders: &[1],
            phasors: &phasors,
            other_ms_pa2: &[],
        };
        let grid_best = phasors.iter().map(|p| p.norm()).fold(0.0, f64::max);
        assert!(grid_best < 0.5, "the grid misses the peak: {grid_best}");
        for measure in [Measure::Rms, Measure::Order(0), Measure::PeakToPeak] {
            let w = worst_speed::<()>(
                grid,
                measure,
                &mut |_, n| Ok(lorentz(n)),
                &WorstSettings::default(),
            )
            .unwrap();
            let expected = match measure {
                Measure::Rms => std::f64::consts::FRAC_1_SQRT_2,
                Measure::PeakToPeak => 2.0,
                Measure::Order(_) => 1.0,
            };
            assert!(
                (20.0 * (w.value_pa / expected).log10()).abs() < 0.01,
                "{measure:?}: {} at {}",
                w.value_pa,
                w.speed_rev_s
            );
            assert!((w.speed_rev_s / n0 - 1.0).abs() < 1e-3, "{}", w.speed_rev_s);
        }
    }
}
